/* pixpost — PSF pieces the tree uses beyond the public API.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/psf.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_PSF_EXTRA_H
#define PIXPOST_PSF_EXTRA_H

#include <stddef.h>
#include "pixpost/psf.h"

/* Refills an existing odd square kernel k with the gaussian or airy model
 * of s at k's size (normalised to sum 1); allocates nothing, so a sampler
 * can call it per proposed width. PP_ERR_ARG for a file spec. */
pp_status pp_psf_fill(const pp_psf_spec *s, pp_image *k);

/* Checks a kernel for use on a frame, or on a volume whose slices are
 * height x width: finite, non-negative, non-zero sum, odd square (slices),
 * an odd number of slices, not larger than the frame (slice) in the plane.
 * Normalises to sum 1 in place. Whether a 3-D kernel suits the data (a
 * volume, its depth) is the caller's to check. */
pp_status pp_psf_check(pp_image *psf, size_t height, size_t width);

/* Bessel function of the first kind, order 1 (rational approximations of
 * the Cephes library's j1, accurate to ~1e-15 absolute). */
double pp_bessel_j1(double x);

#endif
