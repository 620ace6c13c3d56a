/* pixpost — the libtiff handle opener shared by the TIFF files (io_tiff.c,
 * io_stack.c, io_ome_write.c) only, and their float writer; not installed, not used elsewhere.
 * Each handle gets its own silent error and warning handlers (libtiff never
 * prints; the first error text is kept for our message). */
#ifndef PIXPOST_IO_TIFF_INTERNAL_H
#define PIXPOST_IO_TIFF_INTERNAL_H

#include <tiffio.h>
#include "pixpost/io.h"

/* The first error libtiff reported on one handle. */
typedef struct tiff_msg {
    char text[256];
    int have;
} tiff_msg;

/* Opens path in libtiff's mode ("r", "w", "w8") with silent handlers that
 * write into *m, which must outlive the handle. NULL on failure, with
 * m->text set when libtiff said why. */
TIFF *pp_tiff_open_silent(const char *path, const char *mode, tiff_msg *m);

/* The 32-bit float writers' shared part (io_tiff.c's single frame,
 * io_ome_write.c's pages): sets the tags of an h x w one-sample float
 * image on the current directory and writes data (h x w doubles, rounded
 * to float) one scanline at a time through row (w floats). The caller sets
 * any further tags first and ends the directory or file after. */
pp_status pp_tiff_write_f32_rows(TIFF *t, const char *path, const double *data, size_t h,
                                 size_t w, float *row, const tiff_msg *m);

/* Called by pp_tiff_read_pages for page k (decoded into img, borrowed for
 * the call; its read info in *info). A status other than PP_OK stops the
 * walk and is returned. */
typedef pp_status (*pp_tiff_page_fn)(void *ctx, unsigned k, const pp_image *img,
                                     const pp_read_info *info);

/* Decodes every page of the TIFF at path in order, each as pp_tiff_read
 * would (same options, checks and messages; opt->page is ignored), in one
 * pass over the directory chain, and hands each to fn. */
pp_status pp_tiff_read_pages(const char *path, const pp_read_options *opt, pp_tiff_page_fn fn,
                             void *ctx);

/* PP_ERR_IO "PATH: write failed: <libtiff's text> (<errno text>)". */
pp_status pp_tiff_write_failed(const char *path, const tiff_msg *m, int e);

#endif
