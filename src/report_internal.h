/* pixpost — internals shared by the report files (src/report.c, the page;
 * src/report_svg.c, the SVG plots; src/report_png.c, the embedded images;
 * src/report_escape.c, the HTML escaping they all use).
 * Not installed. Every writer takes an open FILE and never closes it;
 * errors of stdio are caught once, by ferror() at the commit. */
#ifndef PIXPOST_REPORT_INTERNAL_H
#define PIXPOST_REPORT_INTERNAL_H

#include "display.h"
#include "pixpost/image.h"
#include "pixpost/status.h"
#include "pixpost/calib.h"
#include "pixpost/report.h"
#include <stddef.h>
#include <stdio.h>

/* The flags of the diagnostics tables: R-hat above PP_REPORT_RHAT_MAX
 * (Vehtari et al. 2021, section 4, from memory) or an ESS below
 * PP_REPORT_ESS_PER_CHAIN per chain (common practice). */
#define PP_REPORT_RHAT_MAX 1.01
#define PP_REPORT_ESS_PER_CHAIN 100.0

/* ---- Text (src/report_escape.c) ----------------------------------------- */
/* Writes s HTML-escaped (& < > " ' as entities; invalid UTF-8 bytes and
 * control characters other than tab and newline as U+FFFD). NULL: nothing. */
void pp_report_escape(FILE *f, const char *s);
/* The same into buf (len bytes, always NUL-terminated when len > 0; a
 * longer result is cut, possibly inside an entity). */
void pp_report_escape_str(char *buf, size_t len, const char *s);
/* One numeric table cell: v as %.4g (an en dash when not finite), marked
 * "warn" with the flag word (a fixed word, not escaped) when warn is set.
 * The diagnostics table and the regions' tables share it. */
void pp_report_num_cell(FILE *f, double v, int warn, const char *flag);

/* ---- Verdict and warnings (src/report_verdict.c) ------------------------ */
struct pp_report_input;
struct pp_trace;
/* The verdict banner (nothing when in->convergence is NULL). */
void pp_report_verdict_banner(FILE *f, const struct pp_report_input *in);
/* The warnings section (grouped by in->warning_parts when given), then
 * the notes. */
void pp_report_warnings_section(FILE *f, const struct pp_report_input *in);

/* ---- Plain words (src/report_plain.c) ----------------------------------- */
/* Writes <span class="plain" id="<key>-plain">one sentence</span> saying in
 * plain words what the map key shows ("frame", "mean", "sd", "width" (at
 * credible level), "residual"; volume: says voxel for pixel). */
void pp_report_plain(FILE *f, const char *key, double level, int volume);

/* ---- Marks on a frame's images (src/report_marks.c) -------------------- */
/* An SVG laid over a w x h image (inside the figure's <div class="pic">,
 * after the <img>, or a volume's XY view): a circle and the name at each
 * probe pixel (trace columns named "p_<row>_<column>"; NULL trace: none)
 * and, when pixel_um > 0, a scale bar of a round length (1, 2 or 5 x 10^k
 * um, about a fifth of the width). Nothing when there is neither. id: the
 * SVG's id; css_width: the CSS pixels the image is drawn across, which
 * keeps text and circles one size on screen (0: a frame's image column). */
void pp_report_marks(FILE *f, const char *id, size_t w, size_t h, const struct pp_trace *trace,
                     double pixel_um, double css_width);
/* The scale bar's length in um for an image w pixels of pixel_um wide: the
 * largest 1, 2 or 5 x 10^k not above w * pixel_um / 5. */
double pp_report_bar_um(size_t w, double pixel_um);

/* ---- Regions and profiles (src/report_regions.c) ----------------------- */
/* The section "regions" (nothing when in->regions is NULL or holds neither
 * regions nor profiles): the table of the regions' totals and means and
 * of the comparisons, then one plot per profile. PP_ERR_NOMEM. */
pp_status pp_report_regions_section(FILE *f, const struct pp_report_input *in);
/* An SVG over a frame's mean image (w x h): each region's outline and
 * label at its centroid, each profile's line and number (nothing when
 * in->regions is NULL or the regions were planned for another size). */
void pp_report_regions_marks(FILE *f, const struct pp_report_input *in, size_t w, size_t h);
/* The CSS rules of the section and the marks (the page's <style> gains
 * them when in->regions is given). */
extern const char PP_REPORT_REGIONS_CSS[];

/* ---- Checks of the data and the fit (src/report_checks.c) -------------- */
/* The section "checks": the predictive check's figures, the checks'
 * warnings; nothing when there is no residual map, sentence or warning. */
void pp_report_checks_section(FILE *f, const struct pp_report_input *in);

/* ---- Axes and plots (src/report_svg.c) ---------------------------------- */
/* Tick marks on [lo, hi]: first, step and count, with the axis stretched to
 * whole steps (amin..amax); nice steps are 1, 2 or 5 times a power of ten. */
typedef struct pp_ticks {
    double amin, amax, step;
    int count;
    int sci;      /* labels in scientific notation, mantissa x 10^exponent */
    int exponent; /* of the largest |tick| when sci */
    int decimals; /* digits after the point (of the mantissa when sci) */
} pp_ticks;
/* target: about how many ticks (>= 2). lo == hi (or non-finite) gives an
 * axis of width 1 around lo (or 0..1). */
void pp_report_ticks(double lo, double hi, int target, pp_ticks *t);
/* Label of value v on axis t, e.g. "0.25", "1.2e-4"; buf of n >= 32 bytes. */
void pp_report_tick_label(const pp_ticks *t, double v, char *buf, size_t n);

/* One data series: y[i * stride] for i < n, at x = x0 + i * dx. */
typedef struct pp_series {
    const double *y;
    size_t n, stride;
    double x0, dx;
} pp_series;

/* A line plot with one polyline per series (chain colours by index).
 * Series longer than PP_REPORT_MAX_POINTS are drawn as the minimum and the
 * maximum of each block of draws, in the order they occurred, so spikes
 * survive the decimation. zero_line: draw y = 0; y_floor: the y axis covers
 * at least [y_floor, ...] when y_floor is finite (the ACF uses -0.2). */
#define PP_REPORT_MAX_POINTS 1000
typedef struct pp_plot {
    const char *id, *title, *xlabel, *ylabel; /* escaped when written */
    double width, height;                     /* SVG user units */
    const pp_series *series;
    size_t nseries;
    int zero_line;
    double y_floor, y_ceil; /* NAN: from the data */
} pp_plot;
void pp_report_svg_lines(FILE *f, const pp_plot *p);

/* A line with a shaded band: p's first series (no decimation: meant for
 * profiles of up to a few thousand points) over the band lo[i]..hi[i]
 * (i < that series' n, at its x), the y axis covering both. */
void pp_report_svg_band(FILE *f, const pp_plot *p, const double *lo, const double *hi);

/* Histogram of y[i * stride], i < n (non-finite values skipped), with
 * clamp(ceil(sqrt(n)), 10, 50) equal bins. */
void pp_report_svg_hist(FILE *f, const char *id, const char *xlabel, const double *y, size_t n,
                        size_t stride);

/* Horizontal colour bar of the ramp from lo to hi, ticks in units. */
void pp_report_svg_colourbar(FILE *f, const char *id, double lo, double hi, const char *units);

/* The colour of chain k (cycles after 8) as "#rrggbb". */
const char *pp_report_chain_colour(size_t k);

/* Autocorrelation of y[i * stride], i < n, at lags 0..maxlag (out has
 * maxlag + 1 entries): rho(k) = sum_t (y_t - m)(y_{t+k} - m) / sum_t
 * (y_t - m)^2, the usual biased estimator. Returns 0 (and leaves out
 * unset) when n < 2, maxlag >= n, or the series is constant or not finite. */
int pp_report_acf(const double *y, size_t n, size_t stride, size_t maxlag, double *out);

/* ---- Images (src/report_png.c) ------------------------------------------ */
/* The colour ramp of the sd and width maps: t in [0, 1] (clamped) to sRGB,
 * linear between PP_REPORT_RAMP_STOPS control points. */
#define PP_REPORT_RAMP_STOPS 4
void pp_report_ramp(double t, unsigned char rgb[3]);
/* Control point k: position in [0, 1] and colour. */
void pp_report_ramp_stop(int k, double *pos, unsigned char rgb[3]);

/* The grey level of t = (v - lo) / (hi - lo): round(255 t) clipped to
 * 0..255; 0 when t is not finite (NaN pixels show black). */
unsigned char pp_report_grey(double t);

/* Pixels of the longest side shown; larger images are shown as block means. */
#define PP_REPORT_MAX_SIDE 1024
/* The block size used for img: ceil(max(width, height) / PP_REPORT_MAX_SIDE). */
size_t pp_report_block(const pp_image *img);

/* Writes "data:image/png;base64,..." of img mapped linearly so lo -> 0 and
 * hi -> 255 (clipped; NaN shown as 0 / the ramp's start): grey when
 * colour == 0, the ramp otherwise. hi must be > lo. */
pp_status pp_report_png_uri(FILE *f, const pp_image *img, double lo, double hi, int colour);

/* Writes "data:image/png;base64,..." of w x h grey bytes px (row by row),
 * as they are. */
pp_status pp_report_png_uri_grey8(FILE *f, const unsigned char *px, size_t w, size_t h);

/* ---- Volumes (src/report_volume.c) -------------------------------------- */
/* The images section of a volume's page (in's images have depth > 1, all
 * of one shape): per image (input, mean, sd, interval width, residual) the
 * orthogonal views XY, XZ and YZ through one cursor (z, y, x), sliders over
 * z, y and x, and the one small inline script that draws the views from an
 * embedded atlas of the XY slices. Volumes past PP_REPORT_VOL_MAX_SLICES
 * slices or PP_REPORT_VOL_MAX_VOXELS voxels are shown as block means (z
 * blocks first, then square blocks in the plane). units and frame_units
 * as on the page. */
#define PP_REPORT_VOL_MAX_SLICES 128
#define PP_REPORT_VOL_MAX_VOXELS ((size_t)1 << 20)
pp_status pp_report_volume_section(FILE *f, const struct pp_report_input *in, const char *units,
                                   const char *frame_units);
/* The CSS rules of those views (the page's <style> gains them for a volume). */
extern const char PP_REPORT_VOLUME_CSS[];

#endif
