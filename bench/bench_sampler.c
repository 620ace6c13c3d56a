/* pixpost bench — seconds per iteration of a sampler on a synthetic frame.
 * Usage: bench_sampler KIND H W BOUNDARY THIN CHAINS THREADS ITERS [TRACE.csv]
 * Prints "seconds_per_iteration_per_chain wall_seconds"; with TRACE.csv also
 * writes the traces (chain,lambda,delta,p...) for ESS computations. The
 * frame is a smooth random scene blurred by a Gaussian PSF (sigma 1.5) with
 * Gaussian noise (sd 1): invented data, for timing only. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "pixpost/pixpost.h"

static pp_image *scene(size_t h, size_t w, const pp_image *psf)
{
    pp_image *x, *y;
    pp_image_create(w, h, &x);
    for (size_t r = 0; r < h; r++)
        for (size_t c = 0; c < w; c++)
            x->data[r * w + c] = 50 + 20 * sin((double)r / 9) * cos((double)c / 13) +
                                 (((r / 16) + (c / 16)) % 3 == 0 ? 30 : 0);
    pp_noise_spec ns;
    pp_noise_parse("gaussian:sigma=1", &ns);
    if (pp_model_simulate(x, psf, PP_BOUNDARY_PERIODIC, &ns, 9, &y) != PP_OK)
        y = NULL;
    pp_image_free(x);
    return y;
}

int main(int argc, char **argv)
{
    if (argc < 9)
        return fprintf(stderr, "usage: bench_sampler KIND H W pad|periodic THIN CHAINS THREADS "
                               "ITERS [TRACE.csv]\n"),
               1;
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    if (pp_sampler_kind_parse(argv[1], &cfg.kind) != PP_OK ||
        pp_boundary_parse(argv[4], &cfg.boundary) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    size_t h = strtoul(argv[2], NULL, 10), w = strtoul(argv[3], NULL, 10);
    cfg.thin = strtoul(argv[5], NULL, 10);
    cfg.chains = (unsigned)strtoul(argv[6], NULL, 10);
    cfg.threads = atoi(argv[7]);
    cfg.iters = strtoul(argv[8], NULL, 10);
    cfg.burn = 0;
    pp_psf_spec ps;
    pp_image *psf;
    pp_psf_parse("gaussian:sigma=1.5", &ps);
    pp_psf_make(&ps, 0, &psf);
    pp_image *y = scene(h, w, psf);
    pp_sampler *s;
    if (!y || pp_sampler_create(&cfg, y, psf, &s) != PP_OK || pp_sampler_run(s) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    double wall = pp_sampler_seconds(s);
    unsigned par = cfg.threads > 0 && (unsigned)cfg.threads < cfg.chains ? (unsigned)cfg.threads
                                                                         : cfg.chains;
    printf("%.9g %.9g\n", wall * par / ((double)cfg.iters * cfg.chains), wall);
    if (argc > 9) {
        FILE *f = fopen(argv[9], "w");
        const pp_trace *t = pp_sampler_trace(s);
        fprintf(f, "chain");
        for (size_t j = 0; j < t->ncols; j++)
            fprintf(f, ",%s", t->names[j]);
        fputc('\n', f);
        for (unsigned c = 0; c < t->chains; c++)
            for (size_t i = 0; i < t->kept; i++) {
                fprintf(f, "%u", c);
                for (size_t j = 0; j < t->ncols; j++)
                    fprintf(f, ",%.10g", t->values[((size_t)c * t->kept + i) * t->ncols + j]);
                fputc('\n', f);
            }
        fclose(f);
    }
    pp_sampler_free(s);
    pp_image_free(y);
    pp_image_free(psf);
    return 0;
}
