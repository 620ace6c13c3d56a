/* pixpost — 3-D PSF kernels (pp_psf_make3): the 3-D gaussian here, the
 * widefield model in psf_widefield.c, bead stacks in psf_bead3.c.
 *
 * gaussian:sigma=S,sigma_z=Z is exp(-(x^2 + y^2)/(2 S^2) - z^2/(2 Z^2))
 * SAMPLED at voxel centres, the rule of the 2-D gaussian (psf.c explains
 * why: sigma keeps meaning the spec's width), radius ceil(4 S) in xy and
 * ceil(4 Z) in z, normalised to sum 1 over the volume. Cost: one exp per
 * voxel.
 */
#include "internal.h"
#include "pixpost/setting.h"
#include "psf_internal.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* The largest 3-D kernel made: 2^27 voxels (1 GiB of doubles), far beyond
 * a useful PSF (a 257 x 257 x 2033 stack); a default size above it comes
 * from a fine pixel at a low NA, and the size and depth arguments bound it.
 * Messages name the spec in the library's word (no names table here). */
#define MAX_VOXELS ((size_t)1 << 27)
#define LIB_WHAT pp_setting_name(NULL, PP_SET_PSF)

static pp_status alloc_volume(const pp_shape *s, double **data)
{
    size_t count;
    pp_status st = pp_shape_count(s, sizeof **data, &count);
    if (st != PP_OK)
        return st;
    if (count > MAX_VOXELS)
        return pp_fail(PP_ERR_LIMIT,
                       "%s: the 3-D kernel would be %zu slices of %zux%zu, above the limit of "
                       "%zu voxels; give a smaller size and depth",
                       LIB_WHAT, s->n[0], s->n[2], s->n[1], MAX_VOXELS);
    if (!(*data = calloc(count, sizeof **data)))
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zux%zu PSF", s->n[0], s->n[1],
                       s->n[2]);
    return PP_OK;
}

static pp_status make_gaussian3(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape,
                                double **data)
{
    size_t r, rz;
    double sz = s->sigma_z > 0 ? s->sigma_z : 0;
    pp_status st = pp_psf_pick_radius(size, 4.0 * s->sigma, &r);
    if (st == PP_OK && sz > 0)
        st = pp_psf_pick_radius(depth, 4.0 * sz, &rz);
    else if (st == PP_OK)
        rz = 0; /* a 2-D gaussian: one slice */
    if (st != PP_OK)
        return st;
    *shape = pp_shape_3d(2 * rz + 1, 2 * r + 1, 2 * r + 1);
    if ((st = alloc_volume(shape, data)) != PP_OK)
        return st;
    size_t n = 2 * r + 1;
    double sum = 0;
    for (size_t k = 0; k <= 2 * rz; k++)
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < n; j++) {
                double dz = (double)k - (double)rz, dy = (double)i - (double)r,
                       dx = (double)j - (double)r;
                double v = exp(-(dx * dx + dy * dy) / (2 * s->sigma * s->sigma) -
                               (sz > 0 ? dz * dz / (2 * sz * sz) : 0));
                (*data)[(k * n + i) * n + j] = v;
                sum += v;
            }
    for (size_t i = 0; i < (2 * rz + 1) * n * n; i++)
        (*data)[i] /= sum;
    return PP_OK;
}

static pp_status make_widefield(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape,
                                double **data)
{
    pp_status st = pp_psf_widefield_extent(s, size, depth, shape);
    if (st == PP_OK)
        st = alloc_volume(shape, data);
    if (st == PP_OK && (st = pp_psf_widefield_fill(s, shape, 0, *data)) != PP_OK) {
        free(*data);
        *data = NULL;
    }
    return st;
}

/* A 2-D model kernel as a one-slice volume. */
static pp_status make_flat(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape,
                           double **data)
{
    if (depth > 1)
        return pp_fail(PP_ERR_ARG,
                       "%s: a 2-D PSF has one slice; depth %zu needs a 3-D "
                       "spec (gaussian:...,sigma_z=Z or widefield:...)",
                       LIB_WHAT, depth);
    pp_image *k = NULL;
    pp_status st = pp_psf_make(s, size, &k);
    if (st == PP_OK)
        *shape = pp_shape_3d(1, k->height, k->width);
    if (st == PP_OK && (st = alloc_volume(shape, data)) == PP_OK)
        memcpy(*data, k->data, k->width * k->height * sizeof **data);
    pp_image_free(k);
    return st;
}

pp_status pp_psf_make3(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape,
                       double **data)
{
    *data = NULL;
    if ((size && size % 2 == 0) || (depth && depth % 2 == 0))
        return pp_fail(PP_ERR_ARG, "PSF size %zu and depth %zu must be odd (2R+1) or 0", size,
                       depth);
    switch (s->kind) {
    case PP_PSF_GAUSSIAN:
        if (!(s->sigma > 0))
            return pp_fail(PP_ERR_ARG, "%s gaussian: sigma=%g must be > 0", LIB_WHAT, s->sigma);
        return s->sigma_z > 0 ? make_gaussian3(s, size, depth, shape, data)
                              : make_flat(s, size, depth, shape, data);
    case PP_PSF_WIDEFIELD:
        return make_widefield(s, size, depth, shape, data);
    case PP_PSF_FILE:
        return pp_psf_bead3_make(s->path, size, depth, shape, data);
    case PP_PSF_AIRY:
        return make_flat(s, size, depth, shape, data);
    }
    return pp_fail(PP_ERR_ARG, "%s: unknown PSF kind %d", LIB_WHAT, (int)s->kind);
}
