/* pixpost — the libtiff handle opener shared by the TIFF files (io_tiff.c,
 * io_stack.c, io_ome_write.c) only; not installed, not used elsewhere.
 * Each handle gets its own silent error and warning handlers (libtiff never
 * prints; the first error text is kept for our message). */
#ifndef PIXPOST_IO_TIFF_INTERNAL_H
#define PIXPOST_IO_TIFF_INTERNAL_H

#include <tiffio.h>

/* The first error libtiff reported on one handle. */
typedef struct tiff_msg {
    char text[256];
    int have;
} tiff_msg;

/* Opens path in libtiff's mode ("r", "w", "w8") with silent handlers that
 * write into *m, which must outlive the handle. NULL on failure, with
 * m->text set when libtiff said why. */
TIFF *pp_tiff_open_silent(const char *path, const char *mode, tiff_msg *m);

#endif
