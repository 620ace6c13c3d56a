/* pixpost bench — the floors of one sampler iteration on an H x W grid:
 * one FFTW r2c plus one c2r with the planner effort pixpost uses, and
 * drawing H*W standard normals. Prints "pair_s normals_s" (seconds, the
 * median of repeated timings). Usage: bench_floor H W [measure] */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "bench_time.h"
#include "pixpost/pixpost.h"

int main(int argc, char **argv)
{
    if (argc < 3)
        return fprintf(stderr, "usage: bench_floor H W [measure]\n"), 1;
    size_t h = strtoul(argv[1], NULL, 10), w = strtoul(argv[2], NULL, 10);
    int effort = argc > 3 && strcmp(argv[3], "measure") == 0 ? PP_FFT_MEASURE : PP_FFT_ESTIMATE;
    pp_fft *f;
    if (pp_fft_create(h, w, effort, &f) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    double *x = pp_fft_alloc_real(h * w);
    pp_complex *c = pp_fft_alloc_complex(h * (w / 2 + 1));
    pp_rng r;
    pp_rng_seed(&r, 1, 0);
    pp_rng_normals(&r, x, h * w);
    enum { REPS = 9 };
    double tp[REPS], tn[REPS];
    int inner = (int)(4e6 / (double)(h * w)) + 1;
    for (int k = 0; k < REPS; k++) {
        double t0 = bench_now();
        for (int i = 0; i < inner; i++) {
            pp_fft_forward(f, x, c);
            pp_fft_inverse(f, c, x);
        }
        tp[k] = (bench_now() - t0) / inner;
        t0 = bench_now();
        for (int i = 0; i < inner; i++)
            pp_rng_normals(&r, x, h * w);
        tn[k] = (bench_now() - t0) / inner;
    }
    printf("%.9g %.9g\n", bench_median(tp, REPS), bench_median(tn, REPS));
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(c);
    pp_fft_free(f);
    return 0;
}
