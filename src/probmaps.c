/* pixpost — maps answering a question per pixel (src/pixpost/probmaps.h):
 * the relative uncertainty map, the above maps' file names, and the float
 * TIFF writer both use. Cost: one pass over the map. */
#include <math.h>
#include <stdio.h>
#include "internal.h"
#include "pixpost/io.h"
#include "pixpost/probmaps.h"
#include "pixpost/stack.h"

pp_status pp_rsd_map(const pp_image *mean, const pp_image *sd, pp_image **out)
{
    *out = NULL;
    if (mean->depth != sd->depth || mean->height != sd->height || mean->width != sd->width)
        return pp_fail(PP_ERR_ARG, "pp_rsd_map: the mean and sd maps differ in shape");
    pp_status st = pp_image_create3(mean->depth, mean->height, mean->width, out);
    if (st != PP_OK)
        return st;
    size_t n = pp_image_count(mean);
    for (size_t i = 0; i < n; i++) {
        double m = mean->data[i];
        (*out)->data[i] = m > 0 && isfinite(m) ? sd->data[i] / m : NAN;
    }
    return PP_OK;
}

void pp_above_name(double t, char *buf, size_t len) { snprintf(buf, len, "above_%g.tif", t); }

pp_status pp_map_write_f32(const char *path, const pp_image *img, const double voxel[3],
                           const char *name)
{
    if (img->depth == 1)
        return pp_tiff_write_f32(path, img);
    pp_shape s = pp_image_shape(img);
    return pp_ome_tiff_write_f32(path, &s, img->data, voxel, name);
}
