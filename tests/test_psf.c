/* Unit tests of src/psf.c: spec parsing and its refusals, the Gaussian and
 * Airy kernels (sum, symmetry, size, second moment, pixel averaging), bead
 * files, pp_psf_check's refusals and J1 against an independent quadrature. */
#include "pixpost/io.h"
#include "pixpost/psf.h"
#include "pixpost/setting.h"
#include "testutil.h"
#include "pixpost/io_extra.h"
#include "pixpost/psf_extra.h"
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#define PI 3.14159265358979323846

/* A program's name for the PSF setting (as src/cli/flag_names.c's). */
static const char *const flags[PP_SET_COUNT] = {[PP_SET_PSF] = "--psf"};

/* spec is refused naming the setting and needle: in the library's word
 * "PSF" without names (no command-line flag: no "--"), and by the
 * caller's name with a names table. */
static void refused(const char *spec, const char *needle)
{
    pp_psf_spec s;
    pp_status st = pp_psf_parse(spec, NULL, &s);
    const char *m = pp_error_message();
    CHECK(st == PP_ERR_ARG && strncmp(m, "PSF", 3) == 0 && !strstr(m, "--") && strstr(m, needle),
          "'%s' refused without names, in the library's words and naming '%s': %s", spec, needle,
          m);
    st = pp_psf_parse(spec, flags, &s);
    m = pp_error_message();
    CHECK(st == PP_ERR_ARG && strncmp(m, "--psf", 5) == 0 && strstr(m, needle),
          "'%s' refused with a names table, naming --psf and '%s': %s", spec, needle, m);
}

static void check_parse(void)
{
    pp_psf_spec s, t;
    char buf[256];
    CHECK(pp_psf_parse("gaussian:sigma=1.6", NULL, &s) == PP_OK && s.kind == PP_PSF_GAUSSIAN &&
              s.sigma == 1.6,
          "gaussian parsed");
    pp_psf_format(&s, buf, sizeof buf);
    CHECK(strcmp(buf, "gaussian:sigma=1.6") == 0, "gaussian formatted: %s", buf);
    CHECK(pp_psf_parse("airy:pixel=0.065,na=1.4,wavelength=0.52", NULL, &s) == PP_OK &&
              s.kind == PP_PSF_AIRY && s.na == 1.4 && s.wavelength == 0.52 && s.pixel == 0.065,
          "airy parsed, keys in any order");
    pp_psf_format(&s, buf, sizeof buf);
    CHECK(pp_psf_parse(buf, NULL, &t) == PP_OK && t.na == s.na && t.wavelength == s.wavelength &&
              t.pixel == s.pixel,
          "airy format round-trips: %s", buf);
    CHECK(pp_psf_parse("file:/data/bead:1.tif", NULL, &s) == PP_OK && s.kind == PP_PSF_FILE &&
              strcmp(s.path, "/data/bead:1.tif") == 0,
          "file path kept whole");
    pp_psf_format(&s, buf, sizeof buf);
    CHECK(strcmp(buf, "file:/data/bead:1.tif") == 0, "file formatted: %s", buf);

    refused("gaussian:sigma=0", "sigma");
    refused("gaussian:sigma=-1", "sigma");
    refused("gaussian", "sigma=");
    refused("gaussian:sigma=1,width=3", "width");
    refused("gaussian:sigma=1,width=3", "accepted: sigma");
    refused("gaussian:sigma=1,sigma=2", "twice");
    refused("gaussian:sigma=abc", "not a number");
    refused("airy:na=0,wavelength=0.52,pixel=0.1", "na=");
    refused("airy:na=1.8,wavelength=0.52,pixel=0.1", "1.7");
    refused("airy:na=1.4,wavelength=0,pixel=0.1", "wavelength");
    refused("airy:na=1.4,wavelength=520,pixel=0.1", "nanometres");
    refused("airy:na=1.4,wavelength=0.52,pixel=-2", "pixel");
    refused("airy:na=1.4,wavelength=0.52", "pixel=");
    refused("airy:na=1.4,wavelength=0.52,pixel=0.1,sigma=2", "na, wavelength, pixel");
    refused("lorentz:gamma=2", "gaussian:sigma=S");
    refused("file", "file:PATH");
    refused("file:", "path");
    refused("", "empty");
}

/* Sum, odd square, centre maximum and the 8 symmetries of the square. */
static void check_symmetric(const pp_image *k, const char *what)
{
    size_t n = k->width;
    double sum = 0, asym = 0, peak = k->data[(n / 2) * n + n / 2];
    int centre_max = 1;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++) {
            double v = k->data[i * n + j];
            sum += v;
            asym = fmax(asym, fabs(v - k->data[j * n + i]));
            asym = fmax(asym, fabs(v - k->data[(n - 1 - i) * n + j]));
            asym = fmax(asym, fabs(v - k->data[i * n + (n - 1 - j)]));
            if (v > peak)
                centre_max = 0;
        }
    CHECK(k->width == k->height && n % 2 == 1, "%s: odd square (%zux%zu)", what, n, k->height);
    CHECK(fabs(sum - 1) < 1e-12, "%s: sums to 1 (%.17g)", what, sum);
    CHECK(asym < 1e-15, "%s: symmetric under flips and transpose (%g)", what, asym);
    CHECK(centre_max, "%s: maximum at the centre pixel", what);
}

/* sum k(i,j) (j - c)^2: the second moment along one axis. */
static double second_moment(const pp_image *k)
{
    double m = 0, c = (double)(k->width / 2);
    for (size_t i = 0; i < k->height; i++)
        for (size_t j = 0; j < k->width; j++)
            m += k->data[i * k->width + j] * ((double)j - c) * ((double)j - c);
    return m;
}

static void check_gaussian(void)
{
    double sig[] = {0.8, 1.0, 1.6, 2.5};
    for (int t = 0; t < 4; t++) {
        pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = sig[t]};
        pp_image *k = NULL;
        CHECK(pp_psf_make(&s, 0, &k) == PP_OK, "gaussian %g made", sig[t]);
        if (!k)
            continue;
        char what[64];
        snprintf(what, sizeof what, "gaussian sigma=%g", sig[t]);
        check_symmetric(k, what);
        size_t r = (size_t)ceil(4 * sig[t]);
        CHECK(k->width == 2 * r + 1, "%s: radius ceil(4 sigma) = %zu (side %zu)", what, r,
              k->width);
        /* Sampled at pixel centres: the discrete moment is sigma^2 less the
         * truncation beyond 4 sigma (< 0.5 %) plus aliasing (1e-6 at
         * sigma = 1, ~5e-4 at 0.8); a pixel-integrated kernel would be
         * off by 1/12 pixel^2 (5 % at sigma = 1.6), which this catches. */
        double m2 = second_moment(k), rel = fabs(m2 / (sig[t] * sig[t]) - 1);
        CHECK(rel < 0.005, "%s: second moment %.6f = sigma^2 within 0.5 %% (rel %.2g)", what, m2,
              rel);
        pp_image_free(k);
    }
    pp_psf_spec s = {.kind = PP_PSF_GAUSSIAN, .sigma = 1.6};
    pp_image *k = NULL;
    CHECK(pp_psf_make(&s, 9, &k) == PP_OK && k && k->width == 9, "explicit size 9 honoured");
    pp_image_free(k);
    CHECK(pp_psf_make(&s, 10, &k) == PP_ERR_ARG && !k, "even size refused");
    s.sigma = 1e6;
    CHECK(pp_psf_make(&s, 0, &k) == PP_ERR_LIMIT && strstr(pp_error_message(), "units"),
          "absurd radius refused: %s", pp_error_message());
}

/* The pixel average of (2 J1(v)/v)^2 with s x s sub-pixels, independently
 * of psf.c's loop, to measure its 8-sub-pixel discretisation. */
static double airy_avg(double dy, double dx, double k, int s)
{
    double sum = 0;
    for (int a = 0; a < s; a++)
        for (int b = 0; b < s; b++) {
            double y = dy - 0.5 + (a + 0.5) / s, x = dx - 0.5 + (b + 0.5) / s;
            double v = k * hypot(x, y);
            double f = v < 1e-8 ? 1.0 : 2 * pp_bessel_j1(v) / v;
            sum += f * f;
        }
    return sum / (s * s);
}

static void check_airy(double na, double lambda, double pixel)
{
    pp_psf_spec s = {.kind = PP_PSF_AIRY, .na = na, .wavelength = lambda, .pixel = pixel};
    pp_image *k = NULL;
    char what[96];
    snprintf(what, sizeof what, "airy na=%g lambda=%g pixel=%g", na, lambda, pixel);
    CHECK(pp_psf_make(&s, 0, &k) == PP_OK && k, "%s made", what);
    if (!k)
        return;
    check_symmetric(k, what);
    double kk = 2 * PI * na * pixel / lambda;
    size_t r = (size_t)ceil(16.470630050877633 / kk); /* 5th zero of J1 (A&S 9.5) */
    CHECK(k->width == 2 * (r < 1 ? 1 : r) + 1, "%s: radius at the 5th dark ring (%zu px)", what,
          k->width / 2);
    /* 8 sub-pixels vs a 64 x 64 reference average: error relative to the
     * peak. Bound 2e-3 from the midpoint-rule analysis in psf.c. */
    size_t n = k->width;
    double ref_sum = 0, err = 0;
    static double ref[129 * 129];
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++)
            ref_sum += ref[i * n + j] =
                airy_avg((double)i - (double)(n / 2), (double)j - (double)(n / 2), kk, 64);
    double peak = ref[(n / 2) * n + n / 2] / ref_sum;
    for (size_t i = 0; i < n * n; i++)
        err = fmax(err, fabs(k->data[i] - ref[i] / ref_sum));
    CHECK(err / peak < 2e-3, "%s: pixel average within %.1e of the peak of a 64x64 one", what,
          err / peak);
    printf("%s: side %zu, 8-vs-64 sub-pixel max error / peak = %.2e\n", what, n, err / peak);
    pp_image_free(k);
}

/* J1 by the trapezoidal rule on Bessel's integral (1/2pi) int_0^2pi
 * cos(t - x sin t) dt, exact to rounding for M > |x| + 40 points since the
 * integrand is periodic and entire (the error is J_(M+-1)-sized). */
static double j1_quadrature(double x)
{
    int m = (int)fabs(x) + 64;
    double s = 0;
    for (int i = 0; i < m; i++) {
        double t = 2 * PI * i / m;
        s += cos(t - x * sin(t));
    }
    return s / m;
}

static void check_j1(void)
{
    double err = 0;
    for (double x = -60; x <= 60; x += 0.0137)
        err = fmax(err, fabs(pp_bessel_j1(x) - j1_quadrature(x)));
    CHECK(err < 1e-13, "J1 equals Bessel's integral on [-60, 60] (max err %.2e)", err);
    CHECK(pp_bessel_j1(0) == 0, "J1(0) = 0");
    CHECK(fabs(pp_bessel_j1(3.8317059702075123)) < 1e-15, "J1 vanishes at its first zero");
    printf("J1 vs trapezoidal Bessel integral, max abs err = %.2e\n", err);
}

static void check_refusals(void)
{
    pp_image *k = NULL;
    pp_image_create(5, 5, &k);
    k->data[12] = 2.0;
    CHECK(pp_psf_check(k, 10, 10) == PP_OK && k->data[12] == 1.0, "a delta normalised to 1");
    CHECK(pp_psf_check(k, 4, 10) == PP_ERR_LIMIT, "PSF taller than the frame refused");
    CHECK(pp_psf_check(k, 10, 3) == PP_ERR_LIMIT, "PSF wider than the frame refused");
    k->data[3] = NAN;
    CHECK(pp_psf_check(k, 10, 10) == PP_ERR_NUMERIC && strstr(pp_error_message(), "NaN"),
          "NaN refused: %s", pp_error_message());
    k->data[3] = -0.1;
    CHECK(pp_psf_check(k, 10, 10) == PP_ERR_ARG && strstr(pp_error_message(), "negative"),
          "negative value refused: %s", pp_error_message());
    memset(k->data, 0, 25 * sizeof(double));
    CHECK(pp_psf_check(k, 10, 10) == PP_ERR_NUMERIC, "all-zero PSF refused: %s",
          pp_error_message());
    pp_image_free(k);
    pp_image_create(4, 4, &k);
    k->data[5] = 1;
    CHECK(pp_psf_check(k, 10, 10) == PP_ERR_ARG && strstr(pp_error_message(), "odd"),
          "even PSF refused");
    pp_image_free(k);
    pp_image_create(3, 5, &k);
    k->data[5] = 1;
    CHECK(pp_psf_check(k, 10, 10) == PP_ERR_ARG, "non-square PSF refused");
    pp_image_free(k);
}

/* A bead: Gaussian blob off centre on a background of 100, even-sized. */
static void check_file(void)
{
    char path[4000], flat[4000];
    snprintf(path, sizeof path, "%s/bead.tif", pp_test_tmpdir());
    snprintf(flat, sizeof flat, "%s/flat.tif", pp_test_tmpdir());
    pp_image *img = NULL, *k = NULL;
    pp_image_create(16, 20, &img);
    for (size_t i = 0; i < 16; i++)
        for (size_t j = 0; j < 20; j++)
            img->data[i * 20 + j] =
                100 + 500 * exp(-(pow(i - 6.0, 2) + pow(j - 12.0, 2)) / (2 * 1.5 * 1.5));
    pp_status st = pp_image_write(path, img);
    CHECK(st == PP_OK, "bead written: %s", pp_error_message());
    pp_psf_spec s = {.kind = PP_PSF_FILE};
    snprintf(s.path, sizeof s.path, "%s", path);
    CHECK(pp_psf_make(&s, 0, &k) == PP_OK && k, "bead PSF made: %s", pp_error_message());
    if (k) {
        /* Keeps its support: the farthest edge from (6, 12) is 12 px away. */
        CHECK(k->width == 25 && k->height == 25, "side 2*12+1 (got %zu)", k->width);
        double sum = 0, cx = 0, cy = 0;
        for (size_t i = 0; i < k->height; i++)
            for (size_t j = 0; j < k->width; j++) {
                double v = k->data[i * k->width + j];
                sum += v;
                cy += v * (double)i;
                cx += v * (double)j;
            }
        CHECK(fabs(sum - 1) < 1e-12, "bead PSF sums to 1");
        CHECK(fabs(cx - 12) < 0.05 && fabs(cy - 12) < 0.05,
              "centroid moved to the centre pixel (%.3f, %.3f)", cy, cx);
        pp_image_free(k);
    }
    CHECK(pp_psf_make(&s, 7, &k) == PP_OK && k && k->width == 7, "bead cropped to 7");
    pp_image_free(k);
    for (size_t i = 0; i < 320; i++)
        img->data[i] = 100;
    pp_image_write(flat, img);
    snprintf(s.path, sizeof s.path, "%s", flat);
    CHECK(pp_psf_make(&s, 0, &k) == PP_ERR_FORMAT && strstr(pp_error_message(), flat),
          "flat image refused naming it: %s", pp_error_message());
    snprintf(s.path, sizeof s.path, "%s/none.tif", pp_test_tmpdir());
    CHECK(pp_psf_make(&s, 0, &k) != PP_OK && !k, "missing file refused: %s", pp_error_message());
    pp_image_free(img);
}

/* Issue 14 item 4: values in the wrong unit are refused naming the unit
 * expected; the edges of the ranges (src/psf.c) are accepted. */
static void check_units(void)
{
    refused("airy:na=1.4,wavelength=0.52,pixel=65", "pixel=65 is in micrometres");
    refused("airy:na=1.4,wavelength=0.52,pixel=65", "65 nm is pixel=0.065");
    refused("airy:na=1.4,wavelength=0.52,pixel=0.0000650", "micrometres");
    refused("airy:na=1.4,wavelength=0.52,pixel=6.5", "dark-ring"); /* camera pixel typed */
    refused("airy:na=1.4,wavelength=0.52,pixel=6.5", "camera's pixel / magnification");
    refused("airy:na=auto,wavelength=0.52,pixel=2", "dark-ring"); /* at hi = 1.5 */
    refused("airy:na=1.4,wavelength=5,pixel=0.065", "[0.2, 2] micrometres");
    refused("airy:na=1.4,wavelength=0.00052,pixel=0.065", "micrometres");
    refused("airy:na=14,wavelength=0.52,pixel=0.065", "numerical aperture");
    refused("gaussian:sigma=0.1", "below 0.3");
    refused("gaussian:sigma=0.1", "not micrometres");
    refused("gaussian:sigma=120", "not nanometres");
    refused("gaussian:sigma=auto,lo=0.1,hi=2", "lo=0.1");
    refused("gaussian:sigma=auto,lo=1,hi=30", "hi=30");
    const char *ok[] = {"gaussian:sigma=0.3",
                        "gaussian:sigma=20",
                        "airy:na=1.4,wavelength=0.52,pixel=0.4", /* ring 0.57 px */
                        "airy:na=0.05,wavelength=2,pixel=20",
                        "airy:na=1.4,wavelength=0.2,pixel=0.001",
                        "airy:na=auto,wavelength=0.52,pixel=0.065"};
    for (size_t i = 0; i < sizeof ok / sizeof ok[0]; i++) {
        pp_psf_spec s;
        CHECK(pp_psf_parse(ok[i], NULL, &s) == PP_OK, "'%s' accepted: %s", ok[i],
              pp_error_message());
    }
}

/* A w x h image of background 100 plus Gaussian spots (amplitude, row,
 * column, sigma) and a seeded noise of sd `noise` (a sum of 12 uniforms,
 * which is close enough to normal here). */
typedef struct blob {
    double amp, row, col, sigma;
} blob;

static pp_image *spots_image(size_t w, size_t h, const blob *b, size_t nb, double noise)
{
    pp_image *img = NULL;
    pp_image_create(h, w, &img);
    uint64_t x = 88172645463325252ull;
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++) {
            double v = 100, u = 0;
            for (size_t k = 0; k < nb; k++)
                v += b[k].amp * exp(-(pow(i - b[k].row, 2) + pow(j - b[k].col, 2)) /
                                    (2 * b[k].sigma * b[k].sigma));
            for (int r = 0; r < 12; r++) {
                x ^= x << 13, x ^= x >> 7, x ^= x << 17; /* xorshift64 */
                u += (double)(x >> 11) / 9007199254740992.0;
            }
            img->data[i * w + j] = v + noise * (u - 6);
        }
    return img;
}

/* Writes img as name in the test folder, makes its file: PSF; returns the
 * status (the kernel is freed) and leaves the message in pp_error_message. */
static pp_status bead_status(const char *name, pp_image *img)
{
    pp_psf_spec s = {.kind = PP_PSF_FILE};
    pp_image *k = NULL;
    snprintf(s.path, sizeof s.path, "%s/%s", pp_test_tmpdir(), name);
    pp_status st = pp_image_write(s.path, img);
    if (st == PP_OK)
        st = pp_psf_make(&s, 0, &k);
    pp_image_free(k);
    pp_image_free(img);
    return st;
}

/* Issue 14 item 4: a file: PSF must be one compact bead (src/psf_bead.c);
 * the real-image cases are in tests/ref_psf_bead.py. */
static void check_one_bead(void)
{
    blob one[] = {{500, 30, 30, 1.5}}, off[] = {{500, 8, 50, 1.5}};
    blob two[] = {{500, 30, 20, 1.5}, {400, 30, 44, 1.5}};
    blob dim[] = {{500, 30, 20, 1.5}, {150, 30, 44, 1.5}};
    blob wide[] = {{500, 64, 64, 30}}, edge[] = {{500, 30, 30, 19}};
    CHECK(bead_status("one.tif", spots_image(61, 61, one, 1, 5)) == PP_OK,
          "a noisy bead (peak 100 noise sd) is accepted: %s", pp_error_message());
    CHECK(bead_status("off.tif", spots_image(61, 61, off, 1, 5)) == PP_OK,
          "an off-centre noisy bead is accepted: %s", pp_error_message());
    CHECK(bead_status("faint.tif", spots_image(61, 61, one, 1, 50)) == PP_OK,
          "a faint bead (peak 10 noise sd) is accepted: %s", pp_error_message());
    CHECK(bead_status("edge.tif", spots_image(161, 161, edge, 1, 1)) == PP_OK,
          "a bead of sigma 19 px (45 px at half peak) is accepted: %s", pp_error_message());
    pp_status st = bead_status("two.tif", spots_image(65, 61, two, 2, 5));
    const char *m = pp_error_message();
    CHECK(st == PP_ERR_FORMAT && strstr(m, "two.tif") && strstr(m, "not one bead") &&
              strstr(m, "2 separate spots") && strstr(m, "55 %"),
          "two beads refused, saying what was measured: %s", m);
    st = bead_status("dim.tif", spots_image(65, 61, dim, 2, 5));
    m = pp_error_message();
    CHECK(st == PP_ERR_FORMAT && strstr(m, "not one bead"),
          "a second bead at 30 %% of the first refused: %s", m);
    st = bead_status("wide.tif", spots_image(129, 129, wide, 1, 5));
    m = pp_error_message();
    CHECK(st == PP_ERR_FORMAT && strstr(m, "wide.tif") && strstr(m, "pixels across") &&
              strstr(m, "at most 47"),
          "a spot 70 px across (sigma 30) refused: %s", m);
}

int main(void)
{
    check_parse();
    check_units();
    check_one_bead();
    check_gaussian();
    check_airy(1.4, 0.52, 0.065); /* typical: ~2.7 pixels per lambda/(2NA) */
    check_airy(0.5, 0.6, 0.25);   /* coarse pixels */
    check_airy(0.95, 0.5, 0.4);   /* pixels near the cut-off: more sub-pixels */
    check_j1();
    check_refusals();
    check_file();
    return pp_test_done();
}
