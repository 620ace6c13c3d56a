/* pixpost bench — the cost of the FFT pair (one r2c plus one c2r) on n x n
 * grids, per pixel, with ESTIMATE and MEASURE plans, and the time MEASURE
 * planning takes; the measurements behind the size table of src/fft.c.
 * Usage: bench_fft_sizes LO HI [all]
 *   LO..HI the side lengths; only even 7-smooth ones unless "all" is given.
 * Prints one line per size: "n est_ns meas_ns plan_s", est_ns / meas_ns the
 * median pair time over n^2 in nanoseconds per pixel, plan_s the seconds
 * MEASURE planning of both plans took. pp_sampler_return_memory() is called
 * first, as the pixpost command does (it changes how FFTW's scratch buffers
 * are allocated). Cost: about 100 pairs and one MEASURE planning per size. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "pixpost/pixpost.h"

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int cmp(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static int smooth7_even(size_t n)
{
    if (n % 2)
        return 0;
    static const size_t p[] = {2, 3, 5, 7};
    for (int i = 0; i < 4; i++)
        while (n % p[i] == 0)
            n /= p[i];
    return n == 1;
}

/* Median seconds of one pair over 15 timings of >= 10 ms each (values are not
 * rescaled between pairs, as in bench_floor: only the time matters). */
static double pair_time(const pp_fft *f, double *x, pp_complex *c)
{
    double t[15];
    int reps = 1;
    double t0 = now();
    pp_fft_forward(f, x, c);
    pp_fft_inverse(f, c, x);
    double one = now() - t0;
    if (one < 0.01)
        reps = (int)(0.01 / (one + 1e-9)) + 1;
    for (int k = 0; k < 15; k++) {
        t0 = now();
        for (int r = 0; r < reps; r++) {
            pp_fft_forward(f, x, c);
            pp_fft_inverse(f, c, x);
        }
        t[k] = (now() - t0) / reps;
    }
    qsort(t, 15, sizeof *t, cmp);
    return t[7];
}

int main(int argc, char **argv)
{
    if (argc < 3)
        return fprintf(stderr, "usage: bench_fft_sizes LO HI [all]\n"), 1;
    size_t lo = strtoul(argv[1], NULL, 10), hi = strtoul(argv[2], NULL, 10);
    int all = argc > 3 && strcmp(argv[3], "all") == 0;
    pp_sampler_return_memory();
    for (size_t n = lo; n <= hi; n++) {
        if (!all && !smooth7_even(n))
            continue;
        double *x = pp_fft_alloc_real(n * n);
        pp_complex *c = pp_fft_alloc_complex(n * (n / 2 + 1));
        if (!x || !c)
            return fprintf(stderr, "out of memory at %zu\n", n), 1;
        for (size_t i = 0; i < n * n; i++)
            x[i] = (double)(i % 7) - 3;
        pp_fft *fe, *fm;
        if (pp_fft_create(n, n, PP_FFT_ESTIMATE, &fe) != PP_OK)
            return fprintf(stderr, "%s\n", pp_error_message()), 1;
        double te = pair_time(fe, x, c);
        double t0 = now();
        if (pp_fft_create(n, n, PP_FFT_MEASURE, &fm) != PP_OK)
            return fprintf(stderr, "%s\n", pp_error_message()), 1;
        double plan = now() - t0;
        double tm = pair_time(fm, x, c);
        printf("%zu %.4g %.4g %.4g\n", n, te / (double)(n * n) * 1e9, tm / (double)(n * n) * 1e9,
               plan);
        fflush(stdout);
        pp_fft_free(fe);
        pp_fft_free(fm);
        pp_fft_free_buffer(x);
        pp_fft_free_buffer(c);
    }
    return 0;
}
