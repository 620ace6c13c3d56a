/* pixpost — the posterior of the regions' totals and means, and of
 * comparisons between regions, from the per-draw totals a sampler records
 * (include/pixpost/regions.h): summaries of per-draw series and the file
 * regions.csv. Every quantity is a function of one draw's totals, so its
 * posterior is exact Monte Carlo over the kept draws, with the diagnostics
 * of include/pixpost/diag.h (R's posterior). Cost: O(S log S) per row for
 * S draws in all. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "stats.h"
#include "pixpost/regions.h"
#include "pixpost/diag_extra.h"
#include "pixpost/regions_extra.h"

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

pp_status pp_series_summarise(const double *x, size_t chains, size_t n, double level,
                              pp_series_summary *out)
{
    size_t s = chains * n;
    pp_status st = pp_diag_compute(x, chains, n, &out->diag);
    if (st != PP_OK)
        return st;
    out->mean = out->diag.mean;
    out->sd = out->diag.sd;
    out->lo = out->hi = NAN;
    double *v = malloc(s * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a region's draws");
    memcpy(v, x, s * sizeof *v);
    int finite = 1;
    for (size_t i = 0; i < s; i++)
        finite &= isfinite(v[i]) != 0;
    if (finite) {
        qsort(v, s, sizeof *v, cmp_double);
        out->lo = pp_quantile_sorted(v, s, 0.5 - 0.5 * level);
        out->hi = pp_quantile_sorted(v, s, 0.5 + 0.5 * level);
    }
    free(v);
    return PP_OK;
}

/* One row: what, labels, pixels (0: none), quantity and the series' summary. */
static pp_status write_row(FILE *f, const char *kind, long a, long b, size_t pixels,
                           const char *quantity, const double *x, size_t chains, size_t n,
                           double level)
{
    pp_series_summary m;
    pp_status st = pp_series_summarise(x, chains, n, level, &m);
    if (st != PP_OK)
        return st;
    fprintf(f, "%s,%ld,", kind, a);
    if (b >= 0)
        fprintf(f, "%ld", b);
    fputc(',', f);
    if (pixels)
        fprintf(f, "%zu", pixels);
    fprintf(f, ",%s,%.10g,%.10g,%.10g,%.10g,%.6g,%.6g,%.6g,%.6g\n", quantity, m.mean, m.sd, m.lo,
            m.hi, m.diag.rhat, m.diag.ess_bulk, m.diag.ess_tail, m.diag.mcse_mean);
    return PP_OK;
}

pp_status pp_regions_write_csv(const char *path, const pp_regions *r, const double *totals,
                               size_t chains, size_t kept, size_t cap, size_t stride,
                               double level,
                               const pp_region_pair *pairs, size_t npairs)
{
    size_t nreg = pp_regions_count(r), s = chains * kept;
    for (size_t p = 0; p < npairs; p++)
        for (int e = 0; e < 2; e++) {
            long lab = e ? pairs[p].b : pairs[p].a;
            if (pp_regions_find(r, lab) < 0)
                return pp_fail(PP_ERR_ARG,
                               "compare %ld/%ld: no pixel has the label %ld; compare labels "
                               "present in the label image",
                               pairs[p].a, pairs[p].b, lab);
        }
    if (kept < 2)
        return pp_fail(PP_ERR_ARG, "regions: %zu kept draws per chain, need at least 2", kept);
    double *x = malloc(3 * s * sizeof *x);
    if (!x)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the regions' draws");
    double *y = x + s, *d = x + 2 * s;
    char tmp[PP_PATH_MAX];
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK) {
        free(x);
        return st;
    }
    fputs("kind,label,label_b,pixels,quantity,mean,sd,lo,hi,rhat,ess_bulk,ess_tail,mcse_mean\n",
          f);
    for (size_t j = 0; j < nreg && st == PP_OK; j++) {
        double np = (double)pp_regions_pixels(r, j);
        for (size_t c = 0; c < chains; c++)
            for (size_t i = 0; i < kept; i++) {
                x[c * kept + i] = totals[(c * cap + i) * stride + j];
                y[c * kept + i] = x[c * kept + i] / np;
            }
        long lab = pp_regions_label(r, j);
        st = write_row(f, "region", lab, -1, (size_t)np, "total", x, chains, kept, level);
        if (st == PP_OK)
            st = write_row(f, "region", lab, -1, (size_t)np, "mean", y, chains, kept, level);
    }
    for (size_t p = 0; p < npairs && st == PP_OK; p++) {
        size_t ja = (size_t)pp_regions_find(r, pairs[p].a),
               jb = (size_t)pp_regions_find(r, pairs[p].b);
        double na = (double)pp_regions_pixels(r, ja), nb = (double)pp_regions_pixels(r, jb);
        for (size_t c = 0; c < chains; c++)
            for (size_t i = 0; i < kept; i++) {
                const double *row = totals + (c * cap + i) * stride;
                double ma = row[ja] / na, mb = row[jb] / nb;
                x[c * kept + i] = ma - mb;
                y[c * kept + i] = ma / mb;
                d[c * kept + i] = ma > mb;
            }
        st = write_row(f, "compare", pairs[p].a, pairs[p].b, 0, "difference", x, chains, kept,
                       level);
        if (st == PP_OK)
            st = write_row(f, "compare", pairs[p].a, pairs[p].b, 0, "ratio", y, chains, kept,
                           level);
        if (st == PP_OK)
            st = write_row(f, "compare", pairs[p].a, pairs[p].b, 0, "p_greater", d, chains, kept,
                           level);
    }
    free(x);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, f);
        return st;
    }
    return pp_atomic_commit(path, tmp, f);
}
