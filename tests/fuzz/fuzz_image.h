/* pixpost fuzzing — the one read-and-verify step shared by the frame-reader
 * targets (fuzz_png.c, fuzz_tiff.c). Checks beyond "no crash, no leak, no
 * UB": success gives an image of the declared size within the pixel limit;
 * failure leaves *out NULL and sets a message. Frames are capped at 2^20
 * pixels so a declared huge size must be refused before any large
 * allocation (libFuzzer's -rss_limit_mb catches it otherwise).
 * Cost: one decode and one pass over the decoded pixels per call. */
#ifndef PIXPOST_FUZZ_IMAGE_H
#define PIXPOST_FUZZ_IMAGE_H

#include "fuzz_file.h"
#include "pixpost/pixpost.h"

/* A frame reader: pp_image_read, pp_png_read or pp_tiff_read. */
typedef pp_status (*fuzz_reader)(const char *path, const pp_read_options *opt, pp_image **out,
                                 pp_read_info *info);

/* Default read options with the fuzzing pixel cap; the luma channel when
 * with_channel, else PP_CHANNEL_NONE; page 0. */
static pp_read_options fuzz_read_options(int with_channel)
{
    pp_read_options opt;
    pp_read_options_defaults(&opt);
    opt.max_pixels = (size_t)1 << 20;
    opt.channel = with_channel ? PP_CHANNEL_LUMA : PP_CHANNEL_NONE;
    return opt;
}

/* Reads fuzz_path() with read and opt (not NULL) and aborts if the reader
 * broke its contract; the image, if any, is freed here. */
static void fuzz_read_check(fuzz_reader read, const pp_read_options *opt)
{
    pp_image *img = (pp_image *)1; /* must come back NULL on failure */
    pp_read_info info;
    pp_status st = read(fuzz_path(), opt, &img, &info);
    if (st == PP_OK) {
        if (!img || img->width == 0 || img->height == 0 ||
            img->width * img->height > opt->max_pixels)
            abort();
        volatile double sum = 0; /* touches every pixel (ASan checks the buffer) */
        for (size_t i = 0; i < img->width * img->height; i++)
            sum += img->data[i];
        (void)sum;
        pp_image_free(img);
    } else if (img != NULL || !pp_error_message()[0]) {
        abort();
    }
}

#endif
