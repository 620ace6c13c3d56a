/* pixpost — frames of doubles: allocation with overflow checks. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/image.h"
#include "pixpost/image_extra.h"

pp_status pp_image_create3(size_t depth, size_t height, size_t width, pp_image **out)
{
    *out = NULL;
    if (width == 0 || height == 0 || depth == 0) {
        if (depth == 1)
            return pp_fail(PP_ERR_ARG, "image size %zux%zu: both sides must be at least 1",
                           width, height);
        return pp_fail(PP_ERR_ARG, "volume size %zux%zux%zu: every side must be at least 1",
                       width, height, depth);
    }
    size_t n, bytes;
    if (!pp_mul_ok(width, height, &n) || !pp_mul_ok(n, depth, &n) ||
        !pp_mul_ok(n, sizeof(double), &bytes)) {
        if (depth == 1)
            return pp_fail(PP_ERR_LIMIT, "image size %zux%zu is too large to address", width,
                           height);
        return pp_fail(PP_ERR_LIMIT, "volume size %zux%zux%zu is too large to address", width,
                       height, depth);
    }
    pp_image *img = malloc(sizeof *img);
    if (img)
        img->data = calloc(n, sizeof(double));
    if (!img || !img->data) {
        free(img);
        if (depth == 1)
            return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zu image", width, height);
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zux%zu volume", width, height,
                       depth);
    }
    img->width = width;
    img->height = height;
    img->depth = depth;
    *out = img;
    return PP_OK;
}

pp_status pp_image_create(size_t height, size_t width, pp_image **out)
{
    return pp_image_create3(1, height, width, out);
}

size_t pp_image_count(const pp_image *img)
{
    return img->depth * img->height * img->width;
}

pp_shape pp_image_shape(const pp_image *img)
{
    return img->depth > 1 ? pp_shape_3d(img->depth, img->height, img->width)
                          : pp_shape_2d(img->height, img->width);
}

pp_status pp_image_clone(const pp_image *src, pp_image **out)
{
    pp_status st = pp_image_create3(src->depth, src->height, src->width, out);
    if (st == PP_OK)
        memcpy((*out)->data, src->data, pp_image_count(src) * sizeof(double));
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
    size_t n = pp_image_count(img), bad = 0;
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
