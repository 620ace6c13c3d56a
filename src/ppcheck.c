/* pixpost — the posterior predictive check (src/pixpost/ppcheck.h has
 * the formulas, the figures and the thresholds with where they come from).
 * Workload: once per run, after sampling. Cost: pp_model_blur (three
 * transforms on the frame's grid or its padded grid), one r2c of the
 * frame-sized residual and the PSF's transfer function (two r2c), and five
 * passes over the frame. */
#include "pixpost/ppcheck.h"
#include "pixpost/setting.h"
#include "internal.h"
#include "spectral.h"
#include "pixpost/model_extra.h"
#include "pixpost/sampler_extra.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char *pp_ppcheck_verdict(const pp_ppcheck *p)
{
    return p && p->nwarnings ? "misfit" : "fits";
}

void pp_ppcheck_free(pp_ppcheck *p)
{
    if (!p)
        return;
    pp_image_free(p->residual);
    free(p);
}

static void warn(pp_ppcheck *p, const char *text)
{
    if (p->nwarnings < PP_PPCHECK_MAX_WARNINGS)
        snprintf(p->warning[p->nwarnings++], sizeof p->warning[0], "%s", text);
}

static int whole_numbers(const pp_image *y)
{
    for (size_t i = 0; i < pp_image_count(y); i++)
        if (isfinite(y->data[i]) && y->data[i] != floor(y->data[i]))
            return 0;
    return 1;
}

/* -Laplacian of ax at (i, j) of slice z (5 points in the slice, wrapping
 * around: only pixels inside the pad border or of a periodic frame are
 * asked for). */
static double curvature(const pp_image *ax, size_t z, size_t i, size_t j)
{
    size_t h = ax->height, w = ax->width;
    const double *a = ax->data + z * h * w;
    return 4 * a[i * w + j] - a[((i + h - 1) % h) * w + j] - a[((i + 1) % h) * w + j] -
           a[i * w + (j + w - 1) % w] - a[i * w + (j + 1) % w];
}

/* Fills p->residual with r (NaN where left out: non-finite y, and the
 * border band of the kernel's radius with pad, in z too for a 3-D kernel)
 * from ax = A x-bar, and p->curvature with the correlation of y - E[y]
 * with the curvature -Laplacian(A x-bar) (in each slice of a volume). */
static void residuals(const pp_ppcheck_input *in, const pp_image *ax, pp_ppcheck *p)
{
    double sc = 0, sr = 0, scc = 0, srr = 0, src = 0, cnt = 0;
    const pp_noise_spec *n = &in->noise;
    size_t d = ax->depth, h = ax->height, w = ax->width, rad = in->psf->width / 2;
    size_t edge = in->boundary == PP_BOUNDARY_PAD ? rad : 0;
    size_t edz = in->boundary == PP_BOUNDARY_PAD ? in->psf->depth / 2 : 0;
    int photons = n->kind == PP_NOISE_POISSON || n->kind == PP_NOISE_CAMERA;
    double g = n->gain, read = n->kind == PP_NOISE_CAMERA ? n->read : 0.0;
    double q = p->quantised ? 1.0 / 12.0 : 0.0;
    for (size_t z = 0; z < d; z++) {
        for (size_t i = 0; i < h; i++)
            for (size_t j = 0; j < w; j++) {
                size_t k = (z * h + i) * w + j;
                double y = in->frame->data[k], r = NAN;
                int inside = i >= edge && j >= edge && i + edge < h && j + edge < w && z >= edz &&
                             z + edz < d;
                if (inside && isfinite(y)) {
                    double sd = 1 / sqrt(in->lambda);
                    if (photons) {
                        double mu = ax->data[k] + in->background;
                        sd = sqrt(g * g * (fmax(mu, 0.0) + read * read) + q);
                        r = (y - n->offset - g * mu) / sd;
                    } else {
                        r = (y - ax->data[k]) / sd;
                    }
                    double c = curvature(ax, z, i, j), e = r * sd; /* e: y - E[y], unscaled */
                    cnt++;
                    sr += e;
                    sc += c;
                    srr += e * e;
                    scc += c * c;
                    src += e * c;
                }
                p->residual->data[k] = r;
            }
    }
    double vr = srr - sr * sr / cnt, vc = scc - sc * sc / cnt;
    p->curvature = cnt > 1 && vr > 0 && vc > 0 ? (src - sr * sc / cnt) / sqrt(vr * vc) : NAN;
}

/* Mean, variance, share beyond 3, lag-1 correlations of the finite r
 * (within each slice of a volume). */
static void moments(pp_ppcheck *p)
{
    const pp_image *r = p->residual;
    size_t d = r->depth, h = r->height, w = r->width, n = 0, far = 0;
    double s = 0, ss = 0;
    for (size_t k = 0; k < d * h * w; k++)
        if (isfinite(r->data[k])) {
            n++;
            s += r->data[k];
            far += fabs(r->data[k]) > 3;
        }
    p->used = n;
    p->mean = n ? s / (double)n : NAN;
    for (size_t k = 0; k < d * h * w; k++)
        if (isfinite(r->data[k]))
            ss += (r->data[k] - p->mean) * (r->data[k] - p->mean);
    p->var = n ? ss / (double)n : NAN;
    p->beyond3 = n ? (double)far / (double)n : NAN;
    double c[2] = {0, 0}, e[2] = {0, 0};
    for (size_t z = 0; z < d; z++) {
        const double *rz = r->data + z * h * w;
        for (size_t i = 0; i < h; i++)
            for (size_t j = 0; j < w; j++) {
                double a = rz[i * w + j];
                if (!isfinite(a))
                    continue;
                a -= p->mean;
                for (int dir = 0; dir < 2; dir++) { /* 0: next column (along a row); 1: next row */
                    if ((dir == 0 && j + 1 >= w) || (dir == 1 && i + 1 >= h))
                        continue;
                    double b = rz[dir == 0 ? i * w + j + 1 : (i + 1) * w + j];
                    if (!isfinite(b))
                        continue;
                    b -= p->mean;
                    c[dir] += a * b;
                    e[dir] += 0.5 * (a * a + b * b);
                }
            }
    }
    p->lag1_row = e[0] > 0 ? c[0] / e[0] : NAN;
    p->lag1_col = e[1] > 0 ? c[1] / e[1] : NAN;
}

/* The kernel summed over z (the kernel itself for a frame): by the Fourier
 * slice theorem its transfer function is the 3-D one's kz = 0 plane, the
 * in-plane band of a volume's slices. */
static pp_status in_plane_kernel(const pp_image *psf, pp_image **out)
{
    size_t n = psf->height * psf->width;
    pp_status st = pp_image_create(psf->height, psf->width, out);
    if (st != PP_OK)
        return st;
    memcpy((*out)->data, psf->data, n * sizeof(double));
    for (size_t z = 1; z < psf->depth; z++)
        for (size_t k = 0; k < n; k++)
            (*out)->data[k] += psf->data[z * n + k];
    return PP_OK;
}

/* The PSF-band power ratio (ppcheck.h): each slice's residual with the
 * mean taken out and 0 where left out, one r2c per slice; the band from
 * the in-plane kernel's transfer function on the slice's grid; powers and
 * weights summed over the slices. */
static pp_status band_power(const pp_ppcheck_input *in, pp_ppcheck *p)
{
    const pp_image *r = p->residual;
    size_t d = r->depth, h = r->height, w = r->width, hw = w / 2 + 1;
    p->band_ratio = p->band_white = NAN;
    pp_fft *f = NULL;
    pp_image *k2 = NULL;
    pp_status st = pp_fft_create(h, w, PP_FFT_ESTIMATE, &f);
    if (st == PP_OK)
        st = in_plane_kernel(in->psf, &k2);
    if (st != PP_OK) {
        pp_fft_free(f);
        return st;
    }
    double *x = pp_fft_alloc_real(h * w);
    pp_complex *xs = pp_fft_alloc_complex(h * hw), *otf = pp_fft_alloc_complex(h * hw);
    if (!x || !xs || !otf) {
        st = pp_fail(PP_ERR_NOMEM, "out of memory for the predictive check");
        goto done;
    }
    if ((st = pp_psf_transfer(k2, f, otf)) != PP_OK)
        goto done;
    double band = 0, all = 0, wband = 0, wall = 0;
    for (size_t z = 0; z < d; z++) {
        const double *rz = r->data + z * h * w;
        for (size_t k = 0; k < h * w; k++)
            x[k] = isfinite(rz[k]) ? rz[k] - p->mean : 0.0;
        pp_fft_forward(f, x, xs);
        for (size_t i = 0; i < h; i++)
            for (size_t j = 0; j < hw; j++) {
                if (i == 0 && j == 0)
                    continue;
                size_t k = i * hw + j;
                double wt = pp_half_weight(j, w), a = cabs(otf[k]);
                double pw = wt * (creal(xs[k]) * creal(xs[k]) + cimag(xs[k]) * cimag(xs[k]));
                int in_band = a >= PP_PPCHECK_OTF_LO && a <= PP_PPCHECK_OTF_HI;
                all += pw;
                wall += wt;
                band += in_band ? pw : 0;
                wband += in_band ? wt : 0;
            }
    }
    if (wband > 0 && all > 0) {
        p->band_white = wband / wall;
        p->band_ratio = (band / all) / p->band_white;
    }
done:
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(xs);
    pp_fft_free_buffer(otf);
    pp_image_free(k2);
    pp_fft_free(f);
    return st;
}

/* "the gain may be ..." by model and direction (the likely causes). */
/* Written into t (n bytes); names: pp_ppcheck_input's setting_names. */
static const char *var_cause(const pp_noise_spec *n, int high, const char *const *names, char *t,
                             size_t len)
{
    const char *noise = pp_setting_name(names, PP_SET_NOISE);
    if (n->kind == PP_NOISE_GAUSSIAN && n->sigma_set)
        snprintf(t, len, "sigma= in %s is too %s", noise, high ? "small" : "large");
    else if (n->kind == PP_NOISE_GAUSSIAN)
        snprintf(t, len,
                 "the noise is not one Gaussian sd over the whole frame (signal-dependent "
                 "photon noise: try %s camera or poisson)",
                 noise);
    else if (high)
        snprintf(t, len, "%s",
                 "the gain may be inverted (data sheets print electrons per ADU: give that "
                 "figure as e_per_adu=) or too small, the read noise too small, or the offset "
                 "too high");
    else
        snprintf(t, len,
                 "the gain may be too large, the read noise too large, the offset too low or "
                 "%s too high (the model expects more noise than the data show)",
                 pp_setting_name(names, PP_SET_BACKGROUND));
    return t;
}

/* 1 when the figure x differs from its white-noise value x0 by more than
 * 4 sampling sd (sd). */
static int significant(double x, double x0, double sd)
{
    return fabs(x - x0) > 4 * sd;
}

/* The structure warning (first, as a wrong PSF also inflates the other
 * figures); returns 1 when it fired. */
static int judge_structure(pp_ppcheck *p, const char *const *names)
{
    double n = (double)p->used;
    double lag = fmax(p->lag1_row, p->lag1_col);
    int lag_hit = lag > PP_PPCHECK_LAG1 && significant(lag, 0.0, 1 / sqrt(n));
    int curv_hit =
        fabs(p->curvature) > PP_PPCHECK_CURV && significant(p->curvature, 0.0, 1 / sqrt(n));
    /* a share of the band's frequencies, white: its sd is about the ratio
     * times sqrt(2 / (frequencies in the band)) ~ sqrt(2 / (n band_white)) */
    int band_hit = p->band_ratio > PP_PPCHECK_BAND &&
                   significant(p->band_ratio, 1.0, sqrt(2.0 / (n * p->band_white)));
    if (!(lag_hit || band_hit || curv_hit))
        return 0;
    char t[640];
    snprintf(t, sizeof t,
             "predictive check: residuals structured at the PSF's scale (correlation "
             "with the fitted image's curvature %+.2f, flagged beyond +-%.2g; lag-1 "
             "correlation %.2f along rows, %.2f down columns, flagged above %.2g; power "
             "in the PSF's band %.2fx white noise's, flagged above %.2g): %s (check %s "
             "against a bead image)",
             p->curvature, PP_PPCHECK_CURV, p->lag1_row, p->lag1_col, PP_PPCHECK_LAG1,
             p->band_ratio, PP_PPCHECK_BAND,
             p->curvature < 0 ? "the data are smoother than the fit: the PSF may be too "
                                "narrow"
             : p->var < PP_PPCHECK_VAR_LO
                 ? "the data are sharper than the fit, with less noise than predicted (below): "
                   "the offset may be too low or the background too high (the fit bends to "
                   "absorb them), or the PSF too wide"
                 : "the data are sharper than the model can make them: the PSF may be too "
                   "wide (or the specimen has detail the prior smooths away)",
             pp_setting_name(names, PP_SET_PSF));
    warn(p, t);
    return 1;
}

static void judge(const pp_ppcheck_input *in, pp_ppcheck *p)
{
    double n = (double)p->used;
    char t[640];
    char cause[320];
    const char *also = judge_structure(p, in->setting_names) ? "; or a consequence of the structure above (a "
                                            "wrong PSF leaves large residuals at bright "
                                            "detail): fix that first"
                                          : "";
    if ((p->var > PP_PPCHECK_VAR_HI || p->var < PP_PPCHECK_VAR_LO) &&
        significant(p->var, 1.0, sqrt(2.0 / n))) {
        int high = p->var > 1;
        snprintf(t, sizeof t,
                 "predictive check: residual variance %.2fx predicted (1 expected; flagged "
                 "%s %.2g): %s%s",
                 p->var, high ? "above" : "below", high ? PP_PPCHECK_VAR_HI : PP_PPCHECK_VAR_LO,
                 var_cause(&in->noise, high, in->setting_names, cause, sizeof cause),
                 high ? also : "");
        warn(p, t);
    }
    if (fabs(p->mean) > PP_PPCHECK_MEAN && significant(p->mean, 0.0, 1 / sqrt(n))) {
        snprintf(t, sizeof t,
                 "predictive check: mean residual %+.2f sd (0 expected; flagged beyond "
                 "+-%.2g): the model is systematically %s the data: the offset or the "
                 "background may be wrong%s",
                 p->mean, PP_PPCHECK_MEAN, p->mean > 0 ? "below" : "above", also);
        warn(p, t);
    }
    double p3 = 0.0027; /* P(|N(0,1)| > 3) */
    if (p->beyond3 > PP_PPCHECK_BEYOND3 && significant(p->beyond3, p3, sqrt(p3 * (1 - p3) / n))) {
        snprintf(t, sizeof t,
                 "predictive check: %.2f %% of the residuals lie beyond +-3 sd (0.27 %% "
                 "expected; flagged above %.2g %%): outliers (hot or saturated pixels, "
                 "cosmic rays, dust) or noise with heavier tails than the model's; mask "
                 "such pixels%s",
                 100 * p->beyond3, 100 * PP_PPCHECK_BEYOND3, also);
        warn(p, t);
    }
}

pp_status pp_ppcheck_run(const pp_ppcheck_input *in, pp_ppcheck **out)
{
    *out = NULL;
    const pp_image *y = in->frame, *m = in->mean;
    if (y->width != m->width || y->height != m->height || y->depth != m->depth)
        return pp_fail(PP_ERR_ARG,
                       "predictive check: the frame (%zu x %zu x %zu, z y x) and the mean "
                       "(%zu x %zu x %zu) differ in size",
                       y->depth, y->height, y->width, m->depth, m->height, m->width);
    if (in->psf->depth > 1 && y->depth == 1)
        return pp_fail(PP_ERR_ARG, "predictive check: a 3-D PSF with a frame");
    if (in->psf->width > y->width || in->psf->height > y->height)
        return pp_fail(PP_ERR_ARG, "predictive check: the PSF does not fit in the frame");
    pp_ppcheck *p = calloc(1, sizeof *p);
    if (!p)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the predictive check");
    pp_image *ax = NULL;
    pp_status st = pp_image_create3(y->depth, y->height, y->width, &p->residual);
    if (st == PP_OK)
        st = pp_model_blur(m, in->psf, in->boundary, in->setting_names, &ax);
    if (st == PP_OK) {
        p->quantised = in->noise.kind == PP_NOISE_CAMERA && whole_numbers(y);
        residuals(in, ax, p);
        moments(p);
        if (p->used < 16)
            st = pp_fail(PP_ERR_ARG,
                         "predictive check: only %zu pixels away from the edges "
                         "(16 needed)",
                         p->used);
    }
    if (st == PP_OK)
        st = band_power(in, p);
    pp_image_free(ax);
    if (st != PP_OK) {
        pp_ppcheck_free(p);
        return st;
    }
    judge(in, p);
    *out = p;
    return PP_OK;
}

/* Posterior mean of the trace column called name (NaN when absent). */
static double column_mean(const pp_trace *t, const char *name)
{
    for (size_t c = 0; c < t->ncols; c++)
        if (strcmp(t->names[c], name) == 0) {
            size_t n = (size_t)t->chains * t->kept;
            double s = 0;
            for (size_t i = 0; i < n; i++)
                s += t->values[i * t->ncols + c];
            return n ? s / (double)n : NAN;
        }
    return NAN;
}

pp_status pp_ppcheck_sampler(const pp_sampler *s, const pp_image *frame, const pp_image *psf,
                             pp_ppcheck **out)
{
    *out = NULL;
    const pp_sampler_config *c = pp_sampler_config_used(s);
    const pp_trace *t = pp_sampler_trace(s);
    if (!pp_sampler_mean(s))
        return pp_fail(PP_ERR_ARG, "predictive check: the sampler has not run");
    pp_ppcheck_input in = {frame, pp_sampler_mean(s), psf, c->boundary, c->noise,
                           NAN,   c->background,      c->setting_names};
    in.lambda =
        c->noise.sigma_set ? 1.0 / (c->noise.sigma * c->noise.sigma) : column_mean(t, "lambda");
    /* E[A x] over a sampled width is not A x-bar at one width; measured
     * once (48x48 Gaussian frame, gmrf1, sigma=auto, 300 iterations): A x-bar
     * at the mean width gave variance 1.20 and curvature -0.54, a false
     * misfit. */
    if (c->psf.width_auto)
        return pp_fail(PP_ERR_UNSUPPORTED,
                       "the predictive check is not made with a sampled PSF width (the "
                       "prediction would need each draw's width, not the mean image blurred "
                       "at one width)");
    return pp_ppcheck_run(&in, out);
}
