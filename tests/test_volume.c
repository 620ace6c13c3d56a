/* Unit tests of the sampler's volume contract (include/pixpost/sampler.h
 * "Volumes"): what a volume (frame depth > 1) is refused with (the adaptive
 * prior runs with gaussian noise and gibbs only), and the
 * rank-3 prior eigenvalues (src/prior.c). The numbers of 3-D sampling are
 * checked against numpy in tests/ref_volume_*.py. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "pixpost/pixpost.h"
#include "pixpost/result.h"
#include "testutil.h"
#include "pixpost/prior_extra.h"
#include "pixpost/sampler_extra.h"

static pp_image *volume(size_t d, size_t h, size_t w, unsigned seed)
{
    pp_image *v = NULL;
    if (pp_image_create3(d, h, w, &v) != PP_OK)
        return NULL;
    for (size_t i = 0; i < pp_image_count(v); i++) {
        seed = seed * 1103515245u + 12345u;
        v->data[i] = 10.0 + (double)(seed >> 16 & 1023) / 256.0;
    }
    return v;
}

static pp_image *kernel(size_t d, size_t n)
{
    pp_image *k = NULL;
    if (pp_image_create3(d, n, n, &k) != PP_OK)
        return NULL;
    for (size_t i = 0; i < pp_image_count(k); i++)
        k->data[i] = 1.0 + (double)(i % 3);
    return k;
}

static void stationary(pp_sampler_config *cfg)
{
    pp_sampler_defaults(cfg);
    cfg->prior.kind = PP_PRIOR_GMRF1;
    cfg->iters_auto = 0;
    cfg->chains = 1;
    cfg->burn = 2;
    cfg->iters = 4;
}

/* pp_sampler_create must fail with `want` and a message holding every
 * word of `words` (NULL-terminated). */
static void refused(const char *what, const pp_sampler_config *cfg, const pp_image *frame,
                    const pp_image *psf, pp_status want, const char *const *words)
{
    pp_sampler *s = NULL;
    pp_status st = pp_sampler_create(cfg, frame, psf, &s);
    CHECK(st == want && s == NULL, "%s: status %d (want %d)", what, (int)st, (int)want);
    const char *msg = pp_error_message();
    for (size_t i = 0; words[i]; i++)
        CHECK(strstr(msg, words[i]) != NULL, "%s: message lacks '%s': %s", what, words[i], msg);
}

static void refusals(void)
{
    pp_image *v = volume(5, 12, 10, 1), *f = volume(1, 12, 10, 2), *k3 = kernel(3, 3),
             *k1 = kernel(1, 3);
    CHECK(v && f && k3 && k1, "images");
    pp_sampler_config cfg;

    /* the default prior under gaussian noise, adaptive, runs on volumes (gibbs) */
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0, cfg.chains = 1, cfg.burn = 2, cfg.iters = 4;
    {
        pp_sampler *s = NULL;
        CHECK(pp_sampler_create(&cfg, v, k3, &s) == PP_OK &&
                  pp_sampler_config_used(s)->prior.kind == PP_PRIOR_ADAPTIVE &&
                  pp_sampler_run(s) == PP_OK && pp_sampler_mean(s)->depth == 5,
              "the adaptive prior (gibbs) on a volume: %s", pp_error_message());
        pp_sampler_free(s);
    }

    /* and with hmc, under photon counts (the default sampler there) and gaussian noise */
    for (int i = 0; i < 2; i++) {
        pp_sampler_defaults(&cfg);
        cfg.iters_auto = 0, cfg.chains = 1, cfg.burn = 2, cfg.iters = 4;
        if (i == 0) /* (the photon models' default prior is matern) */
            CHECK(pp_noise_parse("poisson:gain=1,offset=0", NULL, &cfg.noise) == PP_OK &&
                      pp_prior_parse("adaptive", NULL, &cfg.prior) == PP_OK,
                  "parse poisson, adaptive");
        else
            cfg.kind = PP_SAMPLER_HMC;
        pp_sampler *s = NULL;
        CHECK(pp_sampler_create(&cfg, v, k3, &s) == PP_OK &&
                  pp_sampler_config_used(s)->kind == PP_SAMPLER_HMC &&
                  pp_sampler_config_used(s)->prior.kind == PP_PRIOR_ADAPTIVE &&
                  pp_sampler_run(s) == PP_OK && pp_sampler_mean(s)->depth == 5,
              "the adaptive prior (hmc, %s) on a volume: %s", i ? "gaussian" : "poisson",
              pp_error_message());
        pp_sampler_free(s);
    }

    pp_sampler_defaults(&cfg); /* not with pcn (as on a frame) */
    cfg.kind = PP_SAMPLER_PCN;
    refused("adaptive prior, pcn", &cfg, v, k3, PP_ERR_ARG,
            (const char *[]){"adaptive", "gibbs", "hmc", "gmrf1", NULL});

    /* pcn, gpcn and hmc run on volumes */
    const pp_sampler_kind pcn[] = {PP_SAMPLER_PCN, PP_SAMPLER_GPCN, PP_SAMPLER_HMC};
    for (int i = 0; i < 3; i++) {
        stationary(&cfg);
        cfg.kind = pcn[i];
        pp_sampler *s = NULL;
        CHECK(pp_sampler_create(&cfg, v, k3, &s) == PP_OK && pp_sampler_run(s) == PP_OK &&
                  pp_sampler_mean(s)->depth == 5,
              "%s on a volume: %s", pp_sampler_kind_name(pcn[i]), pp_error_message());
        pp_sampler_free(s);
    }

    stationary(&cfg);
    cfg.kind = PP_SAMPLER_GIBBS;
    CHECK(pp_psf_parse("gaussian:sigma=auto", NULL, &cfg.psf) == PP_OK, "parse sigma=auto");
    refused("sigma=auto", &cfg, v, k3, PP_ERR_ARG,
            (const char *[]){"PSF width", "not available for volumes", "sigma=S", NULL});

    stationary(&cfg);
    cfg.voxel[0] = -1;
    refused("negative voxel", &cfg, v, k3, PP_ERR_ARG, (const char *[]){"voxel size", NULL});

    /* the caller's names of the settings reach the message */
    const char *names[PP_SET_COUNT] = {0};
    names[PP_SET_PRIOR] = "PRIOR-SETTING";
    pp_sampler_defaults(&cfg);
    cfg.kind = PP_SAMPLER_PCN;
    cfg.setting_names = names;
    refused("named settings", &cfg, v, k3, PP_ERR_ARG,
            (const char *[]){"adaptive prior", "add PRIOR-SETTING gmrf1", NULL});

    /* PSF shapes */
    stationary(&cfg);
    pp_image *even = kernel(2, 3), *deep = kernel(7, 3), *wide = kernel(1, 13);
    refused("even PSF depth", &cfg, v, even, PP_ERR_ARG,
            (const char *[]){"odd number of slices", NULL});
    refused("PSF wider than the slices", &cfg, v, wide, PP_ERR_LIMIT,
            (const char *[]){"larger than", NULL});
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    refused("PSF deeper than the volume, periodic", &cfg, v, deep, PP_ERR_LIMIT,
            (const char *[]){"7 slices", "wrap", "pad", NULL});
    refused("3-D PSF for a frame", &cfg, f, k3, PP_ERR_ARG,
            (const char *[]){"3-D", "needs a volume", NULL});
    /* with pad the grid takes the PSF's z radius: a deep PSF is fine */
    cfg.boundary = PP_BOUNDARY_PAD;
    pp_sampler *s = NULL;
    CHECK(pp_sampler_create(&cfg, v, deep, &s) == PP_OK, "deep PSF with pad: %s",
          pp_error_message());
    CHECK(s && pp_sampler_run(s) == PP_OK, "deep PSF with pad runs: %s", pp_error_message());
    pp_result r;
    if (s && pp_sampler_result(s, &r) == PP_OK) {
        CHECK(r.frame.rank == 3 && r.frame.n[0] == 5 && r.frame.n[1] == 12 && r.frame.n[2] == 10,
              "result frame shape");
        CHECK(r.grid.rank == 3 && r.grid.n[0] >= 5 + 6 && r.grid.n[1] >= 14 && r.grid.n[2] >= 12,
              "pad grid %zux%zux%zu: z radius 3, xy radius 1", r.grid.n[2], r.grid.n[1],
              r.grid.n[0]);
        CHECK(r.mean->depth == 5 && r.sd->depth == 5 && r.lo->depth == 5 && r.hi->depth == 5,
              "estimates are volumes");
        CHECK(strcmp(r.trace.names[PP_COL_PROBE0], "p_2_2_2") == 0, "first probe %s",
              r.trace.names[PP_COL_PROBE0]);
        pp_result_free(&r);
    }
    pp_sampler_free(s);
    /* a depth-1 PSF with a volume: blur within slices, mtc by default */
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    s = NULL;
    CHECK(pp_sampler_create(&cfg, v, k1, &s) == PP_OK, "depth-1 PSF: %s", pp_error_message());
    CHECK(s && pp_sampler_config_used(s)->kind == PP_SAMPLER_MTC, "auto: mtc for a periodic volume");
    pp_sampler_free(s);
    pp_image_free(even);
    pp_image_free(deep);
    pp_image_free(wide);
    pp_image_free(v);
    pp_image_free(f);
    pp_image_free(k3);
    pp_image_free(k1);
}

/* Rank-3 eigenvalues: a volume of depth 1 has the frame's gmrf1
 * eigenvalues bit for bit (its z term is 0); the z weight multiplies the z
 * term; matern's exponent is nu + 3/2. */
static void eigen3(void)
{
    const size_t h = 6, w = 8, wh = w / 2 + 1, d = 4;
    double q2[6 * 5], q3[4 * 6 * 5], rank2, rank3;
    pp_prior_spec g = {0};
    g.kind = PP_PRIOR_GMRF1;
    pp_shape s1 = pp_shape_3d(1, h, w), s3 = pp_shape_3d(d, h, w);
    CHECK(pp_prior_eigen(&g, h, w, q2, &rank2) == PP_OK, "2-D");
    CHECK(pp_prior_eigen_shape(&g, &s1, NULL, q3, &rank3) == PP_OK, "depth 1");
    CHECK(memcmp(q2, q3, sizeof q2) == 0 && rank2 == rank3, "depth-1 volume = frame");
    const double vox[3] = {2.0, 0.5, 0.5};
    CHECK(pp_prior_eigen_shape(&g, &s3, vox, q3, &rank3) == PP_OK, "rank 3");
    CHECK(rank3 == (double)(d * h * w) - 1, "rank N-1");
    /* entry (kz = 1, k1 = 0, k2 = 0): w_z (2 - 2 cos(2 pi / 4)) = 1/16 * 2 */
    CHECK(fabs(q3[(1 * h + 0) * wh + 0] - 2.0 / 16) < 1e-15, "z weight: %g",
          q3[(1 * h) * wh]);
    pp_prior_spec m = {0};
    m.kind = PP_PRIOR_MATERN;
    m.range = 3;
    m.nu = 1;
    m.mean_set = 1;
    CHECK(pp_prior_eigen_shape(&m, &s3, NULL, q3, &rank3) == PP_OK, "matern");
    double k2 = 8.0 / 9.0;
    CHECK(fabs(q3[0] - pow(k2, 2.5)) < 1e-14 * pow(k2, 2.5), "matern alpha = nu + 3/2: %g",
          q3[0]);
    CHECK(rank3 == (double)(d * h * w), "proper matern: full rank");
    pp_shape bad = {4, {1, 1, 1}};
    CHECK(pp_prior_eigen_shape(&g, &bad, NULL, q3, &rank3) == PP_ERR_ARG, "rank 4 refused");
}

int main(void)
{
    refusals();
    eigen3();
    return pp_test_done();
}
