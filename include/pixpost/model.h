/* pixpost — the forward model y = A x + b + e and its simulation.
 *
 * A is convolution with a PSF normalised to sum 1. With periodic boundaries
 * it is circular convolution on the frame; with pad boundaries it is linear
 * convolution with the scene taken as zero outside the frame, cropped to
 * the frame (the same as scipy.signal.convolve2d(..., mode='same',
 * boundary='fill')).
 *
 * Volumes (x->depth > 1, include/pixpost/image.h) the same on all three
 * axes: periodic wraps every axis (scipy.ndimage.convolve mode='wrap'), pad
 * takes the scene as zero outside the volume on every axis (mode='constant',
 * cval=0; scipy.signal.fftconvolve mode='same'). The PSF of a volume is a
 * 3-D kernel (depth odd) or a frame kernel (depth 1), which blurs each
 * slice on its own. A kernel has odd sides on every axis, centred on its
 * middle element; a 3-D kernel needs a volume.
 */
#ifndef PIXPOST_MODEL_H
#define PIXPOST_MODEL_H

#include <stddef.h>
#include <stdint.h>
#include "pixpost/fft.h"
#include "pixpost/image.h"
#include "pixpost/noise.h"
#include "pixpost/rng.h"

typedef enum pp_boundary { PP_BOUNDARY_PAD = 0, PP_BOUNDARY_PERIODIC = 1 } pp_boundary;

/* Parses "pad" or "periodic"; a refusal names the setting by names (a
 * PP_SET_COUNT table, include/pixpost/setting.h; NULL: "boundary"). */
pp_status pp_boundary_parse(const char *s, const char *const *names, pp_boundary *out);
const char *pp_boundary_name(pp_boundary b);

/* The transfer function: the PSF zero-padded to f's grid with its centre
 * element moved to the origin, transformed by f (r2c). otf has
 * pp_fft_height(f) * pp_fft_half_width(f) entries. The PSF must fit in the
 * grid; a frame kernel on a rank-3 grid is its slice 0 (a per-slice blur),
 * a 3-D kernel needs a rank-3 grid. */
pp_status pp_psf_transfer(const pp_image *psf, const pp_fft *f, pp_complex *otf);

/* In the three functions below, names (a PP_SET_COUNT table,
 * include/pixpost/setting.h; NULL: the library's words "boundary", "noise
 * model") is how a refusal names the boundary and noise settings. */

/* out = A x with the given boundary; *out is a new image of x's size
 * (frame or volume). Periodic needs the PSF to fit the scene on every
 * axis; pad takes any size. */
pp_status pp_model_blur(const pp_image *x, const pp_image *psf, pp_boundary b,
                        const char *const *names, pp_image **out);

/* Adds noise in place: y holds the noiseless A x in photons for
 * poisson/camera (the result is in ADU) or in camera units for gaussian. */
pp_status pp_model_add_noise(pp_image *y, const pp_noise_spec *noise, const char *const *names,
                             pp_rng *rng);

/* simulate: blur then add noise with stream 0 of seed. */
pp_status pp_model_simulate(const pp_image *truth, const pp_image *psf, pp_boundary b,
                            const pp_noise_spec *noise, uint64_t seed, const char *const *names,
                            pp_image **out);

#endif
