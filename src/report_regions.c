/* pixpost — the regions and profiles in report.html (issue #19 items 1
 * and 3): a table of every region's total and mean (posterior mean, sd,
 * equal-tailed credible interval, R-hat, ESS, MCSE), the comparisons
 * (difference and ratio of the means, P(mean_a > mean_b)), a plot of
 * every profile (mean line and credible band, both from the draws), and
 * over the mean image the regions' outlines with their labels and the
 * profiles' lines. Every number comes from the per-draw series the
 * sampler recorded (include/pixpost/regions.h), summarised as regions.csv
 * and profile_<k>.csv are (pp_series_summarise), so the page and the CSV
 * files agree. Rows are flagged by the diagnostics table's thresholds.
 * Cost: O(S log S) per row and per profile point for S draws; the marks
 * O(frame). */
#include "pixpost/report.h"
#include "internal.h"
#include "report_internal.h"
#include "pixpost/regions_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

const char PP_REPORT_REGIONS_CSS[] =
    "svg.regions path{fill:none;stroke:#ffb000;stroke-width:1.5px;"
    "vector-effect:non-scaling-stroke}\n"
    "svg.regions text{fill:#ffd060;stroke:#000;paint-order:stroke;font-weight:bold}\n"
    "svg.regions line{stroke:#ff4fd8;stroke-width:2px;vector-effect:non-scaling-stroke}\n"
    "svg.regions text.pline{fill:#ff9be9}\n"
    "svg .band{fill:#9db8e6;fill-opacity:0.55;stroke:none}svg .mid{stroke-width:1.6}\n"
    "svg.regions .spot circle{fill:none;stroke-width:1.5px;vector-effect:non-scaling-stroke}"
    "svg.regions .spot.real circle{stroke:#4dff88}svg.regions .spot.unsure circle"
    "{stroke:#4dff88;stroke-dasharray:2 2;stroke-opacity:0.6}"
    "svg.regions .spot text{fill:#8dffb0;font-size:0.8em}\n"
    "#regions td.warn,#compare-table td.warn{background:#fbe3d6}\n";

/* The region data when there is something to show, else NULL. */
static const pp_report_regions *shown(const pp_report_input *in)
{
    const pp_report_regions *g = in->regions;
    if (!g || (!g->regions && !g->profiles && !g->spots) || !g->draws || g->kept < 2 || !g->chains)
        return NULL;
    return g;
}

/* Series j of the draws into x (chains x kept), times scale. */
static void gather(const pp_report_regions *g, size_t j, double scale, double *x)
{
    for (size_t c = 0; c < g->chains; c++)
        for (size_t i = 0; i < g->kept; i++)
            x[c * g->kept + i] = scale * g->draws[(c * g->cap + i) * g->stride + j];
}

/* The summary's cells (mean, sd, interval, R-hat, ESS, MCSE); returns 1
 * when flagged. interval 0: a probability, the interval shown as a dash. */
static int summary_cells(FILE *f, const pp_series_summary *m, double ess_min, int interval)
{
    int wr = m->diag.rhat > PP_REPORT_RHAT_MAX, wb = m->diag.ess_bulk < ess_min,
        wt = m->diag.ess_tail < ess_min;
    pp_report_num_cell(f, m->mean, 0, "");
    pp_report_num_cell(f, m->sd, 0, "");
    if (interval && isfinite(m->lo))
        fprintf(f, "<td class=\"num\">%.4g &ndash; %.4g</td>", m->lo, m->hi);
    else
        fputs("<td class=\"num\">&ndash;</td>", f);
    pp_report_num_cell(f, m->diag.rhat, wr, "high");
    pp_report_num_cell(f, m->diag.ess_bulk, wb, "low");
    pp_report_num_cell(f, m->diag.ess_tail, wt, "low");
    pp_report_num_cell(f, m->diag.mcse_mean, 0, "");
    return wr || wb || wt;
}

static const char HEAD_CELLS[] = "<th>posterior mean</th><th>sd</th><th>credible interval</th>"
                                 "<th>R&#770;</th><th>bulk ESS</th><th>tail ESS</th>"
                                 "<th>MCSE</th></tr>\n";

static pp_status region_table(FILE *f, const pp_report_input *in, const pp_report_regions *g,
                              double *x, double ess_min, size_t *flagged, size_t *rows)
{
    const pp_regions *r = g->regions;
    fprintf(f,
            "<table id=\"regions-table\">\n<tr><th>region</th><th>pixels</th>"
            "<th>quantity</th>%s",
            HEAD_CELLS);
    for (size_t j = 0; j < pp_regions_count(r); j++) {
        double np = (double)pp_regions_pixels(r, j);
        for (int q = 0; q < 2; q++) {
            pp_series_summary m;
            gather(g, j, q ? 1.0 / np : 1.0, x);
            pp_status st = pp_series_summarise(x, g->chains, g->kept, in->level, &m);
            if (st != PP_OK)
                return st;
            fprintf(f, "<tr class=\"region\" data-label=\"%ld\" data-quantity=\"%s\"><td>%ld</td>"
                       "<td class=\"num\">%zu</td><td>%s</td>",
                    pp_regions_label(r, j), q ? "mean" : "total", pp_regions_label(r, j),
                    pp_regions_pixels(r, j), q ? "mean per pixel" : "total");
            *flagged += summary_cells(f, &m, ess_min, 1);
            ++*rows;
            fputs("</tr>\n", f);
        }
    }
    fputs("</table>\n", f);
    if (!g->npairs)
        return PP_OK;
    fprintf(f,
            "<table id=\"compare-table\">\n<tr><th>regions A / B</th><th>quantity</th>%s",
            HEAD_CELLS);
    size_t s = g->chains * g->kept;
    double *y = malloc(s * sizeof *y);
    if (!y)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the report's comparisons");
    static const char *const what[3] = {"difference", "ratio", "p_greater"};
    static const char *const says[3] = {"difference of the means (A &minus; B)",
                                        "ratio of the means (A / B)", "P(mean of A &gt; mean of B)"};
    for (size_t p = 0; p < g->npairs; p++) {
        long ja = pp_regions_find(r, g->pairs[p].a), jb = pp_regions_find(r, g->pairs[p].b);
        if (ja < 0 || jb < 0)
            continue; /* the caller checked; a missing label is no row */
        double na = (double)pp_regions_pixels(r, (size_t)ja),
               nb = (double)pp_regions_pixels(r, (size_t)jb);
        gather(g, (size_t)ja, 1.0 / na, x);
        gather(g, (size_t)jb, 1.0 / nb, y);
        for (int q = 0; q < 3; q++) {
            double *v = malloc(s * sizeof *v);
            if (!v) {
                free(y);
                return pp_fail(PP_ERR_NOMEM, "out of memory for the report's comparisons");
            }
            for (size_t i = 0; i < s; i++)
                v[i] = q == 0 ? x[i] - y[i] : q == 1 ? x[i] / y[i] : (double)(x[i] > y[i]);
            pp_series_summary m;
            pp_status st = pp_series_summarise(v, g->chains, g->kept, in->level, &m);
            free(v);
            if (st != PP_OK) {
                free(y);
                return st;
            }
            fprintf(f, "<tr class=\"compare\" data-a=\"%ld\" data-b=\"%ld\" data-quantity=\"%s\">"
                       "<td>%ld / %ld</td><td>%s</td>",
                    g->pairs[p].a, g->pairs[p].b, what[q], g->pairs[p].a, g->pairs[p].b,
                    says[q]);
            *flagged += summary_cells(f, &m, ess_min, q < 2);
            ++*rows;
            fputs("</tr>\n", f);
        }
    }
    free(y);
    fputs("</table>\n", f);
    return PP_OK;
}

/* One profile's plot: mean and band at level from the draws. */
static pp_status profile_plot(FILE *f, const pp_report_input *in, const pp_report_regions *g,
                              size_t k, double *x, const char *units)
{
    const pp_profiles *p = g->profiles;
    size_t n = pp_profiles_line_points(p, k), first = pp_profiles_line_first(p, k);
    size_t off = g->regions ? pp_regions_count(g->regions) : 0; /* after the regions' totals */
    double *v = malloc(3 * n * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the report's profiles");
    double *lo = v + n, *hi = v + 2 * n, a[3], b[3], d0, len, d0um, len_um;
    for (size_t i = 0; i < n; i++) {
        pp_series_summary m;
        gather(g, off + first + i, 1.0, x);
        pp_status st = pp_series_summarise(x, g->chains, g->kept, in->level, &m);
        if (st != PP_OK) {
            free(v);
            return st;
        }
        v[i] = m.mean, lo[i] = m.lo, hi[i] = m.hi;
    }
    pp_profiles_point(p, first, a, &d0, &d0um);
    pp_profiles_point(p, first + n - 1, b, &len, &len_um);
    int vol = in->mean && in->mean->depth > 1, um = vol && isfinite(len_um);
    char id[48], title[240];
    snprintf(id, sizeof id, "profile-%zu", k + 1);
    if (vol)
        snprintf(title, sizeof title,
                 "Profile %zu: slice %g, row %g, column %g to slice %g, row %g, column %g", k + 1,
                 a[0], a[1], a[2], b[0], b[1], b[2]);
    else
        snprintf(title, sizeof title, "Profile %zu: row %g, column %g to row %g, column %g",
                 k + 1, a[1], a[2], b[1], b[2]);
    double span = um ? len_um : len;
    pp_series s = {v, n, 1, 0.0, n > 1 ? span / (double)(n - 1) : 1.0};
    pp_plot pl = {id,  title, um ? "distance from the start (\u00b5m)"
                                 : vol ? "distance from the start (voxel steps)"
                                       : "distance from the start (pixels)",
                  units, 560, 240, &s, 1, 0, NAN, NAN};
    fprintf(f, "<figure class=\"profile\" id=\"profile-%zu-figure\">", k + 1);
    pp_report_svg_band(f, &pl, lo, hi);
    fputs("<figcaption>", f);
    pp_report_plain(f, "profile", in->level, vol);
    fprintf(f,
            "<b>Profile %zu</b> (%zu points, one per %s step, %s between %ss; "
            "profile_%zu.csv): line, the posterior mean; band, the central %.4g%% credible "
            "interval at each point, both from the kept draws.%s</figcaption></figure>\n",
            k + 1, n, vol ? "voxel" : "pixel", vol ? "trilinear" : "bilinear",
            vol ? "voxel" : "pixel", k + 1, 100.0 * in->level,
            vol ? " Not drawn on the volume's views." : "");
    free(v);
    return PP_OK;
}

/* P(C > 0) of spot k: the share of draws with a positive contrast. */
static double spot_p(const pp_report_regions *g, size_t k)
{
    size_t off = g->stride - pp_spots_count(g->spots), n = 0;
    for (size_t c = 0; c < g->chains; c++)
        for (size_t i = 0; i < g->kept; i++)
            n += g->draws[(c * g->cap + i) * g->stride + off + k] > 0;
    return (double)n / (double)(g->chains * g->kept);
}

static pp_status spot_table(FILE *f, const pp_report_input *in, const pp_report_regions *g,
                            double *x, double ess_min)
{
    const pp_spots *sp = g->spots;
    size_t n = pp_spots_count(sp), off = g->stride - n, flagged = 0, real = 0;
    int vol = pp_spots_radius_z(sp) > 0;
    fputs("<h3>Spots</h3>\n<p>", f);
    pp_report_plain(f, "spots", in->level, 0);
    if (vol)
        fprintf(f,
                "Candidates: the local maxima of the input volume (3&times;3&times;3 box mean) "
                "that stand above the shell of voxels %g pixels from them in the plane and %g "
                "slices along z; contrast C = centre &minus; shell mean in every kept draw "
                "(spots.csv; README, &ldquo;Regions, profiles and probability maps&rdquo;). Not "
                "drawn on the volume's views. The columns after P(C &gt; 0) describe the "
                "contrast C, in ",
                pp_spots_radius(sp), pp_spots_radius_z(sp));
    else
        fprintf(f,
                "Candidates: the local maxima of the input frame (3&times;3 box mean) that stand "
                "above the ring of pixels %g from them; contrast C = centre &minus; ring mean in "
                "every kept draw (spots.csv; README, &ldquo;Regions, profiles and probability "
                "maps&rdquo;). Marked on the mean image: a circle of the ring's radius and the "
                "spot's number where P(C &gt; 0) &ge; 0.95, a small dashed circle elsewhere. The "
                "columns after P(C &gt; 0) describe the contrast C, in ",
                pp_spots_radius(sp));
    pp_report_escape(f, in->units ? in->units : "input units");
    fputs(".</p>\n", f);
    if (!n) {
        fputs("<p id=\"spots-none\">No candidate spot in this frame.</p>\n", f);
        return PP_OK;
    }
    fprintf(f, "<table id=\"spots-table\">\n<tr><th>spot</th><th>%s</th>"
               "<th>P(C &gt; 0)</th>%s", vol ? "slice, row, column" : "row, column", HEAD_CELLS);
    for (size_t k = 0; k < n; k++) {
        pp_series_summary m;
        gather(g, off + k, 1.0, x);
        pp_status st = pp_series_summarise(x, g->chains, g->kept, in->level, &m);
        if (st != PP_OK)
            return st;
        double p = spot_p(g, k);
        real += p >= 0.95;
        fprintf(f, "<tr class=\"spot\" data-spot=\"%zu\"><td>%zu</td><td>", k + 1, k + 1);
        if (vol)
            fprintf(f, "%zu, ", pp_spots_z(sp, k));
        fprintf(f, "%zu, %zu</td><td class=\"num\">%.4g</td>", pp_spots_row(sp, k),
                pp_spots_col(sp, k), p);
        flagged += summary_cells(f, &m, ess_min, 1);
        fputs("</tr>\n", f);
    }
    fprintf(f, "</table>\n<p id=\"spots-count\">%zu of %zu candidates with P(C &gt; 0) "
               "&ge; 0.95; %zu rows flagged.</p>\n", real, n, flagged);
    return PP_OK;
}

pp_status pp_report_regions_section(FILE *f, const pp_report_input *in)
{
    const pp_report_regions *g = shown(in);
    if (!g)
        return PP_OK;
    const char *units = in->units ? in->units : "input units";
    unsigned chains = in->chains ? in->chains : (unsigned)g->chains;
    double ess_min = PP_REPORT_ESS_PER_CHAIN * chains;
    double *x = malloc(g->chains * g->kept * sizeof *x);
    if (!x)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the report's regions");
    fprintf(f, "<section id=\"regions\"><h2>%s</h2>\n",
            g->spots ? "Regions, profiles and spots" : "Regions and profiles");
    pp_status st = PP_OK;
    size_t flagged = 0, rows = 0;
    if (g->regions) {
        fputs("<p>", f);
        pp_report_plain(f, "regions", in->level, 0);
        fputs("Each region's total and mean per pixel, in ", f);
        pp_report_escape(f, units);
        fprintf(f,
                ", from the region's sum in every kept draw (so the neighbouring pixels' "
                "correlation is counted; regions.csv holds the same numbers). Credible "
                "intervals: central %.4g%%. Flagged in colour as in the diagnostics: "
                "R&#770; &gt; %.2f or ESS &lt; %.0f.</p>\n",
                100.0 * in->level, PP_REPORT_RHAT_MAX, ess_min);
        st = region_table(f, in, g, x, ess_min, &flagged, &rows);
        if (st == PP_OK)
            fprintf(f, "<p id=\"regions-count\">%zu of %zu rows flagged.</p>\n", flagged, rows);
    }
    if (g->spots && st == PP_OK)
        st = spot_table(f, in, g, x, ess_min);
    if (g->profiles && st == PP_OK) {
        fputs("<div class=\"plots\">\n", f);
        for (size_t k = 0; k < pp_profiles_lines(g->profiles) && st == PP_OK; k++)
            st = profile_plot(f, in, g, k, x, units);
        fputs("</div>\n", f);
    }
    fputs("</section>\n", f);
    free(x);
    return st;
}

void pp_report_regions_marks(FILE *f, const pp_report_input *in, size_t w, size_t h)
{
    const pp_report_regions *g = shown(in);
    if (!g)
        return;
    const pp_regions *r = g->regions;
    if (r && !pp_regions_fit(r, 1, h, w))
        r = NULL;
    const pp_profiles *p = g->profiles;
    if (p && !pp_profiles_fit(p, 1, h, w))
        p = NULL;
    const pp_spots *sp = g->spots;
    if (sp && !pp_spots_fit(sp, 1, h, w))
        sp = NULL;
    if (!r && !p && !sp)
        return;
    double u = (double)w / 100.0; /* as the probe marks (src/report_marks.c) */
    fprintf(f,
            "<svg class=\"marks regions\" id=\"mean-regions\" viewBox=\"0 0 %zu %zu\" "
            "preserveAspectRatio=\"none\" style=\"font-size:%.2fpx;stroke-width:%.2fpx\" "
            "aria-hidden=\"true\">\n",
            w, h, 2.6 * u, 0.6 * u);
    size_t nr = r ? pp_regions_count(r) : 0;
    double *cen = nr ? calloc(3 * nr, sizeof *cen) : NULL;
    if (r) {
        fputs("<path class=\"outline\" d=\"", f);
        for (size_t y = 0; y < h; y++)
            for (size_t xx = 0; xx < w; xx++) {
                long a = pp_regions_at(r, y * w + xx);
                if (a < 0)
                    continue;
                if (cen) {
                    cen[3 * a] += (double)xx + 0.5;
                    cen[3 * a + 1] += (double)y + 0.5;
                    cen[3 * a + 2] += 1;
                }
                if (y == 0 || pp_regions_at(r, (y - 1) * w + xx) != a)
                    fprintf(f, "M%zu %zuh1", xx, y);
                if (y + 1 == h || pp_regions_at(r, (y + 1) * w + xx) != a)
                    fprintf(f, "M%zu %zuh1", xx, y + 1);
                if (xx == 0 || pp_regions_at(r, y * w + xx - 1) != a)
                    fprintf(f, "M%zu %zuv1", xx, y);
                if (xx + 1 == w || pp_regions_at(r, y * w + xx + 1) != a)
                    fprintf(f, "M%zu %zuv1", xx + 1, y);
            }
        fputs("\"/>\n", f);
        for (size_t j = 0; cen && j < nr; j++)
            if (cen[3 * j + 2] > 0)
                fprintf(f,
                        "<text class=\"rlabel\" data-label=\"%ld\" x=\"%.2f\" y=\"%.2f\" "
                        "text-anchor=\"middle\" dominant-baseline=\"middle\">%ld</text>\n",
                        pp_regions_label(r, j), cen[3 * j] / cen[3 * j + 2],
                        cen[3 * j + 1] / cen[3 * j + 2], pp_regions_label(r, j));
    }
    free(cen);
    for (size_t k = 0; p && k < pp_profiles_lines(p); k++) {
        size_t first = pp_profiles_line_first(p, k), n = pp_profiles_line_points(p, k);
        double a[3], b[3], d, du;
        pp_profiles_point(p, first, a, &d, &du);
        pp_profiles_point(p, first + n - 1, b, &d, &du);
        double r0 = a[1], c0 = a[2], r1 = b[1], c1 = b[2];
        fprintf(f,
                "<line class=\"pline\" data-profile=\"%zu\" x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" "
                "y2=\"%.2f\"/><text class=\"pline\" x=\"%.2f\" y=\"%.2f\" "
                "text-anchor=\"middle\">P%zu</text>\n",
                k + 1, c0 + 0.5, r0 + 0.5, c1 + 0.5, r1 + 0.5, c0 + 0.5,
                r0 + 0.5 < 4 * u ? r0 + 0.5 + 3.2 * u : r0 + 0.5 - 1.2 * u, k + 1);
    }
    for (size_t k = 0; sp && k < pp_spots_count(sp); k++) {
        double pr = spot_p(g, k), cx = (double)pp_spots_col(sp, k) + 0.5,
               cy = (double)pp_spots_row(sp, k) + 0.5, rad = pp_spots_radius(sp);
        int real = pr >= 0.95; /* the others: a small dashed circle, no number */
        fprintf(f,
                "<g class=\"spot %s\" data-spot=\"%zu\" data-p=\"%.4g\"><circle cx=\"%.2f\" "
                "cy=\"%.2f\" r=\"%.2f\"/>",
                real ? "real" : "unsure", k + 1, pr, cx, cy, real ? rad : 0.6);
        if (real)
            fprintf(f, "<text x=\"%.2f\" y=\"%.2f\">%zu</text>", cx + 0.75 * rad,
                    cy - 0.75 * rad, k + 1);
        fputs("</g>\n", f);
    }
    fputs("</svg>", f);
}
