/* pixpost — point-spread functions: spec parsing, the Gaussian and Airy
 * models, kernel checks and the Bessel function J1.
 *
 * Cost: a Gaussian kernel is one exp per pixel; an Airy kernel is s*s
 * evaluations of J1 per pixel (s = supersampling, 8 for usual settings, see
 * airy_supersampling()). Bead images (file:PATH) are read and checked in
 * psf_bead.c. Kernels are small (radius tens of pixels), so none of this
 * matters next to sampling.
 *
 * Discretisation (documented choices):
 *  - gaussian: exp(-r^2 / (2 sigma^2)) SAMPLED at pixel centres (not
 *    integrated over the pixel), so its discrete second moment per axis is
 *    sigma^2 up to the aliasing term ~ 4 pi^2 sigma^2 exp(-2 pi^2 sigma^2)
 *    (Poisson summation; below 1e-6 relative for sigma >= 1) and the
 *    truncation at radius ceil(4 sigma) (mass outside ~ 3e-4, which lowers
 *    the moment by < 0.5 %). A pixel-integrated kernel would have sigma^2 +
 *    1/12 instead; sampling keeps "sigma" meaning what the spec says.
 *  - airy: (2 J1(v)/v)^2, v = 2 pi NA r / lambda, AVERAGED over each pixel
 *    by an s x s midpoint rule (see airy_supersampling()).
 */
#include "pixpost/psf.h"
#include "internal.h"
#include "pixpost/io.h"
#include "pixpost/setting.h"
#include "pixpost/spec.h"
#include "psf_internal.h"
#include "pixpost/psf_extra.h"
#include "pixpost/setting_extra.h"
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Messages name the setting: `what` (pp_setting_name of the parser's names:
 * "--psf" from the command line) while parsing; the library's word "PSF"
 * when a made spec is checked (pp_psf_make, pp_psf_fill take no names). */
#define LIB_WHAT pp_setting_name(NULL, PP_SET_PSF)
#define ACCEPTED_MODELS                                                                            \
    "gaussian:sigma=S (or sigma=auto[,lo=A,hi=B]), airy:na=NA,wavelength=L,pixel=P (or "           \
    "na=auto[,lo=A,hi=B]), widefield:na=NA,wavelength=L,pixel=P,step=DZ,n=N[,sample_n=NS,"         \
    "depth=D], file:PATH"
/* The 5th zero of J1 (Abramowitz & Stegun table 9.5) bounds the Airy
 * kernel chosen by default. The energy inside the n-th dark ring is
 * 1 - J0(z_n)^2 (Rayleigh's encircled-energy formula, since J1(z_n) = 0):
 * 96.1 % for the 5th (computed with scipy.special.j0), a little more in
 * the square; the remaining far tail is dropped and the kernel is
 * renormalised. A larger explicit size keeps more of it. */
static const double j1_zero5 = 16.470630050877633;

/* ---------------------------------------------------------------- J1 ---- */

/* Rational approximations of J1 from the Cephes Mathematical Library
 * (S. L. Moshier, j1.c): |x| <= 5 uses x (x^2 - z1^2)(x^2 - z2^2) R(x^2)/S(x^2)
 * with z1, z2 the first two zeros; |x| > 5 uses the Hankel form
 * sqrt(2/(pi x)) (P cos(xn) - (5/x) Q sin(xn)), xn = x - 3 pi/4, with P, Q
 * rational in (5/x)^2. Measured against scipy.special.j1 on 0..50 in
 * tests/ref_model.py (max abs error reported there). */
static const double RP[4] = {-8.99971225705559398224E8, 4.52228297998194034323E11,
                             -7.27494245221818276015E13, 3.68295732863852883286E15};
static const double RQ[8] = {6.20836478118054335476E2,  2.56987256757748830383E5,
                             8.35146791431949253037E7,  2.21511595479792499675E10,
                             4.74914122079991414898E12, 7.84369607876235854894E14,
                             8.95222336184627338078E16, 5.32278620332680085395E18};
static const double PP[7] = {7.62125616208173112003E-4, 7.31397056940917570436E-2,
                             1.12719608129684925192E0,  5.11207951146807644818E0,
                             8.42404590141772420927E0,  5.21451598682361504063E0,
                             1.00000000000000000254E0};
static const double PQ[7] = {5.71323128072548699714E-4, 6.88455908754495404082E-2,
                             1.10514232634061696926E0,  5.07386386128601488557E0,
                             8.39985554327604159757E0,  5.20982848682361821619E0,
                             9.99999999999999997461E-1};
static const double QP[8] = {5.10862594750176621635E-2, 4.98213872951233449420E0,
                             7.58238284132545283818E1,  3.66779609360150777800E2,
                             7.10856304998926107277E2,  5.97489612400613639965E2,
                             2.11688757100572135698E2,  2.52070205858023719784E1};
static const double QQ[7] = {7.42373277035675149943E1, 1.05644886038262816351E3,
                             4.98641058337653607651E3, 9.56231892404756170795E3,
                             7.99704160447350683650E3, 2.82619278517639096600E3,
                             3.36093607810698293419E2};

/* c[0] x^n + ... + c[n] (Horner). */
static double poly(double x, const double *c, int n)
{
    double s = c[0];
    for (int i = 1; i <= n; i++)
        s = s * x + c[i];
    return s;
}

/* x^n + c[0] x^(n-1) + ... + c[n-1] (leading coefficient 1). */
static double poly1(double x, const double *c, int n)
{
    double s = x + c[0];
    for (int i = 1; i < n; i++)
        s = s * x + c[i];
    return s;
}

double pp_bessel_j1(double x)
{
    if (x < 0)
        return -pp_bessel_j1(-x);
    if (x <= 5.0) {
        const double z1 = 1.46819706421238932572E1, z2 = 4.92184563216946036703E1;
        double z = x * x;
        double w = poly(z, RP, 3) / poly1(z, RQ, 8);
        return w * x * (z - z1) * (z - z2);
    }
    double w = 5.0 / x, z = w * w;
    double p = poly(z, PP, 6) / poly(z, PQ, 6);
    double q = poly(z, QP, 7) / poly1(z, QQ, 7);
    double xn = x - 2.356194490192344928846982537459627163; /* 3 pi / 4 */
    p = p * cos(xn) - w * q * sin(xn);
    return p * 0.79788456080286535587989211986876373695 / sqrt(x); /* sqrt(2/pi) */
}

/* ------------------------------------------------------------- specs ---- */

static pp_status need_number(pp_spec *sp, const char *what, const char *key, const char *form,
                             double *v)
{
    pp_status st;
    if (!pp_spec_number(sp, key, what, v, NULL, &st))
        return pp_fail(PP_ERR_ARG, "%s %s: missing %s= (expected %s)", what, sp->name, key, form);
    return st;
}

/* sigma=auto / na=auto: optional lo=, hi= bounds of the width's uniform
 * prior (defaults dlo, dhi); the starting width is their midpoint. */
static pp_status parse_width_range(pp_spec *sp, const char *what, double dlo, double dhi,
                                   const char *unit, pp_psf_spec *out, double *width)
{
    pp_status st;
    out->width_auto = 1;
    out->width_lo = dlo;
    out->width_hi = dhi;
    if (pp_spec_number(sp, "lo", what, &out->width_lo, NULL, &st), st != PP_OK)
        return st;
    if (pp_spec_number(sp, "hi", what, &out->width_hi, NULL, &st), st != PP_OK)
        return st;
    if (!(out->width_lo > 0 && out->width_hi > out->width_lo && isfinite(out->width_hi)))
        return pp_fail(PP_ERR_ARG, "%s %s: lo=%g, hi=%g must satisfy 0 < lo < hi (%s)", what,
                       sp->name, out->width_lo, out->width_hi, unit);
    *width = 0.5 * (out->width_lo + out->width_hi);
    return PP_OK;
}

/* Physical ranges (units traps: a value typed in the wrong unit is
 * refused with the unit expected, instead of giving a 3x3 kernel that
 * deblurs nothing, as airy:...,pixel=65 once did):
 *  - gaussian sigma, pixels: [0.3, 20]. Below 0.3 the sampled kernel's
 *    neighbours get exp(-1/(2 * 0.3^2)) = 0.4 % of the centre's weight: one
 *    pixel, no deblurring (a micrometre value typed for pixels lands here).
 *    An in-focus PSF sampled at the Nyquist pixel lambda/(4 NA) has sigma
 *    = 0.21 lambda/NA / pixel = 0.84 px (Zhang, Zerubia & Olivo-Marin
 *    2007 for the 0.21); 20 px is 24 times finer sampling than that, beyond
 *    any camera setup; nanometres typed for pixels land above it.
 *  - airy wavelength, micrometres: [0.2, 2], deep ultraviolet (~0.25 um)
 *    to the near infrared of multiphoton excitation (up to ~1.7 um); from
 *    memory. Nanometres (>= 200) and millimetres (<= 0.002) land outside.
 *  - airy pixel (the sample-plane pixel: camera pixel / magnification),
 *    micrometres: [0.001, 20]. Camera pixels span ~2.4 to 24 um and
 *    objectives 1.25x to 150x (from memory), giving 0.016 to 19 um;
 *    super-resolution images are rendered at a few nm (common practice).
 *    Nanometres typed (pixel=65) land above 20.
 *  - airy sampling: the first dark ring 0.61 lambda/NA must span at least
 *    1/4 pixel (pixel <= 4 * 0.61 lambda/NA, ten times coarser than the
 *    Nyquist pixel 0.25 lambda/NA). Measured with pixpost psf (na 1.4,
 *    wavelength 0.52, size 7): the centre pixel holds 94 % of the kernel at
 *    a ring of 0.23 px, 99 % at 0.035 px (the camera's own 6.5 um pixel
 *    typed for pixel=). Such a kernel is one pixel and deblurs nothing.
 *  - airy na: (0, 1.7]; dry objectives reach ~0.95, oil immersion ~1.4-1.5,
 *    special immersion media ~1.65 (from memory).
 * The optics ranges are checked in src/psf_optics.c (PP_PSF_NA_MAX etc.,
 * psf_internal.h). */
#define SIGMA_MIN 0.3

static pp_status check_sigma(const char *what, double sigma, const char *key)
{
    if (!(sigma > 0))
        return pp_fail(PP_ERR_ARG, "%s gaussian: %s=%g must be > 0 (pixels)", what, key, sigma);
    if (sigma < SIGMA_MIN)
        return pp_fail(PP_ERR_ARG,
                       "%s gaussian: %s=%g pixels is below %g: the kernel would be one "
                       "pixel and deblur nothing (sigma is in pixels, not micrometres: "
                       "divide a width in micrometres by the pixel size)",
                       what, key, sigma, SIGMA_MIN);
    if (sigma > PP_PSF_SIGMA_MAX)
        return pp_fail(PP_ERR_ARG,
                       "%s gaussian: %s=%g pixels is above %g, wider than any microscope "
                       "PSF sampled for deblurring (sigma is in pixels, not nanometres: "
                       "80 nm at 65 nm pixels is sigma=1.2)",
                       what, key, sigma, PP_PSF_SIGMA_MAX);
    return PP_OK;
}

static pp_status parse_gaussian(pp_spec *sp, const char *what, pp_psf_spec *out)
{
    static const char form[] = "gaussian:sigma=S[,sigma_z=Z] or gaussian:sigma=auto[,lo=A,hi=B], "
                               "in pixels (sigma_z in slices)";
    static const char *const keys[] = {"sigma", "lo", "hi", "sigma_z", NULL};
    static const char *const fixed_keys[] = {"sigma", "sigma_z", NULL};
    static const char *const auto_keys[] = {"sigma", "lo", "hi", NULL};
    int is_auto = 0;
    pp_status st;
    if ((st = pp_spec_check_known(sp, what, keys)) != PP_OK)
        return st;
    if (!pp_spec_number(sp, "sigma", what, &out->sigma, &is_auto, &st))
        return pp_fail(PP_ERR_ARG, "%s %s: missing sigma= (expected %s)", what, sp->name, form);
    if (st == PP_OK && is_auto)
        st = parse_width_range(sp, what, 0.5, 4.0, "pixels", out, &out->sigma);
    if (st == PP_OK && !is_auto && pp_spec_number(sp, "sigma_z", what, &out->sigma_z, NULL, &st) &&
        st == PP_OK && (st = check_sigma(what, out->sigma_z, "sigma_z")) != PP_OK)
        return st;
    if (st != PP_OK)
        return st;
    if ((st = pp_spec_check_used(sp, what, is_auto ? auto_keys : fixed_keys)) != PP_OK)
        return st;
    if (is_auto)
        return (st = check_sigma(what, out->width_lo, "lo")) != PP_OK
                   ? st
                   : check_sigma(what, out->width_hi, "hi");
    return check_sigma(what, out->sigma, "sigma");
}

static pp_status parse_airy(pp_spec *sp, const char *what, pp_psf_spec *out)
{
    static const char form[] = "airy:na=NA,wavelength=L,pixel=P (or na=auto[,lo=A,hi=B]), "
                               "L and P in micrometres";
    static const char *const keys[] = {"na", "wavelength", "pixel", "lo", "hi", NULL};
    static const char *const fixed_keys[] = {"na", "wavelength", "pixel", NULL};
    int is_auto = 0;
    pp_status st = pp_spec_check_known(sp, what, keys);
    if (st != PP_OK)
        return st;
    if (!pp_spec_number(sp, "na", what, &out->na, &is_auto, &st))
        return pp_fail(PP_ERR_ARG, "%s %s: missing na= (expected %s)", what, sp->name, form);
    if (st == PP_OK && is_auto)
        st = parse_width_range(sp, what, 0.4, 1.5, "numerical aperture", out, &out->na);
    if (st == PP_OK)
        st = need_number(sp, what, "wavelength", form, &out->wavelength);
    if (st == PP_OK)
        st = need_number(sp, what, "pixel", form, &out->pixel);
    if (st == PP_OK)
        st = pp_spec_check_used(sp, what, is_auto ? keys : fixed_keys);
    if (st == PP_OK && is_auto && out->width_hi > PP_PSF_NA_MAX)
        st = pp_fail(PP_ERR_ARG, "%s airy: hi=%g must be <= 1.7 (numerical aperture)", what,
                     out->width_hi);
    return st == PP_OK ? pp_psf_check_optics(out, what) : st;
}

/* Dispatches on the model name of an already split spec. */
static pp_status parse_kind(pp_spec *sp, const char *what, const char *text, int is_file,
                            pp_psf_spec *out)
{
    if (is_file) {
        out->kind = PP_PSF_FILE;
        if (strlen(sp->value[0]) >= sizeof out->path)
            return pp_fail(PP_ERR_ARG, "%s file: the path is too long", what);
        strcpy(out->path, sp->value[0]);
        return PP_OK;
    }
    if (strcmp(sp->name, "gaussian") == 0) {
        out->kind = PP_PSF_GAUSSIAN;
        return parse_gaussian(sp, what, out);
    }
    if (strcmp(sp->name, "airy") == 0) {
        out->kind = PP_PSF_AIRY;
        return parse_airy(sp, what, out);
    }
    if (strcmp(sp->name, "widefield") == 0) {
        out->kind = PP_PSF_WIDEFIELD;
        return pp_psf_widefield_parse(sp, what, out);
    }
    if (strcmp(sp->name, "file") == 0)
        return pp_fail(PP_ERR_ARG, "%s '%s': missing the path (expected file:PATH)", what, text);
    static const char *const models[] = {"gaussian", "airy", "widefield", "file", NULL};
    const char *near = pp_spec_closest(sp->name, models);
    return pp_fail(PP_ERR_ARG, "%s '%s': unknown PSF model '%s' (%s%s%saccepted: %s)", what, text,
                   sp->name, near ? "did you mean " : "", near ? near : "", near ? "? " : "",
                   ACCEPTED_MODELS);
}

/* text may be NULL (refused). On failure *out is zeroed but for the kind. */
pp_status pp_psf_parse(const char *text, const char *const *names, pp_psf_spec *out)
{
    const char *what = pp_setting_name(names, PP_SET_PSF);
    memset(out, 0, sizeof *out);
    int is_file = text && strncmp(text, "file:", 5) == 0;
    pp_spec *sp = malloc(sizeof *sp); /* ~66 KiB: too big for a thread stack */
    if (!sp)
        return pp_fail(PP_ERR_NOMEM, "out of memory parsing %s", what);
    pp_status st = pp_spec_split(text, what, is_file, sp);
    if (st == PP_OK)
        st = parse_kind(sp, what, text, is_file, out);
    free(sp);
    return st;
}

void pp_psf_format(const pp_psf_spec *s, char *buf, size_t len)
{
    char a[32], b[32], c[32];
    if (!buf || len == 0)
        return;
    switch (s->kind) {
    case PP_PSF_GAUSSIAN:
        pp_psf_format_number(a, sizeof a, s->sigma);
        if (s->width_auto) {
            pp_psf_format_number(b, sizeof b, s->width_lo);
            pp_psf_format_number(c, sizeof c, s->width_hi);
            snprintf(buf, len, "gaussian:sigma=auto,lo=%s,hi=%s", b, c);
        } else {
            snprintf(buf, len, "gaussian:sigma=%s", a);
            if (s->sigma_z > 0) {
                size_t used = strlen(buf);
                pp_psf_format_number(b, sizeof b, s->sigma_z);
                snprintf(buf + used, len - used, ",sigma_z=%s", b);
            }
        }
        break;
    case PP_PSF_AIRY:
        pp_psf_format_number(a, sizeof a, s->na);
        pp_psf_format_number(b, sizeof b, s->wavelength);
        pp_psf_format_number(c, sizeof c, s->pixel);
        if (s->width_auto) {
            char d[32], e[32];
            pp_psf_format_number(d, sizeof d, s->width_lo);
            pp_psf_format_number(e, sizeof e, s->width_hi);
            snprintf(buf, len, "airy:na=auto,lo=%s,hi=%s,wavelength=%s,pixel=%s", d, e, b, c);
        } else {
            snprintf(buf, len, "airy:na=%s,wavelength=%s,pixel=%s", a, b, c);
        }
        break;
    case PP_PSF_WIDEFIELD:
        pp_psf_widefield_format(s, buf, len);
        break;
    default:
        snprintf(buf, len, "file:%s", s->path);
        break;
    }
}

/* ------------------------------------------------------------ models ---- */

static void fill_gaussian(double sigma, pp_image *k)
{
    size_t r = k->width / 2;
    for (size_t i = 0; i < k->height; i++)
        for (size_t j = 0; j < k->width; j++) {
            double dy = (double)i - (double)r, dx = (double)j - (double)r;
            k->data[i * k->width + j] = exp(-(dx * dx + dy * dy) / (2 * sigma * sigma));
        }
    pp_psf_normalise(k);
}

/* An uncertain width sizes the kernel for the widest PSF of its range. */
static pp_status make_gaussian(const pp_psf_spec *spec, size_t size, pp_image **out)
{
    size_t r;
    double widest = spec->width_auto ? spec->width_hi : spec->sigma;
    pp_status st = pp_psf_pick_radius(size, 4.0 * widest, &r);
    if (st != PP_OK || (st = pp_image_create(2 * r + 1, 2 * r + 1, out)) != PP_OK)
        return st;
    fill_gaussian(spec->sigma, *out);
    return PP_OK;
}


/* (2 J1(v)/v)^2, equal to 1 at v = 0. */
static double airy_intensity(double v)
{
    if (v < 1e-6)
        return 1.0 - v * v / 4.0; /* series: (1 - v^2/8)^2 */
    double a = 2.0 * pp_bessel_j1(v) / v;
    return a * a;
}

/* Mean of the Airy intensity over pixel (dy, dx) with s x s sub-pixels;
 * k = 2 pi NA pixel / lambda converts pixel units to v. */
static double airy_pixel(double dy, double dx, double k, int s)
{
    double sum = 0;
    for (int a = 0; a < s; a++) {
        double y = dy + ((a + 0.5) / s - 0.5);
        for (int b = 0; b < s; b++) {
            double x = dx + ((b + 0.5) / s - 0.5);
            sum += airy_intensity(k * sqrt(x * x + y * y));
        }
    }
    return sum / ((double)s * s);
}

static void fill_airy(const pp_psf_spec *spec, pp_image *img)
{
    double k = 2.0 * PP_PI * spec->na * spec->pixel / spec->wavelength;
    int s = pp_psf_airy_supersampling(spec);
    size_t r = img->width / 2;
    for (size_t i = 0; i < img->height; i++)
        for (size_t j = 0; j < img->width; j++)
            img->data[i * img->width + j] =
                airy_pixel((double)i - (double)r, (double)j - (double)r, k, s);
    pp_psf_normalise(img);
}

static pp_status make_airy(const pp_psf_spec *spec, size_t size, pp_image **out)
{
    pp_status st = pp_psf_check_optics(spec, LIB_WHAT);
    if (st != PP_OK)
        return st;
    double na = spec->width_auto ? spec->width_lo : spec->na; /* widest: smallest NA */
    double k = 2.0 * PP_PI * na * spec->pixel / spec->wavelength;
    size_t r;
    if ((st = pp_psf_pick_radius(size, j1_zero5 / k, &r)) != PP_OK ||
        (st = pp_image_create(2 * r + 1, 2 * r + 1, out)) != PP_OK)
        return st;
    fill_airy(spec, *out);
    return PP_OK;
}

pp_status pp_psf_fill(const pp_psf_spec *s, pp_image *k)
{
    if (k->width != k->height || k->width % 2 == 0)
        return pp_fail(PP_ERR_ARG, "pp_psf_fill: the kernel must be an odd square");
    if (s->kind == PP_PSF_GAUSSIAN && s->sigma > 0 && s->sigma_z == 0)
        fill_gaussian(s->sigma, k);
    else if (s->kind == PP_PSF_AIRY && pp_psf_check_optics(s, LIB_WHAT) == PP_OK)
        fill_airy(s, k);
    else
        return pp_fail(PP_ERR_ARG,
                       "%s: only gaussian and airy models can be refilled at a "
                       "new width (sigma/na > 0)",
                       LIB_WHAT);
    return PP_OK;
}

int pp_psf_is_3d(const pp_psf_spec *s)
{
    return s->kind == PP_PSF_WIDEFIELD || (s->kind == PP_PSF_GAUSSIAN && s->sigma_z > 0);
}

pp_status pp_psf_make(const pp_psf_spec *s, size_t size, pp_image **out)
{
    *out = NULL;
    if (pp_psf_is_3d(s)) {
        char canon[256];
        pp_psf_format(s, canon, sizeof canon);
        return pp_fail(PP_ERR_UNSUPPORTED,
                       "%s %s: a 3-D PSF, which blurs a volume (a z-stack), not a frame; use a "
                       "2-D PSF for a frame (gaussian:sigma=S or airy:...), or pp_psf_make3 "
                       "for a volume's kernel",
                       LIB_WHAT, canon);
    }
    switch (s->kind) {
    case PP_PSF_GAUSSIAN:
        if (!(s->sigma > 0))
            return pp_fail(PP_ERR_ARG, "%s gaussian: sigma=%g must be > 0", LIB_WHAT, s->sigma);
        return make_gaussian(s, size, out);
    case PP_PSF_AIRY:
        return make_airy(s, size, out);
    case PP_PSF_FILE:
        return pp_psf_bead_make(s->path, size, out);
    case PP_PSF_WIDEFIELD:
        break;
    }
    return pp_fail(PP_ERR_ARG, "%s: unknown PSF kind %d", LIB_WHAT, (int)s->kind);
}

/* Where element i of a kernel is, for messages: "(row, col)" of a frame
 * kernel, "(slice, row, col)" of a 3-D one. */
static const char *kernel_at(const pp_image *k, size_t i, char *buf, size_t len)
{
    size_t plane = k->width * k->height, j = i % plane;
    if (k->depth > 1)
        snprintf(buf, len, "(%zu, %zu, %zu)", i / plane, j / k->width, j % k->width);
    else
        snprintf(buf, len, "(%zu, %zu)", j / k->width, j % k->width);
    return buf;
}

pp_status pp_psf_check(pp_image *psf, size_t height, size_t width)
{
    size_t w = psf->width, h = psf->height, d = psf->depth;
    if (d > 1 && (w != h || w % 2 == 0 || d % 2 == 0))
        return pp_fail(PP_ERR_ARG, "the PSF is %zux%zux%zu; a volume's PSF needs an odd square "
                                   "slice (2R+1) and an odd number of slices",
                       w, h, d);
    if (w != h || w % 2 == 0)
        return pp_fail(PP_ERR_ARG, "the PSF is %zux%zu; it must be an odd square (2R+1)", w, h);
    if (w > height || w > width)
        return pp_fail(PP_ERR_LIMIT, "the PSF (%zux%zu) is larger than the %zux%zu %s", w, h,
                       width, height, d > 1 ? "slices" : "frame");
    double sum = 0;
    char at[80];
    for (size_t i = 0; i < pp_image_count(psf); i++) {
        double v = psf->data[i];
        if (!isfinite(v))
            return pp_fail(PP_ERR_NUMERIC, "the PSF has a NaN/Inf value at %s",
                           kernel_at(psf, i, at, sizeof at));
        if (v < 0)
            return pp_fail(PP_ERR_ARG, "the PSF has a negative value %g at %s", v,
                           kernel_at(psf, i, at, sizeof at));
        sum += v;
    }
    if (!(sum > 0) || !isfinite(sum))
        return pp_fail(PP_ERR_NUMERIC, "the PSF sums to %g; it needs a positive finite sum", sum);
    pp_psf_normalise(psf);
    return PP_OK;
}
