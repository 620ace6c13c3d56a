/* Unit tests of src/model.c: boundary names, the transfer function, the
 * blur against a direct convolution sum for both boundaries, the blur of a
 * delta, where periodic and pad may differ, refusals, and the moments of
 * simulated noise (fixed seeds; tolerances from the standard errors);
 * volumes against a direct 3-D sum. */
#include "pixpost/model.h"
#include "pixpost/psf.h"
#include "pixpost/setting.h"
#include "testutil.h"
#include "pixpost/model_extra.h"
#include <math.h>
#include <stdio.h>
#include <string.h>

static double lcg(unsigned long long *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) / 9007199254740992.0; /* [0, 1) */
}

static pp_image *random_image(size_t w, size_t h, unsigned long long seed)
{
    pp_image *img = NULL;
    pp_image_create(h, w, &img);
    for (size_t i = 0; i < w * h; i++)
        img->data[i] = lcg(&seed);
    return img;
}

/* sum_d psf(d) x(p - d), with x zero (pad) or wrapped (periodic) outside. */
static double direct(const pp_image *x, const pp_image *k, size_t r0, size_t c0, int wrap)
{
    long h = (long)x->height, w = (long)x->width, n = (long)k->width, R = n / 2;
    double s = 0;
    for (long a = 0; a < n; a++)
        for (long b = 0; b < n; b++) {
            long r = (long)r0 - (a - R), c = (long)c0 - (b - R);
            if (wrap) {
                r = ((r % h) + h) % h;
                c = ((c % w) + w) % w;
            } else if (r < 0 || c < 0 || r >= h || c >= w) {
                continue;
            }
            s += k->data[a * n + b] * x->data[r * w + c];
        }
    return s;
}

static void check_direct(size_t w, size_t h, size_t ksize)
{
    pp_image *x = random_image(w, h, 7), *k = random_image(ksize, ksize, 99), *y = NULL;
    int fits = ksize <= w && ksize <= h; /* else periodic is refused (checked below) */
    for (int wrap = 0; wrap < 1 + fits; wrap++) {
        pp_boundary b = wrap ? PP_BOUNDARY_PERIODIC : PP_BOUNDARY_PAD;
        CHECK(pp_model_blur(x, k, b, NULL, &y) == PP_OK && y, "blur %zux%zu %s", w, h,
              pp_boundary_name(b));
        if (!y)
            continue;
        double err = 0;
        for (size_t i = 0; i < h; i++)
            for (size_t j = 0; j < w; j++)
                err = fmax(err, fabs(y->data[i * w + j] - direct(x, k, i, j, wrap)));
        CHECK(err < 1e-12, "%s blur of %zux%zu by %zux%zu equals the direct sum (err %.1e)",
              pp_boundary_name(b), w, h, ksize, ksize, err);
        pp_image_free(y);
    }
    pp_image_free(x);
    pp_image_free(k);
}

static void check_delta(void)
{
    pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = 1.3};
    pp_image *k = NULL, *x = NULL, *y = NULL;
    pp_psf_make(&s, 0, &k); /* 13 x 13 */
    pp_image_create(24, 31, &x);
    x->data[10 * 31 + 17] = 1.0;
    for (int b = 0; b < 2; b++) {
        CHECK(pp_model_blur(x, k, (pp_boundary)b, NULL, &y) == PP_OK, "delta blurred");
        double err = 0, outside = 0;
        for (size_t i = 0; i < 24; i++)
            for (size_t j = 0; j < 31; j++) {
                long a = (long)i - 10 + 6, c = (long)j - 17 + 6;
                double want = (a >= 0 && c >= 0 && a < 13 && c < 13) ? k->data[a * 13 + c] : 0;
                err = fmax(err, fabs(y->data[i * 31 + j] - want));
                outside += want == 0 ? fabs(y->data[i * 31 + j]) : 0;
            }
        CHECK(err < 1e-15 * 100, "%s: blur of a delta is the PSF around it (err %.1e)",
              pp_boundary_name((pp_boundary)b), err);
        CHECK(outside < 1e-13, "nothing outside the PSF's support (%.1e)", outside);
        pp_image_free(y);
    }
    pp_image_free(x);
    pp_image_free(k);
}

/* Interior pixels (>= R from every edge) agree; some border pixel differs. */
static void check_borders(void)
{
    pp_image *x = random_image(40, 33, 3), *k = NULL, *p = NULL, *q = NULL;
    pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = 1.0}; /* R = 4 */
    pp_psf_make(&s, 0, &k);
    pp_model_blur(x, k, PP_BOUNDARY_PAD, NULL, &p);
    pp_model_blur(x, k, PP_BOUNDARY_PERIODIC, NULL, &q);
    double inner = 0, border = 0, sx = 0, sq = 0;
    for (size_t i = 0; i < 33; i++)
        for (size_t j = 0; j < 40; j++) {
            double d = fabs(p->data[i * 40 + j] - q->data[i * 40 + j]);
            int in = i >= 4 && j >= 4 && i < 29 && j < 36;
            inner = in ? fmax(inner, d) : inner;
            border = in ? border : fmax(border, d);
            sx += x->data[i * 40 + j];
            sq += q->data[i * 40 + j];
        }
    CHECK(inner < 1e-12, "pad and periodic agree >= R from the borders (%.1e)", inner);
    CHECK(border > 1e-3, "and differ at the borders (%.3g)", border);
    CHECK(fabs(sx - sq) < 1e-10, "periodic blur keeps the total (%.3g vs %.3g)", sx, sq);
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(p);
    pp_image_free(q);
}

static void check_transfer(void)
{
    pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = 1.6};
    pp_image *k = NULL;
    pp_psf_make(&s, 0, &k);
    pp_fft *f = NULL;
    pp_fft_create(20, 25, PP_FFT_ESTIMATE, &f);
    pp_complex otf[20 * 13];
    CHECK(pp_psf_transfer(k, f, otf) == PP_OK, "transfer made (unaligned buffer is fine)");
    double imag = 0, above = 0;
    for (size_t i = 0; i < 20 * 13; i++) {
        imag = fmax(imag, fabs(cimag(otf[i])));
        above = fmax(above, creal(otf[i]) - 1);
    }
    CHECK(fabs(creal(otf[0]) - 1) < 1e-14, "OTF(0) = PSF sum = 1");
    CHECK(imag < 1e-14, "a centred symmetric PSF has a real OTF (max imag %.1e)", imag);
    CHECK(above < 1e-14, "a Gaussian's OTF is at most 1");
    pp_fft *small = NULL;
    pp_fft_create(10, 25, PP_FFT_ESTIMATE, &small);
    CHECK(pp_psf_transfer(k, small, otf) == PP_ERR_LIMIT, "a PSF taller than the grid refused");
    pp_fft_free(small);
    pp_fft_free(f);
    pp_image_free(k);
}

static void check_refusals(void)
{
    pp_boundary b;
    CHECK(pp_boundary_parse("pad", NULL, &b) == PP_OK && b == PP_BOUNDARY_PAD, "pad");
    CHECK(pp_boundary_parse("periodic", NULL, &b) == PP_OK && b == PP_BOUNDARY_PERIODIC, "periodic");
    CHECK(pp_boundary_parse("mirror", NULL, &b) == PP_ERR_ARG && strstr(pp_error_message(), "mirror"),
          "unknown boundary refused: %s", pp_error_message());
    /* the library's word without a names table, the caller's name with one
     * (include/pixpost/setting.h) */
    CHECK(pp_boundary_parse("mirror", NULL, &b) == PP_ERR_ARG &&
              strcmp(pp_error_message(), "boundary 'mirror': expected pad or periodic") == 0,
          "library's word: %s", pp_error_message());
    static const char *const flags[PP_SET_COUNT] = {[PP_SET_BOUNDARY] = "--boundary"};
    CHECK(pp_boundary_parse("mirror", flags, &b) == PP_ERR_ARG &&
              strcmp(pp_error_message(), "--boundary 'mirror': expected pad or periodic") == 0,
          "caller's name: %s", pp_error_message());
    CHECK(strcmp(pp_boundary_name(PP_BOUNDARY_PERIODIC), "periodic") == 0, "name");
    pp_image *x = random_image(6, 5, 1), *k = random_image(7, 7, 2), *y = NULL, *even = NULL;
    CHECK(pp_model_blur(x, k, PP_BOUNDARY_PERIODIC, NULL, &y) == PP_ERR_LIMIT && !y &&
              strstr(pp_error_message(), "(use boundary pad)") && !strstr(pp_error_message(), "--"),
          "periodic blur with a PSF larger than the frame refused, in the library's words: %s",
          pp_error_message());
    CHECK(pp_model_blur(x, k, PP_BOUNDARY_PERIODIC, flags, &y) == PP_ERR_LIMIT && !y &&
              strstr(pp_error_message(), "(use --boundary pad)"),
          "... and by the caller's name: %s", pp_error_message());
    CHECK(pp_model_blur(x, k, PP_BOUNDARY_PAD, NULL, &y) == PP_OK && y,
          "pad blur takes a PSF larger than the frame");
    pp_image_free(y);
    check_direct(6, 5, 7); /* ... and gets it right */
    pp_image_create(4, 4, &even);
    CHECK(pp_model_blur(x, even, PP_BOUNDARY_PAD, NULL, &y) == PP_ERR_ARG, "even PSF refused");
    x->data[3] = NAN;
    CHECK(pp_model_blur(x, k, PP_BOUNDARY_PAD, NULL, &y) == PP_ERR_NUMERIC, "NaN scene refused");
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(even);
}

/* Mean and variance of n noisy copies of the level mu, against theory,
 * within 5 standard errors (SE of the mean sd/sqrt(n); of the variance
 * var*sqrt((2 + excess kurtosis)/n)); fixed seed, so deterministic. */
static void check_moments(const char *spec, double mu, double mean, double var, double kurt)
{
    const size_t n = 200000;
    pp_noise_spec ns;
    CHECK(pp_noise_parse(spec, NULL, &ns) == PP_OK, "noise %s parsed: %s", spec, pp_error_message());
    pp_image *y = NULL;
    pp_image_create(1, n, &y);
    for (size_t i = 0; i < n; i++)
        y->data[i] = mu;
    pp_rng rng;
    pp_rng_seed(&rng, 2024, 3);
    CHECK(pp_model_add_noise(y, &ns, NULL, &rng) == PP_OK, "noise added");
    double m = 0, v = 0;
    for (size_t i = 0; i < n; i++)
        m += y->data[i];
    m /= n;
    for (size_t i = 0; i < n; i++)
        v += (y->data[i] - m) * (y->data[i] - m);
    v /= n - 1;
    double se_m = sqrt(var / n), se_v = var * sqrt((2 + kurt) / n);
    CHECK(fabs(m - mean) < 5 * se_m, "%s at %g: mean %.5g vs %.5g (5 SE = %.2g)", spec, mu, m, mean,
          5 * se_m);
    CHECK(fabs(v - var) < 5 * se_v, "%s at %g: var %.5g vs %.5g (5 SE = %.2g)", spec, mu, v, var,
          5 * se_v);
    pp_image_free(y);
}

static void check_noise(void)
{
    /* gaussian: N(mu, s^2), excess kurtosis 0. */
    check_moments("gaussian:sigma=2", 5, 5, 4, 0);
    /* poisson: O + G*Poisson(mu): mean O + G mu, var G^2 mu, kurtosis 1/mu. */
    check_moments("poisson:gain=2,offset=100", 3.7, 107.4, 4 * 3.7, 1 / 3.7);
    check_moments("poisson:gain=1,offset=0", 250, 250, 250, 1 / 250.0);
    /* camera: O + G (Poisson(mu) + R N(0,1)): var G^2 (mu + R^2); the
     * excess kurtosis mu/(mu+R^2)^2 of the sum. */
    check_moments("camera:gain=0.5,offset=10,read=1.6", 20, 20, 0.25 * (20 + 2.56),
                  20 / pow(22.56, 2));
    pp_noise_spec ns;
    pp_image *y = NULL;
    pp_rng rng;
    pp_rng_seed(&rng, 1, 0);
    pp_image_create(8, 8, &y);
    for (size_t i = 0; i < 64; i++)
        y->data[i] = -3.0;
    pp_noise_parse("poisson:gain=2,offset=7", NULL, &ns);
    pp_model_add_noise(y, &ns, NULL, &rng);
    int all_offset = 1;
    for (size_t i = 0; i < 64; i++)
        all_offset &= y->data[i] == 7.0;
    CHECK(all_offset, "negative expected photons are clipped to 0 (offset only)");
    pp_noise_parse("gaussian", NULL, &ns);
    y->data[0] = 1.5;
    CHECK(pp_model_add_noise(y, &ns, NULL, &rng) == PP_ERR_ARG && y->data[0] == 1.5 &&
              strstr(pp_error_message(), "sigma=") &&
              strncmp(pp_error_message(), "noise model gaussian:", 21) == 0 &&
              !strstr(pp_error_message(), "--"),
          "gaussian without sigma refused, y unchanged, in the library's words: %s",
          pp_error_message());
    static const char *const flags[PP_SET_COUNT] = {[PP_SET_NOISE] = "--noise"};
    CHECK(pp_model_add_noise(y, &ns, flags, &rng) == PP_ERR_ARG && y->data[0] == 1.5 &&
              strncmp(pp_error_message(), "--noise gaussian:", 17) == 0,
          "... and by the caller's name: %s", pp_error_message());
    pp_noise_parse("poisson:gain=1,offset=0", NULL, &ns);
    y->data[5] = NAN;
    y->data[0] = 1.5;
    CHECK(pp_model_add_noise(y, &ns, NULL, &rng) == PP_ERR_NUMERIC && y->data[0] == 1.5,
          "NaN expected value refused before anything changes");
    pp_noise_parse("none", NULL, &ns);
    y->data[5] = 2;
    CHECK(pp_model_add_noise(y, &ns, NULL, &rng) == PP_OK && y->data[0] == 1.5 && y->data[5] == 2,
          "none leaves y alone");
    pp_image_free(y);
}

static void check_simulate(void)
{
    pp_image *x = random_image(17, 12, 5), *k = NULL, *a = NULL, *b = NULL, *c = NULL;
    pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = 1.0};
    pp_psf_make(&s, 0, &k);
    for (size_t i = 0; i < 17 * 12; i++)
        x->data[i] *= 50;
    pp_noise_spec ns;
    pp_noise_parse("camera:gain=2,offset=100,read=1.5", NULL, &ns);
    CHECK(pp_model_simulate(x, k, PP_BOUNDARY_PAD, &ns, 11, NULL, &a) == PP_OK, "simulated");
    pp_model_simulate(x, k, PP_BOUNDARY_PAD, &ns, 11, NULL, &b);
    pp_model_simulate(x, k, PP_BOUNDARY_PAD, &ns, 12, NULL, &c);
    CHECK(memcmp(a->data, b->data, 17 * 12 * sizeof(double)) == 0, "same seed, same frame");
    CHECK(memcmp(a->data, c->data, 17 * 12 * sizeof(double)) != 0, "other seed, other frame");
    pp_image *d = NULL;
    pp_noise_parse("gaussian", NULL, &ns);
    CHECK(pp_model_simulate(x, k, PP_BOUNDARY_PAD, &ns, 11, NULL, &d) == PP_ERR_ARG && !d,
          "simulate refuses gaussian without sigma");
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(a);
    pp_image_free(b);
    pp_image_free(c);
}

/* Volumes: a direct sum over a 3-D kernel of sides 3 x 5 x 7 (random, so
 * asymmetric on every axis), periodic wrapping every axis and pad taking
 * the volume as zero outside, on odd and even sides; a delta gives the
 * kernel around it; a one-slice kernel leaves the slices apart; the noise
 * functions take every element of a volume. */
static pp_image *random_volume(size_t d, size_t h, size_t w, unsigned long long seed)
{
    pp_image *img = NULL;
    pp_image_create3(d, h, w, &img);
    for (size_t i = 0; i < d * h * w; i++)
        img->data[i] = lcg(&seed);
    return img;
}

static double direct3(const pp_image *x, const pp_image *k, long z0, long r0, long c0, int wrap)
{
    long d = (long)x->depth, h = (long)x->height, w = (long)x->width;
    long kd = (long)k->depth, kh = (long)k->height, kw = (long)k->width;
    double s = 0;
    for (long a = 0; a < kd; a++)
        for (long b = 0; b < kh; b++)
            for (long c = 0; c < kw; c++) {
                long z = z0 - (a - kd / 2), r = r0 - (b - kh / 2), q = c0 - (c - kw / 2);
                if (wrap) {
                    z = ((z % d) + d) % d;
                    r = ((r % h) + h) % h;
                    q = ((q % w) + w) % w;
                } else if (z < 0 || r < 0 || q < 0 || z >= d || r >= h || q >= w) {
                    continue;
                }
                s += k->data[(a * kh + b) * kw + c] * x->data[(z * h + r) * w + q];
            }
    return s;
}

static void check_direct3(size_t d, size_t h, size_t w, size_t kd, size_t kh, size_t kw)
{
    pp_image *x = random_volume(d, h, w, 17), *k = random_volume(kd, kh, kw, 23), *y = NULL;
    int fits = kd <= d && kh <= h && kw <= w;
    for (int wrap = 0; wrap < 1 + fits; wrap++) {
        pp_boundary b = wrap ? PP_BOUNDARY_PERIODIC : PP_BOUNDARY_PAD;
        CHECK(pp_model_blur(x, k, b, NULL, &y) == PP_OK && y && y->depth == d, "blur3 %s: %s",
              pp_boundary_name(b), pp_error_message());
        if (!y)
            continue;
        double err = 0;
        for (size_t z = 0; z < d; z++)
            for (size_t i = 0; i < h; i++)
                for (size_t j = 0; j < w; j++)
                    err = fmax(err, fabs(y->data[(z * h + i) * w + j] -
                                         direct3(x, k, (long)z, (long)i, (long)j, wrap)));
        CHECK(err < 1e-12, "%s blur of %zux%zux%zu by %zux%zux%zu equals the direct sum (%.1e)",
              pp_boundary_name(b), d, h, w, kd, kh, kw, err);
        pp_image_free(y);
    }
    if (!fits)
        CHECK(pp_model_blur(x, k, PP_BOUNDARY_PERIODIC, NULL, &y) == PP_ERR_LIMIT && !y &&
                  strstr(pp_error_message(), "slices"),
              "periodic refuses a kernel larger than the volume: %s", pp_error_message());
    pp_image_free(x);
    pp_image_free(k);
}

static void check_volume(void)
{
    check_direct3(6, 7, 9, 3, 5, 7);
    check_direct3(5, 8, 6, 5, 7, 3);
    check_direct3(4, 9, 8, 7, 3, 5);  /* deeper than the volume: pad only */
    check_direct3(7, 6, 10, 1, 5, 3); /* one slice: each slice alone */
    /* a delta in slice 2 of a 5-slice volume blurred by a 1-slice kernel
     * stays in slice 2 */
    pp_image *x = NULL, *k = random_volume(1, 3, 3, 5), *y = NULL;
    pp_image_create3(5, 8, 8, &x);
    x->data[(2 * 8 + 4) * 8 + 4] = 1.0;
    pp_model_blur(x, k, PP_BOUNDARY_PAD, NULL, &y);
    double other = 0;
    for (size_t i = 0; i < 5 * 64; i++)
        other += i / 64 == 2 ? 0 : fabs(y->data[i]);
    CHECK(other < 1e-13, "a one-slice kernel leaves the other slices at 0 to rounding (%.1e)",
          other);
    pp_image_free(y);
    /* a 3-D kernel on one frame is refused; a NaN in slice 3 is located */
    pp_image *f = random_image(8, 8, 3), *k3 = random_volume(3, 3, 3, 9);
    CHECK(pp_model_blur(f, k3, PP_BOUNDARY_PAD, NULL, &y) == PP_ERR_ARG && !y &&
              strstr(pp_error_message(), "3-D"),
          "3-D kernel on a frame refused: %s", pp_error_message());
    x->data[(3 * 8 + 1) * 8 + 2] = NAN;
    CHECK(pp_model_blur(x, k, PP_BOUNDARY_PAD, NULL, &y) == PP_ERR_NUMERIC &&
              strstr(pp_error_message(), "(3, 1, 2)"),
          "NaN voxel named by slice, row, column: %s", pp_error_message());
    /* noise over the whole volume: gaussian sd 2 on 5 x 64 voxels of 0;
     * every slice gets noise (none left at exactly 0) */
    memset(x->data, 0, 5 * 64 * sizeof(double));
    pp_noise_spec ns;
    pp_noise_parse("gaussian:sigma=2", NULL, &ns);
    pp_rng rng;
    pp_rng_seed(&rng, 3, 0);
    CHECK(pp_model_add_noise(x, &ns, NULL, &rng) == PP_OK, "noise on a volume");
    size_t zeros = 0;
    for (size_t i = 0; i < 5 * 64; i++)
        zeros += x->data[i] == 0;
    CHECK(zeros == 0, "every voxel of every slice got noise (%zu left at 0)", zeros);
    pp_image *a = NULL, *b = NULL;
    CHECK(pp_model_simulate(x, k3, PP_BOUNDARY_PERIODIC, &ns, 4, NULL, &a) == PP_OK &&
              pp_model_simulate(x, k3, PP_BOUNDARY_PERIODIC, &ns, 4, NULL, &b) == PP_OK &&
              a->depth == 5 && memcmp(a->data, b->data, 5 * 64 * sizeof(double)) == 0,
          "simulate of a volume is reproducible for a seed");
    pp_image_free(a);
    pp_image_free(b);
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(f);
    pp_image_free(k3);
}

int main(void)
{
    check_direct(45, 37, 9); /* non-square, not a power of two */
    check_direct(16, 16, 5);
    check_direct(13, 1, 1);
    check_delta();
    check_borders();
    check_transfer();
    check_refusals();
    check_noise();
    check_simulate();
    check_volume();
    return pp_test_done();
}
