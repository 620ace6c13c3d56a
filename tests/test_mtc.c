/* Unit tests of the mtc sampler and PSF-width sampling: refusals, the pad
 * fallback and its warning, fixed hyperparameters (exact estimates equal
 * gibbs's), thread-count determinism, the log marginal's maximum near the
 * rough scales, the width column of the trace, the automatic choice (mtc
 * for periodic Gaussian, gibbs for pad) and the recorded acceptance of the
 * (lambda, delta) move. */
#include "sampler_internal.h"
#include "sampler_mtc.h"
#include "pixpost/psf.h"
#include "testutil.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <string.h>

/* A smooth 24 x 20 test frame (deterministic). */
static pp_image *frame(void)
{
    pp_image *y = NULL;
    pp_image_create(24, 20, &y);
    pp_rng r;
    pp_rng_seed(&r, 3, 0);
    for (size_t i = 0; i < 24; i++)
        for (size_t j = 0; j < 20; j++)
            y->data[i * 20 + j] =
                10 + 3 * sin(0.4 * (double)i) * cos(0.3 * (double)j) + 0.2 * pp_rng_normal(&r);
    return y;
}

static pp_sampler_config base(pp_sampler_kind kind)
{
    pp_sampler_config c;
    pp_sampler_defaults(&c);
    c.iters_auto = 0; /* exactly burn + iters */
    c.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    c.kind = kind;
    c.boundary = PP_BOUNDARY_PERIODIC;
    c.chains = 2;
    c.burn = 50;
    c.iters = 100;
    c.threads = 1;
    return c;
}

static pp_sampler *run(const pp_sampler_config *c, const pp_image *y, const pp_image *k)
{
    pp_sampler *s = NULL;
    if (pp_sampler_create(c, y, k, &s) != PP_OK || pp_sampler_run(s) != PP_OK) {
        fprintf(stderr, "run: %s\n", pp_error_message());
        pp_sampler_free(s);
        return NULL;
    }
    return s;
}

static void test_refusals(const pp_image *y, const pp_image *k)
{
    pp_psf_spec sp;
    CHECK(pp_psf_parse("gaussian:sigma=auto,lo=0,hi=2", NULL, &sp) == PP_ERR_ARG, "lo=0 refused");
    CHECK(pp_psf_parse("gaussian:sigma=auto,lo=2,hi=1", NULL, &sp) == PP_ERR_ARG, "lo>hi refused");
    CHECK(pp_psf_parse("airy:na=auto,hi=1.9,wavelength=0.5,pixel=0.1", NULL, &sp) == PP_ERR_ARG,
          "NA above 1.7 refused");
    CHECK(pp_psf_parse("gaussian:sigma=2,lo=1", NULL, &sp) == PP_ERR_ARG,
          "lo without auto refused");
    CHECK(pp_psf_parse("gaussian:sigma=auto", NULL, &sp) == PP_OK && sp.width_auto &&
              sp.width_lo == 0.5 && sp.width_hi == 4.0 && sp.sigma == 2.25,
          "sigma=auto: default range 0.5..4, start at the midpoint");
    char buf[256];
    pp_psf_format(&sp, buf, sizeof buf);
    CHECK(strcmp(buf, "gaussian:sigma=auto,lo=0.5,hi=4") == 0, "format: %s", buf);
    pp_sampler_config c = base(PP_SAMPLER_PCN);
    c.psf = sp;
    pp_sampler *s = NULL;
    CHECK(pp_sampler_create(&c, y, k, &s) == PP_ERR_ARG && !s, "width sampling refused for pcn");
    c = base(PP_SAMPLER_MTC);
    c.psf = sp;
    c.psf.kind = PP_PSF_FILE;
    CHECK(pp_sampler_create(&c, y, k, &s) == PP_ERR_ARG && !s,
          "width sampling refused for a file PSF");
}

static void test_pad_fallback(const pp_image *y, const pp_image *k)
{
    pp_sampler_config c = base(PP_SAMPLER_MTC);
    c.boundary = PP_BOUNDARY_PAD;
    pp_sampler *s = run(&c, y, k);
    CHECK(s != NULL, "mtc with pad runs");
    if (!s)
        return;
    CHECK(s->pad_scheme && strstr(s->pad_scheme, "gibbs"), "pad_scheme names gibbs");
    int warned = 0;
    for (size_t i = 0; i < pp_sampler_warning_count(s); i++)
        /* the library's words (no setting names given; the command line's
         * are "--sampler mtc with --boundary pad") */
        warned |= strstr(pp_sampler_warning(s, i), "sampler mtc with boundary pad runs the "
                                                   "gibbs chain") != NULL;
    CHECK(warned, "mtc with pad warns about the fallback");
    pp_sampler_free(s);
}

/* With lambda and delta fixed, both estimates are exact closed forms, so
 * mtc (no Metropolis step at all) equals gibbs to rounding. */
static void test_fixed(const pp_image *y, const pp_image *k)
{
    pp_sampler_config c = base(PP_SAMPLER_MTC);
    c.noise.sigma_set = 1;
    c.noise.sigma = 0.2;
    c.prior.delta_set = 1;
    c.prior.delta = 0.5;
    pp_sampler *m = run(&c, y, k);
    c.kind = PP_SAMPLER_GIBBS;
    pp_sampler *g = run(&c, y, k);
    CHECK(m && g, "fixed runs");
    if (m && g) {
        double dm = 0, ds = 0;
        for (size_t i = 0; i < 24 * 20; i++) {
            dm = fmax(dm, fabs(m->mean->data[i] - g->mean->data[i]));
            ds = fmax(ds, fabs(m->sd->data[i] - g->sd->data[i]));
        }
        CHECK(dm < 1e-9 && ds < 1e-9, "fixed hyper: mtc = gibbs (mean %.2e, sd %.2e)", dm, ds);
        CHECK(fabs(m->trace.values[PP_COL_LAMBDA] - 25.0) < 1e-9, "lambda stays 1/sigma^2");
    }
    pp_sampler_free(m);
    pp_sampler_free(g);
}

static void test_threads_and_width(const pp_image *y, const pp_image *k)
{
    pp_sampler_config c = base(PP_SAMPLER_MTC);
    pp_psf_parse("gaussian:sigma=auto,lo=0.8,hi=2", NULL, &c.psf);
    pp_sampler *a = run(&c, y, k);
    c.threads = 2;
    pp_sampler *b = run(&c, y, k);
    CHECK(a && b, "width runs");
    if (a && b) {
        const pp_trace *t = &a->trace;
        size_t n = (size_t)t->chains * t->kept * t->ncols;
        CHECK(memcmp(t->values, b->trace.values, n * sizeof(double)) == 0,
              "same seed, 1 or 2 threads: identical traces");
        CHECK(a->col_width == PP_COL_PROBE0 && strcmp(t->names[a->col_width], "psf_width") == 0,
              "psf_width column after loglik");
        int inside = 1, moved = 0;
        for (size_t r = 0; r < (size_t)t->chains * t->kept; r++) {
            double w = t->values[r * t->ncols + (size_t)a->col_width];
            inside &= w >= 0.8 && w <= 2.0;
            moved |= w != t->values[(size_t)a->col_width];
        }
        CHECK(inside && moved, "the width stays in [lo, hi] and moves");
    }
    pp_sampler_free(a);
    pp_sampler_free(b);
}

/* The log marginal is finite and decreases away from the posterior mode
 * along lambda (a far-off lambda is much less likely). */
static void test_marginal_shape(const pp_image *y, const pp_image *k)
{
    pp_sampler_config c = base(PP_SAMPLER_MTC);
    pp_sampler *s = run(&c, y, k);
    CHECK(s != NULL, "mtc runs");
    if (!s)
        return;
    double lam = 0, del = 0;
    size_t n = (size_t)s->trace.chains * s->trace.kept;
    for (size_t r = 0; r < n; r++) {
        lam += s->trace.values[r * s->trace.ncols + PP_COL_LAMBDA] / (double)n;
        del += s->trace.values[r * s->trace.ncols + PP_COL_DELTA] / (double)n;
    }
    /* A run frees the transfer function: evaluate on a planned twin. */
    pp_sampler *t = NULL;
    CHECK(pp_sampler_create(&c, y, k, &t) == PP_OK, "create: %s", pp_error_message());
    if (t) {
        double at = pp_mtc_log_marginal(t, t->otf2, lam, del);
        double lo = pp_mtc_log_marginal(t, t->otf2, lam / 10, del);
        double hi = pp_mtc_log_marginal(t, t->otf2, lam * 10, del);
        CHECK(isfinite(at) && at > lo + 10 && at > hi + 10,
              "log marginal peaks near the posterior mean (%.3g vs %.3g, %.3g)", at, lo, hi);
    }
    pp_sampler_free(t);
    pp_sampler_free(s);
}

/* --sampler auto: mtc with periodic boundaries, gibbs with pad; mtc's
 * independence move on log rho is accepted most of the time (measured 0.98
 * on this frame; 0.8 leaves a wide margin) and its scale is recorded. */
static void test_auto_and_moves(const pp_image *y, const pp_image *k)
{
    pp_sampler_config c = base(PP_SAMPLER_AUTO);
    pp_sampler *s = run(&c, y, k);
    CHECK(s && s->cfg.kind == PP_SAMPLER_MTC, "auto + periodic + gaussian -> mtc");
    for (unsigned i = 0; s && i < s->cfg.chains; i++)
        CHECK(s->chain[i].acceptance > 0.8 && s->chain[i].acceptance <= 1 && s->chain[i].step > 0 &&
                  s->chain[i].step < 1,
              "chain %u: rho move acceptance %.3f, scale %.3g", i, s->chain[i].acceptance,
              s->chain[i].step);
    pp_sampler_free(s);
    c.boundary = PP_BOUNDARY_PAD;
    s = run(&c, y, k);
    CHECK(s && s->cfg.kind == PP_SAMPLER_GIBBS, "auto + pad -> gibbs");
    pp_sampler_free(s);
}

int main(void)
{
    pp_image *y = frame(), *k = NULL;
    pp_psf_spec sp;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &sp);
    pp_psf_make(&sp, 9, &k);
    test_refusals(y, k);
    test_pad_fallback(y, k);
    test_fixed(y, k);
    test_threads_and_width(y, k);
    test_marginal_shape(y, k);
    test_auto_and_moves(y, k);
    pp_image_free(k);
    pp_image_free(y);
    return pp_test_done();
}
