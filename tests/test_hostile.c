/* Regression tests for bugs found by the hardening work (issue 9), through
 * the library directly:
 *  - a bead image with values near DBL_MAX: the centroid sums overflowed to
 *    inf, the centroid became NaN and was cast to size_t (undefined
 *    behaviour); now the bead is scaled by its peak first;
 *  - an all-negative or pure-noise "bead" gave a kernel made of background
 *    noise without a word; now refused naming the file;
 *  - a PNG declaring width 0 said only "Invalid IHDR data"; now libpng's
 *    warning saying which field is wrong is part of the message;
 *  - header-declared huge frames (PNG and TIFF) are refused by size, before
 *    any allocation, with PP_ERR_LIMIT.
 * Every file is written here (float TIFFs with pp_tiff_write_f32, the PNGs
 * byte by byte with CRCs from a local CRC-32, ISO/IEC 15948 annex D). */
#include "pixpost/io.h"
#include "pixpost/psf.h"
#include "testutil.h"
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include <tiffio.h>

static const char *tmp_dir; /* pp_test_tmpdir() once: each call empties it */

static const char *path_of(const char *name)
{
    static char buf[4096];
    snprintf(buf, sizeof buf, "%s/%s", tmp_dir, name);
    return buf;
}

/* Writes a w x h 64-bit float TIFF filled by f(i, j) (libtiff directly:
 * pixpost itself writes only 32-bit floats). */
static void write_bead(const char *path, size_t w, size_t h, double (*f)(size_t, size_t))
{
    TIFF *t = TIFFOpen(path, "w");
    CHECK(t != NULL, "libtiff opens %s for writing", path);
    if (!t)
        return;
    TIFFSetField(t, TIFFTAG_IMAGEWIDTH, (uint32_t)w);
    TIFFSetField(t, TIFFTAG_IMAGELENGTH, (uint32_t)h);
    TIFFSetField(t, TIFFTAG_SAMPLESPERPIXEL, 1);
    TIFFSetField(t, TIFFTAG_BITSPERSAMPLE, 64);
    TIFFSetField(t, TIFFTAG_SAMPLEFORMAT, SAMPLEFORMAT_IEEEFP);
    TIFFSetField(t, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(t, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
    TIFFSetField(t, TIFFTAG_ROWSPERSTRIP, (uint32_t)h);
    double row[64];
    for (size_t i = 0; i < h && w <= 64; i++) {
        for (size_t j = 0; j < w; j++)
            row[j] = f(i, j);
        CHECK(TIFFWriteScanline(t, row, (uint32_t)i, 0) >= 0, "scanline %zu of %s", i, path);
    }
    TIFFClose(t);
}

static double gauss_at(size_t i, size_t j, double ci, double cj)
{
    double dy = (double)i - ci, dx = (double)j - cj;
    return exp(-(dx * dx + dy * dy) / (2 * 1.3 * 1.3));
}

static double huge_bead(size_t i, size_t j)
{
    return 0.5 * DBL_MAX * gauss_at(i, j, 6, 6); /* any two of them sum to inf */
}
static double negative_bead(size_t i, size_t j)
{
    return -gauss_at(i, j, 6, 6);
}
static double noise_bead(size_t i, size_t j)
{
    uint64_t x = (i * 131 + j * 7 + 1) * 0x9E3779B97F4A7C15ull;
    x ^= x >> 29;
    return 100.0 + (double)(x % 1000) / 1000.0; /* uniform-ish noise, no bead */
}
static double offcentre_bead(size_t i, size_t j)
{
    return 10.0 + 500.0 * gauss_at(i, j, 4, 15); /* background 10, bead at row 4 col 15 */
}

/* Sum and centroid of a kernel (relative to its centre pixel). */
static void kernel_moments(const pp_image *k, double *sum, double *cy, double *cx)
{
    double s = 0, sy = 0, sx = 0, r = (double)(k->width / 2);
    for (size_t i = 0; i < k->height; i++)
        for (size_t j = 0; j < k->width; j++) {
            double v = k->data[i * k->width + j];
            s += v;
            sy += v * ((double)i - r);
            sx += v * ((double)j - r);
        }
    *sum = s;
    *cy = sy / s;
    *cx = sx / s;
}

static void test_beads(void)
{
    pp_psf_spec s;
    pp_image *k = NULL;
    char spec[4200];
    double sum, cy, cx;

    /* DBL_MAX-scale values: the old centroid sums overflowed to inf */
    write_bead(path_of("huge.tif"), 13, 13, huge_bead);
    snprintf(spec, sizeof spec, "file:%s", path_of("huge.tif"));
    CHECK(pp_psf_parse(spec, NULL, &s) == PP_OK, "parse %s", spec);
    pp_status st = pp_psf_make(&s, 0, &k);
    CHECK(st == PP_OK && k, "huge-valued bead accepted: %s", pp_error_message());
    if (k) {
        kernel_moments(k, &sum, &cy, &cx);
        CHECK(fabs(sum - 1) < 1e-12 && fabs(cy) < 0.01 && fabs(cx) < 0.01,
              "huge-valued bead: kernel sum 1 (%.17g), centred (%g, %g)", sum, cy, cx);
        pp_image_free(k);
        k = NULL;
    }

    write_bead(path_of("negative.tif"), 13, 13, negative_bead);
    snprintf(spec, sizeof spec, "file:%s", path_of("negative.tif"));
    pp_psf_parse(spec, NULL, &s);
    st = pp_psf_make(&s, 0, &k);
    CHECK(st == PP_ERR_FORMAT && !k && strstr(pp_error_message(), "negative.tif") &&
              strstr(pp_error_message(), "bead"),
          "all-negative bead refused naming the file: %s", pp_error_message());

    write_bead(path_of("noise.tif"), 15, 15, noise_bead);
    snprintf(spec, sizeof spec, "file:%s", path_of("noise.tif"));
    pp_psf_parse(spec, NULL, &s);
    st = pp_psf_make(&s, 0, &k);
    CHECK(st == PP_ERR_FORMAT && !k && strstr(pp_error_message(), "noise.tif"),
          "pure-noise 'bead' refused naming the file: %s", pp_error_message());

    /* off-centre bead: the kernel is re-centred on the centroid */
    write_bead(path_of("offcentre.tif"), 20, 12, offcentre_bead);
    snprintf(spec, sizeof spec, "file:%s", path_of("offcentre.tif"));
    pp_psf_parse(spec, NULL, &s);
    st = pp_psf_make(&s, 0, &k);
    CHECK(st == PP_OK && k && k->width % 2 == 1 && k->width == k->height,
          "off-centre bead accepted as an odd square: %s", pp_error_message());
    if (k) {
        kernel_moments(k, &sum, &cy, &cx);
        /* the window is clipped by the image edge, so the centroid may move
         * by the truncated tail only: 0.05 px is ~20x what a 1.3 px Gaussian
         * 4 px from the edge loses (exp(-4.7) tail mass, common practice) */
        CHECK(fabs(sum - 1) < 1e-12 && fabs(cy) < 0.05 && fabs(cx) < 0.05,
              "off-centre bead: kernel sum 1, centroid at the centre (%g, %g)", cy, cx);
        pp_image_free(k);
    }
}

static void test_png_headers(void)
{
    pp_image *img = (pp_image *)1;
    pp_test_write_png_header(path_of("w0.png"), 0, 16);
    pp_status st = pp_image_read(path_of("w0.png"), NULL, &img, NULL);
    CHECK(st == PP_ERR_FORMAT && !img && strstr(pp_error_message(), "w0.png") &&
              strstr(pp_error_message(), "width is zero"),
          "PNG of width 0: the message says which field: %s", pp_error_message());

    img = (pp_image *)1;
    pp_test_write_png_header(path_of("huge.png"), 100000, 100000);
    st = pp_image_read(path_of("huge.png"), NULL, &img, NULL);
    CHECK(st == PP_ERR_LIMIT && !img && strstr(pp_error_message(), "100000x100000"),
          "PNG declaring 100000x100000 refused by size before reading data: %s",
          pp_error_message());

    /* just under a lowered limit: refused for the missing data, not the size */
    pp_read_options o;
    pp_read_options_defaults(&o);
    o.max_pixels = 100;
    img = (pp_image *)1;
    pp_test_write_png_header(path_of("h11.png"), 11, 10);
    st = pp_image_read(path_of("h11.png"), &o, &img, NULL);
    CHECK(st == PP_ERR_LIMIT && !img, "11x10 PNG over max_pixels 100 refused: %s",
          pp_error_message());
    pp_test_write_png_header(path_of("h10.png"), 10, 10);
    st = pp_image_read(path_of("h10.png"), &o, &img, NULL);
    CHECK(st == PP_ERR_FORMAT && !img && strstr(pp_error_message(), "h10.png"),
          "10x10 PNG header without pixel data: a format error naming the file: %s",
          pp_error_message());
}

/* A gray TIFF with hundreds of samples per pixel: small in pixels, large
 * per decoded strip. The strip buffer is bounded by the --max-pixels budget
 * (8 bytes per pixel), so it is refused before the allocation (fuzz_tiff
 * once found 8449 samples asking for a 4.75 GB strip). */
static void test_tiff_many_samples(void)
{
    enum { W = 64, H = 4, SPP = 300 };
    const char *path = path_of("spp300.tif");
    TIFF *t = TIFFOpen(path, "w");
    CHECK(t != NULL, "libtiff opens %s for writing", path);
    if (!t)
        return;
    TIFFSetField(t, TIFFTAG_IMAGEWIDTH, (uint32_t)W);
    TIFFSetField(t, TIFFTAG_IMAGELENGTH, (uint32_t)H);
    TIFFSetField(t, TIFFTAG_SAMPLESPERPIXEL, SPP);
    TIFFSetField(t, TIFFTAG_BITSPERSAMPLE, 16);
    TIFFSetField(t, TIFFTAG_PHOTOMETRIC, PHOTOMETRIC_MINISBLACK);
    TIFFSetField(t, TIFFTAG_PLANARCONFIG, PLANARCONFIG_CONTIG);
    TIFFSetField(t, TIFFTAG_ROWSPERSTRIP, (uint32_t)H);
    static uint16_t row[W * SPP];
    for (uint32_t i = 0; i < H; i++)
        CHECK(TIFFWriteScanline(t, row, i, 0) >= 0, "scanline %u of %s", (unsigned)i, path);
    TIFFClose(t);
    pp_read_options o;
    pp_read_options_defaults(&o);
    o.max_pixels = 1000; /* budget 8000 bytes; the strip is 64*4*300*2 = 153600 */
    pp_image *img = (pp_image *)1;
    pp_status st = pp_image_read(path, &o, &img, NULL);
    CHECK(st == PP_ERR_LIMIT && !img && strstr(pp_error_message(), "spp300.tif") &&
              strstr(pp_error_message(), "300 samples per pixel"),
          "TIFF strip of 300 samples per pixel over the budget refused: %s", pp_error_message());
}

int main(void)
{
    tmp_dir = pp_test_tmpdir();
    test_beads();
    test_png_headers();
    test_tiff_many_samples();
    return pp_test_done();
}
