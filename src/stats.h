/* pixpost — streaming moments, normal quantiles and sorted-sample
 * quantiles (src/stats.c; not installed). */
#ifndef PIXPOST_STATS_H
#define PIXPOST_STATS_H

#include <stddef.h>
#include "pixpost/status.h"

/* Welford running mean and sum of squared deviations of n-vectors. */
typedef struct pp_moments {
    size_t len;
    unsigned long long count;
    double *mean;
    double *m2;
} pp_moments;
pp_status pp_moments_init(pp_moments *m, size_t len);
void pp_moments_free(pp_moments *m);
/* Adds one vector x[0..len) (stride 1). */
void pp_moments_add(pp_moments *m, const double *x);
/* Adds a rows x cols block of a grid whose rows are `stride` apart. */
void pp_moments_add_block(pp_moments *m, const double *x, size_t rows, size_t cols,
                          size_t stride);
/* Adds a slices x rows x cols box of a grid whose rows are `stride` apart
 * and whose slices are `slice_stride` apart (slices 1: add_block). */
void pp_moments_add_box(pp_moments *m, const double *x, size_t slices, size_t rows,
                        size_t cols, size_t stride, size_t slice_stride);
/* acc += other (Chan, Golub & LeVeque's pairwise update). */
void pp_moments_merge(pp_moments *acc, const pp_moments *other);
/* Standard normal quantile by Newton steps on erfc (|error| < 1e-14). */
double pp_norm_quantile(double p);
/* Sorts v[0..n) ascending (qsort; no NaN). */
void pp_sort_doubles(double *v, size_t n);
/* Linear-interpolation quantile of sorted v[0..n), n >= 1 (numpy's
 * default, R's type 7): v[lo] + (h - lo)(v[lo+1] - v[lo]), h = (n - 1) p. */
double pp_quantile_sorted(const double *v, size_t n, double p);

#endif
