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
#include "pixpost/image.h"
#include "pixpost/noise.h"

typedef enum pp_boundary { PP_BOUNDARY_PAD = 0, PP_BOUNDARY_PERIODIC = 1 } pp_boundary;

/* Parses "pad" or "periodic" into *out (not NULL); s may be NULL
 * (refused). Errors: PP_ERR_ARG, *out unchanged, the message naming the
 * setting by names (a PP_SET_COUNT table, include/pixpost/setting.h; NULL:
 * "boundary"). Thread-safe. */
pp_status pp_boundary_parse(const char *s, const char *const *names, pp_boundary *out);
/* "pad" or "periodic" (static text, never NULL; any value other than
 * PP_BOUNDARY_PERIODIC gives "pad"). Thread-safe. */
const char *pp_boundary_name(pp_boundary b);

/* Simulates a frame (or volume) from a scene: out = A truth with boundary
 * b, then noise from *noise drawn from stream 0 of seed (the same seed
 * gives the same bytes on every machine and thread count). truth, psf,
 * noise, out: not NULL; names may be NULL (a PP_SET_COUNT table,
 * include/pixpost/setting.h; NULL: the library's words "boundary", "noise
 * model": how a refusal names the boundary and noise settings). For
 * poisson/camera, truth is in photons and *out in ADU; for gaussian both
 * in camera units; noise none: the blur only. *out receives a new image of
 * truth's size owned by the caller (pp_image_free), NULL on failure.
 * Errors: PP_ERR_ARG (a PSF side even, a 3-D PSF with a frame, a bad
 * noise parameter), PP_ERR_LIMIT (with periodic boundaries, a PSF larger
 * than the scene; a grid too large), PP_ERR_NUMERIC (a NaN or infinite
 * value in truth, psf or the noiseless image), PP_ERR_NOMEM. Thread-safe
 * (FFT planning is serialised inside). */
pp_status pp_model_simulate(const pp_image *truth, const pp_image *psf, pp_boundary b,
                            const pp_noise_spec *noise, uint64_t seed, const char *const *names,
                            pp_image **out);

#endif
