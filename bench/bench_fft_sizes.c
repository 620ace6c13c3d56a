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
#include "bench_time.h"
#include "pixpost/pixpost.h"
#include "pixpost/fft.h"

/* Median seconds of one pair over 15 timings of >= 10 ms each (values are not
 * rescaled between pairs, as in bench_floor: only the time matters). */
static double pair_time(const pp_fft *f, double *x, pp_complex *c)
{
    double t[15];
    int reps = 1;
    double t0 = bench_now();
    pp_fft_forward(f, x, c);
    pp_fft_inverse(f, c, x);
    double one = bench_now() - t0;
    if (one < 0.01)
        reps = (int)(0.01 / (one + 1e-9)) + 1;
    for (int k = 0; k < 15; k++) {
        t0 = bench_now();
        for (int r = 0; r < reps; r++) {
            pp_fft_forward(f, x, c);
            pp_fft_inverse(f, c, x);
        }
        t[k] = (bench_now() - t0) / reps;
    }
    return bench_median(t, 15);
}

int main(int argc, char **argv)
{
    if (argc < 3)
        return fprintf(stderr, "usage: bench_fft_sizes LO HI [all]\n"), 1;
    size_t lo = strtoul(argv[1], NULL, 10), hi = strtoul(argv[2], NULL, 10);
    int all = argc > 3 && strcmp(argv[3], "all") == 0;
    pp_sampler_return_memory();
    for (size_t n = lo; n <= hi; n++) {
        if (!all && pp_fft_good_size(n) != n) /* even 7-smooth: the library's rule */
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
        double t0 = bench_now();
        if (pp_fft_create(n, n, PP_FFT_MEASURE, &fm) != PP_OK)
            return fprintf(stderr, "%s\n", pp_error_message()), 1;
        double plan = bench_now() - t0;
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
