/* pixpost — checks of a frame against the stated model before sampling
 * (src/pixpost/datacheck.h states every rule and its threshold).
 * Workload: one frame per run, before the sampler is made. Cost: one copy
 * of the finite pixels and one qsort; the rest is a pass or two. */
#include "pixpost/datacheck.h"
#include "pixpost/calib.h"
#include "pixpost/setting.h"
#include "internal.h"
#include "stats.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static void add(pp_datacheck *d, pp_check_severity sev, const char *check, const char *fmt, ...)
    PP_PRINTF(4, 5);
static void add(pp_datacheck *d, pp_check_severity sev, const char *check, const char *fmt, ...)
{
    if (d->count == PP_DATACHECK_MAX)
        return;
    pp_check_finding *f = &d->finding[d->count++];
    f->severity = sev;
    f->check = check;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(f->text, sizeof f->text, fmt, ap);
    va_end(ap);
    if (sev == PP_CHECK_ERROR)
        d->errors++;
    else
        d->warnings++;
}

/* Errors first, each group in the order found (a stable partition). */
static void errors_first(pp_datacheck *d)
{
    pp_check_finding tmp[PP_DATACHECK_MAX];
    size_t k = 0;
    for (int pass = 0; pass < 2; pass++)
        for (size_t i = 0; i < d->count; i++)
            if ((d->finding[i].severity == PP_CHECK_ERROR) == (pass == 0))
                tmp[k++] = d->finding[i];
    memcpy(d->finding, tmp, d->count * sizeof tmp[0]);
}

static const char *model_name(const pp_noise_spec *n)
{
    return n->kind == PP_NOISE_CAMERA ? "camera" : "poisson";
}

/* The offset checks of the photon models (datacheck.h: below_offset,
 * impossible, dark_level); v holds the sorted finite pixels. */
static void offset_checks(pp_datacheck *d, const pp_noise_spec *n, const double *v, size_t cnt,
                          const char *const *names)
{
    const char *noise = pp_setting_name(names, PP_SET_NOISE);
    double g = n->gain, o = n->offset, r = n->kind == PP_NOISE_CAMERA ? n->read : 0.0;
    double s = sqrt(g * g * r * r + 1.0 / 12.0), low = o - 5 * s - 1;
    size_t below = 0, imposs = 0;
    for (size_t i = 0; i < cnt && v[i] < o; i++) {
        below++;
        imposs += v[i] < low;
    }
    double nn = (double)cnt;
    d->dark_sd = s;
    d->share_below_offset = (double)below / nn;
    d->share_impossible = (double)imposs / nn;
    d->q001 = pp_quantile_sorted(v, cnt, 0.001);
    d->q01 = pp_quantile_sorted(v, cnt, 0.01);
    d->offset_suggested = d->q01 + 2.33 * s;
    const char *m = model_name(n);
    double limit = 0.5 + fmax(0.1, 2.0 / sqrt(nn));
    if (d->share_below_offset > limit) {
        add(d, PP_CHECK_ERROR, "below_offset",
            "%.1f %% of the observed pixels are below the offset %g ADU of %s %s, where "
            "at most half can be under that model (a pixel without light reads the offset "
            "plus read noise of %.3g ADU sd): the offset is too high. The darkest 1 %% of "
            "the frame (%.6g ADU) point to an offset of about %.0f: give offset=%.0f in "
            "%s (or measure it from dark frames)",
            100 * d->share_below_offset, o, noise, m, s, d->q01, d->offset_suggested,
            d->offset_suggested, noise);
    } else if (imposs) {
        int err = d->share_impossible > 0.01;
        add(d, err ? PP_CHECK_ERROR : PP_CHECK_WARNING, "impossible",
            "%zu of the observed pixels (%.2f %%, lowest %.6g) are below %.6g ADU, the offset "
            "%g minus 5 read-noise sd (%.3g ADU) and 1 ADU of rounding: impossible under "
            "%s %s%s%s%s%s%s",
            imposs, 100 * d->share_impossible, v[0], low, o, s, noise, m,
            err ? "; the frame is not in raw camera units (background-subtracted, "
                  "normalised or negative values), or the offset is too high, or the gain "
                  "or read noise too small (an inverted gain: data sheets print electrons "
                  "per ADU, give that as e_per_adu=): give the camera's real offset, gain "
                  "and read noise in "
                : "; they look like cold or defect pixels: mask them, or check the offset, "
                  "gain and read noise",
            err ? noise : "", err ? ", or use " : "", err ? noise : "",
            err ? " gaussian for processed data" : "");
    }
    double far = fmax(10 * s, 10 * g);
    if (d->q01 > o + far)
        add(d, PP_CHECK_WARNING, "dark_level",
            "the darkest 1 %% of the pixels read %.6g ADU or more, %.3g ADU above the offset "
            "%g of %s %s (more than max(10 read-noise sd, 10 photons)): if the frame "
            "has areas without light the offset is too low (they would read about the "
            "offset); check it against dark frames",
            d->q01, d->q01 - o, o, noise, m);
}

/* gain (datacheck.h): the stated gain against the single-frame fit's. */
static void gain_check(pp_datacheck *d, const pp_image *frame, const pp_noise_spec *n,
                       const char *const *names)
{
    pp_noise_fit fit;
    if (pp_noise_fit_frame(frame, NULL, &fit) != PP_OK)
        return; /* too small a frame or too few smooth patches: no word (a volume: its
                 * slices pooled, calib.h) */
    if (!fit.gain_determined || !(fit.a > 0) || !isfinite(fit.a_se))
        return;
    double g = n->gain, lo = fit.a - 2.576 * fit.a_se, hi = fit.a + 2.576 * fit.a_se;
    d->gain_fit = fit.a;
    d->gain_fit_se = fit.a_se;
    double ratio = g / fit.a;
    if ((ratio <= 2 && ratio >= 0.5) || (g >= lo && g <= hi))
        return;
    const char *noise = pp_setting_name(names, PP_SET_NOISE);
    char cause[160];
    if (1.0 / g >= lo && 1.0 / g <= hi)
        snprintf(cause, sizeof cause,
                 "Its inverse, %.3g, lies within the interval: the gain was likely entered "
                 "upside down",
                 1.0 / g);
    else
        snprintf(cause, sizeof cause, "Likely cause: the gain entered upside down or wrong");
    add(d, PP_CHECK_WARNING, "gain",
        "the stated gain %g ADU per electron of %s %s is %.3g times %s the %s noise "
        "shows: it grows with the signal by %.3g ADU per electron (99 %% interval %.3g to "
        "%.3g; single-frame fit of Foi et al. 2008). %s. The gain is ADU per electron; if "
        "your data sheet gives electrons per ADU use e_per_adu=%g in %s instead of gain=%g, "
        "or measure the gain with pixpost calibrate; else the error bars are %s",
        g, noise, model_name(n), ratio > 1 ? ratio : 1.0 / ratio,
        ratio > 1 ? "what" : "smaller than what",
        frame->depth > 1 ? "stack's (its slices pooled)" : "frame's", fit.a, lo, hi, cause, g,
        noise, g,
        ratio > 1 ? "too wide" : "too narrow");
}

/* psf_size (datacheck.h). */
static void size_checks(pp_datacheck *d, const pp_image *frame, const pp_image *psf, pp_boundary b,
                        const char *const *names)
{
    const char *bname = pp_setting_name(names, PP_SET_BOUNDARY);
    size_t h = frame->height, w = frame->width, kh = psf->height, kw = psf->width;
    if (h < kh || w < kw) {
        add(d, PP_CHECK_ERROR, "psf_size",
            "the frame (%zux%zu pixels) is smaller than the PSF kernel (%zux%zu): the "
            "kernel must fit in the frame; use a larger frame (at least %zux%zu, better "
            "twice that) or check the %s units (sigma in pixels; airy pixel= in um)",
            w, h, kw, kh, kw, kh, pp_setting_name(names, PP_SET_PSF));
    } else if (h < 2 * kh || w < 2 * kw) {
        add(d, PP_CHECK_WARNING, "psf_size",
            "the frame (%zux%zu pixels) is less than twice the PSF kernel (%zux%zu) "
            "across: most pixels lie within the PSF's reach of an edge, where %s (%s %s), so the "
            "estimate and its bounds rest largely on the prior; use a frame of at least "
            "%zux%zu",
            w, h, kw, kh,
            b == PP_BOUNDARY_PAD ? "the scene outside the frame is unknown" : "the frame is assumed to wrap around",
            bname, b == PP_BOUNDARY_PAD ? "pad" : "periodic", 2 * kw, 2 * kh);
    }
}

pp_status pp_datacheck_run(const pp_image *frame, const pp_noise_spec *noise, const pp_image *psf,
                           pp_boundary b, const char *const *names, pp_datacheck *out)
{
    memset(out, 0, sizeof *out);
    out->dark_sd = out->share_below_offset = out->share_impossible = NAN;
    out->q001 = out->q01 = out->offset_suggested = NAN;
    out->gain_fit = out->gain_fit_se = NAN;
    size_t n = pp_image_count(frame), cnt = 0; /* every voxel of a volume */
    double *v = malloc((n ? n : 1) * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the data checks");
    for (size_t i = 0; i < n; i++)
        if (isfinite(frame->data[i]))
            v[cnt++] = frame->data[i];
    out->observed = cnt;
    if (!cnt) { /* nothing to check: the sampler refuses the frame with the counts */
        free(v);
        return PP_OK;
    }
    size_checks(out, frame, psf, b, names);
    if (noise->kind == PP_NOISE_POISSON || noise->kind == PP_NOISE_CAMERA) {
        pp_sort_doubles(v, cnt);
        offset_checks(out, noise, v, cnt, names);
        gain_check(out, frame, noise, names);
    }
    free(v);
    errors_first(out);
    return PP_OK;
}
