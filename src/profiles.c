/* pixpost — intensity profiles along lines (src/pixpost/profiles.h):
 * the points and their bilinear (frame) or trilinear (volume) weights, a
 * draw's values at them, and the profile_<k>.csv files. Cost: O(points)
 * per draw; writing O(S log S) per point for S draws (the sort behind the
 * interval). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/regions_extra.h"

typedef struct profile_point {
    double z, r, c, dist, dist_um;
    size_t idx[8]; /* image pixels ((z * height + row) * width + col) */
    double w[8];   /* weights, summing to 1: the first 4 on a frame */
} profile_point;

struct pp_profiles {
    size_t depth, height, width, nlines, npts;
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

/* The lower neighbour of x on an axis of n and the weight of the upper
 * one: (i0, i1, f), i1 repeating i0 at the last index. */
static void axis(double x, size_t n, size_t *i0, size_t *i1, double *f)
{
    size_t a = (size_t)floor(x);
    a = a + 1 < n ? a : n - 1;
    *i0 = a;
    *i1 = a + 1 < n ? a + 1 : a;
    *f = x - (double)a;
}

/* The point at (z, r, c): its 8 neighbours and weights (an index repeats
 * with weight 0 at the last slice, row or column; on a frame z = 0 and the
 * upper slice's four have weight 0). */
static void place(profile_point *q, double z, double r, double c, size_t d, size_t h, size_t w)
{
    size_t z0, z1, r0, r1, c0, c1;
    double fz, fr, fc;
    axis(z, d, &z0, &z1, &fz);
    axis(r, h, &r0, &r1, &fr);
    axis(c, w, &c0, &c1, &fc);
    q->z = z, q->r = r, q->c = c;
    const size_t zs[2] = {z0, z1}, rs[2] = {r0, r1}, cs[2] = {c0, c1};
    const double wz[2] = {1 - fz, fz}, wr[2] = {1 - fr, fr}, wc[2] = {1 - fc, fc};
    for (int a = 0; a < 8; a++) {
        int iz = a >> 2, ir = (a >> 1) & 1, ic = a & 1;
        q->idx[a] = (zs[iz] * h + rs[ir]) * w + cs[ic];
        q->w[a] = wz[iz] * (wr[ir] * wc[ic]); /* on a frame exactly the bilinear weights */
    }
}

pp_status pp_profiles_plan(const double *lines, size_t nlines, size_t depth, size_t height,
                           size_t width, const double *voxel, pp_profiles **out)
{
    *out = NULL;
    size_t total = 0;
    const size_t n3[3] = {depth, height, width};
    static const char *const axname[3] = {"slice", "row", "column"};
    for (size_t k = 0; k < nlines; k++) {
        const double *l = lines + 6 * k;
        for (int e = 0; e < 6; e++) {
            double lim = (double)(n3[e % 3] - 1);
            if (!isfinite(l[e]) || l[e] < 0 || l[e] > lim) {
                if (depth > 1 || e % 3 == 0)
                    return pp_fail(PP_ERR_ARG,
                                   "profile %zu (%g,%g,%g,%g,%g,%g): the %s %g lies outside the "
                                   "volume (%ss 0 to %g); give ends inside the %zu slices of "
                                   "%zux%zu (z0,r0,c0,z1,r1,c1, slices, rows and columns from 0)",
                                   k + 1, l[0], l[1], l[2], l[3], l[4], l[5], axname[e % 3], l[e],
                                   axname[e % 3], lim, depth, width, height);
                return pp_fail(PP_ERR_ARG,
                               "profile %zu (%g,%g,%g,%g): the %s %g lies outside the frame "
                               "(%s 0 to %g); give ends inside the %zux%zu frame (r0,c0,r1,c1, "
                               "rows and columns from 0)",
                               k + 1, l[1], l[2], l[4], l[5], e % 3 == 2 ? "column" : "row", l[e],
                               e % 3 == 2 ? "columns" : "rows", lim, width, height);
            }
        }
        total += (size_t)ceil(fmax(fabs(l[3] - l[0]), fmax(fabs(l[4] - l[1]), fabs(l[5] - l[2])))) + 1;
    }
    pp_profiles *p = calloc(1, sizeof *p);
    if (!p || !(p->first = malloc((nlines + 1) * sizeof *p->first)) ||
        !(p->count = malloc((nlines + 1) * sizeof *p->count)) ||
        !(p->pt = malloc((total + 1) * sizeof *p->pt))) {
        pp_profiles_free(p);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the profiles");
    }
    int known = voxel && voxel[0] > 0 && voxel[1] > 0 && voxel[2] > 0;
    p->depth = depth, p->height = height, p->width = width, p->nlines = nlines;
    size_t j = 0;
    for (size_t k = 0; k < nlines; k++) {
        const double *l = lines + 6 * k;
        double dz = l[3] - l[0], dr = l[4] - l[1], dc = l[5] - l[2];
        /* a frame's length as before volumes: sqrt(dr^2 + dc^2) */
        double len = depth > 1 ? sqrt(dz * dz + dr * dr + dc * dc) : sqrt(dr * dr + dc * dc);
        double len_um = known ? sqrt(dz * dz * voxel[0] * voxel[0] + dr * dr * voxel[1] * voxel[1] +
                                     dc * dc * voxel[2] * voxel[2])
                              : NAN;
        size_t n = (size_t)ceil(fmax(fabs(dz), fmax(fabs(dr), fabs(dc)))) + 1;
        p->first[k] = j;
        p->count[k] = n;
        for (size_t i = 0; i < n; i++, j++) {
            double t = n > 1 ? (double)i / (double)(n - 1) : 0.0;
            place(&p->pt[j], l[0] + t * dz, l[1] + t * dr, l[2] + t * dc, depth, height, width);
            p->pt[j].dist = t * len;
            p->pt[j].dist_um = t * len_um;
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
void pp_profiles_point(const pp_profiles *p, size_t j, double pos[3], double *dist,
                       double *dist_um)
{
    pos[0] = p->pt[j].z;
    pos[1] = p->pt[j].r;
    pos[2] = p->pt[j].c;
    *dist = p->pt[j].dist;
    *dist_um = p->pt[j].dist_um;
}
int pp_profiles_fit(const pp_profiles *p, size_t depth, size_t height, size_t width)
{
    return p->depth == depth && p->height == height && p->width == width;
}

void pp_profiles_eval(const pp_profiles *p, const double *f, size_t row, size_t slice,
                      double scale, double *out)
{
    size_t plane = p->height * p->width, na = p->depth > 1 ? 8 : 4;
    for (size_t j = 0; j < p->npts; j++) {
        const profile_point *q = &p->pt[j];
        double v = 0;
        for (size_t a = 0; a < na; a++) {
            size_t i = q->idx[a], z = i / plane, yx = i % plane;
            v += q->w[a] * f[z * slice + yx / p->width * row + yx % p->width];
        }
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
    int vol = p->depth > 1;
    fputs(vol ? "point,z,row,col,distance,distance_um,mean,sd,lo,hi,mcse_mean\n"
              : "point,row,col,distance,mean,sd,lo,hi,mcse_mean\n",
          f);
    for (size_t i = 0; i < p->count[k] && st == PP_OK; i++) {
        size_t j = p->first[k] + i, col = offset + j;
        for (size_t c = 0; c < chains; c++)
            for (size_t d = 0; d < kept; d++)
                x[c * kept + d] = v[(c * cap + d) * stride + col];
        pp_series_summary m;
        st = pp_series_summarise(x, chains, kept, level, &m);
        if (st != PP_OK)
            break;
        const profile_point *q = &p->pt[j];
        if (vol)
            fprintf(f, "%zu,%.6g,%.6g,%.6g,%.6g,%.6g,", i, q->z, q->r, q->c, q->dist, q->dist_um);
        else
            fprintf(f, "%zu,%.6g,%.6g,%.6g,", i, q->r, q->c, q->dist);
        fprintf(f, "%.10g,%.10g,%.10g,%.10g,%.6g\n", m.mean, m.sd, m.lo, m.hi, m.diag.mcse_mean);
    }
    free(x);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, f);
        return st;
    }
    return pp_atomic_commit(path, tmp, f);
}
