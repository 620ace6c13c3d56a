/* pixpost — the kernel size rule, normalisation and number format shared by the PSF
 * models (src/psf.c) and the bead kernels (src/psf_bead.c); declared in
 * psf_internal.h. Kept apart from psf.c so that calls point one way:
 * psf.c -> psf_bead.c -> this file. Cost: one pass over the kernel. */
#include "internal.h"
#include "psf_internal.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

/* Radius from an explicit size (must be odd) or the model's default. */
pp_status pp_psf_pick_radius(size_t size, double model_radius, size_t *radius)
{
    if (size != 0) {
        if (size % 2 == 0)
            return pp_fail(PP_ERR_ARG, "PSF size %zu must be odd (2R+1)", size);
        if (size > 2 * PP_PSF_MAX_RADIUS + 1)
            return pp_fail(PP_ERR_LIMIT, "PSF size %zu is above the limit of %d", size,
                           2 * PP_PSF_MAX_RADIUS + 1);
        *radius = (size - 1) / 2;
        return PP_OK;
    }
    double r = ceil(model_radius - 1e-9); /* a radius of exactly 4.0 stays 4 */
    if (!(r <= PP_PSF_MAX_RADIUS))
        return pp_fail(PP_ERR_LIMIT,
                       "PSF radius %.0f pixels is above the limit of %d; check the units "
                       "(gaussian sigma is in pixels, airy lengths in micrometres)",
                       r, PP_PSF_MAX_RADIUS);
    *radius = r < 1 ? 1 : (size_t)r;
    return PP_OK;
}

void pp_psf_normalise(pp_image *k)
{
    size_t n = pp_image_count(k);
    double sum = 0;
    for (size_t i = 0; i < n; i++)
        sum += k->data[i];
    for (size_t i = 0; i < n; i++)
        k->data[i] /= sum;
}

void pp_psf_format_number(char *buf, size_t len, double v)
{
    snprintf(buf, len, "%.15g", v);
    if (strtod(buf, NULL) != v)
        snprintf(buf, len, "%.17g", v);
}
