/* pixpost — multi-page 32-bit float OME-TIFF writer (include/pixpost/
 * stack.h): one uncompressed page per z-slice, the OME-XML (ome.c) in the
 * first page's ImageDescription, so that OME-TIFF readers open the file as
 * one volume with its voxel size. Cost: one float row per scanline; the
 * file is written under a temporary name and renamed into place. */
#include "internal.h"
#include "io_tiff_internal.h"
#include "pixpost/stack.h"
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Bytes of OME-XML room: the fixed text is under 1 kB; the name is
 * escaped at most 6 bytes per character. */
#define OME_XML_FIXED 2048

/* Writes page k (h x w floats from data) as the current directory. */
static pp_status write_page(TIFF *t, const char *path, const double *data, size_t h, size_t w,
                            size_t pages, const char *xml, float *row, const tiff_msg *m)
{
    if (pages > 1)
        TIFFSetField(t, TIFFTAG_SUBFILETYPE, FILETYPE_PAGE);
    if (xml)
        TIFFSetField(t, TIFFTAG_IMAGEDESCRIPTION, xml);
    pp_status st = pp_tiff_write_f32_rows(t, path, data, h, w, row, m);
    errno = 0;
    if (st == PP_OK && !TIFFWriteDirectory(t))
        st = pp_tiff_write_failed(path, m, errno);
    return st;
}

static pp_status write_all(TIFF *t, const char *path, const pp_shape *s, const double *data,
                           const char *xml, const tiff_msg *m)
{
    size_t pages = s->rank == 3 ? s->n[0] : 1, h = s->n[s->rank - 2], w = s->n[s->rank - 1];
    float *row = malloc(w * sizeof *row);
    if (!row)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for a TIFF row", path);
    pp_status st = PP_OK;
    for (size_t k = 0; k < pages && st == PP_OK; k++)
        st = write_page(t, path, data + k * h * w, h, w, pages, k == 0 ? xml : NULL, row, m);
    free(row);
    return st;
}

pp_status pp_ome_tiff_write_f32(const char *path, const pp_shape *shape, const double *data,
                                const double voxel[3], const char *name)
{
    size_t count;
    pp_status st = pp_shape_count(shape, sizeof(float), &count);
    if (st != PP_OK || shape->rank < 2)
        return pp_fail(PP_ERR_ARG,
                       "%s: the OME-TIFF writer takes a frame or a volume (rank 2 "
                       "or 3)",
                       path);
    size_t pages = shape->rank == 3 ? shape->n[0] : 1;
    size_t h = shape->n[shape->rank - 2], w = shape->n[shape->rank - 1];
    if (w > UINT32_MAX || h > UINT32_MAX || pages > 65535)
        return pp_fail(PP_ERR_LIMIT, "%s: %zu x %zux%zu is too large for TIFF", path, pages, h, w);
    size_t len = OME_XML_FIXED + 6 * (name ? strlen(name) : 0);
    char *xml = malloc(len), tmp[PP_PATH_MAX];
    if (!xml)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for the OME-XML", path);
    st = pp_ome_format(pages, h, w, voxel, name, xml, len);
    if (st == PP_OK)
        st = pp_atomic_reserve(path, tmp);
    if (st != PP_OK) {
        free(xml);
        return st;
    }
    tiff_msg m;
    errno = 0;
    TIFF *t = pp_tiff_open_silent(tmp, 4.0 * (double)count > 3.5e9 ? "w8" : "w", &m);
    if (!t) {
        int e = errno;
        remove(tmp);
        free(xml);
        return pp_tiff_write_failed(path, &m, e);
    }
    st = write_all(t, path, shape, data, xml, &m);
    TIFFClose(t);
    free(xml);
    if (st != PP_OK) {
        remove(tmp);
        return st;
    }
    return pp_atomic_rename(tmp, path);
}
