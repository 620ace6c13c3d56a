/* pixpost — PNG frames through libpng: reading grayscale (1..16 bit; gray +
 * alpha loses its alpha; palette and RGB count as colour and need a
 * channel) and writing 16-bit grayscale with a linear scale.
 *
 * Cost: reading decodes row by row into one row buffer (the whole raw image
 * only for interlaced files, which need every pass), plus the frame of
 * doubles; writing uses one 2-byte-per-pixel row. libpng reports errors by
 * longjmp: the functions holding a setjmp keep their allocations in
 * volatile locals and free them on the error path. */
#include "internal.h"
#include "io_internal.h"
#include "pixpost/io.h"
#include "pixpost/io_extra.h"
#include <errno.h>
#include <math.h>
#include <png.h>
#include <setjmp.h>
#include <stdlib.h>
#include <string.h>

/* What libpng said: the error (filled by on_error, read after the longjmp)
 * and the last warning before it, which often says what the error means (libpng
 * warns "Image width is zero in IHDR", then errors "Invalid IHDR data"). */
typedef struct png_msg {
    char text[512];
    char warning[200];
} png_msg;

static void on_error(png_structp png, png_const_charp msg)
{
    png_msg *m = png_get_error_ptr(png);
    if (m->warning[0])
        snprintf(m->text, sizeof m->text, "%s (%s)", msg ? msg : "libpng error", m->warning);
    else
        snprintf(m->text, sizeof m->text, "%s", msg ? msg : "libpng error");
    png_longjmp(png, 1);
}

static void on_warning(png_structp png, png_const_charp msg)
{
    png_msg *m = png_get_error_ptr(png); /* kept for an error's message only */
    if (m && msg)
        snprintf(m->warning, sizeof m->warning, "%s", msg);
}

/* The decoding plan fixed from the header. */
typedef struct png_plan {
    png_uint_32 width, height;
    int depth;    /* bits per sample after the transforms: 8 or 16 */
    int channels; /* 1 (gray) or 3 (colour) after the transforms */
    double w[3];  /* channel weights for colour */
    int passes;   /* 1, or 7 for an interlaced file */
    size_t rowbytes;
} png_plan;

/* Reads the header, checks size and colour against opt and sets the
 * transforms. Runs under the caller's setjmp. */
static pp_status png_setup(png_structp png, png_infop pi, const char *path,
                           const pp_read_options *opt, png_plan *p, pp_read_info *info)
{
    png_set_sig_bytes(png, 8);
    png_set_user_limits(png, PNG_UINT_31_MAX, PNG_UINT_31_MAX); /* max_pixels decides */
    png_read_info(png, pi);
    int depth, type;
    png_get_IHDR(png, pi, &p->width, &p->height, &depth, &type, NULL, NULL, NULL);
    pp_status st = pp_io_check_size(path, p->width, p->height, opt->max_pixels);
    if (st != PP_OK)
        return st;
    if (info)
        info->bits = (unsigned)depth;
    if (type & PNG_COLOR_MASK_COLOR) {
        st = pp_io_colour_weights(path, type == PNG_COLOR_TYPE_PALETTE ? "palette" : "RGB",
                                  opt, p->w);
        if (st != PP_OK)
            return st;
        if (info)
            info->was_colour = 1;
    }
    if (type == PNG_COLOR_TYPE_PALETTE)
        png_set_palette_to_rgb(png);
    else if (depth < 8)
        png_set_packing(png); /* one byte per sample, value kept (0..2^depth-1) */
    if (type & PNG_COLOR_MASK_ALPHA)
        png_set_strip_alpha(png); /* transparency is not intensity */
    p->passes = png_set_interlace_handling(png);
    png_read_update_info(png, pi);
    p->depth = png_get_bit_depth(png, pi);
    p->channels = png_get_channels(png, pi);
    p->rowbytes = png_get_rowbytes(png, pi);
    if ((p->channels != 1 && p->channels != 3) || (p->depth != 8 && p->depth != 16))
        return pp_fail(PP_ERR_FORMAT, "%s: unexpected PNG layout (%d channels, %d bits)", path,
                       p->channels, p->depth);
    return PP_OK;
}

/* Sample k of a decoded row (big-endian for 16 bit). */
static double png_sample(const unsigned char *row, int depth, size_t k)
{
    if (depth == 16)
        return (double)((row[2 * k] << 8) | row[2 * k + 1]);
    return (double)row[k];
}

static void png_convert_row(const png_plan *p, const unsigned char *row, double *dst)
{
    for (size_t x = 0; x < p->width; x++) {
        if (p->channels == 1) {
            dst[x] = png_sample(row, p->depth, x);
        } else {
            dst[x] = p->w[0] * png_sample(row, p->depth, 3 * x) +
                     p->w[1] * png_sample(row, p->depth, 3 * x + 1) +
                     p->w[2] * png_sample(row, p->depth, 3 * x + 2);
        }
    }
}

/* Decodes the whole file (read from fp) into *out; on failure nothing is
 * left allocated and *out is untouched. */
static pp_status png_decode(png_structp png, png_infop pi, FILE *fp, const char *path,
                            const pp_read_options *opt, pp_image **out, pp_read_info *info,
                            png_msg *m)
{
    pp_image *volatile img = NULL;
    unsigned char *volatile raw = NULL;
    png_plan p;
    if (setjmp(png_jmpbuf(png))) {
        free(raw);
        pp_image_free(img);
        if (feof(fp))
            return pp_fail(PP_ERR_FORMAT, "%s: truncated PNG (the file ends early)", path);
        return pp_fail(PP_ERR_FORMAT, "%s: not a readable PNG: %s", path, m->text);
    }
    pp_status st = png_setup(png, pi, path, opt, &p, info);
    if (st != PP_OK)
        return st;
    pp_image *im = NULL;
    st = pp_image_create(p.height, p.width, &im);
    if (st != PP_OK)
        return pp_fail(st, "%s: %s", path, pp_error_message());
    img = im;
    size_t rows = p.passes > 1 ? p.height : 1, bytes;
    if (!pp_mul_ok(rows, p.rowbytes, &bytes) || !(raw = malloc(bytes))) {
        pp_image_free(img);
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for decoding", path);
    }
    for (int pass = 0; pass < p.passes; pass++) {
        for (size_t y = 0; y < p.height; y++) {
            unsigned char *row = raw + (p.passes > 1 ? y * p.rowbytes : 0);
            png_read_row(png, row, NULL);
            if (pass == p.passes - 1)
                png_convert_row(&p, row, img->data + y * p.width);
        }
    }
    png_read_end(png, NULL); /* checks the trailing chunks and CRCs too */
    free(raw);
    *out = img;
    return PP_OK;
}

pp_status pp_png_read(const char *path, const pp_read_options *opt, pp_image **out,
                      pp_read_info *info)
{
    *out = NULL;
    pp_io_info_clear(info);
    pp_read_options o = pp_io_options(opt);
    FILE *fp = fopen(path, "rb");
    if (!fp)
        return pp_fail(PP_ERR_IO, "%s: cannot open: %s", path, strerror(errno));
    unsigned char sig[8];
    size_t n = fread(sig, 1, 8, fp);
    if (n == 0 || png_sig_cmp(sig, 0, n) != 0 || n < 8) {
        fclose(fp);
        if (n == 0)
            return pp_fail(PP_ERR_FORMAT, "%s: empty file (0 bytes), not a PNG", path);
        return pp_fail(PP_ERR_FORMAT, "%s: %s", path,
                       png_sig_cmp(sig, 0, n) ? "not a PNG file (bad signature)"
                                              : "truncated PNG (file ends in the signature)");
    }
    png_msg m = {"", ""};
    png_structp png = png_create_read_struct(PNG_LIBPNG_VER_STRING, &m, on_error, on_warning);
    png_infop pi = png ? png_create_info_struct(png) : NULL;
    if (!pi) {
        png_destroy_read_struct(&png, NULL, NULL);
        fclose(fp);
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for the PNG reader", path);
    }
    png_init_io(png, fp);
    pp_status st = png_decode(png, pi, fp, path, &o, out, info, &m);
    png_destroy_read_struct(&png, &pi, NULL);
    fclose(fp);
    return st;
}

/* Stored 16-bit value of v: round((v - offset)/scale) clipped to 0..65535;
 * NaN is stored as 0. */
static unsigned png_store(double v, double offset, double scale)
{
    double s = round((v - offset) / scale);
    if (!(s > 0.0))
        return 0;
    return s > 65535.0 ? 65535u : (unsigned)s;
}

/* Writes img to the open temporary fp. Frees its own row buffer. */
static pp_status png_encode(FILE *fp, const char *path, const pp_image *img, double offset,
                            double scale)
{
    png_msg m = {"", ""};
    png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, &m, on_error, on_warning);
    png_infop pi = png ? png_create_info_struct(png) : NULL;
    unsigned char *volatile row = pi ? malloc(2 * img->width) : NULL;
    if (!row) { /* before libpng's error path, which reports I/O errors */
        png_destroy_write_struct(&png, pi ? &pi : NULL);
        return pp_fail(PP_ERR_NOMEM, "%s: out of memory for the PNG writer", path);
    }
    if (setjmp(png_jmpbuf(png))) {
        free(row);
        png_destroy_write_struct(&png, &pi);
        return pp_fail(PP_ERR_IO, "%s: cannot write PNG: %s", path, m.text);
    }
    png_init_io(png, fp);
    png_set_IHDR(png, pi, (png_uint_32)img->width, (png_uint_32)img->height, 16,
                 PNG_COLOR_TYPE_GRAY, PNG_INTERLACE_NONE, PNG_COMPRESSION_TYPE_DEFAULT,
                 PNG_FILTER_TYPE_DEFAULT);
    png_write_info(png, pi);
    for (size_t y = 0; y < img->height; y++) {
        const double *src = img->data + y * img->width;
        for (size_t x = 0; x < img->width; x++) {
            unsigned s = png_store(src[x], offset, scale);
            row[2 * x] = (unsigned char)(s >> 8);
            row[2 * x + 1] = (unsigned char)(s & 0xff);
        }
        png_write_row(png, row);
    }
    png_write_end(png, pi);
    free(row);
    png_destroy_write_struct(&png, &pi);
    return PP_OK;
}

pp_status pp_png_write16(const char *path, const pp_image *img, double offset, double scale)
{
    if (!(scale > 0.0) || !isfinite(scale) || !isfinite(offset))
        return pp_fail(PP_ERR_ARG,
                       "%s: PNG scale must be finite and > 0 (got offset %g, "
                       "scale %g)",
                       path, offset, scale);
    if (img->width > PNG_UINT_31_MAX || img->height > PNG_UINT_31_MAX)
        return pp_fail(PP_ERR_LIMIT, "%s: %zux%zu is too large for PNG", path, img->width,
                       img->height);
    char tmp[PP_PATH_MAX];
    FILE *fp;
    pp_status st = pp_atomic_open(path, tmp, &fp);
    if (st != PP_OK)
        return st;
    st = png_encode(fp, path, img, offset, scale);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, fp);
        return st;
    }
    return pp_atomic_commit(path, tmp, fp);
}

void pp_png_auto_scale(const pp_image *img, double *offset, double *scale)
{
    double lo, hi;
    pp_image_range(img, &lo, &hi);
    /* divided first so that hi - lo cannot overflow for extreme values */
    double s = hi / 65535.0 - lo / 65535.0;
    *offset = lo;
    *scale = (s > 0.0 && isfinite(s)) ? s : 1.0;
}
