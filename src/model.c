/* pixpost — the forward model: boundaries, the PSF transfer function, the
 * blur A x and simulated noise.
 *
 * Cost of pp_model_blur: one plan for the grid (H x W periodic; padded
 * Hp x Wp = pp_grid_padded(PP_GRID_PAD_BLUR): pp_fft_good_grid(max(H + R,
 * 2R + 1), max(W + R, 2R + 1)) for pad), three transforms (PSF, scene, inverse) and three grid-sized
 * buffers. Noise is
 * one or two variates per pixel. Simulation is not on the sampler's hot
 * path, so nothing here is cached.
 *
 * Why the pad grid works: a circular convolution on a grid of Hp >= H + R
 * rows never wraps a frame pixel's R-neighbourhood onto frame data (the
 * wrapped indices land in the zero rows H..Hp-1), so on the frame it equals
 * the linear convolution with the scene taken as zero outside.
 */
#include "pixpost/model.h"
#include "pixpost/setting.h"
#include "internal.h"
#include "grid.h"
#include "pixpost/psf.h"
#include <math.h>
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

/* Odd square with finite values; the values are used as given (the caller
 * normalises with pp_psf_check when it wants sum 1). */
static pp_status kernel_shape_ok(const pp_image *psf)
{
    if (psf->width != psf->height || psf->width % 2 == 0)
        return pp_fail(PP_ERR_ARG, "the PSF is %zux%zu; it must be an odd square (2R+1)",
                       psf->width, psf->height);
    for (size_t i = 0; i < psf->width * psf->height; i++)
        if (!isfinite(psf->data[i]))
            return pp_fail(PP_ERR_NUMERIC, "the PSF has a NaN/Inf value");
    return PP_OK;
}

/* otf need not be an FFT-aligned buffer: the transform goes to a scratch
 * buffer that is then copied. */
pp_status pp_psf_transfer(const pp_image *psf, const pp_fft *f, pp_complex *otf)
{
    size_t h = pp_fft_height(f), w = pp_fft_width(f), nc = h * pp_fft_half_width(f);
    pp_status st = kernel_shape_ok(psf);
    if (st != PP_OK)
        return st;
    if (psf->width > h || psf->width > w)
        return pp_fail(PP_ERR_LIMIT, "the PSF (%zux%zu) does not fit the %zux%zu FFT grid",
                       psf->width, psf->height, w, h);
    double *grid = pp_fft_alloc_real(h * w);
    pp_complex *spec = pp_fft_alloc_complex(nc);
    if (!grid || !spec) {
        pp_fft_free_buffer(grid);
        pp_fft_free_buffer(spec);
        return pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zu transfer function", w, h);
    }
    pp_shape gs = pp_shape_2d(h, w), ks = pp_shape_2d(psf->height, psf->width);
    pp_grid_place_kernel(grid, &gs, psf->data, &ks); /* centre (r, r) to (0, 0) */
    pp_fft_forward(f, grid, spec);
    memcpy(otf, spec, nc * sizeof *spec);
    pp_fft_free_buffer(grid);
    pp_fft_free_buffer(spec);
    return PP_OK;
}

/* Circular convolution of x (placed at the grid's top-left, zero
 * elsewhere) with psf on an hg x wg grid, cropped back into out. */
static pp_status blur_on_grid(const pp_image *x, const pp_image *psf, size_t hg, size_t wg,
                              pp_image *out)
{
    pp_fft *f = NULL;
    pp_status st = pp_fft_create(hg, wg, PP_FFT_ESTIMATE, &f);
    if (st != PP_OK)
        return st;
    size_t nc = hg * pp_fft_half_width(f);
    pp_shape gs = pp_shape_2d(hg, wg), fs = pp_shape_2d(x->height, x->width);
    double *grid = pp_fft_alloc_real(hg * wg);
    pp_complex *otf = pp_fft_alloc_complex(nc), *spec = pp_fft_alloc_complex(nc);
    if (!grid || !otf || !spec)
        st = pp_fail(PP_ERR_NOMEM, "out of memory for a %zux%zu blur", wg, hg);
    if (st == PP_OK)
        st = pp_psf_transfer(psf, f, otf);
    if (st == PP_OK) {
        memset(grid, 0, hg * wg * sizeof *grid);
        pp_grid_put_box(grid, &gs, x->data, &fs);
        pp_fft_forward(f, grid, spec);
        double scale = 1.0 / ((double)hg * (double)wg); /* FFTW is unnormalised */
        for (size_t k = 0; k < nc; k++)
            spec[k] *= otf[k] * scale;
        pp_fft_inverse(f, spec, grid);
        pp_grid_get_box(grid, &gs, out->data, &fs);
    }
    pp_fft_free_buffer(grid);
    pp_fft_free_buffer(otf);
    pp_fft_free_buffer(spec);
    pp_fft_free(f);
    return st;
}

static pp_status scene_finite(const pp_image *x)
{
    for (size_t i = 0; i < x->width * x->height; i++)
        if (!isfinite(x->data[i]))
            return pp_fail(PP_ERR_NUMERIC, "the scene has a NaN/Inf pixel at (%zu, %zu)",
                           i / x->width, i % x->width);
    return PP_OK;
}

/* x and psf are read only; *out is new (NULL on failure). */
pp_status pp_model_blur(const pp_image *x, const pp_image *psf, pp_boundary b, pp_image **out)
{
    *out = NULL;
    pp_status st = kernel_shape_ok(psf);
    if (st == PP_OK)
        st = scene_finite(x);
    if (st != PP_OK)
        return st;
    size_t r = psf->width / 2, hg = x->height, wg = x->width;
    if (b == PP_BOUNDARY_PERIODIC && (psf->width > hg || psf->width > wg))
        return pp_fail(PP_ERR_LIMIT,
                       "the PSF (%zux%zu) is larger than the %zux%zu frame; periodic blur "
                       "needs it to fit (use --boundary pad)",
                       psf->width, psf->height, wg, hg);
    if (b == PP_BOUNDARY_PAD) {
        pp_shape fs = pp_shape_2d(hg, wg), gs;
        pp_grid_padded(&fs, r, PP_GRID_PAD_BLUR, &gs);
        hg = gs.n[0];
        wg = gs.n[1];
    }
    if ((st = pp_image_create(x->height, x->width, out)) != PP_OK)
        return st;
    st = blur_on_grid(x, psf, hg, wg, *out);
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
static pp_status noise_input_ok(const pp_image *y, const pp_noise_spec *noise)
{
    if (noise->kind == PP_NOISE_GAUSSIAN && !noise->sigma_set)
        return pp_fail(PP_ERR_ARG, "--noise gaussian: simulating needs a fixed sd; give "
                                   "gaussian:sigma=S");
    if (noise->kind == PP_NOISE_GAUSSIAN && !(noise->sigma >= 0 && isfinite(noise->sigma)))
        return pp_fail(PP_ERR_ARG, "--noise gaussian: sigma=%g must be >= 0", noise->sigma);
    int photons = noise->kind == PP_NOISE_POISSON || noise->kind == PP_NOISE_CAMERA;
    if (photons && !(noise->gain > 0 && isfinite(noise->gain) && isfinite(noise->offset) &&
                     noise->read >= 0 && isfinite(noise->read)))
        return pp_fail(PP_ERR_ARG, "--noise: gain must be > 0, offset finite, read >= 0");
    for (size_t i = 0; i < y->width * y->height; i++) {
        double v = y->data[i];
        if (!isfinite(v) || (photons && v > MAX_PHOTONS))
            return pp_fail(PP_ERR_NUMERIC,
                           "the noiseless image has %g at (%zu, %zu); it must be finite%s", v,
                           i / y->width, i % y->width, photons ? " and below 2^52 photons" : "");
    }
    return PP_OK;
}

/* Negative expected photon counts (possible only if the scene or the PSF
 * has negative values) are clipped to 0: a Poisson mean cannot be
 * negative. */
pp_status pp_model_add_noise(pp_image *y, const pp_noise_spec *noise, pp_rng *rng)
{
    pp_status st = noise_input_ok(y, noise);
    if (st != PP_OK)
        return st;
    size_t n = y->width * y->height;
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
                            const pp_noise_spec *noise, uint64_t seed, pp_image **out)
{
    pp_status st = pp_model_blur(truth, psf, b, out);
    if (st != PP_OK)
        return st;
    pp_rng rng;
    pp_rng_seed(&rng, seed, 0);
    st = pp_model_add_noise(*out, noise, &rng);
    if (st != PP_OK) {
        pp_image_free(*out);
        *out = NULL;
    }
    return st;
}
