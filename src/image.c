/* pixpost — frames of doubles: allocation with overflow checks. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/image.h"

pp_status pp_image_create(size_t height, size_t width, pp_image **out)
{
    *out = NULL;
    if (width == 0 || height == 0)
        return pp_fail(PP_ERR_ARG, "image size %zux%zu: both sides must be at least 1",
                       width, height);
    size_t n, bytes;
    if (!pp_mul_ok(width, height, &n) || !pp_mul_ok(n, sizeof(double), &bytes))
        return pp_fail(PP_ERR_LIMIT, "image size %zux%zu is too large to address", width,
                       height);
    pp_image *img = malloc(sizeof *img);
    if (!img)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zu image", width, height);
    img->data = calloc(n, sizeof(double));
    if (!img->data) {
        free(img);
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zu image", width, height);
    }
    img->width = width;
    img->height = height;
    *out = img;
    return PP_OK;
}

pp_status pp_image_clone(const pp_image *src, pp_image **out)
{
    pp_status st = pp_image_create(src->height, src->width, out);
    if (st == PP_OK)
        memcpy((*out)->data, src->data, src->width * src->height * sizeof(double));
    return st;
}

void pp_image_free(pp_image *img)
{
    if (!img)
        return;
    free(img->data);
    free(img);
}

size_t pp_image_range(const pp_image *img, double *lo, double *hi)
{
    size_t n = img->width * img->height, bad = 0;
    double a = INFINITY, b = -INFINITY;
    for (size_t i = 0; i < n; i++) {
        double v = img->data[i];
        if (!isfinite(v)) {
            bad++;
            continue;
        }
        if (v < a)
            a = v;
        if (v > b)
            b = v;
    }
    if (bad == n)
        a = b = 0.0;
    *lo = a;
    *hi = b;
    return bad;
}
