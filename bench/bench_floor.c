/* pixpost bench — the floors of one sampler iteration on an H x W grid (or
 * a D x H x W volume): one FFTW r2c plus one c2r of that rank with the
 * planner effort pixpost uses, and drawing as many standard normals as the
 * grid has elements. Prints "pair_s normals_s" (seconds, the median of
 * repeated timings). Usage: bench_floor [D] H W [measure] */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "bench_time.h"
#include "pixpost/pixpost.h"
#include "pixpost/shape_extra.h"
#include "pixpost/fft.h"
#include "pixpost/rng.h"

int main(int argc, char **argv)
{
    if (argc < 3)
        return fprintf(stderr, "usage: bench_floor [D] H W [measure]\n"), 1;
    int vol = argc > 3 && strcmp(argv[3], "measure") != 0;
    size_t d = vol ? strtoul(argv[1], NULL, 10) : 1;
    size_t h = strtoul(argv[1 + vol], NULL, 10), w = strtoul(argv[2 + vol], NULL, 10);
    int effort = argc > 3 + vol && strcmp(argv[3 + vol], "measure") == 0 ? PP_FFT_MEASURE
                                                                         : PP_FFT_ESTIMATE;
    pp_shape shape = vol ? pp_shape_3d(d, h, w) : pp_shape_2d(h, w);
    pp_fft *f;
    if (pp_fft_create_shape(&shape, effort, &f) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    size_t n = d * h * w;
    double *x = pp_fft_alloc_real(n);
    pp_complex *c = pp_fft_alloc_complex(pp_shape_half_count(&shape));
    pp_rng r;
    pp_rng_seed(&r, 1, 0);
    pp_rng_normals(&r, x, n);
    enum { REPS = 9 };
    double tp[REPS], tn[REPS];
    int inner = (int)(4e6 / (double)n) + 1;
    for (int k = 0; k < REPS; k++) {
        double t0 = bench_now();
        for (int i = 0; i < inner; i++) {
            pp_fft_forward(f, x, c);
            pp_fft_inverse(f, c, x);
        }
        tp[k] = (bench_now() - t0) / inner;
        t0 = bench_now();
        for (int i = 0; i < inner; i++)
            pp_rng_normals(&r, x, n);
        tn[k] = (bench_now() - t0) / inner;
    }
    printf("%.9g %.9g\n", bench_median(tp, REPS), bench_median(tn, REPS));
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(c);
    pp_fft_free(f);
    return 0;
}
