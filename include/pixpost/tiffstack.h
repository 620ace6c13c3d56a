/* pixpost — minimal multi-page TIFF volumes for 3-D PSFs (a stopgap kept
 * apart from io.h so that the general multi-page / OME reader and writer
 * can replace it).
 *
 * A volume is nz pages of ny x nx, slowest axis first (pp_shape {nz, ny,
 * nx}), row-major doubles: element (z, y, x) at (z*ny + y)*nx + x.
 */
#ifndef PIXPOST_TIFFSTACK_H
#define PIXPOST_TIFFSTACK_H

#include "pixpost/shape.h"

/* Reads every page of a grayscale TIFF (any type pp_tiff_read takes) as
 * one volume; all pages must have the same size (PP_ERR_FORMAT naming the
 * page otherwise). *data is owned by the caller (free()); NULL on failure.
 * A one-page file gives nz = 1. */
pp_status pp_tiff_stack_read(const char *path, pp_shape *shape, double **data);

/* Writes the rank-3 volume as an uncompressed 32-bit float TIFF with one
 * page per z-slice (slice 0 first), through a temporary name renamed into
 * place (no partial file under path on failure). */
pp_status pp_tiff_stack_write_f32(const char *path, const pp_shape *shape, const double *data);

#endif
