/* pixpost — a z-stack read as one volume (pp_volume_read, include/pixpost/io.h).
 *
 * The stack is read whole (pp_stack_read), then the slices of one channel at
 * one time point are copied into a depth x height x width image: with OME
 * metadata the planes z = 0 .. SizeZ - 1 at (channel, time) by
 * pp_ome_page's DimensionOrder mapping, without it every page in file
 * order. Peak memory: the stack and the volume.
 */
#include "pixpost/io.h"
#include "pixpost/image.h"
#include "pixpost/stack.h"

#include "internal.h"

#include <math.h>
#include <string.h>

pp_status pp_volume_read(const char *path, const pp_read_options *opt, size_t channel,
                         size_t time, pp_image **out, double voxel[3], pp_read_info *info)
{
    *out = NULL;
    for (int i = 0; voxel && i < 3; i++)
        voxel[i] = 0.0;
    pp_stack *s = NULL;
    pp_read_info inf;
    pp_status st = pp_stack_read(path, opt, &s, &inf);
    if (st != PP_OK)
        return st;
    const pp_ome_meta *ome = &s->ome;
    size_t h = s->shape.n[s->shape.rank - 2], w = s->shape.n[s->shape.rank - 1];
    size_t pages = s->shape.rank == 3 ? s->shape.n[0] : 1, nz = pages;
    if (ome->present) {
        if (channel >= ome->nc || time >= ome->nt)
            st = pp_fail(PP_ERR_ARG, "%s: channel %zu, time point %zu asked for, but its OME "
                                     "metadata has %zu channel(s) and %zu time point(s) (counted "
                                     "from 0); ask for one of those",
                         path, channel, time, ome->nc, ome->nt);
        nz = ome->nz;
    } else if (channel || time) {
        st = pp_fail(PP_ERR_ARG, "%s: channel %zu, time point %zu asked for, but the file has "
                                 "no OME metadata, so every page is a z-slice; ask for channel 0, "
                                 "time point 0",
                     path, channel, time);
    }
    if (st == PP_OK)
        st = pp_image_create3(nz, h, w, out);
    if (st == PP_OK) {
        inf.nonfinite = 0;
        for (size_t z = 0; z < nz; z++) {
            size_t page = ome->present ? pp_ome_page(ome, z, channel, time) : z;
            double *dst = (*out)->data + z * h * w;
            memcpy(dst, s->data + page * h * w, h * w * sizeof *dst);
            for (size_t i = 0; i < h * w; i++)
                inf.nonfinite += !isfinite(dst[i]);
        }
        for (int i = 0; voxel && i < 3; i++)
            voxel[i] = ome->present ? ome->voxel[i] : 0.0;
        if (info)
            *info = inf;
    }
    pp_stack_free(s);
    return st;
}
