/* Unit tests of the calibration library (src/pixpost/calib.h): the
 * series statistics on hand-computed frames, the photon transfer fit on
 * exact (noise-free) statistics and its refusals, the single-frame fit's
 * refusals and its unobserved (NaN) pixels, and the spec chosen from a fit.
 * The reference checks against numpy and EMVA 1288 are tests/ref_calibrate*.py. */
#include "pixpost/calib.h"
#include "pixpost/rng.h"
#include "testutil.h"
#include <math.h>
#include <string.h>

static pp_image *img2x2(double a, double b, double c, double d)
{
    pp_image *m = NULL;
    pp_image_create(2, 2, &m);
    m->data[0] = a;
    m->data[1] = b;
    m->data[2] = c;
    m->data[3] = d;
    return m;
}

/* Three 2x2 frames by hand: frame means 2.5, 3.5, 6.5; residuals per pixel
 * r = y - m. Pixel 0: 1-2.5, 2-3.5, 5-6.5 = -1.5 each: variance 0. Pixel 1:
 * -0.5, -0.5, 1.5: mean 1/6, M2 = 8/3. By symmetry of the construction
 * the sum of M2 over pixels divided by (L-1)(N-1) = 2 * 3 is the temporal
 * variance. */
static void test_series_by_hand(void)
{
    pp_series *s = NULL;
    CHECK(pp_series_create(2, 2, INFINITY, &s) == PP_OK, "create");
    pp_image *f[3] = {img2x2(1, 2, 3, 4), img2x2(2, 3, 4, 5), img2x2(5, 8, 6, 7)};
    for (int i = 0; i < 3; i++)
        CHECK(pp_series_add(s, f[i]) == PP_OK, "add %d", i);
    pp_series_stats st;
    CHECK(pp_series_stats_get(s, &st) == PP_OK, "stats");
    /* numpy: r = y - y.mean((1,2)); r.var(0, ddof=1).sum() / 3 */
    double y[3][4] = {{1, 2, 3, 4}, {2, 3, 4, 5}, {5, 8, 6, 7}}, m2 = 0;
    for (int p = 0; p < 4; p++) {
        double r[3], mean = 0;
        for (int l = 0; l < 3; l++) {
            double fm = (y[l][0] + y[l][1] + y[l][2] + y[l][3]) / 4;
            r[l] = y[l][p] - fm;
            mean += r[l] / 3;
        }
        for (int l = 0; l < 3; l++)
            m2 += (r[l] - mean) * (r[l] - mean);
    }
    CHECK(fabs(st.temporal_var - m2 / (2 * 3)) < 1e-12, "temporal var %g, by hand %g",
          st.temporal_var, m2 / 6);
    CHECK(fabs(st.mean - 50.0 / 12) < 1e-12, "mean %g, 50/12", st.mean);
    CHECK(st.frames == 3 && st.pixels == 4 && st.saturated == 0, "counts");
    /* a frame of another size is refused and names both sizes */
    pp_image *big = NULL;
    pp_image_create(2, 3, &big);
    CHECK(pp_series_add(s, big) == PP_ERR_ARG && strstr(pp_error_message(), "3x2") &&
              strstr(pp_error_message(), "2x2"),
          "size mismatch: %s", pp_error_message());
    pp_image_free(big);
    for (int i = 0; i < 3; i++)
        pp_image_free(f[i]);
    pp_series_free(s);
}

/* Saturated and NaN pixels drop out for the whole series. */
static void test_series_exclusion(void)
{
    pp_series *s = NULL;
    pp_series_create(2, 2, 100, &s);
    pp_image *a = img2x2(1, 2, 3, 100), *b = img2x2(2, NAN, 4, 5), *c = img2x2(1, 2, 3, 4);
    pp_series_add(s, a);
    pp_series_add(s, b);
    pp_series_add(s, c);
    pp_series_stats st;
    CHECK(pp_series_stats_get(s, &st) == PP_OK && st.pixels == 2 && st.saturated == 1,
          "2 pixels used, 1 saturated (got %zu, %zu)", st.pixels, st.saturated);
    pp_series *one = NULL;
    pp_series_create(2, 2, INFINITY, &one);
    pp_series_add(one, a);
    CHECK(pp_series_stats_get(one, &st) == PP_ERR_ARG && strstr(pp_error_message(), "2 frames"),
          "one frame refused: %s", pp_error_message());
    pp_series_free(one);
    pp_series_free(s);
    pp_image_free(a);
    pp_image_free(b);
    pp_image_free(c);
}

static pp_series_stats level(double mean, double var, double var_se)
{
    pp_series_stats s;
    memset(&s, 0, sizeof s);
    s.frames = 16;
    s.pixels = 4096;
    s.mean = mean;
    s.mean_se = 0.01;
    s.temporal_var = var;
    s.temporal_var_se = var_se;
    return s;
}

/* Exact statistics of the linear camera (K 2, offset 100, read 1.5 e-): the
 * fit returns them, and every refusal names the level and the fix. */
static void test_ptc(void)
{
    double K = 2, O = 100, vd = K * K * 1.5 * 1.5;
    pp_series_stats dark = level(O, vd, 0.05), lv[4];
    double sig[4] = {100, 400, 1600, 6400};
    for (int i = 0; i < 4; i++)
        lv[i] = level(O + sig[i], vd + K * sig[i], 0.006 * (vd + K * sig[i]));
    pp_ptc_result r;
    CHECK(pp_ptc_fit(&dark, lv, 4, NULL, &r) == PP_OK, "fit: %s", pp_error_message());
    CHECK(fabs(r.gain - K) < 1e-9 && fabs(r.offset - O) < 1e-12 && fabs(r.read - 1.5) < 1e-9,
          "exact: gain %g offset %g read %g", r.gain, r.offset, r.read);
    CHECK(fabs(r.read_emva - sqrt(vd - 1.0 / 12) / K) < 1e-12, "EMVA sigma_d %g", r.read_emva);
    CHECK(r.linearity_error < 1e-9 && !r.linearity_from_exposure, "linear: %g", r.linearity_error);
    pp_noise_spec n;
    pp_noise_from_ptc(&r, &n);
    CHECK(n.kind == PP_NOISE_CAMERA && n.gain == r.gain && n.read == r.read, "spec");

    CHECK(pp_ptc_fit(&dark, lv, 1, NULL, &r) == PP_ERR_ARG &&
              strstr(pp_error_message(), "2 or more light levels"),
          "one level: %s", pp_error_message());
    pp_series_stats same[2] = {lv[2], lv[2]};
    same[1].mean += 10;
    CHECK(pp_ptc_fit(&dark, same, 2, NULL, &r) == PP_ERR_ARG &&
              strstr(pp_error_message(), "within 20 %"),
          "one level twice: %s", pp_error_message());
    pp_series_stats sat[2] = {lv[0], lv[1]};
    sat[1].saturated = 100;
    CHECK(pp_ptc_fit(&dark, sat, 2, NULL, &r) == PP_ERR_ARG &&
              strstr(pp_error_message(), "flat level 2") && strstr(pp_error_message(), "saturated"),
          "saturated: %s", pp_error_message());
    pp_series_stats bend[3] = {lv[0], lv[1], lv[2]};
    bend[2].temporal_var = 0.5 * lv[1].temporal_var; /* the curve turns down at its top */
    CHECK(pp_ptc_fit(&dark, bend, 3, NULL, &r) == PP_ERR_ARG &&
              strstr(pp_error_message(), "flat level 3") && strstr(pp_error_message(), "saturates"),
          "bend: %s", pp_error_message());
    double expo[4] = {1, 4, 16, 70}; /* the last level 9 % short of the line */
    CHECK(pp_ptc_fit(&dark, lv, 4, expo, &r) == PP_OK && r.linearity_from_exposure &&
              r.linearity_error > 1,
          "nonlinear exposure: %g %%", r.linearity_error);
}

/* A camera frame with a hole of NaN (unobserved) pixels and a saturated
 * patch: the fit skips both and still finds the gain; too small a frame
 * and a constant one are refused. */
static void test_frame_fit(void)
{
    pp_image *f = NULL;
    pp_image_create(128, 128, &f);
    pp_rng rng_state, *rng = &rng_state;
    pp_rng_seed(rng, 99, 0);
    for (size_t r = 0; r < 128; r++)
        for (size_t c = 0; c < 128; c++) {
            double photons = 20 + 1500.0 * (double)c / 127; /* a ramp */
            double e = pp_rng_poisson(rng, photons) + 1.5 * pp_rng_normal(rng);
            f->data[r * 128 + c] = floor(100 + 2 * e + 0.5);
        }
    for (size_t r = 10; r < 40; r++)
        for (size_t c = 10; c < 40; c++)
            f->data[r * 128 + c] = NAN;
    for (size_t r = 80; r < 100; r++)
        for (size_t c = 80; c < 100; c++)
            f->data[r * 128 + c] = 4095;
    pp_frame_fit_config cfg;
    pp_frame_fit_defaults(&cfg);
    cfg.saturation = 4095;
    pp_noise_fit fit;
    CHECK(pp_noise_fit_frame(f, &cfg, &fit) == PP_OK, "fit: %s", pp_error_message());
    /* 15 % is ~3 standard errors at this size */
    CHECK(fabs(fit.a / 2 - 1) < 0.15 && fit.gain_determined, "a %g (se %g)", fit.a, fit.a_se);
    CHECK(fit.blocks <= 64 * 64 - 15 * 15 - 10 * 10, "NaN and saturated blocks left out: %zu",
          fit.blocks);
    pp_noise_spec n;
    CHECK(pp_noise_from_frame_fit(&fit, &n) == 1 && n.kind == PP_NOISE_CAMERA && n.gain == fit.a &&
              n.offset >= fit.zero_level && n.offset == fit.darkest,
          "camera spec from the fit: offset %g at the darkest level %g, zero level %g", n.offset,
          fit.darkest, fit.zero_level);
    /* the fitted variance is kept at the chosen offset: K^2 R^2 = a O + b */
    CHECK(fabs(n.gain * n.gain * n.read * n.read - (fit.a * n.offset + fit.b)) <
              1e-9 * (1 + fabs(fit.b)),
          "variance at the offset kept: %g vs %g", n.gain * n.gain * n.read * n.read,
          fit.a * n.offset + fit.b);
    fit.gain_determined = 0;
    CHECK(pp_noise_from_frame_fit(&fit, &n) == 0 && n.kind == PP_NOISE_GAUSSIAN && !n.sigma_set,
          "fallback: gaussian with its variance sampled");
    pp_image *small = NULL;
    pp_image_create(40, 12, &small);
    CHECK(pp_noise_fit_frame(small, NULL, &fit) == PP_ERR_ARG &&
              strstr(pp_error_message(), "16x16"),
          "small: %s", pp_error_message());
    pp_image *flat = NULL;
    pp_image_create(64, 64, &flat);
    CHECK(pp_noise_fit_frame(flat, NULL, &fit) == PP_ERR_ARG &&
              strstr(pp_error_message(), "no noise to fit"),
          "constant frame refused: %s", pp_error_message());
    pp_image_free(flat);
    pp_image_free(small);
    pp_image_free(f);
}

static void test_round(void)
{
    pp_noise_spec n = {PP_NOISE_CAMERA, 0, 0, 2.0071234, 100.0338291, 1.50523};
    pp_noise_round(&n);
    CHECK(n.gain == 2.007 && n.offset == 100.034 && n.read == 1.505, "rounded %.10g %.10g %.10g",
          n.gain, n.offset, n.read);
}

int main(void)
{
    test_series_by_hand();
    test_series_exclusion();
    test_ptc();
    test_frame_fit();
    test_round();
    return pp_test_done();
}
