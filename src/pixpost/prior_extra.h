/* pixpost — prior eigenvalues (the samplers' and the tests').
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/prior.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_PRIOR_EXTRA_H
#define PIXPOST_PRIOR_EXTRA_H

#include <stddef.h>
#include "pixpost/prior.h"
#include "pixpost/shape.h"

/* Eigenvalues of Q on the half spectrum of a grid of the given shape
 * (rank 1 to 3, slowest axis first; the last axis halved to n/2 + 1, as
 * FFTW's r2c), row-major. The Laplacian behind every stationary prior is
 *   L(k) = sum_a w_a (2 - 2 cos(2 pi k_a / n_a)),
 * with increments along axis a weighted w_a = (spacing[last] / spacing[a])^2
 * (the x pixel is the unit of length, so an axis sampled more coarsely, the
 * z step of a z-stack, is coupled more weakly): gmrf1 L, gmrf2 L^2, matern
 * (kappa^2 + L)^alpha with alpha = nu + d/2 for a rank-d grid (Lindgren,
 * Rue & Lindstrom 2011: the SPDE's exponent; nu + 1 for a frame).
 * spacing: `rank` positive spacings in any one unit (a volume's voxel size
 * {z, y, x}); NULL, or an entry <= 0, counts as 1 (unknown: cubic). Entry
 * 0 is 0 when the mean is free. *rank receives the number of non-zero
 * eigenvalues over the FULL spectrum (N-1 or N). The adaptive prior's
 * eigenvalues here are gmrf1's. PP_ERR_ARG for a bad rank or an
 * unresolved PP_PRIOR_DEFAULT (pp_prior_resolve it first). */
pp_status pp_prior_eigen_shape(const pp_prior_spec *s, const pp_shape *shape,
                               const double *spacing, double *q, double *rank);

/* The rank-2 case with unit spacing: H x (W/2+1) half spectrum of an
 * H x W frame (pp_prior_eigen_shape of pp_shape_2d(height, width)). */
pp_status pp_prior_eigen(const pp_prior_spec *s, size_t height, size_t width,
                         double *q, double *rank);

#endif
