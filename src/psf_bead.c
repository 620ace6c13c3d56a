/* pixpost — measured bead images as PSFs (file:PATH): the border median is
 * taken as the background and subtracted, the image checked to be one
 * bead, everything outside the bead's support set to zero and negatives
 * clipped (bead_support), and the kernel centred on the bead's centroid.
 *
 * Is it one bead? The test refuses a whole cell image, a field of nuclei or
 * two beads, which the background handling alone would turn into a
 * "kernel" without a word. Criterion, on the background-subtracted image
 * scaled to peak 1 with the border's robust noise sd s (bead_clean):
 *  1. One spot (frames and bead stacks). Pixels at or above t = max(0.2, 4 s) are "bright" (a fifth
 *     of the peak, and clear of the noise: a pure-noise pixel exceeds 4 sd
 *     with probability 3e-5). The bright pixels 8-connected to the
 *     brightest one must hold at least 90 % of the bright pixels' summed
 *     value (26-connected in a stack). A second bead as bright as the first leaves 50 %; a field of
 *     nuclei a few %; a stray noise pixel or an Airy ring (its first ring
 *     peaks at 1.75 % of the centre, a textbook value, below t) costs
 *     nothing.
 *  2. Compact (frames only). The spot's width at half its peak, 2 sqrt(A / pi) with A the
 *     number of its pixels at or above 0.5, must be at most
 *     MAX_WIDTH (47 px, the FWHM of the widest gaussian PSF accepted,
 *     sigma 20 px). An in-focus bead sampled at the Nyquist pixel is about
 *     2 px wide (0.51 lambda/NA over lambda/(4 NA)); one round cell
 *     (scikit-image's data.cell(), a cell in a 660 x 550 image) measures
 *     105 px.
 * A test of "energy within a radius small against the kernel's size" was
 * tried and does not separate the cases: pixpost's own gaussian kernel
 * (radius 4 sigma) has 80 % of its sum within 0.45 of its half-width,
 * data.cell() within 0.16 (measured with numpy on the cleaned images).
 *
 * Cost: one read, a sort of the border (median), a few passes and one
 * flood fill per spot over the image (a stack of pixel indices, one byte
 * of marks per pixel); bead images are small.
 */
#include "internal.h"
#include "pixpost/io.h"
#include "psf_internal.h"
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

/* The FWHM of the widest gaussian PSF accepted: 47.1 px. */
#define MAX_WIDTH (2.0 * sqrt(2.0 * log(2.0)) * PP_PSF_SIGMA_MAX)
#define BRIGHT_FRACTION 0.2
#define BRIGHT_NOISE_SDS 4.0
#define ONE_SPOT_SHARE 0.9

/* The "bright" threshold of the one-spot test (criterion 1 above). */
static double bright_threshold(double noise_sd)
{
    return fmax(BRIGHT_FRACTION, BRIGHT_NOISE_SDS * noise_sd);
}

typedef struct spot {
    double sum;  /* summed value of its bright pixels */
    size_t half; /* its pixels at or above half the peak */
} spot;

/* Flood-fills the connected bright pixels from `seed` (8-connected in a
 * frame, 26-connected in a volume), marking them in mark[]; stack holds
 * one index per element. */
static spot fill(const pp_image *img, double t, size_t seed, uint8_t *mark, size_t *stack)
{
    size_t w = img->width, h = img->height, d = img->depth, top = 0;
    int zr = d > 1; /* look at the slices above and below */
    spot s = {0.0, 0};
    mark[seed] = 1;
    stack[top++] = seed;
    while (top) {
        size_t p = stack[--top], z = p / (w * h), i = (p / w) % h, j = p % w;
        s.sum += img->data[p];
        s.half += img->data[p] >= 0.5;
        for (int dz = -zr; dz <= zr; dz++)
            for (int di = -1; di <= 1; di++)
                for (int dj = -1; dj <= 1; dj++) {
                    if ((dz < 0 && z == 0) || (dz > 0 && z + 1 == d) || (di < 0 && i == 0) ||
                        (dj < 0 && j == 0) || (di > 0 && i + 1 == h) || (dj > 0 && j + 1 == w))
                        continue;
                    size_t q = (size_t)((long)p + (dz * (long)h + di) * (long)w + dj);
                    if (!mark[q] && img->data[q] >= t) {
                        mark[q] = 1;
                        stack[top++] = q;
                    }
                }
    }
    return s;
}

pp_status pp_psf_one_spot(const pp_image *img, double noise_sd, const char *path)
{
    size_t n = pp_image_count(img), peak = 0, spots = 0;
    for (size_t p = 1; p < n; p++)
        if (img->data[p] > img->data[peak])
            peak = p;
    double t = bright_threshold(noise_sd);
    uint8_t *mark = calloc(n, 1);
    size_t *stack = malloc(n * sizeof *stack);
    if (!mark || !stack) {
        free(mark);
        free(stack);
        return pp_fail(PP_ERR_NOMEM, "out of memory checking the PSF image %s", path);
    }
    spot main = fill(img, t, peak, mark, stack);
    double all = main.sum;
    spots = 1;
    for (size_t p = 0; p < n; p++)
        if (!mark[p] && img->data[p] >= t) {
            all += fill(img, t, p, mark, stack).sum;
            spots++;
        }
    free(mark);
    free(stack);
    double share = main.sum / all, width = 2.0 * sqrt((double)main.half / PP_PI);
    size_t plane = img->width * img->height, z = peak / plane, rc = peak % plane;
    if (share < ONE_SPOT_SHARE && img->depth > 1)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the PSF stack is not one bead: its voxels above %.2g of the peak "
                       "form %zu separate spots, and the one at the brightest voxel (slice %zu, "
                       "row %zu, column %zu, from 0) holds %.0f %% of their light (one bead: at "
                       "least %.0f %%); crop a single bead with dark background around it",
                       path, t, spots, z, rc / img->width, rc % img->width, 100.0 * share,
                       100.0 * ONE_SPOT_SHARE);
    if (share < ONE_SPOT_SHARE)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the PSF image is not one bead: its pixels above %.2g of the peak "
                       "form %zu separate spots, and the one at the brightest pixel (row %zu, "
                       "column %zu, from 0) holds %.0f %% of their light (one bead: at least %.0f %%); "
                       "crop a single bead with dark background around it",
                       path, t, spots, peak / img->width, peak % img->width, 100.0 * share,
                       100.0 * ONE_SPOT_SHARE);
    if (img->depth > 1)
        return PP_OK; /* compactness: frames only (see psf_bead3.c) */
    if (width > MAX_WIDTH)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the PSF image's spot is %.0f pixels across at half its peak, wider "
                       "than a bead image (at most %.0f, the width of a gaussian PSF of sigma "
                       "%g pixels); is it a cell or a whole frame rather than one bead?",
                       path, width, MAX_WIDTH, PP_PSF_SIGMA_MAX);
    return PP_OK;
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static double sorted_median(double *v, size_t m)
{
    qsort(v, m, sizeof *v, cmp_double);
    return m % 2 ? v[m / 2] : 0.5 * (v[m / 2 - 1] + v[m / 2]);
}

/* The number of pixels in the image's outermost ring. */
static size_t border_count(const pp_image *img)
{
    size_t w = img->width, h = img->height;
    return (h == 1 || w == 1) ? w * h : 2 * w + 2 * h - 4;
}

/* Median and median absolute deviation of the outermost ring of pixels (the
 * bead's background and its noise). */
static pp_status border_stats(const pp_image *img, double *med, double *mad)
{
    size_t w = img->width, h = img->height, n = border_count(img), m = 0;
    double *v = malloc(n * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for a PSF border");
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++)
            if (i == 0 || j == 0 || i == h - 1 || j == w - 1)
                v[m++] = img->data[i * w + j];
    *med = sorted_median(v, m);
    for (size_t i = 0; i < m; i++)
        v[i] = fabs(v[i] - *med);
    *mad = sorted_median(v, m);
    free(v);
    return PP_OK;
}

/* Subtracts the background med and divides by the peak (so that sums of
 * huge values cannot overflow); negatives are kept for now (bead_support
 * needs the unbiased values). Returns the peak above med (0 if none, inf if
 * the subtraction overflows). */
static double bead_subtract(pp_image *img, double med)
{
    size_t n = img->width * img->height;
    double peak = 0;
    for (size_t i = 0; i < n; i++) {
        double *p = &img->data[i];
        *p -= med;
        peak = *p > peak ? *p : peak;
    }
    if (peak > 0 && isfinite(peak))
        for (size_t i = 0; i < n; i++)
            img->data[i] /= peak;
    return peak;
}

/* Limits the bead to its support and clips negatives. Clipping alone keeps
 * the positive half of the background noise: on a 91 x 91 crop at peak /
 * noise sd 100 that pedestal held about 80 % of the kernel's sum, a broad
 * skirt the sampler would take for blur. The support is the disc around
 * the bead's centre (cy, cx: the centroid of the pixels at or above t)
 * out to the last one-pixel ring whose mean stands more than 4 standard
 * errors above zero, plus one ring. The standard error holds the ring's
 * own noise, noise_sd / sqrt(pixels in the ring), and that of the
 * subtracted background, bg_se (the border median's: 1.2533 noise_sd /
 * sqrt(border pixels) for Gaussian noise, the textbook large-sample
 * value); without the latter a wide ring far out crossed 4 errors on a
 * 91 x 91 crop at peak / noise 1000 (the median was 0.06 sd off). Cut at
 * the last ring with light, not the first without, so that an Airy
 * pattern keeps its bright rings beyond the first dark one. Beyond 4
 * standard errors a pure-noise ring is a 3e-5 event. On a noise-free image
 * (noise_sd 0) every ring with any light is kept, so pixpost's own kernels
 * pass through unchanged. */
static pp_status bead_support(pp_image *img, double noise_sd, double bg_se, double t)
{
    size_t w = img->width, h = img->height, n = w * h;
    double sy = 0, sx = 0, sw = 0;
    for (size_t p = 0; p < n; p++)
        if (img->data[p] >= t) {
            sw += img->data[p];
            sy += img->data[p] * (double)(p / w);
            sx += img->data[p] * (double)(p % w);
        }
    double cy = sy / sw, cx = sx / sw;
    size_t rings = (size_t)ceil(hypot((double)h, (double)w)) + 1;
    double *sum = calloc(rings, sizeof *sum), *cnt = calloc(rings, sizeof *cnt);
    if (!sum || !cnt) {
        free(sum);
        free(cnt);
        return pp_fail(PP_ERR_NOMEM, "out of memory for a PSF profile");
    }
    for (size_t p = 0; p < n; p++) {
        size_t b = (size_t)hypot((double)(p / w) - cy, (double)(p % w) - cx);
        sum[b] += img->data[p];
        cnt[b] += 1;
    }
    size_t last = 0;
    for (size_t b = 0; b < rings; b++)
        if (cnt[b] > 0 &&
            sum[b] / cnt[b] > 4.0 * sqrt(noise_sd * noise_sd / cnt[b] + bg_se * bg_se))
            last = b;
    free(sum);
    free(cnt);
    double radius = (double)last + 2.0; /* the rings 0..last, and one more */
    for (size_t p = 0; p < n; p++) {
        double *v = &img->data[p];
        if (*v < 0 || hypot((double)(p / w) - cy, (double)(p % w) - cx) >= radius)
            *v = 0.0;
    }
    return PP_OK;
}

/* Background-subtracts, limits to the bead's support and clips in place
 * (bead_support); returns the centroid pixel.
 * Refuses an image whose brightest pixel does not stand out from the border
 * by more than 5 robust standard deviations (1.4826 MAD, the Gaussian
 * consistency factor; a 5 sigma detection threshold is common practice, and
 * the largest of 10^6 pure-noise pixels is below it): such a "bead" is
 * noise or a negative image, and its kernel would be garbage. Then refuses
 * an image that is not one compact spot (one_spot). */
static pp_status bead_clean(pp_image *img, const char *path, size_t *ci, size_t *cj)
{
    size_t w = img->width, h = img->height;
    for (size_t i = 0; i < w * h; i++)
        if (!isfinite(img->data[i]))
            return pp_fail(PP_ERR_FORMAT, "%s: the PSF image has NaN/Inf pixels", path);
    double med = 0, mad = 0, sum = 0, sy = 0, sx = 0;
    pp_status st = border_stats(img, &med, &mad);
    if (st != PP_OK)
        return st;
    double peak = bead_subtract(img, med);
    if (!isfinite(peak))
        return pp_fail(PP_ERR_NUMERIC,
                       "%s: the PSF image's values are too large (subtracting "
                       "the border median overflows); rescale it",
                       path);
    if (!(peak > 0))
        return pp_fail(PP_ERR_FORMAT,
                       "%s: no pixel of the PSF image is above its border median; is it a "
                       "bead image?",
                       path);
    if (!(peak > 5.0 * 1.4826 * mad))
        return pp_fail(PP_ERR_FORMAT,
                       "%s: the brightest pixel of the PSF image is only %.3g above its border "
                       "median, within 5 noise sds of the border (sd %.3g); is it a bead image?",
                       path, peak, 1.4826 * mad);
    double noise_sd = 1.4826 * mad / peak;
    if ((st = pp_psf_one_spot(img, noise_sd, path)) != PP_OK ||
        (st = bead_support(img, noise_sd, 1.2533 * noise_sd / sqrt((double)border_count(img)),
                           bright_threshold(noise_sd))) != PP_OK)
        return st;
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++) {
            double p = img->data[i * w + j];
            sum += p;
            sy += p * (double)i;
            sx += p * (double)j;
        }
    *ci = (size_t)floor(sy / sum + 0.5);
    *cj = (size_t)floor(sx / sum + 0.5);
    return PP_OK;
}

static size_t max4(size_t a, size_t b, size_t c, size_t d)
{
    size_t m = a > b ? a : b;
    m = m > c ? m : c;
    return m > d ? m : d;
}

/* Copies the (2r+1)^2 window of img centred on (ci, cj), zero outside. */
static pp_status bead_window(const pp_image *img, size_t ci, size_t cj, size_t r, pp_image **out)
{
    pp_status st = pp_image_create(2 * r + 1, 2 * r + 1, out);
    if (st != PP_OK)
        return st;
    pp_image *k = *out;
    for (size_t a = 0; a < k->height; a++) {
        long i = (long)ci + (long)a - (long)r;
        for (size_t b = 0; b < k->width; b++) {
            long j = (long)cj + (long)b - (long)r;
            if (i >= 0 && j >= 0 && i < (long)img->height && j < (long)img->width)
                k->data[a * k->width + b] = img->data[(size_t)i * img->width + (size_t)j];
        }
    }
    pp_psf_normalise(k);
    return PP_OK;
}

pp_status pp_psf_bead_make(const char *path, size_t size, pp_image **out)
{
    pp_image *img = NULL;
    size_t ci = 0, cj = 0, r = 0;
    pp_read_info info;
    pp_status st = pp_image_read(path, NULL, &img, &info);
    if (st != PP_OK)
        return st;
    if (info.pages > 1) { /* a bead stack: 3-D, never squashed to its first page */
        pp_image_free(img);
        return pp_fail(PP_ERR_UNSUPPORTED,
                       "%s: the PSF image has %u pages, a 3-D bead stack, which blurs a volume "
                       "(a z-stack), not a frame; for a frame give one in-focus page as its "
                       "own file, or inspect the stack with `pixpost psf file:...`",
                       path, info.pages);
    }
    st = bead_clean(img, path, &ci, &cj);
    if (st == PP_OK && size == 0) {
        r = max4(ci, img->height - 1 - ci, cj, img->width - 1 - cj);
        if (r > PP_PSF_MAX_RADIUS)
            st = pp_fail(PP_ERR_LIMIT, "%s: the PSF image is larger than the limit of %d", path,
                         2 * PP_PSF_MAX_RADIUS + 1);
    } else if (st == PP_OK) {
        st = pp_psf_pick_radius(size, 0, &r);
    }
    if (st == PP_OK)
        st = bead_window(img, ci, cj, r, out);
    pp_image_free(img);
    return st;
}
