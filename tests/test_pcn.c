/* Unit tests of the pcn/gpcn kernels (src/sampler_pcn.c): camera with read=0
 * equals poisson exactly; results do not depend on the thread count; the
 * Gaussian special case has the closed-form posterior (a quick in-C check;
 * the numpy reference with ESS-based tolerances is tests/ref_pcn.py); bad
 * configurations are refused with a message. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "sampler_internal.h"
#include "spectral.h"
#include "pixpost/diag.h"
#include "pixpost/pixpost.h"
#include "testutil.h"
#include "pixpost/diag_extra.h"
#include "pixpost/sampler_extra.h"

#define H 12
#define W 14

/* A smooth positive scene (photons), blurred, as Poisson counts in ADU. */
static pp_image *photon_frame(const pp_image *psf, double level, double gain, double offset)
{
    pp_image *truth, *y = NULL;
    pp_image_create(H, W, &truth);
    for (size_t r = 0; r < H; r++)
        for (size_t c = 0; c < W; c++)
            truth->data[r * W + c] = level * (1.0 + 0.6 * sin(0.5 * (double)r) * cos(0.4 * (double)c));
    pp_noise_spec nz;
    char spec[128];
    snprintf(spec, sizeof spec, "poisson:gain=%g,offset=%g", gain, offset);
    pp_noise_parse(spec, NULL, &nz);
    pp_model_simulate(truth, psf, PP_BOUNDARY_PERIODIC, &nz, 3, NULL, &y);
    pp_image_free(truth);
    return y;
}

static pp_sampler *run(const pp_sampler_config *cfg, const pp_image *y, const pp_image *psf)
{
    pp_sampler *s = NULL;
    pp_status st = pp_sampler_create(cfg, y, psf, &s);
    CHECK(st == PP_OK, "create: %s", pp_error_message());
    if (st != PP_OK)
        return NULL;
    st = pp_sampler_run(s);
    CHECK(st == PP_OK, "run: %s", pp_error_message());
    return s;
}

static int same_image(const pp_image *a, const pp_image *b)
{
    return memcmp(a->data, b->data, a->width * a->height * sizeof(double)) == 0;
}

/* The R-hat and MCSE maps at the probe pixels against split-R-hat from
 * the probe traces: pcn records the draw x itself, which its probes
 * sample, so pp_diag_pixel_maps on per-half moments of a probe's trace must
 * give the map's value there. The maps are made from whole-chain moments
 * and a single-precision first-half mean (src/sampler_diag.c), hence the
 * tolerances: rhat 1e-6, mcse 1e-3 relative (measured up to 8e-8 and
 * 4e-6 on this frame; dropping one term of the halves' M2 gives 5e-3). */
static void maps_match_probe_traces(const pp_sampler *s)
{
    const pp_trace *t = &s->trace;
    size_t n = t->kept, h = n / 2, nc = t->chains, nh = 2 * nc;
    double hm[64], h2[64], worst_r = 0, worst_m = 0;
    const double *pm[64], *p2[64];
    CHECK(nh <= 64 && h >= 2 && s->rhat_map && s->mcse_map, "maps exist");
    if (!(nh <= 64 && h >= 2 && s->rhat_map && s->mcse_map))
        return;
    for (size_t p = 0; p < s->nprobe; p++) {
        for (size_t j = 0; j < nh; j++) {
            size_t lo = j % 2 ? h : 0, hi = j % 2 ? n : h;
            double mean = 0, m2 = 0, cnt = 0;
            for (size_t i = lo; i < hi; i++) {
                double v = t->values[((j / 2) * n + i) * t->ncols + s->col_probe0 + p];
                double d = v - mean;
                mean += d / ++cnt;
                m2 += d * (v - mean);
            }
            hm[j] = mean;
            h2[j] = m2;
            pm[j] = &hm[j];
            p2[j] = &h2[j];
        }
        double rhat, mcse;
        pp_diag_pixel_maps(pm, p2, nh, h, 1, 0.0, &rhat, &mcse, NULL);
        size_t at = s->probe_r[p] * s->width + s->probe_c[p];
        worst_r = fmax(worst_r, fabs(s->rhat_map->data[at] / rhat - 1));
        worst_m = fmax(worst_m, fabs(s->mcse_map->data[at] / mcse - 1));
    }
    CHECK(worst_r < 1e-6 && worst_m < 1e-3,
          "maps at the probes = split-R-hat of the probe traces: rhat %.2g, mcse %.2g relative",
          worst_r, worst_m);
    printf("pixel maps at the probes vs their traces: rhat %.2g, mcse %.2g relative\n", worst_r,
           worst_m);
}

/* camera:read=0 is exactly poisson (shifted-Poisson with R = 0), for both
 * kernels and both boundaries; and the thread count changes nothing. */
static void camera_read0_is_poisson(const pp_image *psf, pp_sampler_kind kind, pp_boundary b)
{
    pp_image *y = photon_frame(psf, 20, 0.5, 100);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    cfg.kind = kind;
    cfg.boundary = b;
    cfg.burn = 60;
    cfg.iters = 80;
    cfg.chains = 2;
    pp_prior_parse("matern:range=4,nu=1", NULL, &cfg.prior);
    pp_noise_parse("poisson:gain=0.5,offset=100", NULL, &cfg.noise);
    pp_sampler *p = run(&cfg, y, psf);
    pp_noise_parse("camera:gain=0.5,offset=100,read=0", NULL, &cfg.noise);
    cfg.threads = 1;
    pp_sampler *c = run(&cfg, y, psf);
    if (p && c) {
        CHECK(same_image(p->mean, c->mean) && same_image(p->sd, c->sd) &&
                  same_image(p->lo, c->lo) && same_image(p->hi, c->hi),
              "%s/%s: camera read=0 (1 thread) differs from poisson (2 threads)",
              pp_sampler_kind_name(kind), pp_boundary_name(b));
        CHECK(strstr(c->likelihood, "shifted-Poisson") && strstr(p->likelihood, "poisson"),
              "likelihood names: '%s' / '%s'", p->likelihood, c->likelihood);
        int pos = 1;
        for (size_t i = 0; i < H * W; i++)
            pos &= p->lo->data[i] > 0 && p->lo->data[i] < p->mean->data[i] &&
                    p->mean->data[i] < p->hi->data[i];
        CHECK(pos, "log positivity: 0 < lo < mean < hi everywhere");
        /* reported, not tuned: 60 burn-in iterations on a 12 x 14 frame leave
         * the step's adaptation unsettled (gpcn/pad accepted 1 of 80 on the
         * cost-table grid, 0 of 80 would mean a broken move) */
        CHECK(p->chain[0].acceptance > 0 && p->chain[0].step > 0,
              "%s/%s: acceptance %.3f and step %.3g reported", pp_sampler_kind_name(kind),
              pp_boundary_name(b), p->chain[0].acceptance, p->chain[0].step);
    }
    pp_sampler_free(p);
    pp_sampler_free(c);
    pp_image_free(y);
}

/* Gaussian likelihood, fixed lambda and delta, positivity none, matern with
 * a known mean, periodic: the posterior is N(mu, P^-1) with P(k) = lambda
 * |A|^2 + delta q and mu = (lambda A* Y + delta q M N [k=0]) / P. The pooled
 * mean must match mu within 6 sd/sqrt(kept/50) (a deliberately loose bound
 * allowing an integrated autocorrelation time up to 50 draws: the exact
 * ESS-based check is tests/ref_pcn.py). */
static void gaussian_closed_form(const pp_image *psf, pp_sampler_kind kind)
{
    pp_image *truth, *y = NULL;
    pp_image_create(H, W, &truth);
    for (size_t i = 0; i < H * W; i++)
        truth->data[i] = 5.0 + 2.0 * sin(0.3 * (double)i);
    pp_noise_spec nz;
    pp_noise_parse("gaussian:sigma=0.5", NULL, &nz);
    pp_model_simulate(truth, psf, PP_BOUNDARY_PERIODIC, &nz, 4, NULL, &y);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    cfg.kind = kind;
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    cfg.noise = nz;
    cfg.burn = 500;
    cfg.iters = 3000;
    pp_prior_parse("matern:range=4,nu=1,mean=5,delta=0.5", NULL, &cfg.prior);
    /* The closed form from the sampler's own transfer function and prior
     * eigenvalues, taken before the run (which frees them). */
    pp_sampler *s = NULL;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_OK, "create: %s", pp_error_message());
    if (s) {
        size_t gm = s->gm;
        pp_complex *yh = pp_fft_alloc_complex(gm);
        double *mu = pp_fft_alloc_real(s->gn), lam = 4.0, v = 0;
        pp_fft_forward(s->fft, y->data, yh);
        for (size_t k1 = 0; k1 < s->gh; k1++)
            for (size_t k2 = 0; k2 < s->gwh; k2++) {
                size_t i = k1 * s->gwh + k2;
                double p = lam * s->otf2[i] + 0.5 * s->q[i];
                yh[i] = (lam * conj(s->otf[i]) * yh[i] +
                         (i == 0 ? 0.5 * s->q[0] * 5.0 * (double)s->gn : 0.0)) /
                        p / (double)s->gn;
                v += pp_half_weight(k2, s->gw) / p / (double)s->gn;
            }
        pp_fft_inverse(s->fft, yh, mu);
        CHECK(pp_sampler_run(s) == PP_OK, "run: %s", pp_error_message());
        double worst = 0, worst_sd = 0, n = (double)s->trace.kept * cfg.chains;
        for (size_t i = 0; i < H * W; i++) {
            worst = fmax(worst, fabs(s->mean->data[i] - mu[i]) / sqrt(v / (n / 50)));
            worst_sd = fmax(worst_sd, fabs(s->sd->data[i] / sqrt(v) - 1));
        }
        CHECK(worst < 6, "%s: posterior mean off the closed form by %.2f loose se",
              pp_sampler_kind_name(kind), worst);
        CHECK(worst_sd < 0.25, "%s: posterior sd off the closed form by %.1f %%",
              pp_sampler_kind_name(kind), 100 * worst_sd);
        maps_match_probe_traces(s);
        printf("%s gaussian: worst mean dev %.2f loose se, sd dev %.1f%%, acc %.3f beta %.3g\n",
               pp_sampler_kind_name(kind), worst, 100 * worst_sd, s->chain[0].acceptance,
               s->chain[0].step);
        pp_fft_free_buffer(yh);
        pp_fft_free_buffer(mu);
    }
    pp_sampler_free(s);
    pp_image_free(truth);
    pp_image_free(y);
}

static void refusals(const pp_image *psf)
{
    pp_image *y = photon_frame(psf, 5, 1, 0);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    pp_noise_parse("poisson:gain=1,offset=0", NULL, &cfg.noise);
    cfg.kind = PP_SAMPLER_GIBBS;
    pp_sampler *s = NULL;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG && !s &&
              strstr(pp_error_message(), "pcn"),
          "gibbs with poisson noise refused: %s", pp_error_message());
    cfg.kind = PP_SAMPLER_AUTO;
    cfg.background = -1;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG && !s &&
              strstr(pp_error_message(), "background"),
          "negative background refused: %s", pp_error_message());
    cfg.background = 0;
    cfg.iters = 5;
    cfg.burn = 0;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_OK &&
              pp_sampler_config_used(s)->kind == PP_SAMPLER_HMC &&
              pp_sampler_config_used(s)->positivity == PP_POSITIVITY_LOG,
          "auto picks hmc with log positivity for poisson");
    pp_sampler_free(s);
    pp_image_free(y);
}

/* gpcn with a burn-in too short to adapt is warned about by name; the
 * default burn-in (200) is not. */
static void short_burn_warned(const pp_image *psf)
{
    pp_image *y = photon_frame(psf, 20, 1, 0);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    pp_noise_parse("poisson:gain=1,offset=0", NULL, &cfg.noise);
    pp_prior_parse("matern:range=4,nu=1", NULL, &cfg.prior);
    cfg.kind = PP_SAMPLER_GPCN;
    cfg.chains = 1;
    cfg.iters = 20;
    for (int pass = 0; pass < 2; pass++) {
        cfg.burn = pass ? 200 : 100;
        pp_sampler *s = run(&cfg, y, psf);
        int found = 0;
        for (size_t i = 0; s && i < pp_sampler_warning_count(s); i++)
            found |= strstr(pp_sampler_warning(s, i), "too short to adapt") != NULL;
        CHECK(found == !pass, "burn %lu: short burn-in warning %s", cfg.burn,
              found ? "given" : "absent");
        pp_sampler_free(s);
    }
    pp_image_free(y);
}

int main(void)
{
    pp_psf_spec ps;
    pp_image *psf = NULL;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &ps);
    pp_psf_make(&ps, 7, &psf);
    camera_read0_is_poisson(psf, PP_SAMPLER_PCN, PP_BOUNDARY_PERIODIC);
    camera_read0_is_poisson(psf, PP_SAMPLER_GPCN, PP_BOUNDARY_PAD);
    gaussian_closed_form(psf, PP_SAMPLER_PCN);
    gaussian_closed_form(psf, PP_SAMPLER_GPCN);
    refusals(psf);
    short_burn_warned(psf);
    pp_image_free(psf);
    return pp_test_done();
}
