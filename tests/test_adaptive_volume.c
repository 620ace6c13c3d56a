/* The adaptive prior's gibbs kernel on a volume (src/sampler_adaptive.c on
 * a rank-3 grid) keeps its whole state in the regions it lists
 * (pp_kernel.state: x, the weights wh, wv and the volume's wz, the block
 * state): a run in rounds (schedule 10, 20, 40 after burn-in, 4 chains on
 * 1 thread, so chains wait in park stores between rounds) gives the same
 * bytes as one run of 40 (mean, sd, lo, hi and the trace), and 2 threads
 * give the same bytes as 1 (chain k's draws depend on its seed alone).
 * A state list without wz would resume a parked chain with another
 * chain's z weights and fail the first check (measured: both boundaries
 * fail it with wz left out of the list). Both boundaries; an
 * anisotropic voxel (z spacing 3 times x's: B_z = round(8/3) = 3 slices).
 * The numbers themselves are checked against numpy in
 * tests/ref_adaptive_volume_dense.py and ref_adaptive_volume_chain.py. */
#include "pixpost/pixpost.h"
#include "sampler_internal.h"
#include "testutil.h"
#include "pixpost/image_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
    pp_image *img[4];
    double *trace;
    size_t tn;
} result;

static int run(const pp_sampler_config *cfg, const pp_image *y, const pp_image *psf,
               const unsigned long *ends, size_t n, result *r)
{
    pp_sampler *s = NULL;
    pp_status st = pp_sampler_create(cfg, y, psf, &s);
    CHECK(st == PP_OK, "create: %s", pp_error_message());
    if (st != PP_OK)
        return 0;
    st = ends ? pp_sampler_run_schedule(s, ends, n) : pp_sampler_run(s);
    CHECK(st == PP_OK, "run: %s", pp_error_message());
    if (st == PP_OK) {
        const pp_image *src[4] = {pp_sampler_mean(s), pp_sampler_sd(s), pp_sampler_lo(s),
                                  pp_sampler_hi(s)};
        for (int i = 0; i < 4; i++)
            pp_image_clone(src[i], &r->img[i]);
        const pp_trace *t = pp_sampler_trace(s);
        r->tn = t->chains * t->kept * t->ncols;
        r->trace = malloc(r->tn * sizeof(double) + 1);
        memcpy(r->trace, t->values, r->tn * sizeof(double));
    }
    pp_sampler_free(s);
    return st == PP_OK;
}

static int same(const result *a, const result *b)
{
    int ok = a->tn == b->tn && memcmp(a->trace, b->trace, a->tn * sizeof(double)) == 0;
    for (int i = 0; i < 4; i++)
        ok = ok && memcmp(a->img[i]->data, b->img[i]->data,
                          pp_image_count(a->img[i]) * sizeof(double)) == 0;
    return ok;
}

static void drop(result *r)
{
    for (int i = 0; i < 4; i++)
        pp_image_free(r->img[i]);
    free(r->trace);
}

int main(void)
{
    pp_image *y = NULL, *psf = NULL;
    pp_image_create3(4, 10, 12, &y);
    pp_image_create3(3, 3, 3, &psf);
    pp_rng r;
    pp_rng_seed(&r, 9, 0);
    for (size_t i = 0; i < pp_image_count(y); i++)
        y->data[i] = 10 + 4 * sin((double)(i % 12) / 3) * cos((double)(i / 120) / 2) +
                     pp_rng_normal(&r);
    for (size_t i = 0; i < 27; i++)
        psf->data[i] = 1.0 + (double)(i % 4);
    static const unsigned long ends[3] = {10, 20, 40};
    for (int b = 0; b < 2; b++) {
        pp_sampler_config cfg;
        pp_sampler_defaults(&cfg); /* the default prior: adaptive for gaussian noise */
        pp_prior_resolve(&cfg.prior, &cfg.noise);
        cfg.boundary = b ? PP_BOUNDARY_PERIODIC : PP_BOUNDARY_PAD;
        cfg.voxel[0] = 0.3, cfg.voxel[1] = 0.1, cfg.voxel[2] = 0.1;
        cfg.iters_auto = 0, cfg.chains = 4, cfg.burn = 10, cfg.iters = 40, cfg.threads = 1;
        const char *bn = b ? "periodic" : "pad";
        CHECK(cfg.prior.kind == PP_PRIOR_ADAPTIVE, "the default prior is adaptive");
        result one = {0}, rounds = {0}, two = {0};
        if (!run(&cfg, y, psf, NULL, 0, &one) || !run(&cfg, y, psf, ends, 3, &rounds))
            continue;
        CHECK(same(&one, &rounds), "%s: rounds 10, 20, 40 with parked chains give the bytes of "
                                   "one run of 40", bn);
        cfg.threads = 2;
        if (run(&cfg, y, psf, NULL, 0, &two))
            CHECK(same(&one, &two), "%s: 2 threads give the bytes of 1", bn);
        CHECK(one.img[0]->depth == 4, "%s: the mean is a volume of 4 slices", bn);
        drop(&one), drop(&rounds), drop(&two);
    }
    pp_image_free(y);
    pp_image_free(psf);
    return pp_test_done();
}
