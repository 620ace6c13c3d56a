/* pixpost — per-pixel temporal statistics of a series of frames taken at
 * one light level (darks, or flats at one exposure), for the photon transfer
 * fit (src/pixpost/calib.h).
 *
 * Each frame's own mean m_l (over its usable pixels) is subtracted first and
 * the per-pixel residuals r_l(p) = y_l(p) - m_l are accumulated with
 * Welford's update. Removing m_l is what EMVA 1288's difference of two frames
 * does (sigma^2 = 1/2 var(yA - yB) - 1/2 (muA - muB)^2): a flicker of the
 * light or of the dark level moves all pixels together and is not temporal
 * noise of a pixel. With L frames and |V| pixels, E[sum of squared
 * deviations] = (L - 1)(|V| - 1) sigma^2, which is what we divide by.
 * Fixed-pattern noise (per-pixel offsets and sensitivities) stays in the
 * per-pixel means and never reaches the temporal variance.
 * Cost: two passes over each frame; memory 2 doubles + 1 byte per pixel and
 * one double per frame.
 */
#include "internal.h"
#include "pixpost/calib.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

enum { PIX_OK = 0, PIX_NONFINITE = 1, PIX_SATURATED = 2 };

struct pp_series {
    size_t width, height;
    double saturation;
    size_t frames;
    double *mean, *m2;    /* per pixel, of r_l(p) */
    unsigned char *state; /* PIX_*: why a pixel was dropped */
    double *frame_mean;   /* m_l */
    size_t frame_cap;
};

pp_status pp_series_create(size_t width, size_t height, double saturation, pp_series **out)
{
    *out = NULL;
    size_t n, bytes;
    if (width == 0 || height == 0)
        return pp_fail(PP_ERR_ARG, "series of %zux%zu frames: both sides must be at least 1", width,
                       height);
    if (!pp_mul_ok(width, height, &n) || !pp_mul_ok(n, 2 * sizeof(double), &bytes))
        return pp_fail(PP_ERR_LIMIT, "series of %zux%zu frames is too large to address", width,
                       height);
    pp_series *s = calloc(1, sizeof *s);
    if (!s)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a series");
    s->width = width;
    s->height = height;
    s->saturation = saturation;
    s->mean = calloc(n, sizeof(double));
    s->m2 = calloc(n, sizeof(double));
    s->state = calloc(n, 1);
    if (!s->mean || !s->m2 || !s->state) {
        pp_series_free(s);
        return pp_fail(PP_ERR_NOMEM, "out of memory for a series of %zux%zu frames", width, height);
    }
    *out = s;
    return PP_OK;
}

void pp_series_free(pp_series *s)
{
    if (!s)
        return;
    free(s->mean);
    free(s->m2);
    free(s->state);
    free(s->frame_mean);
    free(s);
}

static int pixel_state(double v, double saturation)
{
    if (!isfinite(v))
        return PIX_NONFINITE;
    return v >= saturation ? PIX_SATURATED : PIX_OK;
}

pp_status pp_series_add(pp_series *s, const pp_image *frame)
{
    if (frame->width != s->width || frame->height != s->height)
        return pp_fail(PP_ERR_ARG, "frame is %zux%zu but the series' first frame is %zux%zu",
                       frame->width, frame->height, s->width, s->height);
    if (s->frames == s->frame_cap) {
        size_t cap = s->frame_cap ? 2 * s->frame_cap : 16;
        double *fm = realloc(s->frame_mean, cap * sizeof *fm);
        if (!fm)
            return pp_fail(PP_ERR_NOMEM, "out of memory for a series");
        s->frame_mean = fm;
        s->frame_cap = cap;
    }
    size_t n = s->width * s->height, used = 0;
    double sum = 0;
    for (size_t p = 0; p < n; p++)
        if (pixel_state(frame->data[p], s->saturation) == PIX_OK) {
            sum += frame->data[p];
            used++;
        }
    double m = used ? sum / (double)used : 0.0;
    s->frame_mean[s->frames++] = m;
    double k = (double)s->frames;
    for (size_t p = 0; p < n; p++) {
        int st = pixel_state(frame->data[p], s->saturation);
        if (st != PIX_OK && !s->state[p])
            s->state[p] = (unsigned char)st;
        if (s->state[p])
            continue;
        double r = frame->data[p] - m, d = r - s->mean[p];
        s->mean[p] += d / k;
        s->m2[p] += d * (r - s->mean[p]);
    }
    return PP_OK;
}

pp_status pp_series_stats_get(const pp_series *s, pp_series_stats *out)
{
    memset(out, 0, sizeof *out);
    out->frames = s->frames;
    if (s->frames < 2)
        return pp_fail(PP_ERR_ARG,
                       "a series needs at least 2 frames (it has %zu): the "
                       "temporal variance is measured between frames",
                       s->frames);
    size_t n = s->width * s->height, used = 0;
    double L = (double)s->frames, sum_v = 0, sum_vv = 0, sum_m = 0, sum_mm = 0;
    for (size_t p = 0; p < n; p++) {
        if (s->state[p] == PIX_SATURATED)
            out->saturated++;
        if (s->state[p])
            continue;
        double v = s->m2[p] / (L - 1);
        used++;
        sum_v += v;
        sum_vv += v * v;
        sum_m += s->mean[p];
        sum_mm += s->mean[p] * s->mean[p];
    }
    out->pixels = used;
    if (used < 2 && out->saturated)
        return pp_fail(PP_ERR_ARG,
                       "every pixel is saturated (at or above %g) in some frame; "
                       "lower the exposure or the light",
                       s->saturation);
    if (used < 2)
        return pp_fail(PP_ERR_ARG,
                       "a series needs at least 2 usable pixels (finite and below "
                       "saturation in every frame); it has %zu",
                       used);
    double N = (double)used, mbar = 0;
    for (size_t l = 0; l < s->frames; l++)
        mbar += s->frame_mean[l] / L;
    double vbar = sum_v / N;
    out->temporal_var = sum_v / (N - 1); /* the (|V| - 1) of the frame means' removal */
    double spread = (sum_vv - N * vbar * vbar) / (N - 1);
    out->temporal_var_se = sqrt(fmax(spread, 0) / N);
    double rbar = sum_m / N;
    out->mean = mbar + rbar;
    out->mean_se = sqrt(out->temporal_var / (L * N));
    double var_means = (sum_mm - N * rbar * rbar) / (N - 1);
    out->spatial_var = fmax(var_means - out->temporal_var / L, 0);
    return PP_OK;
}
