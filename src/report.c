/* pixpost — the run report page (report.html): one self-contained HTML file
 * with the images, trace/autocorrelation plots, histograms, diagnostics,
 * settings, warnings and cautions. The plots come from src/report_svg.c,
 * the embedded PNGs from src/report_png.c; this file lays out the page and
 * escapes every caller string (src/report_escape.c).
 *
 * Cost: dominated by the images (a sort and a PNG encode each) and the
 * autocorrelations (chains x columns x kept x min(100, kept/4) products).
 * Written through one FILE opened by pp_atomic_open: a failure anywhere
 * removes the temporary and leaves nothing under the final name. */
#include "pixpost/report.h"
#include "internal.h"
#include "pixpost/setting.h"
#include "report_internal.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#ifndef PIXPOST_VERSION
#define PIXPOST_VERSION "unknown"
#endif


static const char CAUTIONS[] =
    "A reconstruction is a model-based estimate. Its error bars hold only under the stated "
    "model \xe2\x80\x94 the PSF, the noise model and the prior. pixpost is not a diagnostic "
    "device; for clinical or forensic use, follow local rules and practice.";

/* Column name to an id fragment: [A-Za-z0-9_-], anything else '_'. */
static void id_of(const char *name, char *buf, size_t n)
{
    size_t i = 0;
    for (; name[i] && i + 1 < n; i++) {
        char c = name[i];
        int ok = (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') ||
                 c == '_' || c == '-';
        buf[i] = ok ? c : '_';
    }
    buf[i] = '\0';
}

/* A reader's name for a trace column. */
static void display_name(const char *name, char *buf, size_t n)
{
    unsigned r, c;
    if (strcmp(name, "lambda") == 0)
        snprintf(buf, n, "\xce\xbb (noise precision)");
    else if (strcmp(name, "delta") == 0)
        snprintf(buf, n, "\xce\xb4 (prior precision)");
    else if (strcmp(name, "loglik") == 0)
        snprintf(buf, n, "log-likelihood");
    else if (strcmp(name, "kappa") == 0)
        snprintf(buf, n, "\xce\xba (smoothness of the adaptive prior's block field)");
    else if (strcmp(name, "psf_width") == 0)
        snprintf(buf, n, "PSF width (gaussian sigma in pixels, or airy NA)");
    else if (sscanf(name, "p_%u_%u", &r, &c) == 2)
        snprintf(buf, n, "pixel at row %u, column %u", r, c);
    else
        snprintf(buf, n, "%s", name);
}

static const char CSS[] =
    "body{font-family:sans-serif;font-size:15px;line-height:1.45;color:#1d1d1d;"
    "background:#fff;max-width:1220px;margin:0 auto;padding:0 20px 40px}\n"
    "h1{font-size:1.5em;margin:18px 0 2px}h2{font-size:1.2em;border-bottom:1px solid #c8c8c8;"
    "padding-bottom:3px;margin-top:34px}\n"
    ".sub{color:#444;margin:0 0 8px}nav a{margin-right:14px;color:#1b4f8a}\n"
    ".images{display:grid;grid-template-columns:repeat(2,minmax(0,1fr));gap:26px}\n"
    "figure{margin:0}figure img{width:100%;height:auto;image-rendering:pixelated;"
    "border:1px solid #999;display:block}\n"
    "figcaption{font-size:13px;color:#333;margin-top:4px}\n"
    ".plain{display:block;font-size:14px;color:#1d1d1d;margin-bottom:2px}\n"
    ".pic{position:relative;border:1px solid #999}.pic img{border:0}\n"
    "svg.marks{position:absolute;left:0;top:0;width:100%;"
    "height:100%;max-width:none;pointer-events:none;overflow:visible}\n"
    "svg.marks text{fill:#7ff3ff;stroke:#000;paint-order:stroke;font-weight:bold}\n"
    "svg.marks circle{fill:none;stroke:#19e3ff;stroke-width:2px;"
    "vector-effect:non-scaling-stroke}\n"
    "svg.marks .scalebar "
    "rect{fill:#fff;stroke:#000;stroke-width:1px;vector-effect:non-scaling-stroke}"
    "svg.marks .scalebar text{fill:#fff}\n"
    ".pair{display:flex;flex-wrap:wrap;gap:10px;margin:6px 0 14px}\n"
    "svg{max-width:100%;height:auto}svg text{font-family:sans-serif;fill:#222}\n"
    "svg .tick{font-size:10px}svg .label{font-size:11px}svg .ptitle{font-size:12px;"
    "font-weight:bold}\n"
    "svg .area{fill:#fff;stroke:#888}svg .grid{stroke:#e4e4e4}svg .axis{stroke:#555}\n"
    "svg .zero{stroke:#777;stroke-dasharray:3 3}\n"
    "svg .series{fill:none;stroke-width:1;stroke-opacity:0.8}\n"
    "svg .bar{fill:#5b7ea6;stroke:#fff;stroke-width:0.5}\n"
    ".legend span{display:inline-block;margin-right:16px}.legend i{display:inline-block;"
    "width:22px;height:3px;vertical-align:middle;margin-right:5px}\n"
    "table{border-collapse:collapse;margin:8px 0}th,td{padding:3px 12px;text-align:left;"
    "border-bottom:1px solid #ddd}th{background:#f0f0f0}\n"
    "td.num{text-align:right;font-variant-numeric:tabular-nums}\n"
    "td.warn{background:#f6dcb4;color:#5a2a00;font-weight:bold}.flag{font-size:11px}\n"
    ".note{color:#444;font-style:italic}\n"
    ".verdict{margin:14px 0 4px;padding:10px 16px;border-radius:6px;border:2px solid}\n"
    ".verdict.ok{background:#e6f2e8;border-color:#3c7a4a}"
    ".verdict.bad{background:#fbeadf;border-color:#b0492a}\n"
    ".verdict-quiet{margin:10px 0 4px;color:#245c31}.verdict-quiet #verdict-word"
    "{font-weight:bold;margin-right:0}\n"
    ".verdict-head{margin:0 0 4px;font-size:1.15em}#verdict-word{font-weight:bold;"
    "margin-right:8px}.verdict.ok #verdict-word{color:#245c31}"
    ".verdict.bad #verdict-word{color:#8c2f14}\n"
    ".verdict .parts{margin:4px 0;padding-left:20px}.verdict li.fail{color:#7a2a10}"
    ".verdict li.pass{color:#245c31}#verdict-text,#verdict-iters{margin:6px 0 0}\n"
    "code{background:#f2f2f2;padding:1px 4px;border-radius:3px}\n"
    "h3{font-size:1.02em;margin:16px 0 4px}\n"
    "#cautions p{border-left:4px solid #8a6d12;background:#f7f4ea;padding:8px 12px}\n"
    "footer{margin-top:30px;font-size:12px;color:#555}\n";

/* ---- Images ------------------------------------------------------------- */

typedef struct page {
    FILE *f;
    const pp_report_input *in;
    const char *units;       /* of the estimates */
    const char *frame_units; /* of the input frame */
    unsigned chains;         /* for the ESS threshold */
} page;

static void block_note(FILE *f, const pp_image *img)
{
    size_t k = pp_report_block(img);
    if (k > 1)
        fprintf(f, " Shown as means of %zu&times;%zu pixel blocks.", k, k);
}

/* The end of a figure's caption: the units, where the mapping's ends come
 * from ("of this <what>": its robust range, or 0 to its top percentile for
 * a spread map, src/display.h), the block-mean note, and the closing tags. */
static void caption_end(page *pg, const pp_image *img, const char *units, const char *what,
                        int spread)
{
    FILE *f = pg->f;
    pp_report_escape(f, units);
    if (spread)
        fprintf(f, " (0 and the %.1fth percentile of this %s, so the shade is proportional to "
                   "the value and a nearly constant map looks flat; values beyond are clipped).",
                PP_DISPLAY_HI, what);
    else
        fprintf(f, " (the %.1fth and %.1fth percentiles of this %s; values beyond are clipped).",
                PP_DISPLAY_LO, PP_DISPLAY_HI, what);
    block_note(f, img);
    fputs("</figcaption></figure>\n", f);
}

/* The size of a frame's pixel in um for the scale bar, 0 when not known. */
static double pixel_um(const pp_report_input *in)
{
    return in->voxel && in->voxel[2] > 0 ? in->voxel[2] : 0.0;
}

/* Opens a figure with img's picture (grey, or the colour ramp) mapped over
 * its display range *lo..*hi (src/display.h; spread: 0 to the top
 * percentile), which the data-<end> attributes record, and the probe pixels
 * and scale bar over it. */
static pp_status figure_image(page *pg, const char *key, const pp_image *img, const char *what,
                              int colour, int spread, double *lo, double *hi)
{
    pp_status st = spread ? pp_display_spread_range(img, lo, hi) : pp_display_range(img, lo, hi);
    if (st != PP_OK)
        return st;
    fprintf(pg->f,
            "<figure><div class=\"pic\"><img id=\"%s-image\" alt=\"%s\" width=\"%zu\" "
            "height=\"%zu\" data-%s=\"%.17g\" data-%s=\"%.17g\" src=\"",
            key, what, img->width, img->height, colour ? "low" : "black", *lo,
            colour ? "high" : "white", *hi);
    st = pp_report_png_uri(pg->f, img, *lo, *hi, colour);
    if (st != PP_OK)
        return st;
    fputs("\">", pg->f);
    char id[64];
    snprintf(id, sizeof id, "%s-marks", key);
    pp_report_marks(pg->f, id, img->width, img->height, pg->in->trace, pixel_um(pg->in), 0.0);
    if (strcmp(key, "mean") == 0)
        pp_report_regions_marks(pg->f, pg->in, img->width, img->height);
    fputs("</div>\n", pg->f);
    return PP_OK;
}

/* One grey figure: frame or mean. */
static pp_status grey_figure(page *pg, const char *key, const pp_image *img, const char *what,
                             const char *units)
{
    FILE *f = pg->f;
    double lo, hi;
    pp_status st = figure_image(pg, key, img, what, 0, 0, &lo, &hi);
    if (st != PP_OK)
        return st;
    fputs("<figcaption>", f);
    pp_report_plain(f, key, pg->in->level, 0);
    fprintf(f,
            "<b>%s</b> (%zu&times;%zu pixels). Grey, linear: black = %.4g, "
            "white = %.4g ",
            what, img->width, img->height, lo, hi);
    caption_end(pg, img, units, "image, so each grey image has its own scale", 0);
    return PP_OK;
}

/* One colour figure with its colour bar in units: sd or width (spread maps,
 * spread 1), or residual. */
static pp_status colour_figure(page *pg, const char *key, const pp_image *img, const char *what,
                               const char *explain, const char *units, int spread)
{
    FILE *f = pg->f;
    double lo, hi;
    pp_status st = figure_image(pg, key, img, what, 1, spread, &lo, &hi);
    if (st != PP_OK)
        return st;
    char id[64];
    snprintf(id, sizeof id, "%s-colourbar", key);
    pp_report_svg_colourbar(f, id, lo, hi, units);
    fputs("<figcaption>", f);
    pp_report_plain(f, key, pg->in->level, 0);
    fprintf(f,
            "<b>%s</b>: %s Colour, linear from %.4g (darkest) to %.4g "
            "(brightest) ",
            what, explain, lo, hi);
    caption_end(pg, img, units, "map", spread);
    return PP_OK;
}

static pp_status width_figure(page *pg)
{
    const pp_report_input *in = pg->in;
    pp_image *w = NULL;
    pp_status st = pp_image_create(in->lo->height, in->lo->width, &w);
    if (st != PP_OK)
        return st;
    for (size_t i = 0; i < w->width * w->height; i++)
        w->data[i] = in->hi->data[i] - in->lo->data[i];
    char explain[200];
    snprintf(explain, sizeof explain,
             "hi &minus; lo, the width of the central %.4g%% credible interval of each pixel.",
             100.0 * in->level);
    st = colour_figure(pg, "width", w, "Credible-interval width", explain, pg->units, 1);
    pp_image_free(w);
    return st;
}

/* The first image of the page (it fixes the size), or NULL. */
static const pp_image *first_image(const pp_report_input *in)
{
    const pp_image *im[6] = {in->frame, in->mean, in->sd, in->lo, in->hi, in->residual};
    for (int i = 0; i < 6; i++)
        if (im[i])
            return im[i];
    return NULL;
}

static pp_status images_section(page *pg)
{
    const pp_report_input *in = pg->in;
    if (!in->frame && !in->mean && !in->sd && !(in->lo && in->hi))
        return PP_OK;
    if (first_image(in)->depth > 1)
        return pp_report_volume_section(pg->f, in, pg->units, pg->frame_units);
    fputs("<section id=\"images\"><h2>Images</h2>\n<div class=\"images\">\n", pg->f);
    pp_status st = PP_OK;
    if (in->frame)
        st = grey_figure(pg, "frame", in->frame, "Input frame", pg->frame_units);
    if (st == PP_OK && in->mean)
        st = grey_figure(pg, "mean", in->mean, "Posterior mean", pg->units);
    if (st == PP_OK && in->sd)
        st = colour_figure(pg, "sd", in->sd, "Posterior standard deviation",
                           in->sd_caption ? in->sd_caption
                                          : "the spread of the posterior of each pixel.",
                           pg->units, 1);
    if (st == PP_OK && in->lo && in->hi)
        st = width_figure(pg);
    if (st == PP_OK && in->residual) {
        char b[64], explain[512];
        pp_report_escape_str(b, sizeof b, pp_setting_name(in->setting_names, PP_SET_BOUNDARY));
        snprintf(explain, sizeof explain,
                 "(y &minus; E[y | mean]) / &radic;Var[y | mean], the predictive check's "
                 "residual (section &ldquo;Checks&rdquo;): noise without pattern when the "
                 "model fits; blank where left out (the frame's edges with %s pad, "
                 "unobserved pixels).",
                 b);
        st = colour_figure(pg, "residual", in->residual, "Standardised residual", explain, "sd", 0);
    }
    fputs("</div></section>\n", pg->f);
    return st;
}

/* ---- Traces, autocorrelation, histograms -------------------------------- */

static int column_fixed(const pp_report_input *in, const char *name)
{
    return (strcmp(name, "lambda") == 0 && in->lambda_fixed) ||
           (strcmp(name, "delta") == 0 && in->delta_fixed);
}

/* Non-zero when every finite value of column col is the same. */
static int column_constant(const pp_trace *t, size_t col, double *value)
{
    size_t n = (size_t)t->chains * t->kept;
    for (size_t i = 1; i < n; i++)
        if (t->values[i * t->ncols + col] != t->values[col])
            return 0;
    *value = n ? t->values[col] : NAN;
    return 1;
}

/* The rest of a note on a column that is not plotted: fixed (at v, or not
 * sampled at all when v is not finite) or constant at v; then tail. */
static void same_note(FILE *f, int fixed, double v, const char *tail)
{
    if (fixed && isfinite(v))
        fprintf(f, " was fixed at %.6g (not sampled)%s", v, tail);
    else if (fixed)
        fprintf(f, " is not sampled under this model%s", tail);
    else
        fprintf(f, " has the same value (%.6g) in every draw%s", v, tail);
}

static void legend(FILE *f, unsigned chains)
{
    fputs("<p class=\"legend\">", f);
    for (unsigned c = 0; c < chains; c++)
        fprintf(f, "<span><i style=\"background:%s\"></i>chain %u</span>",
                pp_report_chain_colour(c), c + 1);
    fputs("</p>\n", f);
}

/* The autocorrelation plot of column col; acf has room for maxlag + 1 per
 * chain. */
static pp_status acf_plot(FILE *f, const pp_trace *t, size_t col, const char *idf,
                          const char *dn, size_t maxlag, double *acf)
{
    pp_series *sr = calloc(t->chains, sizeof *sr);
    if (!sr)
        return pp_fail(PP_ERR_NOMEM, "report: out of memory for the autocorrelation plots");
    size_t ns = 0;
    for (unsigned c = 0; c < t->chains; c++) {
        double *out = acf + (size_t)c * (maxlag + 1);
        const double *y = t->values + (size_t)c * t->kept * t->ncols + col;
        if (pp_report_acf(y, t->kept, t->ncols, maxlag, out))
            sr[ns++] = (pp_series){out, maxlag + 1, 1, 0.0, 1.0};
    }
    char id[160], title[200];
    snprintf(id, sizeof id, "acf-%s", idf);
    snprintf(title, sizeof title, "%s: autocorrelation", dn);
    pp_plot p = {id, title, "lag (kept draws)", "autocorrelation", 400, 210, sr, ns, 1, -0.2, 1.0};
    pp_report_svg_lines(f, &p);
    free(sr);
    return PP_OK;
}

static pp_status trace_pair(page *pg, size_t col, size_t maxlag, double *acf)
{
    FILE *f = pg->f;
    const pp_trace *t = pg->in->trace;
    char idf[120], dn[160];
    id_of(t->names[col], idf, sizeof idf);
    display_name(t->names[col], dn, sizeof dn);
    double v;
    int fixed = column_fixed(pg->in, t->names[col]);
    if (fixed || column_constant(t, col, &v)) {
        fprintf(f, "<p class=\"note\" id=\"trace-%s-note\">", idf);
        pp_report_escape(f, dn);
        same_note(f, fixed, t->values[col], ": no trace or autocorrelation plot.</p>\n");
        return PP_OK;
    }
    pp_series *sr = calloc(t->chains, sizeof *sr);
    if (!sr)
        return pp_fail(PP_ERR_NOMEM, "report: out of memory for the trace plots");
    for (unsigned c = 0; c < t->chains; c++)
        sr[c] = (pp_series){t->values + (size_t)c * t->kept * t->ncols + col, t->kept, t->ncols,
                            1.0, 1.0};
    char id[160], title[200];
    snprintf(id, sizeof id, "trace-%s", idf);
    snprintf(title, sizeof title, "%s: trace", dn);
    pp_plot p = {id, title, "kept draw", "", 660, 210, sr, t->chains, 0, NAN, NAN};
    fputs("<div class=\"pair\">\n", f);
    pp_report_svg_lines(f, &p);
    free(sr);
    pp_status st = acf_plot(f, t, col, idf, dn, maxlag, acf);
    fputs("</div>\n", f);
    return st;
}

static pp_status traces_section(page *pg)
{
    const pp_trace *t = pg->in->trace;
    FILE *f = pg->f;
    if (!t || t->chains == 0 || t->kept == 0 || t->ncols == 0)
        return PP_OK;
    size_t maxlag = t->kept / 4 < 100 ? t->kept / 4 : 100;
    if (maxlag < 1)
        maxlag = t->kept > 1 ? 1 : 0;
    fprintf(f,
            "<section id=\"traces\"><h2>Traces and autocorrelation</h2>\n"
            "<p>One line per chain; %u chains of %zu kept draws each (after burn-in and "
            "thinning). Autocorrelation per chain at lags 0 to %zu, "
            "&rho;(k) = &Sigma;(y<sub>t</sub>&minus;&#563;)(y<sub>t+k</sub>&minus;&#563;) / "
            "&Sigma;(y<sub>t</sub>&minus;&#563;)&sup2;. ",
            t->chains, t->kept, maxlag);
    if (t->kept > PP_REPORT_MAX_POINTS)
        fprintf(f,
                "Traces longer than %d draws are drawn as the minimum and maximum of each "
                "block of draws, so single spikes stay visible.",
                PP_REPORT_MAX_POINTS);
    fputs("</p>\n", f);
    legend(f, t->chains);
    double *acf = malloc((size_t)t->chains * (maxlag + 1) * sizeof *acf);
    if (!acf)
        return pp_fail(PP_ERR_NOMEM, "report: out of memory for autocorrelations");
    pp_status st = PP_OK;
    for (size_t col = 0; col < t->ncols && st == PP_OK; col++)
        st = trace_pair(pg, col, maxlag, acf);
    free(acf);
    fputs("</section>\n", f);
    return st;
}

static void histogram(page *pg, const char *name)
{
    const pp_trace *t = pg->in->trace;
    FILE *f = pg->f;
    size_t col = 0;
    while (col < t->ncols && strcmp(t->names[col], name) != 0)
        col++;
    char dn[160];
    display_name(name, dn, sizeof dn);
    double v;
    if (col == t->ncols) {
        fprintf(f, "<p class=\"note\" id=\"hist-%s-note\">No %s column in the trace.</p>\n", name,
                name);
    } else if (column_fixed(pg->in, name) || column_constant(t, col, &v)) {
        fprintf(f, "<p class=\"note\" id=\"hist-%s-note\">", name);
        pp_report_escape(f, dn);
        same_note(f, column_fixed(pg->in, name), t->values[col], ": no histogram.</p>\n");
    } else {
        char id[64];
        snprintf(id, sizeof id, "hist-%s", name);
        pp_report_svg_hist(f, id, dn, t->values + col, (size_t)t->chains * t->kept, t->ncols);
    }
}

static void histograms_section(page *pg)
{
    if (!pg->in->trace || pg->in->trace->kept == 0 || pg->in->trace->chains == 0)
        return;
    fputs("<section id=\"histograms\"><h2>Hyperparameter posteriors</h2>\n"
          "<p>Histograms of the draws of all chains pooled.</p>\n<div class=\"pair\">\n",
          pg->f);
    histogram(pg, "lambda");
    histogram(pg, "delta");
    for (size_t j = 0; j < pg->in->trace->ncols; j++)
        if (strcmp(pg->in->trace->names[j], "psf_width") == 0)
            histogram(pg, "psf_width"); /* only when the width was sampled */
    fputs("</div></section>\n", pg->f);
}

/* ---- Tables ------------------------------------------------------------- */

static void diagnostics_section(page *pg)
{
    const pp_report_input *in = pg->in;
    FILE *f = pg->f;
    double ess_min = PP_REPORT_ESS_PER_CHAIN * pg->chains;
    fprintf(f,
            "<section id=\"diagnostics\"><h2>Convergence diagnostics</h2>\n"
            "<p>Rank-normalised split-R&#770;, bulk and tail effective sample sizes (ESS) "
            "and the Monte Carlo standard error (MCSE) of the mean. Flagged in colour: "
            "R&#770; &gt; %.2f, or ESS &lt; %.0f per chain (here &lt; %.0f for %u "
            "chains). These thresholds are common practice (Vehtari et al., Bayesian "
            "Analysis 2021).</p>\n",
            PP_REPORT_RHAT_MAX, PP_REPORT_ESS_PER_CHAIN, ess_min, pg->chains);
    if (in->nscalars == 0) {
        fputs("<p id=\"diag-none\">Diagnostics were not computed for this run.</p></section>\n", f);
        return;
    }
    size_t flagged = 0;
    fputs("<table id=\"diag-table\">\n<tr><th>quantity</th><th>mean</th><th>sd</th>"
          "<th>MCSE</th><th>R&#770;</th><th>bulk ESS</th><th>tail ESS</th></tr>\n",
          f);
    for (size_t i = 0; i < in->nscalars; i++) {
        const pp_report_scalar *s = &in->scalars[i];
        int wr = s->rhat > PP_REPORT_RHAT_MAX, wb = s->ess_bulk < ess_min, wt = s->ess_tail < ess_min;
        flagged += wr || wb || wt;
        fputs("<tr><td>", f);
        pp_report_escape(f, s->name);
        fputs("</td>", f);
        pp_report_num_cell(f, s->mean, 0, "");
        pp_report_num_cell(f, s->sd, 0, "");
        pp_report_num_cell(f, s->mcse, 0, "");
        pp_report_num_cell(f, s->rhat, wr, "high");
        pp_report_num_cell(f, s->ess_bulk, wb, "low");
        pp_report_num_cell(f, s->ess_tail, wt, "low");
        fputs("</tr>\n", f);
    }
    fprintf(f, "</table>\n<p id=\"diag-count\">%zu of %zu quantities flagged.</p></section>\n",
            flagged, in->nscalars);
}

static void settings_section(page *pg)
{
    const pp_report_input *in = pg->in;
    FILE *f = pg->f;
    fputs("<section id=\"settings\"><h2>Settings</h2>\n<table id=\"settings-table\">\n", f);
    for (size_t i = 0; i < in->nsettings; i++) {
        fputs("<tr><th>", f);
        pp_report_escape(f, in->settings_keys[i]);
        fputs("</th><td>", f);
        pp_report_escape(f, in->settings_values[i]);
        fputs("</td></tr>\n", f);
    }
    fprintf(f, "<tr><th>credible level of the bounds</th><td>%.4g%%</td></tr>\n",
            100.0 * in->level);
    fputs("</table></section>\n", f);
}

/* ---- The page ----------------------------------------------------------- */

static void head(page *pg, const char *title)
{
    FILE *f = pg->f;
    fputs("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
          "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n"
          "<title>pixpost report: ",
          f);
    pp_report_escape(f, title);
    const pp_image *any = pg->in->frame ? pg->in->frame : pg->in->mean;
    fprintf(f,
            "</title>\n<style>\n%s%s%s</style>\n</head>\n<body>\n<header>\n"
            "<h1>Posterior reconstruction report</h1>\n<p class=\"sub\" id=\"title\">",
            CSS, first_image(pg->in) && first_image(pg->in)->depth > 1 ? PP_REPORT_VOLUME_CSS : "",
            pg->in->regions ? PP_REPORT_REGIONS_CSS : "");
    pp_report_escape(f, title);
    if (any && any->depth > 1)
        fprintf(f, " &middot; %zu&times;%zu&times;%zu voxels (x, y, z)", any->width, any->height,
                any->depth);
    else if (any)
        fprintf(f, " &middot; %zu&times;%zu pixels", any->width, any->height);
    if (strcmp(pg->units, pg->frame_units) != 0) {
        fputs(" &middot; frame in ", f);
        pp_report_escape(f, pg->frame_units);
        fputs(", estimates in ", f);
    } else {
        fputs(" &middot; values in ", f);
    }
    pp_report_escape(f, pg->units);
    int warn_first = pg->in->nwarnings > 0;
    int checks = pg->in->residual || pg->in->checks_summary || pg->in->nchecks;
    fprintf(f,
            "</p>\n<nav>%s%s<a href=\"#images\">images</a>%s<a href=\"#traces\">traces</a>"
            "<a href=\"#histograms\">hyperparameters</a><a href=\"#diagnostics\">diagnostics</a>"
            "<a href=\"#settings\">settings</a>%s<a href=\"#cautions\">cautions</a></nav>\n",
            warn_first ? "<a href=\"#warnings\">warnings</a>" : "",
            checks ? "<a href=\"#checks\">checks</a>" : "",
            pg->in->regions ? "<a href=\"#regions\">regions</a>" : "",
            warn_first ? "" : "<a href=\"#warnings\">warnings</a>");
    pp_report_verdict_banner(f, pg->in);
    fputs("</header>\n", f);
}

static void tail(FILE *f)
{
    fprintf(f,
            "<section id=\"cautions\"><h2>Cautions</h2>\n<p id=\"cautions-text\">%s</p>\n"
            "</section>\n<footer>Written by pixpost %s. This page is self-contained: "
            "it loads nothing from anywhere.</footer>\n</body>\n</html>\n",
            CAUTIONS, PIXPOST_VERSION);
}

/* Checks sizes and pointers; the first non-NULL image fixes the size. */
static pp_status validate(const char *path, const pp_report_input *in)
{
    const pp_image *im[6] = {in->frame, in->mean, in->sd, in->lo, in->hi, in->residual};
    const pp_image *ref = NULL;
    for (int i = 0; i < 6; i++) {
        if (!im[i])
            continue;
        if (!im[i]->data || im[i]->width == 0 || im[i]->height == 0)
            return pp_fail(PP_ERR_ARG, "%s: report image %d is empty", path, i);
        if (!ref)
            ref = im[i];
        else if (im[i]->width != ref->width || im[i]->height != ref->height ||
                 im[i]->depth != ref->depth)
            return pp_fail(PP_ERR_ARG,
                           "%s: report images differ in size (%zux%zux%zu vs %zux%zux%zu, x y z)",
                           path, im[i]->width, im[i]->height, im[i]->depth, ref->width, ref->height,
                           ref->depth);
    }
    if (!(in->level > 0 && in->level < 1))
        return pp_fail(PP_ERR_ARG, "%s: credible level must be in (0, 1), got %g", path, in->level);
    const pp_trace *t = in->trace;
    if (t && t->chains && t->kept && t->ncols && (!t->values || !t->names))
        return pp_fail(PP_ERR_ARG, "%s: report trace has no values or names", path);
    if ((in->nscalars && !in->scalars) || (in->nwarnings && !in->warnings) ||
        (in->nnotes && !in->notes) || (in->nchecks && !in->checks) ||
        (in->nsettings && (!in->settings_keys || !in->settings_values)))
        return pp_fail(PP_ERR_ARG, "%s: report table with a count but no rows", path);
    return PP_OK;
}

void pp_report_input_init(pp_report_input *in)
{
    memset(in, 0, sizeof *in);
    in->level = 0.95;
}

pp_status pp_report_write(const char *path, const pp_report_input *in)
{
    pp_status st = validate(path, in);
    if (st != PP_OK)
        return st;
    char tmp[PP_PATH_MAX];
    const char *units = in->units ? in->units : "input units";
    page pg = {NULL, in, units, in->frame_units ? in->frame_units : units, in->chains};
    if (pg.chains == 0)
        pg.chains = in->trace && in->trace->chains ? in->trace->chains : 1;
    if ((st = pp_atomic_open(path, tmp, &pg.f)) != PP_OK)
        return st;
    head(&pg, in->title ? in->title : "pixpost run");
    int warn_first = in->nwarnings > 0; /* what needs reading first, first */
    if (warn_first)
        pp_report_warnings_section(pg.f, in);
    pp_report_checks_section(pg.f, in);
    st = images_section(&pg);
    if (st == PP_OK)
        st = pp_report_regions_section(pg.f, in);
    if (st == PP_OK)
        st = traces_section(&pg);
    if (st == PP_OK) {
        histograms_section(&pg);
        diagnostics_section(&pg);
        settings_section(&pg);
        if (!warn_first)
            pp_report_warnings_section(pg.f, in);
        tail(pg.f);
    }
    if (st != PP_OK) {
        pp_atomic_abort(tmp, pg.f);
        return st;
    }
    return pp_atomic_commit(path, tmp, pg.f);
}
