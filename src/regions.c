/* pixpost — regions of a label image (include/pixpost/regions.h): the
 * label map's check and plan, and the totals of a field over the regions.
 * Cost: planning O(frame + L log L) for L distinct labels; a sum O(frame). */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/regions.h"
#include "pixpost/regions_extra.h"

struct pp_regions {
    size_t depth, height, width;
    size_t n;       /* regions */
    long *label;    /* n labels, increasing */
    size_t *pixels; /* n pixel counts */
    uint32_t *of;   /* frame-sized: 0 = no region, else 1 + region index */
};

static int cmp_long(const void *a, const void *b)
{
    long x = *(const long *)a, y = *(const long *)b;
    return (x > y) - (x < y);
}

pp_status pp_regions_plan(const pp_image *labels, size_t depth, size_t height, size_t width,
                          pp_regions **out)
{
    *out = NULL;
    if (!labels)
        return pp_fail(PP_ERR_ARG, "pp_regions_plan: no label image");
    if (labels->depth != depth || labels->height != height || labels->width != width)
        return pp_fail(PP_ERR_ARG,
                       "the label image is %zu x %zu%s but the frame is %zu x %zu%s; give "
                       "labels of the frame's size%s",
                       labels->height, labels->width, labels->depth > 1 ? " (several pages)" : "",
                       height, width, depth > 1 ? " x its slices" : "",
                       depth > 1 ? " (one page per slice)" : "");
    size_t n = depth * height * width, nl = 0;
    for (size_t i = 0; i < n; i++) {
        double v = labels->data[i];
        if (!isfinite(v) || v != floor(v) || v < 0 || v >= 2147483648.0)
            return pp_fail(PP_ERR_ARG,
                           "the label image has the value %g at pixel %zu (row %zu, column "
                           "%zu): labels must be whole numbers from 0 (no region) to 2^31 - 1",
                           v, i, i / width % height, i % width);
        nl += v != 0;
    }
    if (nl == 0)
        return pp_fail(PP_ERR_ARG, "the label image has no labelled pixel (all are 0): label "
                                   "the regions with whole numbers > 0");
    pp_regions *r = calloc(1, sizeof *r);
    long *all = malloc(nl * sizeof *all);
    if (!r || !all || !(r->of = malloc(n * sizeof *r->of))) {
        free(all);
        pp_regions_free(r);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the regions");
    }
    r->depth = depth, r->height = height, r->width = width;
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (labels->data[i] != 0)
            all[k++] = (long)labels->data[i];
    qsort(all, nl, sizeof *all, cmp_long);
    size_t u = 0;
    for (size_t i = 0; i < nl; i++)
        if (i == 0 || all[i] != all[u - 1])
            all[u++] = all[i];
    r->n = u;
    r->label = realloc(all, u * sizeof *all);
    r->pixels = calloc(u, sizeof *r->pixels);
    if (!r->label || !r->pixels) {
        if (!r->label)
            free(all);
        pp_regions_free(r);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the regions");
    }
    for (size_t i = 0; i < n; i++) {
        r->of[i] = 0;
        if (labels->data[i] != 0) {
            long j = pp_regions_find(r, (long)labels->data[i]);
            r->of[i] = (uint32_t)j + 1;
            r->pixels[j]++;
        }
    }
    *out = r;
    return PP_OK;
}

void pp_regions_free(pp_regions *r)
{
    if (!r)
        return;
    free(r->label);
    free(r->pixels);
    free(r->of);
    free(r);
}

size_t pp_regions_count(const pp_regions *r) { return r->n; }
long pp_regions_label(const pp_regions *r, size_t j) { return r->label[j]; }
size_t pp_regions_pixels(const pp_regions *r, size_t j) { return r->pixels[j]; }

int pp_regions_fit(const pp_regions *r, size_t depth, size_t height, size_t width)
{
    return r->depth == depth && r->height == height && r->width == width;
}

long pp_regions_at(const pp_regions *r, size_t i) { return (long)r->of[i] - 1; }

long pp_regions_find(const pp_regions *r, long label)
{
    size_t lo = 0, hi = r->n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (r->label[mid] < label)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo < r->n && r->label[lo] == label ? (long)lo : -1;
}

void pp_regions_sum(const pp_regions *r, const double *f, size_t row, size_t slice, double scale,
                    double *out)
{
    for (size_t j = 0; j < r->n; j++)
        out[j] = 0;
    const uint32_t *of = r->of;
    for (size_t z = 0; z < r->depth; z++)
        for (size_t y = 0; y < r->height; y++) {
            const double *fr = f + z * slice + y * row;
            for (size_t x = 0; x < r->width; x++, of++)
                if (*of)
                    out[*of - 1] += fr[x];
        }
    for (size_t j = 0; j < r->n; j++)
        out[j] *= scale;
}
