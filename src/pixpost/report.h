/* pixpost — the run report: one self-contained HTML page (report.html).
 *
 * The page holds everything inline (no network, fonts or linked images; a
 * frame's page has no script): the input frame and the posterior mean in
 * grey, the sd map and
 * the credible-bound width map (hi - lo) in pixpost's own dark-blue to
 * yellow colour ramp with SVG colour bars labelled in input units, trace and
 * autocorrelation plots per chain for every trace column (inline SVG),
 * pooled histograms of lambda and delta, a diagnostics table coloured by
 * thresholds, the settings, the warnings, the checks of the data and the
 * fit with the standardised residual map, and a cautions paragraph; at the
 * top a verdict banner (converged or not, warnings per part, what to do),
 * with the warnings right under it when there are any (a run that
 * converged with no warning gets one quiet line instead). Every map has a
 * sentence in plain words under it; a frame's images carry the probe
 * pixels (circles with their trace names) and, when the pixel size is
 * known, a scale bar. Grey and colour scales run over each image's 0.5th
 * to 99.5th percentiles, the same rule as mean.png and sd.png
 * (src/display.h).
 * Images are 8-bit PNGs made in memory with libpng and embedded as base64
 * data URIs; every string from the caller is HTML-escaped.
 *
 * Volumes (images of depth > 1): the images section shows, per image, the
 * orthogonal views XY at the chosen z, XZ at the chosen y and YZ at the
 * chosen x, with sliders over z, y and x (a click on a view moves the
 * cursor too), drawn by one small inline script from one embedded PNG per
 * image that tiles its XY slices (8-bit, the same mappings as a frame's);
 * large volumes are shown as block means (src/report_internal.h,
 * PP_REPORT_VOL_MAX_*), so a 64 x 256 x 256 volume gives a page of a few
 * MB. The page works offline and loads nothing.
 *
 * The input is plain data, so the report does not depend on sampler
 * internals. Nothing here is kept after the call; the caller owns every
 * pointer. Cost: one sort per image (robust percentiles), one PNG encode per
 * image, and per trace column and chain an autocorrelation by direct sums up
 * to lag min(100, kept/4): O(chains x kept x 100) per column.
 */
#ifndef PIXPOST_REPORT_H
#define PIXPOST_REPORT_H

#include "pixpost/image.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/spots.h"
#include "pixpost/sampler.h"
#include <stddef.h>

/* One row of the diagnostics table. A non-finite value prints as a dash
 * (e.g. R-hat of a fixed hyperparameter). */
typedef struct pp_report_scalar {
    const char *name;
    double mean, sd, rhat, ess_bulk, ess_tail, mcse;
} pp_report_scalar;

/* What a run recorded of its regions and profiles at every kept draw
 * (pp_sampler_region_draws): draws[(c * cap + i) * stride + j] for chain
 * c < chains, kept draw i < kept, the regions' totals first (j <
 * pp_regions_count), then the profiles' points. */
typedef struct pp_report_regions {
    const pp_regions *regions;   /* NULL: none */
    const pp_region_pair *pairs; /* comparisons of two regions' means */
    size_t npairs;
    const pp_profiles *profiles; /* NULL: none */
    const pp_spots *spots;       /* NULL: none; their contrasts come last */
    const double *draws;
    size_t chains, kept, cap, stride;
} pp_report_regions;

typedef struct pp_report_input {
    const char *title; /* e.g. the input file name; NULL: "pixpost run" */
    /* Frame-sized images, or volumes (all of the same size and depth as
     * the first non-NULL one); any may be NULL and its section is then
     * omitted. The width map needs both lo and hi. */
    const pp_image *frame, *mean, *sd, *lo, *hi;
    /* A volume's voxel size {z, y, x} in micrometres (the views' aspect
     * ratios, the cursor's position); NULL or any entry <= 0: not known,
     * the voxels are drawn as cubes. A frame's images take the x entry
     * (square pixels) for a scale bar; <= 0: no bar. */
    const double *voxel;
    /* Per-chain traces (values[(chain*kept + i)*ncols + col], column names
     * "lambda", "delta", "loglik", "p_<r>_<c>"...); NULL: no trace plots. */
    const pp_trace *trace;
    int lambda_fixed, delta_fixed; /* non-zero: not sampled, no histogram */
    /* Diagnostics table rows; nscalars == 0: the table says "not computed". */
    const pp_report_scalar *scalars;
    size_t nscalars;
    unsigned chains; /* for the ESS-per-chain threshold; 0: trace->chains or 1 */
    /* Settings shown as a two-column table, in this order. */
    const char *const *settings_keys;
    const char *const *settings_values;
    size_t nsettings;
    const char *const *warnings; /* plain sentences */
    size_t nwarnings;
    /* What each warning is about (pp_warning_part), nwarnings entries, or
     * NULL: the warnings are listed as one list; otherwise in groups
     * (hyperparameters, pixel estimates, other). */
    const pp_warning_part *warning_parts;
    /* The run's verdict for the banner at the top of the page (converged or
     * not, the warnings per part, the --iters to ask for): the figures and
     * the sentence pp_convergence_verdict made of them. NULL convergence:
     * no banner. When there are warnings the warnings section comes first,
     * right under the banner. */
    const pp_convergence *convergence;
    const char *verdict;
    const char *const *notes; /* plain sentences: information, not warnings */
    size_t nnotes;
    double level;      /* credible level of lo/hi, in (0, 1) */
    const char *units; /* of the estimates, e.g. "photons per pixel"; NULL: "input units" */
    const char *frame_units; /* of the input frame, e.g. "ADU"; NULL: as units */
    const char *sd_caption;  /* what the sd map shows under this model (a sentence);
                              * NULL: a generic one */
    /* The checks of the data and of the fit (src/pixpost/datacheck.h,
     * ppcheck.h): the standardised residual map (frame-sized, NaN where left
     * out; NULL: no panel), their warnings (plain sentences) and one
     * sentence of the predictive check's figures (NULL: none); the residual
     * has the images' shape. Shown in a
     * section "Checks of the data and the fit" (id "checks") after the
     * warnings; never counted in the verdict banner. */
    const pp_image *residual;
    const char *const *checks;
    size_t nchecks;
    const char *checks_summary;
    /* How the page's own sentences name settings (a PP_SET_COUNT table,
     * include/pixpost/setting.h, e.g. a command line's flags: "--boundary
     * pad", "--strict"; NULL: the library's words). */
    const char *const *setting_names;
    /* Regions, profiles and spots (NULL: none): a section "Regions and
     * profiles" (id "regions") after the images, with the posterior of
     * every region's total and mean, of the comparisons, a plot of every
     * profile (mean and credible band at level) and the spots' contrasts
     * and P(contrast > 0), rows flagged as the diagnostics table's; the
     * outlines, labels, lines and spots over the mean image of a frame. */
    const pp_report_regions *regions;
} pp_report_input;

/* Zeroes *in and sets level = 0.95. */
void pp_report_input_init(pp_report_input *in);

/* Writes the page to path atomically (temporary name beside it, then
 * rename): on failure nothing is left under path or beside it. Fails with
 * PP_ERR_ARG for images of different sizes or a level outside (0, 1),
 * PP_ERR_IO when the folder is missing or the write fails. */
pp_status pp_report_write(const char *path, const pp_report_input *in);

#endif
