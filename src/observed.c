/* pixpost — the observed pixels of a sampler's grid (see observed.h). */
#include "observed.h"

#include "internal.h"
#include "pixpost/setting.h"
#include "sampler_internal.h"
#include "truncnorm.h"
#include <math.h>
#include <stdlib.h>

size_t pp_observed_min(size_t n)
{
    size_t m = (n + 99) / 100;
    return m < 2 ? 2 : m;
}

double pp_observed_mean(const pp_image *frame)
{
    double sum = 0;
    size_t n = 0;
    for (size_t i = 0; i < pp_image_count(frame); i++)
        if (isfinite(frame->data[i])) {
            sum += frame->data[i];
            n++;
        }
    return n ? sum / (double)n : 0.0;
}

/* A grid-sized byte mask (0 in the padding), NULL when out of memory: on
 * the frame's pixels 1 where f is not NaN (f given) or where m is nonzero
 * (m given, frame layout). */
static unsigned char *grid_mask(const pp_sampler *s, const double *f, const unsigned char *m)
{
    unsigned char *g = calloc(s->gn, 1);
    for (size_t z = 0; g && z < s->depth; z++)
        for (size_t r = 0; r < s->height; r++)
            for (size_t c = 0; c < s->width; c++) {
                size_t i = (z * s->height + r) * s->width + c;
                g[(z * s->gh + r) * s->gw + c] = f ? !isnan(f[i]) : m[i] != 0;
            }
    return g;
}

pp_status pp_observed_plan(pp_sampler *s, const pp_image *frame)
{
    size_t inf = 0, nan = 0;
    for (size_t i = 0; i < s->npix; i++) {
        double v = frame->data[i];
        inf += isinf(v);
        nan += isnan(v);
    }
    if (inf)
        return pp_fail(PP_ERR_NUMERIC,
                       "the frame has %zu infinite pixels; set them to NaN to mark them "
                       "unobserved, or repair them",
                       inf);
    size_t n = s->npix, need = pp_observed_min(n);
    /* the caller's way to keep saturated pixels as data, when it names one */
    const char *const *names = s->cfg.setting_names;
    const char *keep = names ? names[PP_SET_KEEP_SATURATED] : NULL;
    const unsigned char *cz = s->cfg.censored;
    size_t ncens = 0;
    for (size_t i = 0; cz && i < n; i++)
        if (cz[i]) {
            if (!isnan(frame->data[i]))
                return pp_fail(PP_ERR_ARG, "censored pixel %zu is not NaN; mark a censored "
                                           "pixel unobserved (NaN) too",
                               i);
            ncens++;
        }
    if (ncens && !isfinite(s->cfg.censor_level))
        return pp_fail(PP_ERR_ARG, "the censoring level %g is not finite; give the saturation "
                                   "level of the censored pixels",
                       s->cfg.censor_level);
    if (n - nan < need)
        return pp_fail(
            PP_ERR_ARG,
            "only %zu of the frame's %zu pixels are observed (not NaN: masked or "
            "saturated pixels are unobserved); at least %zu are needed: mask fewer pixels (or use "
            "saturated ones as data%s%s)",
            n - nan, n, need, keep ? ", " : "", keep ? keep : "");
    if (!(s->obs = grid_mask(s, frame->data, NULL)))
        return pp_fail(PP_ERR_NOMEM, "out of memory planning a %zux%zu grid", s->gw, s->gh);
    s->nobs = n - nan;
    s->nmissing = nan;
    s->cfg.censored = NULL; /* read no more: the caller may free it */
    if (ncens) { /* every sampler censors (observed.h) */
        if (!(s->cens = grid_mask(s, NULL, cz)))
            return pp_fail(PP_ERR_NOMEM, "out of memory planning a %zux%zu grid", s->gw, s->gh);
        s->ncensored = ncens;
        s->censor_level = s->cfg.censor_level;
    }
    s->augment = s->cfg.boundary == PP_BOUNDARY_PAD || nan > 0;
    return PP_OK;
}

double pp_censored_draw(const pp_sampler *s, pp_rng *r, double m, double sd)
{
    return pp_truncnorm_above(r, m, sd, s->censor_level);
}

void pp_censored_range(const pp_sampler *s, const double *yaug, const double *g, double gs,
                       double off, double *lo, double *hi)
{
    double l = -INFINITY, h = INFINITY;
    for (size_t i = 0; s->cens && i < s->gn; i++) {
        if (!s->cens[i])
            continue;
        /* slack >= 0 up to the rounding of an earlier move: t = 0 stays inside */
        double d = g[i] * gs - off, slack = fmax(0.0, yaug[i] - s->censor_level);
        if (d > 0)
            l = fmax(l, -slack / d);
        else if (d < 0)
            h = fmin(h, slack / -d);
    }
    *lo = l;
    *hi = h;
}
