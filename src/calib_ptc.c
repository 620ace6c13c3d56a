/* pixpost — the photon transfer fit of EMVA 1288 (release 3.1, in effect
 * from December 2016; the formulas below as we remember them): offset,
 * gain, read noise and linearity from the statistics of a dark series and
 * flat series at several light levels (src/calib_series.c gives those).
 *
 * EMVA 1288's linear camera model: mean mu_y = mu_dark + K mu_e and
 * temporal variance sigma_y^2 = K^2 sigma_d^2 + sigma_q^2 + K (mu_y -
 * mu_dark), sigma_q^2 = 1/12 ADU^2. So the variance above the darks' grows
 * with slope K against the mean above the darks' (the photon transfer
 * curve). EMVA 1288 fits it through the origin from the darkest level to
 * 70 % of saturation; we fit the same line with the darks as one point
 * (weighted least squares, src/calib_line.c). We do not know where
 * saturation begins, so we refuse levels with clipped pixels and a curve
 * that turns down at its top instead.
 * Cost: a handful of arithmetic on at most PP_PTC_MAX_LEVELS points.
 */
#include "calib_internal.h"
#include "internal.h"
#include "pixpost/calib.h"
#include <math.h>
#include <string.h>

/* A level with more saturated pixels than this share is refused: near
 * clipping a pixel's distribution is cut and its variance falls, which
 * bends the curve. 1 % is our choice (a few hot or bright pixels are
 * excluded, a clipped level is not used). */
#define MAX_SATURATED_SHARE 0.01
/* "All at one level": every level's signal within this share of the
 * brightest one; a slope needs a range (EMVA 1288 asks for many levels
 * from dark to near saturation). */
#define MIN_RELATIVE_RANGE 0.2

static pp_status check_level(const pp_series_stats *dark, const pp_series_stats *L, size_t i)
{
    double all = (double)(L->pixels + L->saturated);
    if ((double)L->saturated > MAX_SATURATED_SHARE * all)
        return pp_fail(PP_ERR_ARG,
                       "flat level %zu: %.1f %% of its pixels are saturated (at the format's "
                       "maximum or the saturation level given); lower the exposure or the light for that level",
                       i + 1, 100.0 * (double)L->saturated / all);
    double x = L->mean - dark->mean, se = hypot(L->mean_se, dark->mean_se);
    if (!(x > 5 * se))
        return pp_fail(PP_ERR_ARG,
                       "flat level %zu: mean %.6g ADU is not above the darks' %.6g ADU; the "
                       "flats need light (or the darks are not dark)",
                       i + 1, L->mean, dark->mean);
    if (!(L->temporal_var_se > 0))
        return pp_fail(PP_ERR_ARG,
                       "flat level %zu: its frames do not vary between frames (the same "
                       "frame given twice?); give independent exposures",
                       i + 1);
    return PP_OK;
}

/* The brightest level's variance must not fall below the next brightest's:
 * a photon transfer curve bends down as the sensor saturates. */
static pp_status check_top(const pp_series_stats *level, size_t n)
{
    size_t top = 0, next = n;
    for (size_t i = 1; i < n; i++)
        if (level[i].mean > level[top].mean)
            top = i;
    for (size_t i = 0; i < n; i++)
        if (i != top && (next == n || level[i].mean > level[next].mean))
            next = i;
    double drop = level[next].temporal_var - level[top].temporal_var;
    if (drop > 3 * hypot(level[next].temporal_var_se, level[top].temporal_var_se))
        return pp_fail(PP_ERR_ARG,
                       "flat level %zu: its variance (%.6g ADU^2) is below that of the dimmer "
                       "level %zu (%.6g ADU^2): the sensor saturates there; drop that level or "
                       "lower its exposure",
                       top + 1, level[top].temporal_var, next + 1, level[next].temporal_var);
    return PP_OK;
}

static pp_status check_levels(const pp_series_stats *dark, const pp_series_stats *level, size_t n)
{
    if (n < 2)
        return pp_fail(PP_ERR_ARG,
                       "photon transfer needs flats at 2 or more light levels "
                       "(%zu given); 5 to 8 levels from dim to bright are better",
                       n);
    if (n > PP_PTC_MAX_LEVELS)
        return pp_fail(PP_ERR_ARG, "%zu flat levels given; at most %d are accepted", n,
                       PP_PTC_MAX_LEVELS);
    if (!(dark->temporal_var > 0))
        return pp_fail(PP_ERR_ARG, "darks: no variance between frames (the same frame given "
                                   "twice?); give independent dark exposures");
    pp_status st;
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        if ((st = check_level(dark, &level[i], i)) != PP_OK)
            return st;
        lo = fmin(lo, level[i].mean - dark->mean);
        hi = fmax(hi, level[i].mean - dark->mean);
    }
    if (lo > (1 - MIN_RELATIVE_RANGE) * hi)
        return pp_fail(PP_ERR_ARG,
                       "flat levels: their mean signals all lie within %.0f %% of each other "
                       "(%.6g to %.6g ADU above the darks); record flats at several light "
                       "levels, from dim to about 70 %% of saturation",
                       100 * MIN_RELATIVE_RANGE, lo, hi);
    return check_top(level, n);
}

/* EMVA 1288's linearity error: a straight line (ordinary least squares) of
 * the mean signal above the darks against exposure, relative deviations
 * delta_i = (signal_i - line_i) / line_i, LE = (max delta - min delta) / 2
 * in percent. Without exposures, the same spread of the relative residuals
 * of the variance fit (how straight the photon transfer curve is). */
static void linearity(pp_ptc_result *r, const double *x)
{
    size_t n = r->nlevels;
    double d[PP_PTC_MAX_LEVELS], w[PP_PTC_MAX_LEVELS];
    r->linearity_from_exposure = 0;
    memcpy(d, r->residual, n * sizeof *d);
    int have = 1;
    for (size_t i = 0; i < n; i++) {
        have = have && isfinite(r->exposure[i]);
        w[i] = 1;
    }
    double k, c, cov[3], chi2;
    if (have && pp_line_fit(r->exposure, x, w, n, &k, &c, cov, &chi2) == 0) {
        r->linearity_from_exposure = 1;
        for (size_t i = 0; i < n; i++) {
            double line = k * r->exposure[i] + c;
            d[i] = line != 0 ? (x[i] - line) / line : NAN;
        }
    }
    double lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        lo = fmin(lo, d[i]);
        hi = fmax(hi, d[i]);
    }
    r->linearity_error = 100 * (hi - lo) / 2;
}

pp_status pp_ptc_fit(const pp_series_stats *dark, const pp_series_stats *level, size_t nlevels,
                     const double *exposure, pp_ptc_result *out)
{
    memset(out, 0, sizeof *out);
    pp_status st = check_levels(dark, level, nlevels);
    if (st != PP_OK)
        return st;
    out->dark = *dark;
    out->nlevels = nlevels;
    double x[PP_PTC_MAX_LEVELS + 1], y[PP_PTC_MAX_LEVELS + 1], w[PP_PTC_MAX_LEVELS + 1];
    x[0] = 0;
    y[0] = dark->temporal_var;
    w[0] = 1.0 / fmax(dark->temporal_var_se * dark->temporal_var_se, 1e-300);
    for (size_t i = 0; i < nlevels; i++) {
        out->level[i] = level[i];
        out->exposure[i] = exposure ? exposure[i] : NAN;
        x[i + 1] = level[i].mean - dark->mean;
        y[i + 1] = level[i].temporal_var;
        w[i + 1] = 1.0 / (level[i].temporal_var_se * level[i].temporal_var_se);
    }
    double cov[3], chi2;
    if (pp_line_fit(x, y, w, nlevels + 1, &out->gain, &out->intercept, cov, &chi2) != 0)
        return pp_fail(PP_ERR_NUMERIC, "photon transfer: the levels give no slope");
    out->chi2_red = chi2 / (double)(nlevels - 1);
    double scale = fmax(1.0, out->chi2_red);
    out->gain_se = sqrt(cov[0] * scale);
    out->intercept_se = sqrt(cov[2] * scale);
    if (!(out->gain > 0))
        return pp_fail(PP_ERR_ARG,
                       "photon transfer: the variance does not grow with the signal (slope "
                       "%.3g ADU per electron); check that the flats are lit evenly and not "
                       "saturated",
                       out->gain);
    double K = out->gain, vd = dark->temporal_var;
    out->offset = dark->mean;
    out->offset_se = dark->mean_se;
    out->read = sqrt(vd) / K;
    /* delta method; the small correlation of the dark variance and K is left out */
    out->read_se = hypot(dark->temporal_var_se / (2 * sqrt(vd) * K), out->read * out->gain_se / K);
    out->read_emva = vd > PP_QUANT_VAR ? sqrt(vd - PP_QUANT_VAR) / K : NAN;
    out->dsnu = sqrt(dark->spatial_var) / K;
    double sig[PP_PTC_MAX_LEVELS];
    for (size_t i = 0; i < nlevels; i++) {
        double fit = K * x[i + 1] + out->intercept;
        out->residual[i] = (y[i + 1] - fit) / fit;
        sig[i] = x[i + 1];
    }
    linearity(out, sig);
    return PP_OK;
}

void pp_noise_from_ptc(const pp_ptc_result *r, pp_noise_spec *out)
{
    memset(out, 0, sizeof *out);
    out->kind = PP_NOISE_CAMERA;
    out->gain = r->gain;
    out->offset = r->offset;
    out->read = r->read;
}
