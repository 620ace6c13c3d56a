/* pixpost — stacks of planes: every page of a multi-page TIFF read into one
 * array with its shape and OME-TIFF metadata, and the multi-page 32-bit
 * float OME-TIFF writer for volumes.
 *
 * Layout: a stack of P pages of H x W has shape {P, H, W} (one axis order
 * everywhere, slowest first: include/pixpost/shape.h), row-major doubles,
 * page k at data + k * H * W; a single page has shape {H, W}. What the pages
 * are (z-slices, time points or channels) is not decided here: the OME
 * metadata says it when present (pp_ome_page maps (z, c, t) to a page), the
 * caller otherwise. Limits: every page is checked against max_pixels as a
 * frame is, and the whole stack against size_t overflow before allocation.
 */
#ifndef PIXPOST_STACK_H
#define PIXPOST_STACK_H

#include "pixpost/io.h"
#include "pixpost/ome.h"
#include "pixpost/shape.h"

typedef struct pp_stack {
    pp_shape shape;  /* {pages, height, width}, or {height, width} for one page */
    double *data;    /* owned; row-major, slowest axis first */
    pp_ome_meta ome; /* the first page's OME-XML (ome.present = 0 without it) */
} pp_stack;

/* The page count and OME metadata of an image file, without reading pixels.
 * A PNG, or a file libtiff cannot open, counts as 1 page without metadata
 * (reading it then says what is wrong). With OME-XML, checks it against the
 * file: SizeX x SizeY must be the first page's size and SizeZ x SizeC x
 * SizeT its page count, else PP_ERR_FORMAT naming path and both counts.
 * Malformed OME-XML: PP_ERR_FORMAT naming path (pp_ome_parse). */
pp_status pp_stack_probe(const char *path, unsigned *pages, pp_ome_meta *ome);

/* Reads every page of path (PNG: its one frame) into *out with
 * pp_image_read's options (channel, max_pixels; opt->page is ignored). All
 * pages must have the first page's size (PP_ERR_FORMAT naming the page
 * otherwise). info, when not NULL, describes page 0 except `nonfinite`,
 * which counts over all pages. On failure *out is NULL. */
pp_status pp_stack_read(const char *path, const pp_read_options *opt, pp_stack **out,
                        pp_read_info *info);

/* Copies page k of s into a new frame *out (caller frees). */
pp_status pp_stack_page(const pp_stack *s, size_t k, pp_image **out);

/* Frees s and its data; NULL is accepted. */
void pp_stack_free(pp_stack *s);

/* Writes data of the given shape (rank 2: one page; rank 3: n[0] pages)
 * as an uncompressed multi-page 32-bit float TIFF whose first page carries
 * OME-XML (pp_ome_format: SizeZ = pages, DimensionOrder XYZCT, physical
 * sizes voxel[0..2] = z, y, x in micrometres where > 0; voxel may be NULL),
 * so that OME-TIFF readers open it as one volume. name becomes the Image
 * name (may be NULL). Atomic as every writer of io.h: a temporary file in
 * the target's folder renamed into place; BigTIFF only past 3.5e9 bytes. */
pp_status pp_ome_tiff_write_f32(const char *path, const pp_shape *shape, const double *data,
                                const double voxel[3], const char *name);

#endif
