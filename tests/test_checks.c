/* Unit tests of the checks of the data (src/datacheck.c) and of the fit
 * (src/ppcheck.c) on hand-made frames, where every figure is known
 * exactly:
 *  - datacheck: the below-offset rule at its limit (1/2 + max(0.1,
 *    2/sqrt(N)): 70 of 100 pixels below is not an error, 71 is), NaN pixels
 *    skipped (the shared convention: unobserved), the impossible-values
 *    rule (one pixel: a warning; over 1 %: an error), the PSF size rules
 *    and no offset check under gaussian noise;
 *  - ppcheck: y = A x + a +-sigma checkerboard under gaussian:sigma gives
 *    r = +-1 exactly: mean 0, variance 1, lag-1 -1 along rows and down
 *    columns, nothing beyond 3; the checkerboard's power sits at the
 *    Nyquist frequency, outside the PSF's band (ratio 0); NaN frame pixels
 *    are blank in the map and left out of the count; with pad the border
 *    band of the kernel's radius is left out; a residual variance of 4
 *    (the noise doubled) fires the "gain"/"sigma" warning;
 *  - both name the noise model, PSF and boundary settings in the
 *    library's words without a names table (no "--" in the text) and by
 *    the caller's names with one (include/pixpost/setting.h). */
#include "pixpost/datacheck.h"
#include "pixpost/model.h"
#include "pixpost/ppcheck.h"
#include "pixpost/psf.h"
#include "pixpost/setting.h"
#include "testutil.h"
#include "pixpost/model_extra.h"
#include <math.h>
#include <string.h>

static pp_image *filled(size_t w, size_t h, double v)
{
    pp_image *im = NULL;
    pp_image_create(h, w, &im);
    for (size_t i = 0; i < w * h; i++)
        im->data[i] = v;
    return im;
}

/* A caller's names (the command line's flags, as src/cli/flag_names.c). */
static const char *const flags[PP_SET_COUNT] = {[PP_SET_NOISE] = "--noise",
                                                [PP_SET_PSF] = "--psf",
                                                [PP_SET_BOUNDARY] = "--boundary",
                                                [PP_SET_BACKGROUND] = "--background"};

static void test_datacheck(void)
{
    pp_noise_spec cam = {PP_NOISE_CAMERA, 0, 0, 2.0, 100.0, 1.5};
    pp_image *psf = filled(3, 3, 1.0 / 9), *y = filled(10, 10, 101.0);
    pp_datacheck d;
    for (int i = 0; i < 70; i++)
        y->data[i] = 99.0; /* below, but not impossible (100 - 5 s - 1 = 83.9) */
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.errors == 0 &&
              fabs(d.share_below_offset - 0.70) < 1e-12,
          "70 of 100 below: no error (share %g, errors %zu)", d.share_below_offset, d.errors);
    y->data[70] = 99.0;
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.errors == 1 &&
              strcmp(d.finding[0].check, "below_offset") == 0 &&
              strstr(d.finding[0].text, "71.0 % of the observed pixels are below the offset "
                                        "100 ADU"),
          "71 of 100 below: an error naming the share and the offset (%s)",
          d.count ? d.finding[0].text : "none");
    CHECK(d.count && strstr(d.finding[0].text, "offset 100 ADU of noise model camera") &&
              strstr(d.finding[0].text, "give offset=") && !strstr(d.finding[0].text, "--"),
          "library caller: the library's words, no flag (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, flags, &d) == PP_OK && d.errors == 1 &&
              strstr(d.finding[0].text, "offset 100 ADU of --noise camera") &&
              strstr(d.finding[0].text, "in --noise (or measure it"),
          "caller's names: the flag (%s)", d.count ? d.finding[0].text : "none");
    for (int i = 0; i < 60; i++) /* 60 of the 71 below become unobserved: 11 of 40 */
        y->data[i] = NAN;
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.observed == 40 &&
              fabs(d.share_below_offset - 11.0 / 40) < 1e-12 && d.errors == 0,
          "NaN skipped: 40 observed, share 11/40 (got %zu, %g)", d.observed, d.share_below_offset);
    y->data[99] = 50.0; /* one impossible pixel of 40: 2.5 % -> error */
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.errors == 1 &&
              strcmp(d.finding[0].check, "impossible") == 0,
          "one pixel at 50 ADU of 40: impossible, an error");
    CHECK(d.count && strstr(d.finding[0].text, "impossible under noise model camera;") &&
              strstr(d.finding[0].text, "read noise in noise model, or use noise model gaussian "
                                        "for processed data") &&
              !strstr(d.finding[0].text, "--"),
          "impossible, library's words (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(y, &cam, psf, PP_BOUNDARY_PAD, flags, &d) == PP_OK && d.errors == 1 &&
              strstr(d.finding[0].text, "impossible under --noise camera;") &&
              strstr(d.finding[0].text, "read noise in --noise, or use --noise gaussian for "
                                        "processed data"),
          "impossible, caller's names (%s)", d.count ? d.finding[0].text : "none");
    pp_image *big = filled(20, 20, 101.0);
    big->data[0] = 50.0; /* one of 400: 0.25 % -> a warning */
    CHECK(pp_datacheck_run(big, &cam, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.errors == 0 &&
              d.warnings == 1 && strstr(d.finding[0].text, "cold or defect pixels"),
          "one impossible pixel of 400: a warning");
    CHECK(d.count && strstr(d.finding[0].text, "impossible under noise model camera; they look") &&
              !strstr(d.finding[0].text, "--"),
          "one impossible pixel, library's words (%s)", d.count ? d.finding[0].text : "none");
    pp_noise_spec gau = {PP_NOISE_GAUSSIAN, 0, 0, 0, 0, 0};
    CHECK(pp_datacheck_run(big, &gau, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.count == 0 &&
              isnan(d.share_below_offset),
          "gaussian noise: no offset checks");
    pp_image *k13 = filled(13, 13, 1.0 / 169), *k11 = filled(11, 11, 1.0 / 121);
    CHECK(pp_datacheck_run(y, &gau, k13, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.errors == 1 &&
              strstr(d.finding[0].text, "smaller than the PSF kernel (13x13)"),
          "10x10 frame, 13x13 kernel: error");
    CHECK(d.count && strstr(d.finding[0].text, "check the PSF units") &&
              !strstr(d.finding[0].text, "--"),
          "kernel too large, library's words (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(y, &gau, k13, PP_BOUNDARY_PAD, flags, &d) == PP_OK && d.errors == 1 &&
              strstr(d.finding[0].text, "check the --psf units"),
          "kernel too large, caller's names (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(big, &gau, k11, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.warnings == 1 &&
              strstr(d.finding[0].text, "less than twice the PSF kernel (11x11)"),
          "20x20 frame, 11x11 kernel: warning");
    CHECK(d.count && strstr(d.finding[0].text, "unknown (boundary pad), so") &&
              !strstr(d.finding[0].text, "--"),
          "kernel wide, library's words (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(big, &gau, k11, PP_BOUNDARY_PERIODIC, flags, &d) == PP_OK &&
              d.warnings == 1 &&
              strstr(d.finding[0].text, "wrap around (--boundary periodic), so"),
          "kernel wide, caller's names (%s)", d.count ? d.finding[0].text : "none");
    CHECK(pp_datacheck_run(big, &gau, psf, PP_BOUNDARY_PAD, NULL, &d) == PP_OK && d.count == 0,
          "20x20 frame, 3x3 kernel: nothing");
    pp_image_free(k13);
    pp_image_free(k11);
    pp_image_free(big);
    pp_image_free(y);
    pp_image_free(psf);
}

static void test_ppcheck(void)
{
    size_t w = 24, h = 20;
    pp_psf_spec ps;
    pp_image *psf = NULL, *x = NULL, *ax = NULL;
    pp_psf_parse("gaussian:sigma=1", NULL, &ps);
    pp_psf_make(&ps, 0, &psf); /* 9x9 */
    pp_image_create(h, w, &x);
    for (size_t i = 0; i < w * h; i++)
        x->data[i] = 50 + 30 * sin(0.3 * (double)i);
    pp_model_blur(x, psf, PP_BOUNDARY_PERIODIC, NULL, &ax);
    double sigma = 2.0;
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++)
            ax->data[i * w + j] += ((i + j) % 2 ? sigma : -sigma);
    pp_noise_spec gs = {PP_NOISE_GAUSSIAN, sigma, 1, 0, 0, 0};
    pp_ppcheck_input in = {ax, x, psf, PP_BOUNDARY_PERIODIC, gs, 1 / (sigma * sigma), 0, NULL};
    pp_ppcheck *p = NULL;
    CHECK(pp_ppcheck_run(&in, &p) == PP_OK, "ppcheck runs");
    if (p) {
        CHECK(p->used == w * h && fabs(p->mean) < 1e-9 && fabs(p->var - 1) < 1e-9 &&
                  p->beyond3 == 0,
              "checkerboard: mean %g, var %g, %zu pixels", p->mean, p->var, p->used);
        CHECK(fabs(p->lag1_row + 1) < 1e-9 && fabs(p->lag1_col + 1) < 1e-9,
              "checkerboard: lag-1 %g, %g (-1)", p->lag1_row, p->lag1_col);
        CHECK(fabs(p->band_ratio) < 1e-9, "checkerboard: PSF-band power %g (0)", p->band_ratio);
        CHECK(p->nwarnings == 0, "checkerboard of the stated sd: no warning (%zu)", p->nwarnings);
    }
    pp_ppcheck_free(p);
    ax->data[5] = NAN;
    in.boundary = PP_BOUNDARY_PAD; /* kernel radius 4: a band of 4 left out */
    in.noise.sigma = 1.0;          /* the noise is twice the stated sd: variance 4 */
    in.lambda = 1.0;
    CHECK(pp_ppcheck_run(&in, &p) == PP_OK, "ppcheck runs (pad)");
    if (p) {
        CHECK(p->used == (w - 8) * (h - 8) && isnan(p->residual->data[5]) &&
                  isnan(p->residual->data[4 * w + 3]) && isfinite(p->residual->data[4 * w + 4]),
              "pad: %zu pixels used ((w-8)(h-8) = %zu), border and NaN blank", p->used,
              (w - 8) * (h - 8));
        CHECK(p->nwarnings >= 1 && strstr(p->warning[0], "residual variance") &&
                  strstr(p->warning[0], "sigma= in noise model is too small") &&
                  !strstr(p->warning[0], "--"),
              "variance 4: the sigma warning, library's words (%s)",
              p->nwarnings ? p->warning[0] : "none");
    }
    pp_ppcheck_free(p);
    in.setting_names = flags;
    CHECK(pp_ppcheck_run(&in, &p) == PP_OK && p->nwarnings >= 1 &&
              strstr(p->warning[0], "sigma= in --noise is too small"),
          "variance 4: the sigma warning, caller's names (%s)",
          p && p->nwarnings ? p->warning[0] : "none");
    pp_ppcheck_free(p);
    pp_image_free(ax);
    pp_image_free(x);
    pp_image_free(psf);
}

int main(void)
{
    test_datacheck();
    test_ppcheck();
    return pp_test_done();
}
