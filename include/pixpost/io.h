/* pixpost — reading and writing frames (PNG and TIFF).
 *
 * Reading: grayscale PNG (8 and 16 bit) and TIFF (8/16/32-bit unsigned and
 * 32-bit float; strips or tiles; any libtiff compression). Colour input is
 * refused with PP_ERR_UNSUPPORTED unless a channel is chosen. A multi-page
 * TIFF gives the page asked for (page 0 by default) and reports the page
 * count, so the caller can say which page it used. The frame size is checked
 * against max_pixels before any pixel buffer is allocated.
 *
 * Writing: 32-bit float TIFF (values as they are) and 16-bit grayscale PNG
 * with a linear scale: stored = round((value - offset) / scale), clipped to
 * 0..65535, so value ~ offset + stored * scale. Every writer writes to a
 * temporary name in the target's folder and renames it into place, so a
 * failed write never leaves a partial file under the final name.
 */
#ifndef PIXPOST_IO_H
#define PIXPOST_IO_H

#include <stddef.h>
#include "pixpost/image.h"

typedef enum pp_channel {
    PP_CHANNEL_NONE = 0, /* grayscale only: colour is an error */
    PP_CHANNEL_R,
    PP_CHANNEL_G,
    PP_CHANNEL_B,
    PP_CHANNEL_LUMA /* Rec. 709 luma 0.2126 R + 0.7152 G + 0.0722 B */
} pp_channel;

typedef struct pp_read_options {
    pp_channel channel; /* what to take from a colour image */
    size_t max_pixels;  /* refuse larger frames (default PP_DEFAULT_MAX_PIXELS) */
    unsigned page;      /* TIFF page (directory) to read, 0-based */
    /* How messages name the settings (include/pixpost/setting.h): a
     * PP_SET_COUNT table kept by the caller, e.g. a command line's flags;
     * NULL (default): the library's words. */
    const char *const *setting_names;
} pp_read_options;

typedef struct pp_read_info {
    unsigned pages;        /* pages in the file (1 for PNG) */
    unsigned bits;         /* bits per sample as stored */
    int is_float;          /* samples were floating point */
    int was_colour;        /* the file was colour and a channel was taken */
    size_t nonfinite;      /* NaN/Inf pixels found (float TIFF) */
} pp_read_info;

/* Fills *opt (not NULL) with the defaults: grayscale only, max_pixels
 * PP_DEFAULT_MAX_PIXELS, page 0, the library's words. Never fails;
 * thread-safe. */
void pp_read_options_defaults(pp_read_options *opt);

/* Parses "r", "g", "b" or "luma" into *out (not NULL). s may be NULL
 * (refused). Errors: PP_ERR_ARG, *out unchanged, the message naming the
 * setting by setting_names (a PP_SET_COUNT table, include/pixpost/
 * setting.h; NULL: "channel") and the accepted words. Thread-safe. */
pp_status pp_channel_parse(const char *s, const char *const *setting_names, pp_channel *out);

/* Reads page opt->page of a PNG or TIFF, chosen by the file's signature
 * (not its name), as a frame (depth 1; a z-stack's pages one at a time).
 * path, out: not NULL; opt may be NULL (defaults); info may be NULL (not
 * reported). *out receives a new image owned by the caller (pp_image_free),
 * NULL on failure. The file is only read. Errors, the message naming path
 * and what to do: PP_ERR_IO (cannot open or read), PP_ERR_FORMAT (empty,
 * not PNG or TIFF, corrupt), PP_ERR_ARG (opt->page past the file's pages:
 * info->pages still says how many), PP_ERR_UNSUPPORTED (colour
 * without opt->channel, a sample format not listed above), PP_ERR_LIMIT
 * (over opt->max_pixels, checked before the pixels are allocated),
 * PP_ERR_NOMEM. Thread-safe (libtiff and libpng are used with per-call
 * state only). */
pp_status pp_image_read(const char *path, const pp_read_options *opt,
                        pp_image **out, pp_read_info *info);

/* Writes img (not NULL) to path (not NULL) as a 32-bit float, single page,
 * uncompressed TIFF (values as they are, NaN kept), atomically: a
 * temporary file in path's folder renamed over path, so path holds either
 * its old content or the whole new file. A volume's first slice only
 * (pp_output_write writes volumes as OME-TIFF). Errors, naming path:
 * PP_ERR_LIMIT (a side over 2^32 - 1), PP_ERR_IO (cannot create, write or
 * rename; the temporary file is removed), PP_ERR_NOMEM. Thread-safe for
 * different paths. */
pp_status pp_tiff_write_f32(const char *path, const pp_image *img);


#endif
