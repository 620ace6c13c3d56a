/* pixpost — weighted first-order increments on a periodic grid (internal).
 *
 * D maps a d x h x w field x (row-major, axis order (z, y, x); a frame is
 * d = 1) to its increments, wrapping at the edges:
 *   horizontal  dh[k][i][j] = x[k][i][(j+1) % w] - x[k][i][j]
 *   vertical    dv[k][i][j] = x[k][(i+1) % h][j] - x[k][i][j]
 *   along z     dz[k][i][j] = x[(k+1) % d][i][j] - x[k][i][j]   (d > 1 only)
 * 2N increments on a frame, 3N on a volume (N = d*h*w), and W =
 * diag(wz, wh, wv) holds one weight per increment (N each, indexed like
 * the increment's first voxel; wz is not read when d = 1 and may then be
 * NULL). Dᵀ W D is the precision of an intrinsic GMRF with per-increment
 * weights (bench/adaptive/NOTES.md §6); its null space holds the constant
 * field. Anisotropic voxels are the caller's: their factors are part of
 * the weights (src/adaptive.h).
 *
 * Every function is one pass over the grid; none allocates. h, w >= 2
 * (on a side of 1 an increment would join a pixel to itself), d >= 1
 * (d = 2 is allowed: the two z increments of a column then join the same
 * pair, as the stationary prior's eigenvalues 2 - 2cos(pi) = 4 say). No
 * argument may alias another unless stated. On a frame every function does
 * the same arithmetic in the same order as before volumes existed.
 */
#ifndef PIXPOST_INCR_H
#define PIXPOST_INCR_H

#include <stddef.h>

/* out = Dᵀ diag(wz, wh, wv) D x. out must not alias x. */
void pp_incr_apply(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                   const double *wv, const double *x, double *out);

/* out += Dᵀ W D x (the same sums as pp_incr_apply, added to what out holds:
 * a gradient that already holds another term). out must not alias x. */
void pp_incr_apply_add(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                       const double *wv, const double *x, double *out);

/* The quadratic form xᵀ Dᵀ W D x = Σ wh dh² + Σ wv dv² (+ Σ wz dz²). */
double pp_incr_quad(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                    const double *wv, const double *x);

/* out = Dᵀ (sqrt(w) ⊙ ξ) with ξ = (xi_h, xi_v[, xi_z]), 2N (3N) values (for
 * ξ ~ N(0, I) this is the prior part of a perturbation–optimisation
 * right-hand side, covariance Dᵀ W D). xi_z is not read when d = 1. out
 * must not alias the ξ's. */
void pp_incr_perturb(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                     const double *wv, const double *xi_z, const double *xi_h,
                     const double *xi_v, double *out);

/* d[i] = sum of the weights touching voxel i (its own wh, wv, wz and the
 * left neighbour's wh, the upper neighbour's wv, the previous slice's wz):
 * the diagonal of Dᵀ W D. */
void pp_incr_diag(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                  const double *wv, double *out);

#endif
