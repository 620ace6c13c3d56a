/* pixpost — frame readers and writers the tree uses beyond the public API.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/io.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_IO_EXTRA_H
#define PIXPOST_IO_EXTRA_H

#include <stddef.h>
#include "pixpost/io.h"

pp_status pp_png_read(const char *path, const pp_read_options *opt,
                      pp_image **out, pp_read_info *info);
pp_status pp_tiff_read(const char *path, const pp_read_options *opt,
                       pp_image **out, pp_read_info *info);

/* Number of pages (directories) of a TIFF file. */
pp_status pp_tiff_count_pages(const char *path, unsigned *pages);

/* 16-bit grayscale PNG with stored = round((v - offset)/scale), atomically.
 * scale must be > 0. */
pp_status pp_png_write16(const char *path, const pp_image *img,
                         double offset, double scale);

/* The scale that maps [lo, hi] of the finite values onto 0..65535
 * (offset = lo; scale = (hi - lo)/65535, or 1 for a constant image). */
void pp_png_auto_scale(const pp_image *img, double *offset, double *scale);

/* Writes img as .tif (float) or .png (16-bit, auto scale) by the path's
 * extension; refuses other extensions. */
pp_status pp_image_write(const char *path, const pp_image *img);

#endif
