/* pixpost — streaming per-pixel moments (Welford 1962; pairwise merge of
 * Chan, Golub & LeVeque 1979), the normal quantile and sample quantiles. Cost: one pass over
 * the vector per added draw, two divisions hoisted out of the loop. */
#include <math.h>
#include <stdlib.h>
#include "internal.h"
#include "stats.h"
#include "pp_assert.h"

pp_status pp_moments_init(pp_moments *m, size_t len)
{
    m->len = len;
    m->count = 0;
    m->mean = calloc(len, sizeof(double));
    m->m2 = calloc(len, sizeof(double));
    if (!m->mean || !m->m2) {
        pp_moments_free(m);
        return pp_fail(PP_ERR_NOMEM, "out of memory for per-pixel moments");
    }
    return PP_OK;
}

void pp_moments_free(pp_moments *m)
{
    free(m->mean);
    free(m->m2);
    m->mean = m->m2 = NULL;
}

void pp_moments_add_box(pp_moments *m, const double *x, size_t slices, size_t rows,
                        size_t cols, size_t stride, size_t slice_stride)
{
    PP_ASSERT(slices * rows * cols == m->len); /* the box is the moments' shape */
    PP_ASSERT(cols <= stride || rows == 1);
    m->count++;
    double inv = 1.0 / (double)m->count;
    for (size_t z = 0; z < slices; z++)
        for (size_t r = 0; r < rows; r++) {
            const double *xr = x + z * slice_stride + r * stride;
            double *mean = m->mean + (z * rows + r) * cols, *m2 = m->m2 + (z * rows + r) * cols;
            for (size_t c = 0; c < cols; c++) {
                double d = xr[c] - mean[c];
                mean[c] += d * inv;
                m2[c] += d * (xr[c] - mean[c]);
            }
        }
}

void pp_moments_add_block(pp_moments *m, const double *x, size_t rows, size_t cols,
                          size_t stride)
{
    pp_moments_add_box(m, x, 1, rows, cols, stride, 0);
}

void pp_moments_add(pp_moments *m, const double *x) { pp_moments_add_block(m, x, 1, m->len, 0); }

void pp_moments_merge(pp_moments *acc, const pp_moments *o)
{
    if (o->count == 0)
        return;
    PP_ASSERT(acc->len == o->len); /* moments of the same quantity */
    double na = (double)acc->count, nb = (double)o->count, n = na + nb;
    for (size_t i = 0; i < acc->len; i++) {
        double d = o->mean[i] - acc->mean[i];
        acc->mean[i] += d * nb / n;
        acc->m2[i] += o->m2[i] + d * d * na * nb / n;
    }
    acc->count += o->count;
}

double pp_norm_quantile(double p)
{
    if (!(p > 0 && p < 1))
        return p == 0 ? -INFINITY : p == 1 ? INFINITY : NAN;
    /* Start from a logistic approximation, then Newton on
     * Phi(z) = erfc(-z/sqrt 2)/2, whose derivative is the normal density. */
    double z = log(p / (1 - p)) * 0.6266570686577501; /* sqrt(pi/8) */
    for (int it = 0; it < 60; it++) {
        double cdf = 0.5 * erfc(-z / sqrt(2.0));
        double pdf = exp(-0.5 * z * z) / sqrt(2.0 * PP_PI);
        double step = (cdf - p) / pdf;
        if (step > 1)
            step = 1;
        if (step < -1)
            step = -1;
        z -= step;
        if (fabs(step) < 1e-15 * (1 + fabs(z)))
            break;
    }
    return z;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

void pp_sort_doubles(double *v, size_t n)
{
    qsort(v, n, sizeof *v, cmp_double);
}

double pp_quantile_sorted(const double *v, size_t n, double p)
{
    double h = (double)(n - 1) * p;
    size_t lo = (size_t)floor(h);
    size_t hi = lo + 1 < n ? lo + 1 : lo;
    return v[lo] + (h - (double)lo) * (v[hi] - v[lo]);
}
