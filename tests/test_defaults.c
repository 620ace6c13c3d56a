/* Unit tests of the library's defaults (issue 20): pp_version() is the
 * project version the build passes in; the default prior is decided by
 * pp_prior_resolve (include/pixpost/prior.h) for every caller: adaptive for
 * gaussian noise, matern for photon counts, exactly the priors
 * pp_prior_parse gives for "adaptive" and "matern"; pp_sampler_create
 * resolves it and pp_sampler_config_used shows the prior that runs. */
#include "pixpost/pixpost.h"
#include "testutil.h"
#include "pixpost/prior_extra.h"
#include "pixpost/sampler_extra.h"
#include <string.h>

static int same_prior(const pp_prior_spec *a, const pp_prior_spec *b)
{
    return a->kind == b->kind && a->range == b->range && a->nu == b->nu &&
           a->block == b->block && a->mean_set == b->mean_set && a->delta_set == b->delta_set;
}

/* The prior pp_sampler_create settles on for a 24 x 24 frame with noise. */
static pp_prior_spec used_prior(const char *noise, pp_sampler_kind *kind)
{
    pp_prior_spec none;
    memset(&none, 0, sizeof none);
    none.kind = PP_PRIOR_DEFAULT;
    pp_image *f = NULL, *k = NULL;
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.chains = 1;
    cfg.iters_auto = 0;
    pp_sampler *s = NULL;
    if (pp_noise_parse(noise, NULL, &cfg.noise) != PP_OK || pp_image_create(24, 24, &f) != PP_OK ||
        pp_image_create(3, 3, &k) != PP_OK)
        return none;
    for (size_t i = 0; i < 24 * 24; i++)
        f->data[i] = 100.0 + (double)(i % 7);
    for (size_t i = 0; i < 9; i++)
        k->data[i] = i == 4 ? 0.5 : 0.0625;
    pp_prior_spec out = none;
    if (pp_sampler_create(&cfg, f, k, &s) == PP_OK) {
        out = pp_sampler_config_used(s)->prior;
        *kind = pp_sampler_config_used(s)->kind;
    }
    pp_sampler_free(s);
    pp_image_free(f);
    pp_image_free(k);
    return out;
}

int main(void)
{
    CHECK(strcmp(pp_version(), PIXPOST_TEST_VERSION) == 0, "pp_version() %s, project %s",
          pp_version(), PIXPOST_TEST_VERSION);

    pp_prior_spec adaptive, matern, p;
    CHECK(pp_prior_parse("adaptive", NULL, &adaptive) == PP_OK &&
              pp_prior_parse("matern", NULL, &matern) == PP_OK,
          "parse adaptive, matern");
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    CHECK(cfg.prior.kind == PP_PRIOR_DEFAULT, "pp_sampler_defaults leaves the prior to the library");
    char text[128];
    pp_prior_format(&cfg.prior, text, sizeof text);
    CHECK(strcmp(text, "default") == 0, "the unresolved default formats as 'default': %s", text);
    double q[4], rank;
    CHECK(pp_prior_eigen(&cfg.prior, 2, 2, q, &rank) == PP_ERR_ARG &&
              strstr(pp_error_message(), "pp_prior_resolve"),
          "eigenvalues of an unresolved default are refused: %s", pp_error_message());

    static const char *const photon[] = {"poisson:gain=1,offset=0",
                                         "camera:gain=0.5,offset=100,read=1.6"};
    p = cfg.prior;
    pp_prior_resolve(&p, &cfg.noise); /* gaussian */
    CHECK(same_prior(&p, &adaptive), "gaussian noise: the default is adaptive:nu=2,block=8");
    p = cfg.prior;
    pp_prior_resolve(&p, NULL);
    CHECK(same_prior(&p, &adaptive), "no noise model (NULL): adaptive, as gaussian");
    for (int i = 0; i < 2; i++) {
        pp_noise_spec n;
        CHECK(pp_noise_parse(photon[i], NULL, &n) == PP_OK, "parse %s", photon[i]);
        p = cfg.prior;
        pp_prior_resolve(&p, &n);
        CHECK(same_prior(&p, &matern), "%s: the default is matern:range=6,nu=1", photon[i]);
        pp_prior_parse("gmrf2:delta=3", NULL, &p); /* a choice is never swapped */
        pp_prior_resolve(&p, &n);
        CHECK(p.kind == PP_PRIOR_GMRF2 && p.delta_set && p.delta == 3, "a given prior is kept");
    }

    /* the sampler resolves it, and shows what ran */
    pp_sampler_kind kind = PP_SAMPLER_AUTO;
    p = used_prior("gaussian", &kind);
    CHECK(same_prior(&p, &adaptive) && kind == PP_SAMPLER_GIBBS,
          "a gaussian frame runs adaptive gibbs (kind %d, prior kind %d)", (int)kind, (int)p.kind);
    p = used_prior(photon[1], &kind);
    CHECK(same_prior(&p, &matern) && kind == PP_SAMPLER_HMC,
          "a camera frame runs matern hmc (kind %d, prior kind %d)", (int)kind, (int)p.kind);
    return pp_test_done();
}
