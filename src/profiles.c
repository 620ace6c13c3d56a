/* pixpost — intensity profiles along lines (include/pixpost/profiles.h):
 * the points and their bilinear weights, a draw's values at them, and the
 * profile_<k>.csv files. Cost: O(points) per draw; writing O(S log S) per
 * point for S draws (the sort behind the interval). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/regions_extra.h"

typedef struct profile_point {
    double r, c, dist;
    size_t idx[4]; /* frame pixels (row * width + col) */
    double w[4];   /* bilinear weights, summing to 1 */
} profile_point;

struct pp_profiles {
    size_t height, width, nlines, npts;
    size_t *first, *count; /* per line */
    profile_point *pt;
};

void pp_profiles_free(pp_profiles *p)
{
    if (!p)
        return;
    free(p->first);
    free(p->count);
    free(p->pt);
    free(p);
}

/* The point at (r, c): its four neighbours and weights (an index repeats
 * with weight 0 at the last row or column). */
static void place(profile_point *q, double r, double c, size_t h, size_t w)
{
    size_t r0 = (size_t)floor(r), c0 = (size_t)floor(c);
    r0 = r0 + 1 < h ? r0 : h - 1;
    c0 = c0 + 1 < w ? c0 : w - 1;
    size_t r1 = r0 + 1 < h ? r0 + 1 : r0, c1 = c0 + 1 < w ? c0 + 1 : c0;
    double fr = r - (double)r0, fc = c - (double)c0;
    q->r = r, q->c = c;
    q->idx[0] = r0 * w + c0, q->w[0] = (1 - fr) * (1 - fc);
    q->idx[1] = r0 * w + c1, q->w[1] = (1 - fr) * fc;
    q->idx[2] = r1 * w + c0, q->w[2] = fr * (1 - fc);
    q->idx[3] = r1 * w + c1, q->w[3] = fr * fc;
}

pp_status pp_profiles_plan(const double *lines, size_t nlines, size_t height, size_t width,
                           pp_profiles **out)
{
    *out = NULL;
    size_t total = 0;
    for (size_t k = 0; k < nlines; k++) {
        const double *l = lines + 4 * k;
        for (int e = 0; e < 4; e++) {
            double lim = (double)((e % 2 ? width : height) - 1);
            if (!isfinite(l[e]) || l[e] < 0 || l[e] > lim)
                return pp_fail(PP_ERR_ARG,
                               "profile %zu (%g,%g,%g,%g): the %s %g lies outside the frame "
                               "(%s 0 to %g); give ends inside the %zux%zu frame (r0,c0,r1,c1, "
                               "rows and columns from 0)",
                               k + 1, l[0], l[1], l[2], l[3], e % 2 ? "column" : "row", l[e],
                               e % 2 ? "columns" : "rows", lim, width, height);
        }
        total += (size_t)ceil(fmax(fabs(l[2] - l[0]), fabs(l[3] - l[1]))) + 1;
    }
    pp_profiles *p = calloc(1, sizeof *p);
    if (!p || !(p->first = malloc((nlines + 1) * sizeof *p->first)) ||
        !(p->count = malloc((nlines + 1) * sizeof *p->count)) ||
        !(p->pt = malloc((total + 1) * sizeof *p->pt))) {
        pp_profiles_free(p);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the profiles");
    }
    p->height = height, p->width = width, p->nlines = nlines;
    size_t j = 0;
    for (size_t k = 0; k < nlines; k++) {
        const double *l = lines + 4 * k;
        double dr = l[2] - l[0], dc = l[3] - l[1], len = sqrt(dr * dr + dc * dc);
        size_t n = (size_t)ceil(fmax(fabs(dr), fabs(dc))) + 1;
        p->first[k] = j;
        p->count[k] = n;
        for (size_t i = 0; i < n; i++, j++) {
            double t = n > 1 ? (double)i / (double)(n - 1) : 0.0;
            place(&p->pt[j], l[0] + t * dr, l[1] + t * dc, height, width);
            p->pt[j].dist = t * len;
        }
    }
    p->npts = j;
    *out = p;
    return PP_OK;
}

size_t pp_profiles_lines(const pp_profiles *p) { return p->nlines; }
size_t pp_profiles_points(const pp_profiles *p) { return p->npts; }
size_t pp_profiles_line_points(const pp_profiles *p, size_t k) { return p->count[k]; }
size_t pp_profiles_line_first(const pp_profiles *p, size_t k) { return p->first[k]; }
void pp_profiles_point(const pp_profiles *p, size_t j, double *row, double *col, double *dist)
{
    *row = p->pt[j].r;
    *col = p->pt[j].c;
    *dist = p->pt[j].dist;
}
int pp_profiles_fit(const pp_profiles *p, size_t height, size_t width)
{
    return p->height == height && p->width == width;
}

void pp_profiles_eval(const pp_profiles *p, const double *f, size_t row, double scale,
                      double *out)
{
    for (size_t j = 0; j < p->npts; j++) {
        const profile_point *q = &p->pt[j];
        double v = 0;
        for (int a = 0; a < 4; a++)
            v += q->w[a] * f[q->idx[a] / p->width * row + q->idx[a] % p->width];
        out[j] = scale * v;
    }
}

pp_status pp_profiles_write_csv(const char *dir, const pp_profiles *p, size_t k, const double *v,
                                size_t chains, size_t kept, size_t cap, size_t stride,
                                size_t offset, double level)
{
    char path[PP_PATH_MAX], tmp[PP_PATH_MAX];
    int len = snprintf(path, sizeof path, "%s/profile_%zu.csv", dir, k + 1);
    if (len < 0 || len >= (int)sizeof path)
        return pp_fail(PP_ERR_ARG, "%s: output folder path too long", dir);
    double *x = malloc(chains * kept * sizeof *x);
    if (!x)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a profile's draws");
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK) {
        free(x);
        return st;
    }
    fputs("point,row,col,distance,mean,sd,lo,hi,mcse_mean\n", f);
    for (size_t i = 0; i < p->count[k] && st == PP_OK; i++) {
        size_t j = p->first[k] + i, col = offset + j;
        for (size_t c = 0; c < chains; c++)
            for (size_t d = 0; d < kept; d++)
                x[c * kept + d] = v[(c * cap + d) * stride + col];
        pp_series_summary m;
        st = pp_series_summarise(x, chains, kept, level, &m);
        if (st == PP_OK)
            fprintf(f, "%zu,%.6g,%.6g,%.6g,%.10g,%.10g,%.10g,%.10g,%.6g\n", i, p->pt[j].r,
                    p->pt[j].c, p->pt[j].dist, m.mean, m.sd, m.lo, m.hi, m.diag.mcse_mean);
    }
    free(x);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, f);
        return st;
    }
    return pp_atomic_commit(path, tmp, f);
}
