/* pixpost bench — the clock and the median used by the benchmark programs
 * (header-only: each bench program is one file linked against the library). */
#ifndef PIXPOST_BENCH_TIME_H
#define PIXPOST_BENCH_TIME_H

#include <stdlib.h>
#include <time.h>

/* Seconds on CLOCK_MONOTONIC. */
static inline double bench_now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static inline int bench_cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* The median of t[0..n) (sorts t in place; n odd in every caller). */
static inline double bench_median(double *t, size_t n)
{
    qsort(t, n, sizeof *t, bench_cmp_double);
    return t[n / 2];
}

#endif
