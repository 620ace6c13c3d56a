/* pixpost — measured bead stacks as 3-D PSFs (file:STACK.tif, every page a
 * z-slice), cleaned as the 2-D bead images of psf_bead.c are, in 3-D:
 *  - background: the median of the stack's outer faces (every voxel on the
 *    first/last slice, row or column), subtracted; their robust noise sd
 *    is 1.4826 MAD (the Gaussian consistency factor);
 *  - a stack whose brightest voxel is not 5 noise sds above the background
 *    is refused (the 2-D rule: common practice for a detection);
 *  - voxels below 3 noise sds are set to zero (a pure-noise voxel passes
 *    with probability 1.3e-3; common practice), which removes the positive
 *    half of the background noise that plain clipping would keep;
 *  - the kernel is centred on the voxel nearest the centroid, its extent
 *    the stack's own support around it (size/depth 0) or the odd size and
 *    depth asked for, and it is normalised to sum 1 over the volume.
 *  - the stack must be one bead: the one-spot test of psf_bead.c
 *    (pp_psf_one_spot) on the background-subtracted stack scaled to peak 1,
 *    with bright voxels 26-connected; two beads, or a stack of a cell, are
 *    refused.
 * Not carried over from 2-D: the compactness check (a bead stack's extent
 * along z depends on the NA and the step, so the 2-D width bound does not
 * apply as it is) and the ring-wise support.
 * Cost: one read, a sort of the faces, three passes.
 */
#include "internal.h"
#include "pixpost/stack.h"
#include "psf_internal.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double median(double *v, size_t m)
{
    qsort(v, m, sizeof *v, cmp_double);
    return m % 2 ? v[m / 2] : 0.5 * (v[m / 2 - 1] + v[m / 2]);
}

static int on_face(const pp_shape *s, size_t z, size_t y, size_t x)
{
    return (s->n[0] > 1 && (z == 0 || z + 1 == s->n[0])) || y == 0 || y + 1 == s->n[1] || x == 0 ||
           x + 1 == s->n[2];
}

/* Median and MAD of the face voxels. */
static pp_status face_stats(const pp_shape *s, const double *v, double *med, double *mad)
{
    size_t n = s->n[0] * s->n[1] * s->n[2], m = 0;
    double *f = malloc(n * sizeof *f);
    if (!f)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a PSF stack's border");
    for (size_t z = 0; z < s->n[0]; z++)
        for (size_t y = 0; y < s->n[1]; y++)
            for (size_t x = 0; x < s->n[2]; x++)
                if (on_face(s, z, y, x))
                    f[m++] = v[(z * s->n[1] + y) * s->n[2] + x];
    *med = median(f, m);
    for (size_t i = 0; i < m; i++)
        f[i] = fabs(f[i] - *med);
    *mad = median(f, m);
    free(f);
    return PP_OK;
}

/* Subtracts the background, zeroes what is below 3 noise sds, and finds
 * the centroid voxel c[3]. */
static pp_status clean(const char *path, const pp_shape *s, double *v, size_t c[3])
{
    size_t n = s->n[0] * s->n[1] * s->n[2];
    for (size_t i = 0; i < n; i++)
        if (!isfinite(v[i]))
            return pp_fail(PP_ERR_FORMAT, "%s: the PSF stack has NaN/Inf voxels", path);
    double med = 0, mad = 0, peak = 0, sd;
    pp_status st = face_stats(s, v, &med, &mad);
    if (st != PP_OK)
        return st;
    sd = 1.4826 * mad;
    for (size_t i = 0; i < n; i++)
        peak = fmax(peak, v[i] -= med);
    if (!(peak > 5.0 * sd) || !(peak > 0))
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the brightest voxel of the PSF stack is only %.3g above the median "
                       "of its outer faces, within 5 noise sds (sd %.3g); is it a bead stack?",
                       path, peak, sd);
    pp_image *scaled = NULL;
    if ((st = pp_image_create3(s->n[0], s->n[1], s->n[2], &scaled)) != PP_OK)
        return st;
    for (size_t i = 0; i < n; i++)
        scaled->data[i] = v[i] / peak;
    st = pp_psf_one_spot(scaled, sd / peak, path);
    pp_image_free(scaled);
    if (st != PP_OK)
        return st;
    double sum = 0, m[3] = {0, 0, 0};
    for (size_t i = 0; i < n; i++) {
        if (v[i] < 3.0 * sd || v[i] < 0)
            v[i] = 0;
        size_t q[3] = {i / (s->n[1] * s->n[2]), (i / s->n[2]) % s->n[1], i % s->n[2]};
        sum += v[i];
        for (int a = 0; a < 3; a++)
            m[a] += v[i] * (double)q[a];
    }
    for (int a = 0; a < 3; a++)
        c[a] = (size_t)floor(m[a] / sum + 0.5);
    return PP_OK;
}

static size_t reach(size_t c, size_t n)
{
    return c > n - 1 - c ? c : n - 1 - c;
}

pp_status pp_psf_bead3_make(const char *path, size_t size, size_t depth, pp_shape *shape,
                            double **data)
{
    pp_shape in;
    double *v = NULL, *k = NULL;
    size_t c[3], r, rz;
    pp_read_options opt;
    pp_read_options_defaults(&opt);
    pp_stack *stk = NULL;
    pp_status st = pp_stack_read(path, &opt, &stk, NULL);
    if (st == PP_OK) {
        /* a one-page file is a volume of one slice */
        in = stk->shape.rank == 3 ? stk->shape : pp_shape_3d(1, stk->shape.n[0], stk->shape.n[1]);
        v = stk->data;
        stk->data = NULL;
    }
    pp_stack_free(stk);
    if (st == PP_OK)
        st = clean(path, &in, v, c);
    if (st == PP_OK) {
        size_t ry = reach(c[1], in.n[1]), rx = reach(c[2], in.n[2]);
        r = ry > rx ? ry : rx;
        rz = reach(c[0], in.n[0]);
        if (size)
            st = pp_psf_pick_radius(size, 0, &r);
        if (st == PP_OK && depth)
            st = pp_psf_pick_radius(depth, 0, &rz);
        if (st == PP_OK && (r > PP_PSF_MAX_RADIUS || rz > PP_PSF_MAX_RADIUS))
            st = pp_fail(PP_ERR_LIMIT, "%s: the PSF stack is larger than the limit of %d", path,
                         2 * PP_PSF_MAX_RADIUS + 1);
    }
    if (st == PP_OK) {
        *shape = pp_shape_3d(2 * rz + 1, 2 * r + 1, 2 * r + 1);
        size_t count = 0;
        if ((st = pp_shape_count(shape, sizeof *k, &count)) == PP_OK &&
            !(k = calloc(count, sizeof *k)))
            st = pp_fail(PP_ERR_NOMEM, "%s: out of memory for the PSF", path);
    }
    if (st == PP_OK) {
        size_t nz = 2 * rz + 1, n = 2 * r + 1;
        double sum = 0;
        for (size_t a = 0; a < nz; a++)
            for (size_t b = 0; b < n; b++)
                for (size_t d = 0; d < n; d++) {
                    long z = (long)c[0] + (long)a - (long)rz, y = (long)c[1] + (long)b - (long)r,
                         x = (long)c[2] + (long)d - (long)r;
                    if (z < 0 || y < 0 || x < 0 || z >= (long)in.n[0] || y >= (long)in.n[1] ||
                        x >= (long)in.n[2])
                        continue;
                    double w = v[((size_t)z * in.n[1] + (size_t)y) * in.n[2] + (size_t)x];
                    k[(a * n + b) * n + d] = w;
                    sum += w;
                }
        for (size_t i = 0; i < nz * n * n; i++)
            k[i] /= sum;
        *data = k;
    }
    free(v);
    return st;
}
