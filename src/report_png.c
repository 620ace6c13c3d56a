/* pixpost — the report's images: 8-bit PNGs encoded in memory with libpng
 * (png_set_write_fn into a growing buffer) and written as base64 data URIs,
 * mapped over the robust range of src/display.h, and pixpost's own colour
 * ramp.
 *
 * Cost per image: one pass to map and encode; memory: the encoded PNG plus
 * one row. Images with a side longer than PP_REPORT_MAX_SIDE are shown as
 * block means. libpng
 * reports errors by longjmp: the encoder keeps its allocations in volatile
 * locals and frees them on that path. */
#include "internal.h"
#include "report_internal.h"
#include <math.h>
#include <png.h>
#include <setjmp.h>
#include <stdlib.h>
#include <string.h>

/* The ramp: dark navy, through a muted blue and a sand grey, to a warm
 * yellow. Luminance rises at every step, so the order of values reads the
 * same in grey print. Our own choice of points. */
static const struct {
    double pos;
    unsigned char rgb[3];
} ramp[PP_REPORT_RAMP_STOPS] = {
    {0.00, {14, 22, 62}},
    {0.35, {38, 92, 150}},
    {0.70, {168, 160, 118}},
    {1.00, {250, 228, 84}},
};

void pp_report_ramp_stop(int k, double *pos, unsigned char rgb[3])
{
    *pos = ramp[k].pos;
    memcpy(rgb, ramp[k].rgb, 3);
}

void pp_report_ramp(double t, unsigned char rgb[3])
{
    if (!(t > 0.0))
        t = 0.0; /* also NaN */
    if (t > 1.0)
        t = 1.0;
    int k = 0;
    while (k < PP_REPORT_RAMP_STOPS - 2 && t > ramp[k + 1].pos)
        k++;
    double u = (t - ramp[k].pos) / (ramp[k + 1].pos - ramp[k].pos);
    for (int c = 0; c < 3; c++) {
        double v = ramp[k].rgb[c] + u * (ramp[k + 1].rgb[c] - ramp[k].rgb[c]);
        rgb[c] = (unsigned char)lround(v);
    }
}

unsigned char pp_report_grey(double t)
{
    double s = isfinite(t) ? round(255.0 * t) : 0.0;
    return (unsigned char)(s < 0 ? 0 : s > 255 ? 255 : s);
}

size_t pp_report_block(const pp_image *img)
{
    size_t side = img->width > img->height ? img->width : img->height;
    return (side + PP_REPORT_MAX_SIDE - 1) / PP_REPORT_MAX_SIDE;
}

/* A growing byte buffer for libpng's write callback. */
typedef struct membuf {
    unsigned char *data;
    size_t len, cap;
} membuf;

static void mem_write(png_structp png, png_bytep bytes, png_size_t n)
{
    membuf *b = png_get_io_ptr(png);
    if (b->len + n > b->cap) {
        size_t cap = b->cap ? b->cap : 4096;
        while (cap < b->len + n)
            cap *= 2;
        unsigned char *d = realloc(b->data, cap);
        if (!d)
            png_error(png, "out of memory");
        b->data = d;
        b->cap = cap;
    }
    memcpy(b->data + b->len, bytes, n);
    b->len += n;
}

static void mem_flush(png_structp png)
{
    (void)png;
}

static void on_error(png_structp png, png_const_charp msg)
{
    (void)msg;
    png_longjmp(png, 1);
}

static void on_warning(png_structp png, png_const_charp msg)
{
    (void)png;
    (void)msg;
}

/* Mean of the finite pixels of the k x k block at block (br, bc); NaN when
 * there are none. */
static double block_mean(const pp_image *img, size_t k, size_t br, size_t bc)
{
    double sum = 0;
    size_t cnt = 0;
    for (size_t r = br * k; r < (br + 1) * k && r < img->height; r++)
        for (size_t c = bc * k; c < (bc + 1) * k && c < img->width; c++) {
            double v = img->data[r * img->width + c];
            if (isfinite(v)) {
                sum += v;
                cnt++;
            }
        }
    return cnt ? sum / (double)cnt : NAN;
}

/* The rows of an image mapped for the page: img shown as k x k block means
 * (k = pp_report_block), linear from lo to hi, grey or the ramp. */
typedef struct mapped {
    const pp_image *img;
    size_t k;
    double lo, hi;
    int colour;
} mapped;

/* Fills output row br (w pixels, 1 or 3 bytes each) of a mapped image. */
static void map_row(const void *ctx, size_t br, size_t w, unsigned char *row)
{
    const mapped *m = ctx;
    for (size_t bc = 0; bc < w; bc++) {
        double v =
            m->k == 1 ? m->img->data[br * m->img->width + bc] : block_mean(m->img, m->k, br, bc);
        double t = (v - m->lo) / (m->hi - m->lo);
        if (m->colour)
            pp_report_ramp(t, row + 3 * bc);
        else
            row[bc] = pp_report_grey(t);
    }
}

/* Row br of w grey bytes stored row by row. */
static void copy_row(const void *ctx, size_t br, size_t w, unsigned char *row)
{
    memcpy(row, (const unsigned char *)ctx + br * w, w);
}

typedef void (*row_fn)(const void *ctx, size_t r, size_t w, unsigned char *row);

/* Encodes a w x h 8-bit PNG (grey, or RGB when colour) whose rows fill()
 * makes, into b (b->data owned by the caller after). */
static pp_status encode(size_t w, size_t h, int colour, row_fn fill, const void *ctx, membuf *b)
{
    png_structp png = png_create_write_struct(PNG_LIBPNG_VER_STRING, NULL, on_error, on_warning);
    png_infop pi = png ? png_create_info_struct(png) : NULL;
    unsigned char *volatile row = NULL;
    if (!pi) {
        png_destroy_write_struct(&png, NULL);
        return pp_fail(PP_ERR_NOMEM, "report: out of memory for the PNG encoder");
    }
    if (setjmp(png_jmpbuf(png))) {
        free(row);
        png_destroy_write_struct(&png, &pi);
        return pp_fail(PP_ERR_NOMEM, "report: PNG encoding failed (out of memory)");
    }
    png_set_write_fn(png, b, mem_write, mem_flush);
    png_set_IHDR(png, pi, (png_uint_32)w, (png_uint_32)h, 8,
                 colour ? PNG_COLOR_TYPE_RGB : PNG_COLOR_TYPE_GRAY, PNG_INTERLACE_NONE,
                 PNG_COMPRESSION_TYPE_DEFAULT, PNG_FILTER_TYPE_DEFAULT);
    png_write_info(png, pi);
    row = malloc(w * (colour ? 3 : 1));
    if (!row)
        png_error(png, "out of memory");
    for (size_t r = 0; r < h; r++) {
        fill(ctx, r, w, row);
        png_write_row(png, row);
    }
    png_write_end(png, pi);
    free(row);
    png_destroy_write_struct(&png, &pi);
    return PP_OK;
}

static void base64(FILE *f, const unsigned char *d, size_t n)
{
    static const char a[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    for (size_t i = 0; i < n; i += 3) {
        unsigned v = (unsigned)d[i] << 16;
        if (i + 1 < n)
            v |= (unsigned)d[i + 1] << 8;
        if (i + 2 < n)
            v |= d[i + 2];
        char q[4] = {a[(v >> 18) & 63], a[(v >> 12) & 63], i + 1 < n ? a[(v >> 6) & 63] : '=',
                     i + 2 < n ? a[v & 63] : '='};
        fwrite(q, 1, 4, f);
    }
}

/* Writes the data URI of the PNG that encode() makes. */
static pp_status write_uri(FILE *f, size_t w, size_t h, int colour, row_fn fill, const void *ctx)
{
    membuf b = {NULL, 0, 0};
    pp_status st = encode(w, h, colour, fill, ctx, &b);
    if (st == PP_OK) {
        fputs("data:image/png;base64,", f);
        base64(f, b.data, b.len);
    }
    free(b.data);
    return st;
}

pp_status pp_report_png_uri(FILE *f, const pp_image *img, double lo, double hi, int colour)
{
    if (!(hi > lo))
        return pp_fail(PP_ERR_ARG, "report: image mapping needs hi > lo (got %g, %g)", lo, hi);
    size_t k = pp_report_block(img);
    mapped m = {img, k, lo, hi, colour};
    return write_uri(f, (img->width + k - 1) / k, (img->height + k - 1) / k, colour, map_row, &m);
}

pp_status pp_report_png_uri_grey8(FILE *f, const unsigned char *px, size_t w, size_t h)
{
    return write_uri(f, w, h, 0, copy_row, px);
}
