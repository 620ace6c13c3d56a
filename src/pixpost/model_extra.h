/* pixpost — the forward model's pieces the tree uses beyond the public API.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/model.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_MODEL_EXTRA_H
#define PIXPOST_MODEL_EXTRA_H

#include "pixpost/fft.h"
#include "pixpost/model.h"
#include "pixpost/rng.h"

/* The transfer function: the PSF zero-padded to f's grid with its centre
 * element moved to the origin, transformed by f (r2c). otf has
 * pp_fft_height(f) * pp_fft_half_width(f) entries. The PSF must fit in the
 * grid; a frame kernel on a rank-3 grid is its slice 0 (a per-slice blur),
 * a 3-D kernel needs a rank-3 grid. */
pp_status pp_psf_transfer(const pp_image *psf, const pp_fft *f, pp_complex *otf);

/* out = A x with the given boundary; *out is a new image of x's size
 * (frame or volume). Periodic needs the PSF to fit the scene on every
 * axis; pad takes any size. */
pp_status pp_model_blur(const pp_image *x, const pp_image *psf, pp_boundary b,
                        const char *const *names, pp_image **out);

/* Adds noise in place: y holds the noiseless A x in photons for
 * poisson/camera (the result is in ADU) or in camera units for gaussian. */
pp_status pp_model_add_noise(pp_image *y, const pp_noise_spec *noise, const char *const *names,
                             pp_rng *rng);

#endif
