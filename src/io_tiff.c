/* pixpost — TIFF frames through libtiff: reading one page (8/16/32-bit
 * integer, 32/64-bit float; strips or tiles; contiguous or separate planes;
 * any compression and byte order libtiff decodes) and writing 32-bit float.
 *
 * Every handle is opened with TIFFOpenExt and per-handle error and warning
 * handlers, so libtiff never prints and the first error text goes into our
 * message (thread-safe: no global handler is touched).
 * Cost: reading decodes one strip or tile at a time into one block buffer,
 * plus the frame of doubles (colour types other than RGB go through
 * libtiff's RGBA reader: 4 more bytes per pixel); writing uses one float row
 * per scanline, uncompressed. Page counting walks the directory chain. */
#include "internal.h"
#include "io_internal.h"
#include "io_tiff_internal.h"
#include "pixpost/io.h"
#include "pixpost/io_extra.h"
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <tiffio.h>

static int on_error(TIFF *tif, void *user, const char *module, const char *fmt, va_list ap)
{
    (void)tif;
    (void)module;
    tiff_msg *m = user;
    if (m && !m->have) {
        vsnprintf(m->text, sizeof m->text, fmt, ap);
        m->have = 1;
    }
    return 1; /* handled: the global (printing) handler is not called */
}

static int on_warning(TIFF *tif, void *user, const char *module, const char *fmt, va_list ap)
{
    (void)tif, (void)user, (void)module, (void)fmt, (void)ap;
    return 1; /* silent */
}

TIFF *pp_tiff_open_silent(const char *path, const char *mode, tiff_msg *m)
{
    memset(m, 0, sizeof *m);
    TIFFOpenOptions *o = TIFFOpenOptionsAlloc();
    if (!o) {
        snprintf(m->text, sizeof m->text, "out of memory");
        return NULL;
    }
    TIFFOpenOptionsSetErrorHandlerExtR(o, on_error, m);
    TIFFOpenOptionsSetWarningHandlerExtR(o, on_warning, m);
    TIFF *t = TIFFOpenExt(path, mode, o);
    TIFFOpenOptionsFree(o);
    return t;
}

static const char *msg_or(const tiff_msg *m, const char *fallback)
{
    return m->have || m->text[0] ? m->text : fallback;
}

/* Checks that path can be opened for reading, so that a missing file is an
 * I/O error, not a format error. */
static pp_status check_readable(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return pp_fail(PP_ERR_IO, "%s: cannot open: %s", path, strerror(errno));
    int c = fgetc(fp);
    fclose(fp);
    if (c == EOF)
        return pp_fail(PP_ERR_FORMAT, "%s: empty file (0 bytes), not a TIFF", path);
    return PP_OK;
}

/* Opens path for reading after the cheap checks (exists, not empty); m
 * collects libtiff's messages for as long as *t is open. */
/* Opens path for reading and counts its pages (directories). */
static pp_status open_reader(const char *path, tiff_msg *m, TIFF **t, unsigned *pages)
{
    pp_status st = check_readable(path);
    if (st != PP_OK)
        return st;
    *t = pp_tiff_open_silent(path, "r", m);
    if (!*t)
        return pp_fail(PP_ERR_FORMAT, "%s: not a readable TIFF (corrupt or truncated): %s", path,
                       msg_or(m, "libtiff cannot open it"));
    *pages = TIFFNumberOfDirectories(*t);
    return PP_OK;
}

pp_status pp_tiff_count_pages(const char *path, unsigned *pages)
{
    *pages = 0;
    tiff_msg m;
    TIFF *t;
    pp_status st = open_reader(path, &m, &t, pages);
    if (st != PP_OK)
        return st;
    TIFFClose(t);
    return PP_OK;
}

/* How the samples of the current page are laid out and combined. */
typedef struct tiff_layout {
    uint32_t width, height;
    uint16_t spp, bps, fmt;
    int separate; /* PLANARCONFIG_SEPARATE */
    int nw;       /* samples 0..nw-1 are used ... */
    double w[3];  /* ... with these weights */
} tiff_layout;

/* One sample at p, as double. */
static double tiff_value(const unsigned char *p, const tiff_layout *L)
{
    if (L->fmt == SAMPLEFORMAT_IEEEFP) {
        if (L->bps == 32) {
            float f;
            memcpy(&f, p, 4);
            return f;
        }
        double d;
        memcpy(&d, p, 8);
        return d;
    }
    int sgn = L->fmt == SAMPLEFORMAT_INT;
    switch (L->bps) {
    case 8:
        return sgn ? (double)(int8_t)p[0] : (double)p[0];
    case 16: {
        uint16_t u;
        memcpy(&u, p, 2);
        return sgn ? (double)(int16_t)u : (double)u;
    }
    default: {
        uint32_t u;
        memcpy(&u, p, 4);
        return sgn ? (double)(int32_t)u : (double)u;
    }
    }
}

/* Strips and tiles both read as blocks of bw x bh pixels. */
typedef struct tiff_blocks {
    int tiled;
    uint32_t bw, bh;
    size_t rowbytes, bufbytes;
} tiff_blocks;

static pp_status tiff_block_shape(TIFF *t, const char *path, const tiff_layout *L,
                                  const pp_read_options *opt, tiff_blocks *B)
{
    B->tiled = TIFFIsTiled(t);
    if (B->tiled) {
        if (!TIFFGetField(t, TIFFTAG_TILEWIDTH, &B->bw) ||
            !TIFFGetField(t, TIFFTAG_TILELENGTH, &B->bh))
            return pp_fail(PP_ERR_FORMAT, "%s: tiled TIFF without a tile size", path);
        B->rowbytes = (size_t)TIFFTileRowSize64(t);
        B->bufbytes = (size_t)TIFFTileSize64(t);
    } else {
        uint32_t rps = L->height;
        TIFFGetFieldDefaulted(t, TIFFTAG_ROWSPERSTRIP, &rps);
        B->bw = L->width;
        B->bh = rps == 0 || rps > L->height ? L->height : rps;
        B->rowbytes = (size_t)TIFFScanlineSize64(t);
        B->bufbytes = (size_t)TIFFStripSize64(t);
    }
    size_t px, budget;
    if (B->bw == 0 || B->bh == 0 || !pp_mul_ok(B->bw, B->bh, &px) || px > opt->max_pixels ||
        B->rowbytes == 0 || B->bufbytes < B->rowbytes)
        return pp_fail(PP_ERR_FORMAT, "%s: bad %s layout (%ux%u)", path,
                       B->tiled ? "tile" : "strip", (unsigned)B->bw, (unsigned)B->bh);
    /* One decoded block may not take more memory than the largest frame
     * allowed (8 bytes per pixel of the limit): a header with thousands
     * of samples per pixel would otherwise ask for gigabytes (found by
     * fuzz_tiff: 8449 samples of 16 bits, a 4.75 GB strip). */
    if (!pp_mul_ok(opt->max_pixels, sizeof(double), &budget) || B->bufbytes > budget)
        return pp_fail(PP_ERR_LIMIT,
                       "%s: one TIFF %s decodes to %zu bytes (%u samples per pixel), more than "
                       "the pixel limit allows (%zu bytes: 8 per pixel of the limit)",
                       path, B->tiled ? "tile" : "strip", B->bufbytes, (unsigned)L->spp, budget);
    return PP_OK;
}

/* Adds w * sample k of the decoded block at (x0, y0) into img. */
static void tiff_add_block(const tiff_layout *L, const tiff_blocks *B, const unsigned char *buf,
                           uint32_t x0, uint32_t y0, int k, pp_image *img)
{
    size_t bytes = L->bps / 8;
    size_t stride = L->separate ? bytes : bytes * L->spp;
    size_t first = L->separate ? 0 : bytes * (size_t)k;
    uint32_t nx = L->width - x0 < B->bw ? L->width - x0 : B->bw;
    uint32_t ny = L->height - y0 < B->bh ? L->height - y0 : B->bh;
    for (uint32_t r = 0; r < ny; r++) {
        const unsigned char *src = buf + r * B->rowbytes + first;
        double *dst = img->data + (size_t)(y0 + r) * L->width + x0;
        for (uint32_t c = 0; c < nx; c++)
            dst[c] += L->w[k] * tiff_value(src + c * stride, L);
    }
}

/* Decodes block (x0, y0) of sample plane k into buf. */
static pp_status tiff_read_block(TIFF *t, const char *path, const tiff_layout *L,
                                 const tiff_blocks *B, uint32_t x0, uint32_t y0, int k,
                                 unsigned char *buf, const tiff_msg *m)
{
    uint16_t plane = L->separate ? (uint16_t)k : 0;
    uint32_t ny = L->height - y0 < B->bh ? L->height - y0 : B->bh;
    tmsize_t got;
    if (B->tiled)
        got = TIFFReadEncodedTile(t, TIFFComputeTile(t, x0, y0, 0, plane), buf,
                                  (tmsize_t)B->bufbytes);
    else
        got = TIFFReadEncodedStrip(t, TIFFComputeStrip(t, y0, plane), buf, (tmsize_t)B->bufbytes);
    if (got < 0 || (size_t)got < (size_t)ny * B->rowbytes)
        return pp_fail(PP_ERR_FORMAT, "%s: corrupt or truncated TIFF data at row %u: %s", path,
                       (unsigned)y0, msg_or(m, "short read"));
    return PP_OK;
}

/* Reads every block of the page into img. */
static pp_status tiff_read_blocks(TIFF *t, const char *path, const tiff_layout *L,
                                  const pp_read_options *opt, pp_image *img, const tiff_msg *m)
{
    tiff_blocks B;
    pp_status st = tiff_block_shape(t, path, L, opt, &B);
    if (st != PP_OK)
        return st;
    unsigned char *buf = malloc(B.bufbytes);
    if (!buf)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for a TIFF block", path);
    int passes = L->separate ? L->nw : 1;
    for (int k = 0; k < passes && st == PP_OK; k++) {
        for (uint32_t y = 0; y < L->height && st == PP_OK; y += B.bh) {
            for (uint32_t x = 0; x < L->width && st == PP_OK; x += B.bw) {
                st = tiff_read_block(t, path, L, &B, x, y, k, buf, m);
                for (int j = L->separate ? k : 0; st == PP_OK && j < (L->separate ? k + 1 : L->nw);
                     j++)
                    tiff_add_block(L, &B, buf, x, y, j, img);
            }
        }
    }
    free(buf);
    return st;
}

/* Colour types other than RGB (palette, YCbCr, CMYK...), 8-bit only, through
 * libtiff's RGBA reader; the weights pick from its R, G, B. */
static pp_status tiff_read_rgba(TIFF *t, const char *path, const tiff_layout *L, pp_image *img,
                                const tiff_msg *m)
{
    char why[1024] = "";
    if (!TIFFRGBAImageOK(t, why))
        return pp_fail(PP_ERR_UNSUPPORTED, "%s: colour TIFF libtiff cannot convert: %s", path, why);
    size_t n = (size_t)L->width * L->height;
    uint32_t *rgba = malloc(n * sizeof *rgba);
    if (!rgba)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for colour conversion", path);
    if (!TIFFReadRGBAImageOriented(t, L->width, L->height, rgba, ORIENTATION_TOPLEFT, 0)) {
        free(rgba);
        return pp_fail(PP_ERR_FORMAT, "%s: corrupt or truncated colour TIFF: %s", path,
                       msg_or(m, "conversion failed"));
    }
    for (size_t i = 0; i < n; i++)
        img->data[i] =
            L->w[0] * TIFFGetR(rgba[i]) + L->w[1] * TIFFGetG(rgba[i]) + L->w[2] * TIFFGetB(rgba[i]);
    free(rgba);
    return PP_OK;
}

static const char *photometric_name(uint16_t photo)
{
    switch (photo) {
    case PHOTOMETRIC_RGB:
        return "RGB";
    case PHOTOMETRIC_PALETTE:
        return "palette";
    case PHOTOMETRIC_YCBCR:
        return "YCbCr";
    case PHOTOMETRIC_SEPARATED:
        return "CMYK";
    case PHOTOMETRIC_CIELAB:
        return "CIE L*a*b*";
    default:
        return "colour";
    }
}

/* Fills *L from the current page's tags; *rgba is set when the page needs
 * libtiff's RGBA conversion. */
static pp_status tiff_layout_get(TIFF *t, const char *path, const pp_read_options *opt,
                                 tiff_layout *L, int *rgba, pp_read_info *info)
{
    uint16_t planar = PLANARCONFIG_CONTIG, photo;
    memset(L, 0, sizeof *L);
    TIFFGetField(t, TIFFTAG_IMAGEWIDTH, &L->width);
    TIFFGetField(t, TIFFTAG_IMAGELENGTH, &L->height);
    TIFFGetFieldDefaulted(t, TIFFTAG_SAMPLESPERPIXEL, &L->spp);
    TIFFGetFieldDefaulted(t, TIFFTAG_BITSPERSAMPLE, &L->bps);
    TIFFGetFieldDefaulted(t, TIFFTAG_SAMPLEFORMAT, &L->fmt);
    TIFFGetFieldDefaulted(t, TIFFTAG_PLANARCONFIG, &planar);
    if (!TIFFGetField(t, TIFFTAG_PHOTOMETRIC, &photo))
        photo = L->spp >= 3 ? PHOTOMETRIC_RGB : PHOTOMETRIC_MINISBLACK;
    L->separate = planar == PLANARCONFIG_SEPARATE;
    pp_status st = pp_io_check_size(path, L->width, L->height, opt->max_pixels);
    if (st != PP_OK)
        return st;
    if (info) {
        info->bits = L->bps;
        info->is_float = L->fmt == SAMPLEFORMAT_IEEEFP;
    }
    *rgba = 0;
    if (photo == PHOTOMETRIC_MINISBLACK || photo == PHOTOMETRIC_MINISWHITE) {
        L->nw = 1; /* stored values as they are; extra samples (alpha) are ignored */
        L->w[0] = 1.0;
    } else {
        st = pp_io_colour_weights(path, photometric_name(photo), opt, L->w);
        if (st != PP_OK)
            return st;
        if (info)
            info->was_colour = 1;
        L->nw = 3;
        *rgba = photo != PHOTOMETRIC_RGB || L->spp < 3;
        if (*rgba && L->bps != 8)
            return pp_fail(PP_ERR_UNSUPPORTED, "%s: %u-bit %s TIFF is not supported", path,
                           (unsigned)L->bps, photometric_name(photo));
        if (*rgba)
            return PP_OK;
    }
    int ok = L->fmt == SAMPLEFORMAT_IEEEFP ? (L->bps == 32 || L->bps == 64)
             : L->fmt == SAMPLEFORMAT_UINT || L->fmt == SAMPLEFORMAT_INT
                 ? (L->bps == 8 || L->bps == 16 || L->bps == 32)
                 : 0;
    if (!ok || L->spp < L->nw)
        return pp_fail(PP_ERR_UNSUPPORTED,
                       "%s: %u-bit samples of format %u (%u per pixel) are not supported; "
                       "use 8/16/32-bit integer or 32/64-bit float",
                       path, (unsigned)L->bps, (unsigned)L->fmt, (unsigned)L->spp);
    return PP_OK;
}

/* Decodes the current page into *out. */
static pp_status tiff_decode(TIFF *t, const char *path, const pp_read_options *opt, pp_image **out,
                             pp_read_info *info, const tiff_msg *m)
{
    tiff_layout L;
    int rgba;
    pp_status st = tiff_layout_get(t, path, opt, &L, &rgba, info);
    if (st != PP_OK)
        return st;
    pp_image *img;
    st = pp_image_create(L.height, L.width, &img);
    if (st != PP_OK)
        return pp_fail(st, "%s: %s", path, pp_error_message());
    st = rgba ? tiff_read_rgba(t, path, &L, img, m) : tiff_read_blocks(t, path, &L, opt, img, m);
    if (st != PP_OK) {
        pp_image_free(img);
        return st;
    }
    if (info && L.fmt == SAMPLEFORMAT_IEEEFP) {
        size_t n = L.width * (size_t)L.height;
        for (size_t i = 0; i < n; i++)
            info->nonfinite += !isfinite(img->data[i]);
    }
    *out = img;
    return PP_OK;
}

pp_status pp_tiff_read(const char *path, const pp_read_options *opt, pp_image **out,
                       pp_read_info *info)
{
    *out = NULL;
    pp_io_info_clear(info);
    pp_read_options o = pp_io_options(opt);
    tiff_msg m;
    TIFF *t;
    unsigned pages;
    pp_status st = open_reader(path, &m, &t, &pages);
    if (st != PP_OK)
        return st;
    if (info)
        info->pages = pages;
    if (o.page >= pages)
        st = pp_fail(PP_ERR_ARG,
                     "%s: page %u asked for, but the file has %u page(s), "
                     "counted from 0",
                     path, o.page, pages);
    else if (o.page > 0 && !TIFFSetDirectory(t, (tdir_t)o.page))
        st = pp_fail(PP_ERR_FORMAT, "%s: cannot read page %u: %s", path, o.page,
                     msg_or(&m, "bad directory"));
    else
        st = tiff_decode(t, path, &o, out, info, &m);
    TIFFClose(t);
    return st;
}

pp_status pp_tiff_read_pages(const char *path, const pp_read_options *opt, pp_tiff_page_fn fn,
                             void *ctx)
{
    pp_read_options o = pp_io_options(opt);
    tiff_msg m;
    TIFF *t;
    unsigned pages;
    pp_status st = open_reader(path, &m, &t, &pages);
    if (st != PP_OK)
        return st;
    for (unsigned k = 0; st == PP_OK && k < pages; k++) {
        if (k > 0 && !TIFFReadDirectory(t)) {
            st = pp_fail(PP_ERR_FORMAT, "%s: cannot read page %u: %s", path, k,
                         msg_or(&m, "bad directory"));
            break;
        }
        pp_read_info info;
        pp_io_info_clear(&info);
        info.pages = pages;
        pp_image *img = NULL;
        o.page = k;
        st = tiff_decode(t, path, &o, &img, &info, &m);
        if (st == PP_OK)
            st = fn(ctx, k, img, &info);
        pp_image_free(img);
    }
    TIFFClose(t);
    return st;
}

/* libtiff's text plus the system's reason (a full disk says "No space left
 * on device", a file-size limit "File too large"); e is errno right after
 * the failing call, 0 when none was set. */
pp_status pp_tiff_write_failed(const char *path, const tiff_msg *m, int e)
{
    return pp_fail(PP_ERR_IO, "%s: write failed: %s%s%s%s", path, msg_or(m, "libtiff error"),
                   e ? " (" : "", e ? strerror(e) : "", e ? ")" : "");
}

pp_status pp_tiff_write_f32_rows(TIFF *t, const char *path, const double *data, size_t h,
                                 size_t w, float *row, const tiff_msg *m)
{
    TIFFSetField(t, TIFFTAG_IMAGEWIDTH, (uint32_t)w);
    TIFFSetField(t, TIFFTAG_IMAGELENGTH, (uint32_t)h);
    TIFFSetField(t, TIFFTAG_SAMPLESPERPIXEL, 1);
    TIFFSetField(t, TIFFTAG_BITSPERSAMPLE, 32);
    TIFFSetField(t, TIFFTAG_SAMPLEFORMAT, SAMPLEFORMAT_IEEEFP);
    TIFFSetField(t, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(t, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
    TIFFSetField(t, TIFFTAG_COMPRESSION, COMPRESSION_NONE);
    TIFFSetField(t, TIFFTAG_ROWSPERSTRIP, TIFFDefaultStripSize(t, 0));
    errno = 0;
    for (size_t y = 0; y < h; y++) {
        for (size_t x = 0; x < w; x++)
            row[x] = (float)data[y * w + x];
        if (TIFFWriteScanline(t, row, (uint32_t)y, 0) < 0)
            return pp_tiff_write_failed(path, m, errno);
    }
    return PP_OK;
}

/* Writes img into the open handle t, one float scanline at a time. */
static pp_status tiff_encode(TIFF *t, const char *path, const pp_image *img, const tiff_msg *m)
{
    float *row = malloc(img->width * sizeof *row);
    if (!row)
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for a TIFF row", path);
    pp_status st = pp_tiff_write_f32_rows(t, path, img->data, img->height, img->width, row, m);
    free(row);
    errno = 0;
    if (st == PP_OK && !TIFFFlush(t))
        st = pp_tiff_write_failed(path, m, errno);
    return st;
}

pp_status pp_tiff_write_f32(const char *path, const pp_image *img)
{
    if (img->width > UINT32_MAX || img->height > UINT32_MAX)
        return pp_fail(PP_ERR_LIMIT, "%s: %zux%zu is too large for TIFF", path, img->width,
                       img->height);
    char tmp[PP_PATH_MAX];
    pp_status st = pp_atomic_reserve(path, tmp);
    if (st != PP_OK)
        return st;
    /* BigTIFF ("w8") only when classic 32-bit offsets could not hold the data */
    double bytes = 4.0 * (double)img->width * (double)img->height;
    tiff_msg m;
    errno = 0;
    TIFF *t = pp_tiff_open_silent(tmp, bytes > 3.5e9 ? "w8" : "w", &m);
    if (!t) {
        int e = errno;
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: cannot write TIFF: %s%s%s%s", path,
                       msg_or(&m, "libtiff cannot open it"), e ? " (" : "", e ? strerror(e) : "",
                       e ? ")" : "");
    }
    st = tiff_encode(t, path, img, &m);
    TIFFClose(t);
    if (st != PP_OK) {
        remove(tmp);
        return st;
    }
    return pp_atomic_rename(tmp, path);
}
