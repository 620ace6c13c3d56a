/* pixpost — spots (src/pixpost/spots.h): the candidates of a pilot
 * frame or volume (strict 3 x 3 or 3 x 3 x 3 local maxima with a positive
 * ring contrast), their rings, a draw's contrasts, and spots.csv. Cost:
 * planning O(image x m + K log K); a draw O(K m) for K spots of m ring
 * pixels; writing O(S log S) per spot for S draws. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/regions.h"
#include "pixpost/spots.h"
#include "pixpost/regions_extra.h"

typedef struct spot {
    size_t z, r, c, first, m; /* ring: m offsets from ring[first] */
    double pilot;             /* the pilot's contrast */
} spot;

struct pp_spots {
    size_t depth, height, width, n;
    double radius, radius_z;
    spot *s;
    size_t *ring; /* image indices ((z * height + row) * width + col) */
};

void pp_spots_free(pp_spots *s)
{
    if (!s)
        return;
    free(s->s);
    free(s->ring);
    free(s);
}

size_t pp_spots_count(const pp_spots *s) { return s->n; }
size_t pp_spots_z(const pp_spots *s, size_t k) { return s->s[k].z; }
size_t pp_spots_row(const pp_spots *s, size_t k) { return s->s[k].r; }
size_t pp_spots_col(const pp_spots *s, size_t k) { return s->s[k].c; }
double pp_spots_pilot(const pp_spots *s, size_t k) { return s->s[k].pilot; }
size_t pp_spots_ring(const pp_spots *s, size_t k) { return s->s[k].m; }
double pp_spots_radius(const pp_spots *s) { return s->radius; }
double pp_spots_radius_z(const pp_spots *s) { return s->depth > 1 ? s->radius_z : 0.0; }
int pp_spots_fit(const pp_spots *s, size_t depth, size_t height, size_t width)
{
    return s->depth == depth && s->height == height && s->width == width;
}

/* The image value at (z, r, c) when inside, else NaN. */
static double at(const pp_image *f, long z, long r, long c)
{
    if (z < 0 || r < 0 || c < 0 || z >= (long)f->depth || r >= (long)f->height ||
        c >= (long)f->width)
        return NAN;
    return f->data[((size_t)z * f->height + (size_t)r) * f->width + (size_t)c];
}

/* 1 when voxel (z, r, c) of f is a strict local maximum of its 3 x 3 (x 3
 * on a volume) neighbourhood, ties going to the first in (slice, row,
 * column) order. */
static int local_max(const pp_image *f, size_t z, size_t r, size_t c)
{
    double v = at(f, (long)z, (long)r, (long)c);
    if (!isfinite(v))
        return 0;
    long e = f->depth > 1;
    for (long dz = -e; dz <= e; dz++)
        for (long dr = -1; dr <= 1; dr++)
            for (long dc = -1; dc <= 1; dc++) {
                if (!dz && !dr && !dc)
                    continue;
                double u = at(f, (long)z + dz, (long)r + dr, (long)c + dc);
                if (u > v ||
                    (u == v && (dz < 0 || (dz == 0 && (dr < 0 || (dr == 0 && dc < 0))))))
                    return 0;
            }
    return 1;
}

/* The ring offsets of radius R (axial Rz, slices; ez 0 on a frame): (dz,
 * dr, dc) with R - 1/2 <= d < R + 1/2, d = sqrt((dz R / Rz)^2 + dr^2 +
 * dc^2). Counts them when off is NULL. */
static size_t ring_offsets(double R, double Rz, long ez, long *off)
{
    long e = (long)ceil(R + 0.5);
    size_t n = 0;
    for (long z = -ez; z <= ez; z++)
        for (long a = -e; a <= e; a++)
            for (long b = -e; b <= e; b++) {
                double sz = ez ? (double)z * R / Rz : 0.0;
                double d = sqrt(sz * sz + (double)(a * a + b * b));
                if (d >= R - 0.5 && d < R + 0.5) {
                    if (off)
                        off[3 * n] = z, off[3 * n + 1] = a, off[3 * n + 2] = b;
                    n++;
                }
            }
    return n;
}

static int by_pilot(const void *a, const void *b)
{
    const spot *x = a, *y = b;
    if (x->pilot != y->pilot)
        return x->pilot < y->pilot ? 1 : -1;
    if (x->z != y->z)
        return (x->z > y->z) - (x->z < y->z);
    size_t i = x->r, j = y->r;
    return i != j ? (i > j) - (i < j) : (x->c > y->c) - (x->c < y->c);
}

pp_status pp_spots_plan(const pp_image *pilot, double radius, double radius_z, pp_spots **out)
{
    *out = NULL;
    if (!pilot)
        return pp_fail(PP_ERR_ARG, "spots: no pilot image");
    if (!(radius >= 1 && radius <= 50))
        return pp_fail(PP_ERR_ARG, "the spots' ring radius %g is out of range; give 1 to 50 "
                                   "pixels (about the PSF's width or the spot's size)", radius);
    int vol = pilot->depth > 1;
    if (vol && !(radius_z >= 1 && radius_z <= 50))
        return pp_fail(PP_ERR_ARG, "the spots' axial ring radius %g is out of range; give 1 to "
                                   "50 slices (about the PSF's axial width or the spot's depth)",
                       radius_z);
    size_t d = pilot->depth, h = pilot->height, w = pilot->width;
    long ez = vol ? (long)ceil(radius_z * (radius + 0.5) / radius) : 0;
    size_t m0 = ring_offsets(radius, radius_z, ez, NULL);
    long *off = malloc((3 * m0 + 3) * sizeof *off);
    pp_spots *s = calloc(1, sizeof *s);
    spot *all = NULL;
    size_t nall = 0;
    if (!off || !s)
        goto nomem;
    ring_offsets(radius, radius_z, ez, off);
    for (size_t z = 0; z < d; z++)
        for (size_t r = 0; r < h; r++)
            for (size_t c = 0; c < w; c++)
                nall += local_max(pilot, z, r, c);
    all = malloc((nall + 1) * sizeof *all);
    if (!all)
        goto nomem;
    nall = 0;
    for (size_t z = 0; z < d; z++)
        for (size_t r = 0; r < h; r++)
            for (size_t c = 0; c < w; c++) {
                if (!local_max(pilot, z, r, c))
                    continue;
                double sum = 0;
                size_t m = 0;
                for (size_t j = 0; j < m0; j++) {
                    double u = at(pilot, (long)z + off[3 * j], (long)r + off[3 * j + 1],
                                  (long)c + off[3 * j + 2]);
                    if (isfinite(u))
                        sum += u, m++;
                }
                double con = m ? at(pilot, (long)z, (long)r, (long)c) - sum / (double)m : NAN;
                if (con > 0)
                    all[nall++] = (spot){z, r, c, 0, m, con};
            }
    qsort(all, nall, sizeof *all, by_pilot);
    s->n = nall < PP_SPOTS_MAX ? nall : PP_SPOTS_MAX;
    s->depth = d, s->height = h, s->width = w, s->radius = radius, s->radius_z = radius_z;
    s->s = all;
    all = NULL;
    if (!(s->ring = malloc((s->n * m0 + 1) * sizeof *s->ring)))
        goto nomem;
    size_t n_at = 0;
    for (size_t k = 0; k < s->n; k++) {
        spot *q = &s->s[k];
        q->first = n_at;
        for (size_t j = 0; j < m0; j++) {
            long zz = (long)q->z + off[3 * j], rr = (long)q->r + off[3 * j + 1],
                 cc = (long)q->c + off[3 * j + 2];
            if (!isfinite(at(pilot, zz, rr, cc)))
                continue; /* outside, or NaN */
            s->ring[n_at++] = ((size_t)zz * h + (size_t)rr) * w + (size_t)cc;
        }
    }
    free(off);
    *out = s;
    return PP_OK;
nomem:
    free(off);
    free(all);
    pp_spots_free(s);
    return pp_fail(PP_ERR_NOMEM, "out of memory for the spots");
}

void pp_spots_eval(const pp_spots *s, const double *f, size_t row, size_t slice, double scale,
                   double *out)
{
    size_t w = s->width, plane = s->height * s->width;
    for (size_t k = 0; k < s->n; k++) {
        const spot *q = &s->s[k];
        double sum = 0;
        for (size_t j = 0; j < q->m; j++) {
            size_t i = s->ring[q->first + j], yx = i % plane;
            sum += f[i / plane * slice + yx / w * row + yx % w];
        }
        out[k] = scale * (f[q->z * slice + q->r * row + q->c] - sum / (double)q->m);
    }
}

pp_status pp_spots_write_csv(const char *path, const pp_spots *s, const pp_image *mean,
                             const double *v, size_t chains, size_t kept, size_t cap,
                             size_t stride, size_t offset, double level)
{
    size_t n = chains * kept;
    double *x = malloc((2 * n + 1) * sizeof *x);
    if (!x)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the spots' draws");
    double *ind = x + n;
    char tmp[PP_PATH_MAX];
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK) {
        free(x);
        return st;
    }
    int vol = s->depth > 1;
    fputs(vol ? "spot,z,row,col,ring_voxels," : "spot,row,col,ring_pixels,", f);
    fputs("mean_intensity,mean_local_max,contrast_mean,contrast_sd,"
          "contrast_lo,contrast_hi,p_real,p_real_mcse,rhat,ess_bulk,ess_tail,mcse_mean\n", f);
    int fits = mean && mean->depth == s->depth && mean->width == s->width &&
               mean->height == s->height;
    for (size_t k = 0; k < s->n && st == PP_OK; k++) {
        for (size_t c = 0; c < chains; c++)
            for (size_t d = 0; d < kept; d++) {
                x[c * kept + d] = v[(c * cap + d) * stride + offset + k];
                ind[c * kept + d] = x[c * kept + d] > 0;
            }
        pp_series_summary m, p;
        st = pp_series_summarise(x, chains, kept, level, &m);
        if (st == PP_OK)
            st = pp_series_summarise(ind, chains, kept, level, &p);
        if (st != PP_OK)
            break;
        const spot *q = &s->s[k];
        int mx = fits ? local_max(mean, q->z, q->r, q->c) : 0;
        if (vol)
            fprintf(f, "%zu,%zu,", k + 1, q->z);
        else
            fprintf(f, "%zu,", k + 1);
        fprintf(f, "%zu,%zu,%zu,%.10g,%d,%.10g,%.10g,%.10g,%.10g,%.6g,%.6g,%.6g,%.6g,%.6g,"
                   "%.6g\n",
                q->r, q->c, q->m,
                fits ? mean->data[(q->z * s->height + q->r) * s->width + q->c] : NAN, mx,
                m.mean, m.sd, m.lo, m.hi, p.mean, p.diag.mcse_mean, m.diag.rhat, m.diag.ess_bulk,
                m.diag.ess_tail, m.diag.mcse_mean);
    }
    free(x);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, f);
        return st;
    }
    return pp_atomic_commit(path, tmp, f);
}
