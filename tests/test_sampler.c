/* Unit tests of the sampler's building blocks (src/spectral.c, src/stats.c,
 * src/prior.c, src/noise.c) and of the sampler's contracts: refusals of bad
 * configurations, and byte-identical results whatever the thread count. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "sampler_internal.h"
#include "spectral.h"
#include "stats.h"
#include "pixpost/pixpost.h"
#include "testutil.h"
#include "pixpost/image_extra.h"
#include "pixpost/prior_extra.h"
#include "pixpost/sampler_extra.h"
#include "pixpost/setting_extra.h"

/* The half-spectrum noise must be the DFT of real white noise: c2r of it,
 * divided by N, is a field of independent N(0,1) values. Tolerances: the
 * variance of R*N values has standard error sqrt(2/(R N)); the lag-1
 * correlation has standard error 1/sqrt(R N); both checked at 5 se. */
static void half_noise_is_white(size_t h, size_t w)
{
    pp_fft *f;
    CHECK(pp_fft_create(h, w, PP_FFT_ESTIMATE, &f) == PP_OK, "fft %zux%zu", h, w);
    size_t n = h * w, reps = 400;
    pp_complex *c = pp_fft_alloc_complex(h * (w / 2 + 1));
    double *x = pp_fft_alloc_real(n);
    pp_rng rng;
    pp_rng_seed(&rng, 7, 0);
    double s1 = 0, s2 = 0, lag = 0, lagv = 0;
    for (size_t r = 0; r < reps; r++) {
        pp_half_noise(&rng, h, w, c);
        pp_fft_inverse(f, c, x);
        for (size_t i = 0; i < n; i++) {
            double v = x[i] / (double)n;
            s1 += v;
            s2 += v * v;
            double right = x[(i / w) * w + (i % w + 1) % w] / (double)n;
            double down = x[(i + w) % n] / (double)n;
            lag += v * right;
            lagv += v * down;
        }
    }
    double m = (double)(reps * n);
    double var = s2 / m - (s1 / m) * (s1 / m);
    CHECK(fabs(var - 1) < 5 * sqrt(2 / m), "%zux%zu: white-noise variance %.4f (expect 1)", h, w,
          var);
    CHECK(fabs(s1 / m) < 5 / sqrt(m), "%zux%zu: mean %.4f (expect 0)", h, w, s1 / m);
    CHECK(fabs(lag / m) < 5 / sqrt(m) && fabs(lagv / m) < 5 / sqrt(m),
          "%zux%zu: neighbour correlations %.4f %.4f (expect 0)", h, w, lag / m, lagv / m);
    pp_fft_free_buffer(c);
    pp_fft_free_buffer(x);
    pp_fft_free(f);
}

static void moments_and_quantile(void)
{
    double data[7] = {1, 4, 2, 8, 5, 7, 3};
    pp_moments a, b, all;
    pp_moments_init(&a, 1);
    pp_moments_init(&b, 1);
    pp_moments_init(&all, 1);
    for (int i = 0; i < 7; i++) {
        pp_moments_add(i < 3 ? &a : &b, &data[i]);
        pp_moments_add(&all, &data[i]);
    }
    pp_moments_merge(&a, &b);
    CHECK(a.count == 7 && fabs(a.mean[0] - 30.0 / 7) < 1e-14, "merged mean %g", a.mean[0]);
    CHECK(fabs(a.m2[0] - all.m2[0]) < 1e-12, "merged m2 %g vs %g", a.m2[0], all.m2[0]);
    pp_moments_free(&a);
    pp_moments_free(&b);
    pp_moments_free(&all);
    /* 1.959963984540054 = z_0.975, 0.6744897501960817 = z_0.75 (standard
     * normal tables; values from memory, checked against scipy.stats.norm.ppf). */
    CHECK(fabs(pp_norm_quantile(0.975) - 1.959963984540054) < 1e-12, "z(0.975)=%.15g",
          pp_norm_quantile(0.975));
    CHECK(fabs(pp_norm_quantile(0.25) + 0.6744897501960817) < 1e-12, "z(0.25)");
    CHECK(fabs(pp_norm_quantile(1e-10) + 6.361340902404056) < 1e-9, "z(1e-10)=%.15g",
          pp_norm_quantile(1e-10));
    CHECK(pp_norm_quantile(0.5) == 0.0 || fabs(pp_norm_quantile(0.5)) < 1e-15, "z(0.5)");
}

static void priors(void)
{
    pp_prior_spec p;
    double q[6 * 4], rank;
    CHECK(pp_prior_parse("gmrf1", NULL, &p) == PP_OK && p.kind == PP_PRIOR_GMRF1, "gmrf1");
    pp_prior_eigen(&p, 6, 6, q, &rank);
    CHECK(q[0] == 0 && rank == 35, "gmrf1: free mean, rank N-1");
    CHECK(fabs(q[3 * 4 + 3] - 8) < 1e-12, "gmrf1 largest eigenvalue 8 at (H/2, W/2)");
    CHECK(pp_prior_parse("gmrf2:delta=3", NULL, &p) == PP_OK && p.delta_set && p.delta == 3,
          "gmrf2");
    pp_prior_eigen(&p, 6, 6, q, &rank);
    CHECK(fabs(q[3 * 4 + 3] - 64) < 1e-12, "gmrf2 = q^2");
    CHECK(pp_prior_parse("matern:range=2,nu=1,mean=5", NULL, &p) == PP_OK && p.mean_set, "matern");
    pp_prior_eigen(&p, 6, 6, q, &rank);
    CHECK(fabs(q[0] - 4.0) < 1e-12 && rank == 36, "matern with mean: q(0) = kappa^4 = 4, full rank");
    CHECK(pp_prior_parse("matern:range=-1", NULL, &p) == PP_ERR_ARG, "negative range refused");
    CHECK(pp_prior_parse("gmrf1:mean=3", NULL, &p) == PP_ERR_ARG &&
              strstr(pp_error_message(), "mean"),
          "gmrf1 has no mean key: %s", pp_error_message());
    CHECK(pp_prior_parse("gmrf3", NULL, &p) == PP_ERR_ARG && strstr(pp_error_message(), "gmrf3"),
          "unknown prior named");
    pp_noise_spec n;
    CHECK(pp_noise_parse("camera:gain=0.5,offset=100,read=1.6", NULL, &n) == PP_OK &&
              n.kind == PP_NOISE_CAMERA && n.read == 1.6,
          "camera spec");
    CHECK(pp_noise_parse("gaussian:sigma=0", NULL, &n) == PP_ERR_ARG, "sigma 0 refused");
    CHECK(pp_noise_parse("poisson:gain=1,read=2", NULL, &n) == PP_ERR_ARG &&
              strstr(pp_error_message(), "read"),
          "poisson has no read key");
}

static pp_image *test_frame(size_t w, size_t h)
{
    pp_image *img;
    pp_image_create(h, w, &img);
    pp_rng r;
    pp_rng_seed(&r, 3, 0);
    for (size_t i = 0; i < w * h; i++)
        img->data[i] = 10 + 3 * sin((double)(i % w) / 4) + pp_rng_normal(&r);
    return img;
}

static void run_once(pp_sampler_config *cfg, const pp_image *y, const pp_image *psf,
                     pp_image **mean, double **trace, size_t *tn)
{
    pp_sampler *s;
    CHECK(pp_sampler_create(cfg, y, psf, &s) == PP_OK, "create: %s", pp_error_message());
    CHECK(pp_sampler_run(s) == PP_OK, "run: %s", pp_error_message());
    pp_image_clone(pp_sampler_mean(s), mean);
    const pp_trace *t = pp_sampler_trace(s);
    *tn = t->chains * t->kept * t->ncols;
    *trace = malloc(*tn * sizeof(double));
    memcpy(*trace, t->values, *tn * sizeof(double));
    pp_sampler_free(s);
}

static void determinism_and_refusals(void)
{
    pp_image *y = test_frame(30, 22), *psf;
    pp_psf_spec ps;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &ps);
    pp_psf_make(&ps, 0, &psf);
    for (int b = 0; b < 2; b++) {
        pp_sampler_config cfg;
        pp_sampler_defaults(&cfg);
        cfg.iters_auto = 0; /* exactly burn + iters */
        cfg.boundary = b ? PP_BOUNDARY_PAD : PP_BOUNDARY_PERIODIC;
        cfg.chains = 3;
        cfg.burn = 20;
        cfg.iters = 60;
        cfg.thin = 2;
        cfg.threads = 1;
        pp_image *m1, *m2;
        double *t1, *t2;
        size_t n1, n2;
        run_once(&cfg, y, psf, &m1, &t1, &n1);
        cfg.threads = 2;
        run_once(&cfg, y, psf, &m2, &t2, &n2);
        CHECK(memcmp(m1->data, m2->data, 30 * 22 * sizeof(double)) == 0,
              "%s: mean identical with 1 and 2 threads", b ? "pad" : "periodic");
        CHECK(n1 == n2 && memcmp(t1, t2, n1 * sizeof(double)) == 0,
              "%s: traces identical with 1 and 2 threads", b ? "pad" : "periodic");
        cfg.seed = 2;
        pp_image *m3;
        double *t3;
        run_once(&cfg, y, psf, &m3, &t3, &n2);
        CHECK(memcmp(m1->data, m3->data, 30 * 22 * sizeof(double)) != 0,
              "another seed gives other draws");
        pp_image_free(m1);
        pp_image_free(m2);
        pp_image_free(m3);
        free(t1);
        free(t2);
        free(t3);
    }
    /* Broken configurations are refused at create time with a message. */
    pp_sampler_config cfg;
    pp_sampler *s;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.thin = 5000;
    /* the library's words for a library caller; a caller's own names (the
     * command line's flags) when given (include/pixpost/setting.h) */
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG &&
              strcmp(pp_error_message(),
                     "thinning 5000: must be between 1 and iterations (1000)") == 0,
          "thin > iters refused: %s", pp_error_message());
    static const char *const flags[PP_SET_COUNT] = {[PP_SET_THIN] = "--thin",
                                                    [PP_SET_ITERS] = "--iters"};
    cfg.setting_names = flags;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG &&
              strcmp(pp_error_message(), "--thin 5000: must be between 1 and --iters (1000)") == 0,
          "thin > iters refused, caller's names: %s", pp_error_message());
    CHECK(strcmp(pp_setting_name(flags, PP_SET_BURN), "burn-in") == 0 &&
              strcmp(pp_setting_name(NULL, PP_SET_THIN), "thinning") == 0 &&
              strcmp(pp_setting_name(NULL, PP_SET_COUNT), "setting") == 0,
          "a name the caller leaves NULL is the library's word");
    pp_sampler_kind kind;
    CHECK(pp_sampler_kind_parse("nuts", NULL, &kind) == PP_ERR_ARG &&
              strcmp(pp_error_message(), "sampler 'nuts': unknown sampler (accepted: gibbs, mtc, "
                                         "pcn, gpcn, hmc)") == 0,
          "unknown sampler, library's word: %s", pp_error_message());
    static const char *const sflag[PP_SET_COUNT] = {[PP_SET_SAMPLER] = "--sampler"};
    CHECK(pp_sampler_kind_parse("nuts", sflag, &kind) == PP_ERR_ARG &&
              strncmp(pp_error_message(), "--sampler 'nuts': unknown sampler", 33) == 0,
          "unknown sampler, caller's name: %s", pp_error_message());
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.chains = 0;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG, "zero chains refused");
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.level = 1.0;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG, "level 1 refused");
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    /* NaN = unobserved (sampler.h): accepted; an infinite pixel and a frame
     * with too few observed pixels are refused with the counts. */
    y->data[5] = NAN;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_OK, "a NaN pixel is accepted (unobserved): %s",
          pp_error_message());
    pp_sampler_free(s);
    y->data[5] = INFINITY;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_NUMERIC &&
              strstr(pp_error_message(), "1 infinite pixels"),
          "infinite pixel refused: %s", pp_error_message());
    size_t npix = y->width * y->height;
    for (size_t i = 0; i < npix; i++)
        y->data[i] = NAN;
    y->data[0] = 1.0;
    char want[64];
    snprintf(want, sizeof want, "only 1 of the frame's %zu pixels are observed", npix);
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG && strstr(pp_error_message(), want) &&
              strstr(pp_error_message(), "(or use saturated ones as data)") &&
              !strstr(pp_error_message(), "--"),
          "a frame with 1 observed pixel refused, in the library's words: %s", pp_error_message());
    /* a caller that names its way to keep saturated pixels gets it named */
    static const char *const keep[PP_SET_COUNT] = {[PP_SET_KEEP_SATURATED] = "--keep-saturated"};
    cfg.setting_names = keep;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_ERR_ARG && strstr(pp_error_message(), want) &&
              strstr(pp_error_message(), "(or use saturated ones as data, --keep-saturated)"),
          "... and by the caller's name: %s", pp_error_message());
    cfg.setting_names = NULL;
    pp_image *tiny = test_frame(5, 5);
    CHECK(pp_sampler_create(&cfg, tiny, psf, &s) != PP_OK, "PSF larger than the frame refused");
    pp_image_free(tiny);
    pp_image_free(y);
    pp_image_free(psf);
}

/* Issue 14 item 6: zeros of the PSF's transfer function are a note, not a
 * warning (pp_sampler_warning_count is what --strict and batch count). A
 * Gaussian of sigma 2 px has |A(k)| near exp(-2 pi^2 sigma^2 f^2) (the
 * continuous Gaussian's transform), 2.7e-9 per axis at the Nyquist
 * frequency f = 1/2, so at the corner of the spectrum it is far below the
 * 1e-10 threshold and the note must be made. It is made at create time, so
 * the sampler need not run. */
static void transfer_zeros_are_a_note(void)
{
    pp_image *y = test_frame(32, 32), *psf;
    pp_psf_spec ps;
    pp_psf_parse("gaussian:sigma=2", NULL, &ps);
    pp_psf_make(&ps, 0, &psf);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    pp_sampler *s = NULL;
    CHECK(pp_sampler_create(&cfg, y, psf, &s) == PP_OK, "create: %s", pp_error_message());
    size_t notes = s ? pp_sampler_note_count(s) : 0;
    int noted = 0, warned = 0;
    for (size_t i = 0; i < notes; i++)
        noted |= strstr(pp_sampler_note(s, i), "transfer function") != NULL;
    for (size_t i = 0; s && i < pp_sampler_warning_count(s); i++)
        warned |= strstr(pp_sampler_warning(s, i), "transfer function") != NULL;
    CHECK(noted, "sigma 2: the transfer-function zeros are a note (%zu notes)", notes);
    CHECK(!warned && s && pp_sampler_warning_count(s) == 0,
          "sigma 2: no warning at create time (%zu)", s ? pp_sampler_warning_count(s) : 0);
    CHECK(s && pp_sampler_note(s, notes) == NULL, "note past the end is NULL");
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(y);
}

int main(void)
{
    half_noise_is_white(8, 6);
    half_noise_is_white(7, 5);
    half_noise_is_white(6, 9);
    moments_and_quantile();
    priors();
    determinism_and_refusals();
    transfer_zeros_are_a_note();
    return pp_test_done();
}
