/* pixpost — maps that answer a question about every pixel: the posterior
 * probability that the intensity exceeds a threshold, P(x_i > T) (the
 * sampler counts the kept draws above T: pp_sampler_config.above,
 * pp_sampler_above_map), and the relative uncertainty sd / mean. Writing
 * them: one float TIFF each (a volume: an OME-TIFF page per z-slice). */
#ifndef PIXPOST_PROBMAPS_H
#define PIXPOST_PROBMAPS_H

#include <stddef.h>
#include "pixpost/image.h"
#include "pixpost/status.h"

/* rsd = sd / mean where mean > 0, NaN elsewhere (mean <= 0 or not finite);
 * *out has mean's shape (caller frees). PP_ERR_ARG when the shapes differ. */
pp_status pp_rsd_map(const pp_image *mean, const pp_image *sd, pp_image **out);

/* The file name of the map of threshold t: "above_<t>.tif", t written with
 * %g (so 0.5 -> above_0.5.tif, 100 -> above_100.tif). */
void pp_above_name(double t, char *buf, size_t len);

/* Writes a map as a float TIFF, atomically: a frame one page, a volume an
 * OME-TIFF with one page per z-slice, the voxel size {z, y, x} in
 * micrometres (0 or NULL: unknown) and the map's name. */
pp_status pp_map_write_f32(const char *path, const pp_image *img, const double voxel[3],
                           const char *name);

#endif
