/* pixpost — internals shared by the frame readers and writers (src/io.c,
 * src/io_png.c, src/io_tiff.c) only, defined in src/io_common.c; not
 * installed, not used elsewhere. */
#ifndef PIXPOST_IO_INTERNAL_H
#define PIXPOST_IO_INTERNAL_H

#include "pixpost/io.h"
#include <stddef.h>

/* The options to use: *opt, or the defaults when opt is NULL. */
pp_read_options pp_io_options(const pp_read_options *opt);

/* Refuses a zero side (PP_ERR_FORMAT) and width*height over max_pixels
 * (PP_ERR_LIMIT), naming path. Call with the header's size, before any pixel
 * buffer is allocated. */
pp_status pp_io_check_size(const char *path, size_t width, size_t height, size_t max_pixels);

/* Weights for samples 0, 1, 2 (R, G, B) of a colour image: fills w[3] for
 * the channel opt->channel, or refuses with PP_ERR_UNSUPPORTED naming path,
 * the colour kind (e.g. "RGB", "palette") and the setting (by
 * opt->setting_names) when it is PP_CHANNEL_NONE. */
pp_status pp_io_colour_weights(const char *path, const char *kind, const pp_read_options *opt,
                               double w[3]);

/* Clears *info (when not NULL) and sets pages = 1. */
void pp_io_info_clear(pp_read_info *info);

#endif
