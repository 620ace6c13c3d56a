/* pixpost — minimal multi-page TIFF volumes (include/pixpost/tiffstack.h).
 *
 * Reading goes page by page through pp_tiff_read, so every check of the
 * frame reader applies to each page. Writing is its own small libtiff loop
 * (one directory per slice, float scanlines). Cost: one pass over the data.
 */
#include "internal.h"
#include "pixpost/io.h"
#include "pixpost/tiffstack.h"
#include <errno.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <tiffio.h>

pp_status pp_tiff_stack_read(const char *path, pp_shape *shape, double **data)
{
    *data = NULL;
    unsigned pages = 0;
    pp_status st = pp_tiff_count_pages(path, &pages);
    if (st != PP_OK)
        return st;
    pp_read_options opt;
    pp_read_options_defaults(&opt);
    double *v = NULL;
    size_t ny = 0, nx = 0;
    for (unsigned p = 0; p < pages && st == PP_OK; p++) {
        pp_image *img = NULL;
        opt.page = p;
        if ((st = pp_tiff_read(path, &opt, &img, NULL)) != PP_OK)
            break;
        if (p == 0) {
            ny = img->height, nx = img->width;
            *shape = pp_shape_3d(pages, ny, nx);
            size_t count;
            if ((st = pp_shape_count(shape, sizeof *v, &count)) == PP_OK &&
                !(v = malloc(count * sizeof *v)))
                st = pp_fail(PP_ERR_NOMEM, "%s: out of memory for a %u-page stack", path, pages);
        } else if (img->height != ny || img->width != nx) {
            st = pp_fail(PP_ERR_FORMAT,
                         "%s: page %u is %zux%zu but page 0 is %zux%zu; a stack's pages must "
                         "all have one size",
                         path, p, img->width, img->height, nx, ny);
        }
        if (st == PP_OK)
            memcpy(v + (size_t)p * ny * nx, img->data, ny * nx * sizeof *v);
        pp_image_free(img);
    }
    if (st != PP_OK) {
        free(v);
        return st;
    }
    *data = v;
    return PP_OK;
}

static int quiet(TIFF *t, void *u, const char *m, const char *f, va_list ap)
{
    (void)t, (void)u, (void)m, (void)f, (void)ap;
    return 1; /* the library never prints */
}

static pp_status write_pages(TIFF *t, const char *path, const pp_shape *s, const double *data)
{
    size_t nz = s->n[0], ny = s->n[1], nx = s->n[2];
    float *row = malloc(nx * sizeof *row);
    if (!row)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for a TIFF row", path);
    pp_status st = PP_OK;
    for (size_t z = 0; z < nz && st == PP_OK; z++) {
        TIFFSetField(t, TIFFTAG_IMAGEWIDTH, (uint32_t)nx);
        TIFFSetField(t, TIFFTAG_IMAGELENGTH, (uint32_t)ny);
        TIFFSetField(t, TIFFTAG_SAMPLESPERPIXEL, 1);
        TIFFSetField(t, TIFFTAG_BITSPERSAMPLE, 32);
        TIFFSetField(t, TIFFTAG_SAMPLEFORMAT, SAMPLEFORMAT_IEEEFP);
        TIFFSetField(t, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
        TIFFSetField(t, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
        TIFFSetField(t, TIFFTAG_COMPRESSION, COMPRESSION_NONE);
        TIFFSetField(t, TIFFTAG_ROWSPERSTRIP, TIFFDefaultStripSize(t, 0));
        TIFFSetField(t, TIFFTAG_SUBFILETYPE, FILETYPE_PAGE);
        TIFFSetField(t, TIFFTAG_PAGENUMBER, (uint16_t)z, (uint16_t)nz);
        for (size_t y = 0; y < ny && st == PP_OK; y++) {
            for (size_t x = 0; x < nx; x++)
                row[x] = (float)data[(z * ny + y) * nx + x];
            if (TIFFWriteScanline(t, row, (uint32_t)y, 0) < 0)
                st = pp_fail(PP_ERR_IO, "%s: write failed (slice %zu): %s", path, z,
                             errno ? strerror(errno) : "libtiff error");
        }
        if (st == PP_OK && !TIFFWriteDirectory(t))
            st = pp_fail(PP_ERR_IO, "%s: write failed (slice %zu): %s", path, z,
                         errno ? strerror(errno) : "libtiff error");
    }
    free(row);
    return st;
}

pp_status pp_tiff_stack_write_f32(const char *path, const pp_shape *shape, const double *data)
{
    if (shape->rank != 3 || shape->n[0] > 65535 || shape->n[1] > UINT32_MAX ||
        shape->n[2] > UINT32_MAX)
        return pp_fail(PP_ERR_ARG,
                       "%s: a TIFF stack needs a rank-3 shape of at most 65535 "
                       "slices",
                       path);
    char tmp[PP_PATH_MAX];
    pp_status st = pp_atomic_reserve(path, tmp);
    if (st != PP_OK)
        return st;
    double bytes = 4.0 * (double)shape->n[0] * (double)shape->n[1] * (double)shape->n[2];
    TIFFOpenOptions *o = TIFFOpenOptionsAlloc();
    if (!o) {
        remove(tmp);
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory opening a TIFF", path);
    }
    TIFFOpenOptionsSetErrorHandlerExtR(o, quiet, NULL);
    TIFFOpenOptionsSetWarningHandlerExtR(o, quiet, NULL);
    errno = 0;
    TIFF *t = TIFFOpenExt(tmp, bytes > 3.5e9 ? "w8" : "w", o);
    TIFFOpenOptionsFree(o);
    if (!t) {
        int e = errno;
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: cannot write TIFF%s%s", path, e ? ": " : "",
                       e ? strerror(e) : "");
    }
    st = write_pages(t, path, shape, data);
    TIFFClose(t);
    if (st != PP_OK) {
        remove(tmp);
        return st;
    }
    return pp_atomic_rename(tmp, path);
}
