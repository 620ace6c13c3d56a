/* pixpost — spots (include/pixpost/spots.h): the candidates of a pilot
 * frame (strict 3 x 3 local maxima with a positive ring contrast), their
 * rings, a draw's contrasts, and spots.csv. Cost: planning O(frame x m +
 * K log K); a draw O(K m) for K spots of m ring pixels; writing O(S log S)
 * per spot for S draws. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/regions.h"
#include "pixpost/spots.h"
#include "pixpost/regions_extra.h"

typedef struct spot {
    size_t r, c, first, m; /* ring: m offsets from ring[first] */
    double pilot;          /* the pilot's contrast */
} spot;

struct pp_spots {
    size_t height, width, n;
    double radius;
    spot *s;
    size_t *ring; /* frame indices (row * width + col) */
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
size_t pp_spots_row(const pp_spots *s, size_t k) { return s->s[k].r; }
size_t pp_spots_col(const pp_spots *s, size_t k) { return s->s[k].c; }
double pp_spots_pilot(const pp_spots *s, size_t k) { return s->s[k].pilot; }
size_t pp_spots_ring(const pp_spots *s, size_t k) { return s->s[k].m; }
double pp_spots_radius(const pp_spots *s) { return s->radius; }
int pp_spots_fit(const pp_spots *s, size_t height, size_t width)
{
    return s->height == height && s->width == width;
}

/* 1 when pixel (r, c) of f (h x w) is a strict local maximum of its 3 x 3
 * neighbourhood, ties going to the first in row order. */
static int local_max(const double *f, size_t h, size_t w, size_t r, size_t c)
{
    double v = f[r * w + c];
    if (!isfinite(v))
        return 0;
    for (long dr = -1; dr <= 1; dr++)
        for (long dc = -1; dc <= 1; dc++) {
            long rr = (long)r + dr, cc = (long)c + dc;
            if ((!dr && !dc) || rr < 0 || cc < 0 || rr >= (long)h || cc >= (long)w)
                continue;
            double u = f[(size_t)rr * w + (size_t)cc];
            if (u > v || (u == v && (dr < 0 || (dr == 0 && dc < 0))))
                return 0;
        }
    return 1;
}

/* The ring offsets of radius R: (dr, dc) with R - 1/2 <= |d| < R + 1/2. */
static size_t ring_offsets(double R, long *dr, long *dc, size_t max)
{
    long e = (long)ceil(R + 0.5);
    size_t n = 0;
    for (long a = -e; a <= e; a++)
        for (long b = -e; b <= e; b++) {
            double d = sqrt((double)(a * a + b * b));
            if (d >= R - 0.5 && d < R + 0.5 && n < max)
                dr[n] = a, dc[n++] = b;
        }
    return n;
}

static int by_pilot(const void *a, const void *b)
{
    const spot *x = a, *y = b;
    if (x->pilot != y->pilot)
        return x->pilot < y->pilot ? 1 : -1;
    size_t i = x->r, j = y->r;
    return i != j ? (i > j) - (i < j) : (x->c > y->c) - (x->c < y->c);
}

pp_status pp_spots_plan(const pp_image *pilot, double radius, pp_spots **out)
{
    *out = NULL;
    if (!pilot || pilot->depth > 1)
        return pp_fail(PP_ERR_ARG, "spots are for frames; sample one slice of a volume");
    if (!(radius >= 1 && radius <= 50))
        return pp_fail(PP_ERR_ARG, "the spots' ring radius %g is out of range; give 1 to 50 "
                                   "pixels (about the PSF's width or the spot's size)", radius);
    size_t h = pilot->height, w = pilot->width, cap = 4 * ((size_t)ceil(radius) + 2) * 8;
    long *dr = malloc(cap * sizeof *dr), *dc = malloc(cap * sizeof *dc);
    pp_spots *s = calloc(1, sizeof *s);
    spot *all = NULL;
    size_t nall = 0;
    if (!dr || !dc || !s)
        goto nomem;
    size_t m0 = ring_offsets(radius, dr, dc, cap);
    for (size_t r = 0; r < h; r++)
        for (size_t c = 0; c < w; c++)
            nall += local_max(pilot->data, h, w, r, c);
    all = malloc((nall + 1) * sizeof *all);
    if (!all)
        goto nomem;
    nall = 0;
    for (size_t r = 0; r < h; r++)
        for (size_t c = 0; c < w; c++) {
            if (!local_max(pilot->data, h, w, r, c))
                continue;
            double sum = 0;
            size_t m = 0;
            for (size_t j = 0; j < m0; j++) {
                long rr = (long)r + dr[j], cc = (long)c + dc[j];
                if (rr < 0 || cc < 0 || rr >= (long)h || cc >= (long)w)
                    continue;
                double u = pilot->data[(size_t)rr * w + (size_t)cc];
                if (isfinite(u))
                    sum += u, m++;
            }
            double con = m ? pilot->data[r * w + c] - sum / (double)m : NAN;
            if (con > 0)
                all[nall++] = (spot){r, c, 0, m, con};
        }
    qsort(all, nall, sizeof *all, by_pilot);
    s->n = nall < PP_SPOTS_MAX ? nall : PP_SPOTS_MAX;
    s->height = h, s->width = w, s->radius = radius, s->s = all;
    all = NULL;
    if (!(s->ring = malloc((s->n * m0 + 1) * sizeof *s->ring)))
        goto nomem;
    size_t at = 0;
    for (size_t k = 0; k < s->n; k++) {
        spot *q = &s->s[k];
        q->first = at;
        for (size_t j = 0; j < m0; j++) {
            long rr = (long)q->r + dr[j], cc = (long)q->c + dc[j];
            if (rr < 0 || cc < 0 || rr >= (long)h || cc >= (long)w ||
                !isfinite(pilot->data[(size_t)rr * w + (size_t)cc]))
                continue;
            s->ring[at++] = (size_t)rr * w + (size_t)cc;
        }
    }
    free(dr);
    free(dc);
    *out = s;
    return PP_OK;
nomem:
    free(dr);
    free(dc);
    free(all);
    pp_spots_free(s);
    return pp_fail(PP_ERR_NOMEM, "out of memory for the spots");
}

void pp_spots_eval(const pp_spots *s, const double *f, size_t row, double scale, double *out)
{
    size_t w = s->width;
    for (size_t k = 0; k < s->n; k++) {
        const spot *q = &s->s[k];
        double sum = 0;
        for (size_t j = 0; j < q->m; j++) {
            size_t i = s->ring[q->first + j];
            sum += f[i / w * row + i % w];
        }
        out[k] = scale * (f[q->r * row + q->c] - sum / (double)q->m);
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
    fputs("spot,row,col,ring_pixels,mean_intensity,mean_local_max,contrast_mean,contrast_sd,"
          "contrast_lo,contrast_hi,p_real,p_real_mcse,rhat,ess_bulk,ess_tail,mcse_mean\n", f);
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
        int mx = mean && mean->width == s->width && mean->height == s->height
                     ? local_max(mean->data, s->height, s->width, q->r, q->c)
                     : 0;
        fprintf(f, "%zu,%zu,%zu,%zu,%.10g,%d,%.10g,%.10g,%.10g,%.10g,%.6g,%.6g,%.6g,%.6g,%.6g,"
                   "%.6g\n",
                k + 1, q->r, q->c, q->m, mean ? mean->data[q->r * s->width + q->c] : NAN, mx,
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
