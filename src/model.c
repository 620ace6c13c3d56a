/* pixpost — the forward model: boundaries, the PSF transfer function, the
 * blur A x and simulated noise, for frames and volumes.
 *
 * Cost of pp_model_blur: one plan for the grid (the scene's own shape
 * periodic; for pad the grid of pp_grid_padded(PP_GRID_PAD_BLUR): in the
 * plane pp_fft_good_grid(max(H + R, 2R + 1), max(W + R, 2R + 1)), and for a
 * volume D slices padded the same way for the kernel's z radius), three
 * transforms (PSF, scene, inverse) and three grid-sized buffers. A frame
 * uses a rank-2 plan, a volume a rank-3 one. Noise is one or two variates
 * per element. Simulation is not on the sampler's hot path, so nothing
 * here is cached.
 *
 * Why the pad grid works: a circular convolution on a grid of Hp >= H + R
 * rows never wraps a frame pixel's R-neighbourhood onto frame data (the
 * wrapped indices land in the zero rows H..Hp-1), so on the frame it equals
 * the linear convolution with the scene taken as zero outside. The same
 * holds on each axis of a volume.
 */
#include "pixpost/model.h"
#include "pixpost/setting.h"
#include "internal.h"
#include "grid.h"
#include "pixpost/psf.h"
#include "pixpost/model_extra.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

pp_status pp_boundary_parse(const char *s, const char *const *names, pp_boundary *out)
{
    if (s && strcmp(s, "pad") == 0) {
        *out = PP_BOUNDARY_PAD;
        return PP_OK;
    }
    if (s && strcmp(s, "periodic") == 0) {
        *out = PP_BOUNDARY_PERIODIC;
        return PP_OK;
    }
    return pp_fail(PP_ERR_ARG, "%s '%s': expected pad or periodic",
                   pp_setting_name(names, PP_SET_BOUNDARY), s ? s : "");
}

const char *pp_boundary_name(pp_boundary b)
{
    return b == PP_BOUNDARY_PERIODIC ? "periodic" : "pad";
}

/* "WxH" for a frame, "D slices of WxH" for a volume (messages say sizes
 * as width x height). */
static const char *describe(const pp_shape *s, char *buf, size_t len)
{
    if (s->rank == 3)
        snprintf(buf, len, "%zu slices of %zux%zu", s->n[0], s->n[2], s->n[1]);
    else
        snprintf(buf, len, "%zux%zu", s->n[s->rank - 1], s->rank > 1 ? s->n[0] : 1);
    return buf;
}

/* Odd on every axis with finite values; the values are used as given (the
 * caller normalises with pp_psf_check when it wants sum 1). */
static pp_status kernel_shape_ok(const pp_image *psf)
{
    if (psf->width % 2 == 0 || psf->height % 2 == 0 || psf->depth % 2 == 0) {
        char b[96];
        pp_shape ks = pp_image_shape(psf);
        return pp_fail(PP_ERR_ARG, "the PSF is %s; every side must be odd (2R+1)",
                       describe(&ks, b, sizeof b));
    }
    for (size_t i = 0; i < pp_image_count(psf); i++)
        if (!isfinite(psf->data[i]))
            return pp_fail(PP_ERR_NUMERIC, "the PSF has a NaN/Inf value");
    return PP_OK;
}

/* The kernel's shape in the rank of a grid: a frame kernel (depth 1) on a
 * rank-3 grid is one slice, {1, h, w}. */
static pp_shape kernel_shape(const pp_image *psf, int rank)
{
    return rank == 3 ? pp_shape_3d(psf->depth, psf->height, psf->width)
                     : pp_shape_2d(psf->height, psf->width);
}

/* otf need not be an FFT-aligned buffer: the transform goes to a scratch
 * buffer that is then copied. */
pp_status pp_psf_transfer(const pp_image *psf, const pp_fft *f, pp_complex *otf)
{
    pp_shape gs = pp_fft_shape(f), ks = kernel_shape(psf, gs.rank);
    size_t ng = pp_fft_height(f) * pp_fft_width(f), nc = pp_fft_height(f) * pp_fft_half_width(f);
    pp_status st = kernel_shape_ok(psf);
    if (st != PP_OK)
        return st;
    int fits = gs.rank >= 2 && (gs.rank == 3 || psf->depth == 1);
    for (int i = 0; fits && i < gs.rank; i++)
        fits = ks.n[i] <= gs.n[i];
    if (!fits) {
        char a[96], b[96];
        ks = pp_image_shape(psf);
        return pp_fail(PP_ERR_LIMIT, "the PSF (%s) does not fit the %s FFT grid",
                       describe(&ks, a, sizeof a), describe(&gs, b, sizeof b));
    }
    double *grid = pp_fft_alloc_real(ng);
    pp_complex *spec = pp_fft_alloc_complex(nc);
    if (!grid || !spec) {
        pp_fft_free_buffer(grid);
        pp_fft_free_buffer(spec);
        char b[96];
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %s transfer function",
                       describe(&gs, b, sizeof b));
    }
    pp_grid_place_kernel(grid, &gs, psf->data, &ks); /* centre to the origin */
    pp_fft_forward(f, grid, spec);
    memcpy(otf, spec, nc * sizeof *spec);
    pp_fft_free_buffer(grid);
    pp_fft_free_buffer(spec);
    return PP_OK;
}

/* Circular convolution of x (placed at the origin corner of a grid of
 * shape *gs, zero elsewhere) with psf, cropped back into out. A frame has
 * a rank-2 grid and plan, a volume a rank-3 one. */
static pp_status blur_on_grid(const pp_image *x, const pp_image *psf, const pp_shape *gs,
                              pp_image *out)
{
    pp_fft *f = NULL;
    char b[96];
    pp_status st = pp_fft_create_shape(gs, PP_FFT_ESTIMATE, &f);
    if (st != PP_OK)
        return st;
    size_t ng = pp_fft_height(f) * pp_fft_width(f), nc = pp_fft_height(f) * pp_fft_half_width(f);
    pp_shape fs = pp_image_shape(x);
    double *grid = pp_fft_alloc_real(ng);
    pp_complex *otf = pp_fft_alloc_complex(nc), *spec = pp_fft_alloc_complex(nc);
    if (!grid || !otf || !spec)
        st = pp_fail(PP_ERR_NOMEM, "out of memory for a %s blur", describe(gs, b, sizeof b));
    if (st == PP_OK)
        st = pp_psf_transfer(psf, f, otf);
    if (st == PP_OK) {
        memset(grid, 0, ng * sizeof *grid);
        pp_grid_put_box(grid, gs, x->data, &fs);
        pp_fft_forward(f, grid, spec);
        double scale = 1.0 / (double)ng; /* FFTW is unnormalised; ng: the grid's cells */
        for (size_t k = 0; k < nc; k++)
            spec[k] *= otf[k] * scale;
        pp_fft_inverse(f, spec, grid);
        pp_grid_get_box(grid, gs, out->data, &fs);
    }
    pp_fft_free_buffer(grid);
    pp_fft_free_buffer(otf);
    pp_fft_free_buffer(spec);
    pp_fft_free(f);
    return st;
}

/* Where element i of img is, for messages: "(row, col)" of a frame,
 * "(slice, row, col)" of a volume. */
static const char *where(const pp_image *img, size_t i, char *buf, size_t len)
{
    size_t plane = img->width * img->height, j = i % plane;
    if (img->depth > 1)
        snprintf(buf, len, "(%zu, %zu, %zu)", i / plane, j / img->width, j % img->width);
    else
        snprintf(buf, len, "(%zu, %zu)", j / img->width, j % img->width);
    return buf;
}

static pp_status scene_finite(const pp_image *x)
{
    char b[80];
    for (size_t i = 0; i < pp_image_count(x); i++)
        if (!isfinite(x->data[i]))
            return pp_fail(PP_ERR_NUMERIC, "the scene has a NaN/Inf pixel at %s",
                           where(x, i, b, sizeof b));
    return PP_OK;
}

/* The grid of the blur: the scene's own shape (periodic) or the padded
 * grid of grid.c (pad), its in-plane axes for the kernel's in-plane radius
 * and its depth for the kernel's z radius (pp_grid_padded takes one radius,
 * so a volume asks twice). */
static void blur_grid(const pp_image *x, const pp_image *psf, pp_boundary b, pp_shape *gs)
{
    pp_shape fs = pp_image_shape(x), zs;
    size_t side = psf->width > psf->height ? psf->width : psf->height;
    if (b == PP_BOUNDARY_PERIODIC) {
        *gs = fs;
        return;
    }
    pp_grid_padded(&fs, side / 2, PP_GRID_PAD_BLUR, gs);
    if (fs.rank == 3) {
        pp_grid_padded(&fs, psf->depth / 2, PP_GRID_PAD_BLUR, &zs);
        gs->n[0] = zs.n[0];
    }
}

/* x and psf are read only; *out is new (NULL on failure). */
pp_status pp_model_blur(const pp_image *x, const pp_image *psf, pp_boundary b,
                        const char *const *names, pp_image **out)
{
    *out = NULL;
    pp_status st = kernel_shape_ok(psf);
    if (st == PP_OK)
        st = scene_finite(x);
    if (st != PP_OK)
        return st;
    pp_shape fs = pp_image_shape(x), ks = kernel_shape(psf, fs.rank), gs;
    if (psf->depth > 1 && x->depth == 1) {
        char a[96];
        ks = pp_image_shape(psf);
        return pp_fail(PP_ERR_ARG,
                       "the PSF is 3-D (%s) and the scene one frame; a 3-D PSF blurs a "
                       "volume (give the scene's slices, or a 2-D PSF)",
                       describe(&ks, a, sizeof a));
    }
    int fits = 1;
    for (int i = 0; i < fs.rank; i++)
        fits = fits && ks.n[i] <= fs.n[i];
    if (b == PP_BOUNDARY_PERIODIC && !fits) {
        char a[96], c[96];
        ks = pp_image_shape(psf);
        describe(&fs, c, sizeof c);
        return pp_fail(PP_ERR_LIMIT,
                       "the PSF (%s) is larger than the %s%s%s; periodic blur "
                       "needs it to fit (use %s pad)",
                       describe(&ks, a, sizeof a), fs.rank == 3 ? "volume (" : "", c,
                       fs.rank == 3 ? ")" : " frame", pp_setting_name(names, PP_SET_BOUNDARY));
    }
    blur_grid(x, psf, b, &gs);
    if ((st = pp_image_create3(x->depth, x->height, x->width, out)) != PP_OK)
        return st;
    st = blur_on_grid(x, psf, &gs, *out);
    if (st != PP_OK) {
        pp_image_free(*out);
        *out = NULL;
    }
    return st;
}

/* Means above 2^52 photons cannot be held as exact integers in a double
 * and point to a unit mistake; they are refused. */
#define MAX_PHOTONS 4503599627370496.0

/* Refuses before anything is written, so a failure leaves y unchanged. */
static pp_status noise_input_ok(const pp_image *y, const pp_noise_spec *noise,
                                const char *const *names)
{
    const char *what = pp_setting_name(names, PP_SET_NOISE);
    if (noise->kind == PP_NOISE_GAUSSIAN && !noise->sigma_set)
        return pp_fail(PP_ERR_ARG,
                       "%s gaussian: simulating needs a fixed sd; give "
                       "gaussian:sigma=S",
                       what);
    if (noise->kind == PP_NOISE_GAUSSIAN && !(noise->sigma >= 0 && isfinite(noise->sigma)))
        return pp_fail(PP_ERR_ARG, "%s gaussian: sigma=%g must be >= 0", what, noise->sigma);
    int photons = noise->kind == PP_NOISE_POISSON || noise->kind == PP_NOISE_CAMERA;
    if (photons && !(noise->gain > 0 && isfinite(noise->gain) && isfinite(noise->offset) &&
                     noise->read >= 0 && isfinite(noise->read)))
        return pp_fail(PP_ERR_ARG, "%s: gain must be > 0, offset finite, read >= 0", what);
    char b[80];
    for (size_t i = 0; i < pp_image_count(y); i++) {
        double v = y->data[i];
        if (!isfinite(v) || (photons && v > MAX_PHOTONS))
            return pp_fail(PP_ERR_NUMERIC, "the noiseless image has %g at %s; it must be finite%s",
                           v, where(y, i, b, sizeof b), photons ? " and below 2^52 photons" : "");
    }
    return PP_OK;
}

/* Negative expected photon counts (possible only if the scene or the PSF
 * has negative values) are clipped to 0: a Poisson mean cannot be
 * negative. */
pp_status pp_model_add_noise(pp_image *y, const pp_noise_spec *noise, const char *const *names,
                             pp_rng *rng)
{
    pp_status st = noise_input_ok(y, noise, names);
    if (st != PP_OK)
        return st;
    size_t n = pp_image_count(y);
    double *v = y->data, g = noise->gain, o = noise->offset;
    switch (noise->kind) {
    case PP_NOISE_NONE:
        break;
    case PP_NOISE_GAUSSIAN:
        for (size_t i = 0; i < n; i++)
            v[i] += noise->sigma * pp_rng_normal(rng);
        break;
    case PP_NOISE_POISSON:
        for (size_t i = 0; i < n; i++)
            v[i] = o + g * pp_rng_poisson(rng, v[i] > 0 ? v[i] : 0.0);
        break;
    case PP_NOISE_CAMERA:
        for (size_t i = 0; i < n; i++) {
            double e = pp_rng_poisson(rng, v[i] > 0 ? v[i] : 0.0);
            v[i] = o + g * (e + noise->read * pp_rng_normal(rng));
        }
        break;
    }
    return PP_OK;
}

pp_status pp_model_simulate(const pp_image *truth, const pp_image *psf, pp_boundary b,
                            const pp_noise_spec *noise, uint64_t seed, const char *const *names,
                            pp_image **out)
{
    pp_status st = pp_model_blur(truth, psf, b, names, out);
    if (st != PP_OK)
        return st;
    pp_rng rng;
    pp_rng_seed(&rng, seed, 0);
    st = pp_model_add_noise(*out, noise, names, &rng);
    if (st != PP_OK) {
        pp_image_free(*out);
        *out = NULL;
    }
    return st;
}
