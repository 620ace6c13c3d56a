/* pixpost — the widefield 3-D PSF from scalar diffraction, with an optional
 * refractive-index mismatch (Gibson & Lanni).
 *
 * Model (Born & Wolf, Principles of Optics, section 8.8, from memory): the
 * scalar field of a point source imaged by an aberration-free lens is
 *     E(r, z) = integral_0^1 J0(k NA r rho) exp(i phi(rho, z)) rho d rho,
 * k = 2 pi / wavelength, rho the normalised pupil radius, and the intensity
 * is |E|^2. No apodisation (no aplanatic sqrt(cos) factor, no vector
 * effects): a scalar model, as in the issue.
 *
 * Defocus phase, NON-PARAXIAL form: phi = -k z n cos(theta_i), with
 * n cos(theta_i) = sqrt(n^2 - (NA rho)^2). Chosen because the paraxial form
 * -k z NA^2 rho^2 / (2 n) (its first two Taylor terms) is wrong at the
 * apertures widefield deconvolution uses: at NA 1.4 in oil (n 1.515) the
 * marginal ray's sin(theta) is 0.92 and the paraxial phase misplaces the
 * axial zeros by tens of per cent (measured in tests/ref_psf_widefield.py).
 * At low NA both agree (the paraxial check there).
 *
 * Index mismatch (Gibson & Lanni, JOSA A 8:1601, 1991; the optical path
 * difference written from memory, coverslip and immersion as designed):
 * a source at depth D below the coverslip in a sample of index n_s, the
 * nominal focal plane at depth D + z (what the stage says) gives
 *     OPD(rho, z) = D (n_s cos(theta_s) - n cos(theta_i)) - z n cos(theta_i),
 * n_s sin(theta_s) = n sin(theta_i) = NA rho (Snell). phi = k OPD. With
 * n_s = n the first term vanishes and the plain widefield PSF results.
 * Rays with NA rho > n_s do not enter the sample as propagating waves:
 * n_s cos(theta_s) = i sqrt((NA rho)^2 - n_s^2), and their amplitude decays
 * as exp(-k D sqrt(...)) (the evanescent branch).
 *
 * Axis and sign: slice j of a kernel of depth 2Rz+1 is z = (j - Rz) step,
 * z = nominal focal depth minus source depth, so slice 0 is the focal
 * plane nearest the coverslip. For n_s < n the best focus moves to z > 0:
 * paraxially (the rho^2 terms of the OPD cancel) at z = D (n / n_s - 1),
 * the stage must go deeper than the bead to focus it (the known axial
 * scaling n_s / n); a ray at angle theta_i focuses at
 * z = D (tan(theta_s) / tan(theta_i) - 1), which grows with the angle, so
 * marginal rays focus still deeper and the axial profile spreads to the
 * z > 0 side.
 *
 * Numerics:
 *  - rho integral: Gauss-Legendre on [0, 1] (split at the evanescent
 *    edge when there is one, see pupil_rule), nodes = 32 + ceil(v_max +
 *    Phi_max) where v_max = k NA r_max is the largest Bessel argument and
 *    Phi_max the largest phase excursion over the pupil in the outermost
 *    slices (phase_range; a J0 or exp factor of total phase T needs ~T/2
 *    nodes per the degree-2N-1 exactness of Gauss-Legendre; this doubles
 *    that). tests/test_psf3.c measures the default against 600 nodes:
 *    within 1e-9 of the peak (measured ~1e-14 matched, 4e-5 before the
 *    phase range counted the mismatch term fully, at depth 50 um).
 *  - J0 by Miller's backward recurrence normalised with
 *    J0 + 2 sum J_2k = 1 (Abramowitz & Stegun 9.1.46 and 9.12; from
 *    memory); checked through the in-focus plane, which must equal the 2-D
 *    Airy PSF built from the independent pp_bessel_j1.
 *  - the field per plane is tabulated on radii spaced 0.01 in v = k NA r
 *    and interpolated linearly (the intensity has no frequency above
 *    1/pi per unit v, so the error is below (0.02)^2/8 of the peak);
 *    each pixel is averaged over pp_psf_airy_supersampling sub-pixels per
 *    side, as the 2-D Airy PSF is.
 *  - normalisation: the whole volume sums to 1. A 3-D blur with such a
 *    kernel keeps the total light of the volume, as the 2-D kernels keep
 *    a frame's; each plane of the untruncated PSF holds the same light
 *    (the pupil's energy, Parseval), so the per-plane sums of a kernel
 *    wide enough are nearly equal, each about 1/nz (the default kernel of
 *    na=1.4,wavelength=0.52,pixel=0.065,step=0.2,n=1.515, 19 slices of
 *    165 x 165: 0.05241 to 0.05273, 1/19 = 0.05263; the outer slices lose
 *    a little more of their wider disc to the kernel's edge).
 * Cost: nodes x (table length) Bessel values once, then per plane the same
 * number of complex multiply-adds and s^2 lookups per pixel of one octant;
 * memory O(nz (nodes + table length)) besides the kernel.
 */
#include "internal.h"
#include "pixpost/setting.h"
#include "psf_internal.h"
#include "pixpost/setting_extra.h"
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Make-time messages (the kernel's fill) name the setting in the library's
 * word; the parser's take `what` (pp_psf_parse). */
#define LIB_WHAT pp_setting_name(NULL, PP_SET_PSF)
#define V_STEP 0.01
/* 5th zero of J1 (as psf.c): the in-focus radius of the default kernel. */
#define J1_ZERO5 16.470630050877633
#define INDEX_MIN 1.0
#define INDEX_MAX 2.0
#define STEP_MIN 0.001
#define STEP_MAX 50.0
#define DEPTH_MAX 1000.0
/* Most J0 values computed (nodes x radii): 2^28, about half a minute of
 * CPU. Both factors grow with the kernel's radius; the default kernel of
 * NA 1.4 oil at 65 nm pixels (165 x 165) needs 2.6e6, the one 50 um deep
 * into water (671 x 671 x 87) 5e7; the limit stops a --size in the
 * thousands, beyond any useful PSF. */
#define MAX_TABLE 268435456.0

/* ------------------------------------------------------------- spec ---- */

static pp_status need(pp_spec *sp, const char *what, const char *key, double *v)
{
    pp_status st;
    if (!pp_spec_number(sp, key, what, v, NULL, &st))
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: missing %s= (expected widefield:na=NA,wavelength=L,"
                       "pixel=P,step=DZ,n=N[,sample_n=NS,depth=D], lengths in micrometres)",
                       what, key);
    return st;
}

static pp_status check_index(const char *what, double v, const char *key)
{
    if (!(v >= INDEX_MIN && v <= INDEX_MAX))
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: %s=%g must be a refractive index in [%g, %g] (air 1.0, "
                       "water 1.33, glycerol 1.47, immersion oil 1.515)",
                       what, key, v, INDEX_MIN, INDEX_MAX);
    return PP_OK;
}

/* Ranges: step in [0.001, 50] um (piezo steps of nanometres to coarse
 * stacks; a nanometre value typed lands above); indices [1, 2] (air to
 * the densest immersion media, from memory); depth [0, 1000] um. */
pp_status pp_psf_widefield_parse(pp_spec *sp, const char *what, pp_psf_spec *out)
{
    static const char *const keys[] = {"na", "wavelength", "pixel", "step",
                                       "n",  "sample_n",   "depth", NULL};
    pp_status st = pp_spec_check_known(sp, what, keys);
    if (st == PP_OK)
        st = need(sp, what, "na", &out->na);
    if (st == PP_OK)
        st = need(sp, what, "wavelength", &out->wavelength);
    if (st == PP_OK)
        st = need(sp, what, "pixel", &out->pixel);
    if (st == PP_OK)
        st = need(sp, what, "step", &out->step);
    if (st == PP_OK)
        st = need(sp, what, "n", &out->n);
    if (st != PP_OK)
        return st;
    int has_ns = pp_spec_number(sp, "sample_n", what, &out->sample_n, NULL, &st);
    if (st != PP_OK)
        return st;
    int has_d = pp_spec_number(sp, "depth", what, &out->depth, NULL, &st);
    if (st != PP_OK || (st = pp_spec_check_used(sp, what, keys)) != PP_OK)
        return st;
    if (has_ns != has_d)
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: sample_n= and depth= go together (the sample's "
                       "refractive index and the depth in micrometres below the coverslip); "
                       "give both or neither",
                       what);
    if ((st = pp_psf_check_optics(out, what)) != PP_OK ||
        (st = check_index(what, out->n, "n")) != PP_OK)
        return st;
    if (has_ns && (st = check_index(what, out->sample_n, "sample_n")) != PP_OK)
        return st;
    if (!(out->na < out->n))
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: na=%g must be below the immersion index n=%g (NA = n "
                       "sin(angle))",
                       what, out->na, out->n);
    if (!(out->step >= STEP_MIN && out->step <= STEP_MAX))
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: step=%g must be in [%g, %g] micrometres, the distance "
                       "between slices (e.g. 200 nm is step=0.2)",
                       what, out->step, STEP_MIN, STEP_MAX);
    if (has_d && !(out->depth >= 0 && out->depth <= DEPTH_MAX))
        return pp_fail(PP_ERR_ARG,
                       "%s widefield: depth=%g must be in [0, %g] micrometres below the "
                       "coverslip",
                       what, out->depth, DEPTH_MAX);
    return PP_OK;
}

void pp_psf_widefield_format(const pp_psf_spec *s, char *buf, size_t len)
{
    char a[32], b[32], c[32], d[32], e[32], f[32], g[32];
    pp_psf_format_number(a, sizeof a, s->na);
    pp_psf_format_number(b, sizeof b, s->wavelength);
    pp_psf_format_number(c, sizeof c, s->pixel);
    pp_psf_format_number(d, sizeof d, s->step);
    pp_psf_format_number(e, sizeof e, s->n);
    int n =
        snprintf(buf, len, "widefield:na=%s,wavelength=%s,pixel=%s,step=%s,n=%s", a, b, c, d, e);
    if (s->sample_n > 0 && n >= 0 && (size_t)n < len) {
        pp_psf_format_number(f, sizeof f, s->sample_n);
        pp_psf_format_number(g, sizeof g, s->depth);
        snprintf(buf + n, len - (size_t)n, ",sample_n=%s,depth=%s", f, g);
    }
}

/* ------------------------------------------------------------ extent ---- */

/* Default: z out to twice the paraxial first axial zero 2 n lambda / NA^2
 * (plus the paraxial focal shift when mismatched); xy out to the in-focus
 * 5th dark ring plus the geometric defocus blur z_max tan(alpha),
 * sin(alpha) = NA / n. Our own choice: it keeps the first two axial lobes
 * and the defocused disc of the outermost slice. */
pp_status pp_psf_widefield_extent(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape)
{
    double zmax = 2.0 * 2.0 * s->n * s->wavelength / (s->na * s->na);
    if (s->sample_n > 0)
        zmax += s->depth * fabs(s->n / s->sample_n - 1.0);
    size_t rz, r;
    pp_status st = pp_psf_pick_radius(depth, zmax / s->step, &rz);
    if (st != PP_OK)
        return st;
    double z = (double)rz * s->step, sa = s->na / s->n;
    double ring = J1_ZERO5 * s->wavelength / (2.0 * PP_PI * s->na);
    if ((st = pp_psf_pick_radius(size, (ring + z * sa / sqrt(1 - sa * sa)) / s->pixel, &r)) !=
        PP_OK)
        return st;
    *shape = pp_shape_3d(2 * rz + 1, 2 * r + 1, 2 * r + 1);
    return PP_OK;
}

/* ----------------------------------------------------------- numerics ---- */

/* J0 by Miller's backward recurrence J_{k-1} = (2k/x) J_k - J_{k+1} from an
 * even start order well above x, normalised by J0 + 2 sum J_2k = 1. */
static double bessel_j0(double x)
{
    x = fabs(x);
    if (x < 1e-12)
        return 1.0;
    int m = 2 * ((int)(x + 30.0 + 6.0 * cbrt(x)) / 2);
    double jp = 0.0, j = 1e-30, sum = 0.0, j0 = 0.0;
    for (int k = m; k >= 1; k--) {
        double jm = 2.0 * k / x * j - jp;
        jp = j;
        j = jm;
        if (fabs(j) > 1e200) {
            j *= 1e-200;
            jp *= 1e-200;
            sum *= 1e-200;
        }
        if ((k - 1) % 2 == 0 && k - 1 > 0)
            sum += 2.0 * j;
    }
    j0 = j;
    sum += j0;
    return j0 / sum;
}

/* Gauss-Legendre nodes and weights on [0, 1] (Newton on P_n from the
 * Chebyshev-like starting guesses; textbook). */
static void gauss_legendre(int n, double *x, double *w)
{
    for (int i = 0; i < (n + 1) / 2; i++) {
        double t = cos(PP_PI * (i + 0.75) / (n + 0.5)), dp = 1;
        for (int it = 0; it < 100; it++) {
            double p0 = 1, p1 = t;
            for (int k = 2; k <= n; k++) {
                double p2 = ((2.0 * k - 1) * t * p1 - (k - 1.0) * p0) / k;
                p0 = p1;
                p1 = p2;
            }
            dp = n * (t * p1 - p0) / (t * t - 1);
            double dt = p1 / dp;
            t -= dt;
            if (fabs(dt) < 1e-15)
                break;
        }
        double wt = 2.0 / ((1 - t * t) * dp * dp);
        x[i] = 0.5 * (1 - t);
        x[n - 1 - i] = 0.5 * (1 + t);
        w[i] = w[n - 1 - i] = 0.5 * wt;
    }
}

/* The rule on [0, 1] for the pupil integral. Plain Gauss-Legendre, except
 * when rays beyond rho_c = sample_n / NA (< 1) turn evanescent: there the
 * integrand has a square-root kink (sqrt(n_s^2 - (NA rho)^2) changes
 * branch) and plain Gauss-Legendre converged only like 1/nodes^2
 * (measured: 2 % of the peak at 110 nodes, 0.06 % at 1600, NA 1.4 oil
 * into water 5 um deep). So [0, rho_c] and [rho_c, 1] get half the nodes
 * each, through rho = rho_c u (2 - u) and rho = rho_c + (1 - rho_c) u^2,
 * which make that square root smooth in u; the Jacobians go into w. */
static void pupil_rule(const pp_psf_spec *s, int n, double *x, double *w)
{
    double rc = s->sample_n > 0 && s->depth > 0 ? s->sample_n / s->na : 2.0;
    if (!(rc < 1.0)) {
        gauss_legendre(n, x, w);
        return;
    }
    int h = n / 2;
    gauss_legendre(h, x, w);
    gauss_legendre(n - h, x + h, w + h);
    for (int j = 0; j < h; j++) {
        double u = x[j];
        x[j] = rc * u * (2 - u);
        w[j] *= 2 * rc * (1 - u);
    }
    for (int j = h; j < n; j++) {
        double u = x[j];
        x[j] = rc + (1 - rc) * u * u;
        w[j] *= 2 * (1 - rc) * u;
    }
}

/* k times the optical path difference at pupil radius rho for defocus z;
 * returns the complex factor exp(i phi) (decaying on the evanescent
 * branch). */
static double complex pupil_factor(const pp_psf_spec *s, double rho, double z)
{
    double k = 2.0 * PP_PI / s->wavelength, sn = s->na * rho;
    double nci = sqrt(s->n * s->n - sn * sn);
    double complex f = cexp(-I * k * z * nci);
    if (s->sample_n > 0 && s->depth > 0) {
        double q = s->sample_n * s->sample_n - sn * sn;
        if (q >= 0)
            f *= cexp(I * k * s->depth * (sqrt(q) - nci));
        else
            f *= exp(-k * s->depth * sqrt(-q)) * cexp(-I * k * s->depth * nci);
    }
    return f;
}

/* The excursion (max - min) of the pupil phase over rho in [0, 1] at z,
 * from 1024 samples (the evanescent branch's decay does not oscillate and
 * only its phase counts). */
static double phase_range(const pp_psf_spec *s, double z)
{
    double lo = INFINITY, hi = -INFINITY, k = 2.0 * PP_PI / s->wavelength;
    for (int i = 0; i <= 1024; i++) {
        double sn = s->na * i / 1024.0, nci = sqrt(s->n * s->n - sn * sn), ph = -k * z * nci;
        if (s->sample_n > 0 && s->depth > 0) {
            double q = s->sample_n * s->sample_n - sn * sn;
            ph += k * s->depth * ((q > 0 ? sqrt(q) : 0) - nci);
        }
        lo = fmin(lo, ph);
        hi = fmax(hi, ph);
    }
    return hi - lo;
}

/* Linear interpolation of tab (spacing V_STEP in v) at v. */
static double lookup(const double *tab, size_t len, double v)
{
    double u = v / V_STEP;
    size_t i = (size_t)u;
    if (i + 1 >= len)
        return tab[len - 1];
    double f = u - (double)i;
    return tab[i] + f * (tab[i + 1] - tab[i]);
}

/* Fills plane out (nx x nx, odd) from the radial intensity table. */
static void fill_plane(const double *tab, size_t len, double kv, int ss, size_t nx, double *out)
{
    size_t r = nx / 2;
    for (size_t a = 0; a <= r; a++)
        for (size_t b = a; b <= r; b++) {
            double sum = 0;
            for (int p = 0; p < ss; p++) {
                double y = (double)a + ((p + 0.5) / ss - 0.5);
                for (int q = 0; q < ss; q++) {
                    double x = (double)b + ((q + 0.5) / ss - 0.5);
                    sum += lookup(tab, len, kv * sqrt(x * x + y * y));
                }
            }
            double v = sum / ((double)ss * ss);
            size_t ys[2] = {r - a, r + a}, xs[2] = {r - b, r + b};
            for (int i = 0; i < 2; i++)
                for (int j = 0; j < 2; j++) {
                    out[ys[i] * nx + xs[j]] = v;
                    out[xs[j] * nx + ys[i]] = v;
                }
        }
}

pp_status pp_psf_widefield_fill(const pp_psf_spec *s, const pp_shape *shape, int nodes,
                                double *data)
{
    size_t nz = shape->n[0], nx = shape->n[2], rz = nz / 2, r = nx / 2;
    double k = 2.0 * PP_PI / s->wavelength, kv = k * s->na * s->pixel; /* v per pixel */
    double vmax = kv * sqrt(2.0) * ((double)r + 1.0);
    size_t len = (size_t)(vmax / V_STEP) + 2;
    double phimax =
        fmax(phase_range(s, -(double)rz * s->step), phase_range(s, (double)rz * s->step));
    double need = (double)len * (nodes > 0 ? nodes : 32 + ceil(vmax + phimax));
    if (need > MAX_TABLE)
        return pp_fail(PP_ERR_LIMIT,
                       "%s widefield: a %zux%zu kernel over %zu slices needs a pupil "
                       "quadrature of %.3g Bessel values (at most %.3g); give a smaller size "
                       "or depth",
                       LIB_WHAT, nx, nx, nz, need, MAX_TABLE);
    if (nodes <= 0)
        nodes = 32 + (int)ceil(vmax + phimax);
    /* Radius by radius: one row of J0 values, used by every slice; the
     * slices' pupil factors e (nz x nodes) and radial profiles tab (nz x
     * len) are kept, so memory is O(nz (nodes + len)), not nodes x len. */
    double *x = malloc((size_t)nodes * sizeof *x), *w = malloc((size_t)nodes * sizeof *w);
    double *row = malloc((size_t)nodes * sizeof *row), *tab = malloc(nz * len * sizeof *tab);
    double complex *e = malloc(nz * (size_t)nodes * sizeof *e);
    if (!x || !w || !row || !tab || !e) {
        free(x), free(w), free(row), free(tab), free(e);
        return pp_fail(PP_ERR_NOMEM, "%s widefield: out of memory for %zu slices of %zu radii",
                       LIB_WHAT, nz, len);
    }
    pupil_rule(s, nodes, x, w);
    for (size_t p = 0; p < nz; p++)
        for (int j = 0; j < nodes; j++)
            e[p * (size_t)nodes + (size_t)j] =
                pupil_factor(s, x[j], ((double)p - (double)rz) * s->step);
    for (size_t i = 0; i < len; i++) {
        for (int j = 0; j < nodes; j++)
            row[j] = bessel_j0((double)i * V_STEP * x[j]) * x[j] * w[j];
        for (size_t p = 0; p < nz; p++) {
            double complex f = 0;
            const double complex *ep = e + p * (size_t)nodes;
            for (int j = 0; j < nodes; j++)
                f += row[j] * ep[j];
            tab[p * len + i] = creal(f) * creal(f) + cimag(f) * cimag(f);
        }
    }
    int ss = pp_psf_airy_supersampling(s);
    double total = 0;
    for (size_t p = 0; p < nz; p++) {
        double *plane = data + p * nx * nx;
        fill_plane(tab + p * len, len, kv, ss, nx, plane);
        for (size_t i = 0; i < nx * nx; i++)
            total += plane[i];
    }
    free(x), free(w), free(row), free(tab), free(e);
    if (!(total > 0) || !isfinite(total))
        return pp_fail(PP_ERR_NUMERIC, "%s widefield: the PSF sums to %g", LIB_WHAT, total);
    for (size_t i = 0; i < nz * nx * nx; i++)
        data[i] /= total;
    return PP_OK;
}
