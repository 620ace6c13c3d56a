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

void pp_read_options_defaults(pp_read_options *opt);

/* Parses "r", "g", "b" or "luma"; a refusal names the setting by
 * setting_names (a PP_SET_COUNT table, include/pixpost/setting.h; NULL:
 * "channel"). */
pp_status pp_channel_parse(const char *s, const char *const *setting_names, pp_channel *out);

/* Reads a PNG or TIFF, chosen by the file's signature (not its name). opt
 * may be NULL (defaults); info may be NULL. On failure *out is NULL. */
pp_status pp_image_read(const char *path, const pp_read_options *opt,
                        pp_image **out, pp_read_info *info);
pp_status pp_png_read(const char *path, const pp_read_options *opt,
                      pp_image **out, pp_read_info *info);
pp_status pp_tiff_read(const char *path, const pp_read_options *opt,
                       pp_image **out, pp_read_info *info);

/* Number of pages (directories) of a TIFF file. */
pp_status pp_tiff_count_pages(const char *path, unsigned *pages);

/* 32-bit float, single page, uncompressed TIFF, atomically. */
pp_status pp_tiff_write_f32(const char *path, const pp_image *img);

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
