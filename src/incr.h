/* pixpost — weighted first-order increments on a periodic grid (internal).
 *
 * D maps an H x W field x (row-major, axis order (y, x)) to its 2N
 * increments, N = H*W, wrapping at the edges:
 *   horizontal  dh[i][j] = x[i][(j+1) % W] - x[i][j]
 *   vertical    dv[i][j] = x[(i+1) % H][j] - x[i][j]
 * and W = diag(wh, wv) holds one weight per increment (wh, wv: N each,
 * indexed like the increment's first pixel). Dᵀ W D is the precision of an
 * intrinsic GMRF with per-increment weights (bench/adaptive/NOTES.md §6);
 * its null space holds the constant field.
 *
 * Every function is one pass over the grid; none allocates. H, W >= 2
 * (on a side of 1 an increment would join a pixel to itself). No argument
 * may alias another unless stated.
 */
#ifndef PIXPOST_INCR_H
#define PIXPOST_INCR_H

#include <stddef.h>

/* out = Dᵀ diag(wh, wv) D x. out must not alias x. */
void pp_incr_apply(size_t h, size_t w, const double *wh, const double *wv, const double *x,
                   double *out);

/* out += Dᵀ diag(wh, wv) D x (the same sums as pp_incr_apply, added to what
 * out holds: a gradient that already holds another term). out must not
 * alias x. */
void pp_incr_apply_add(size_t h, size_t w, const double *wh, const double *wv, const double *x,
                       double *out);

/* The quadratic form xᵀ Dᵀ W D x = Σ wh dh² + Σ wv dv². */
double pp_incr_quad(size_t h, size_t w, const double *wh, const double *wv, const double *x);

/* out = Dᵀ (sqrt(w) ⊙ ξ) with ξ = (xi_h, xi_v), 2N values (for ξ ~ N(0, I)
 * this is the prior part of a perturbation–optimisation right-hand side,
 * covariance Dᵀ W D). out must not alias xi_h or xi_v. */
void pp_incr_perturb(size_t h, size_t w, const double *wh, const double *wv, const double *xi_h,
                     const double *xi_v, double *out);

/* d[i] = sum of the four weights touching pixel i (its own wh, wv and
 * the left neighbour's wh, the upper neighbour's wv): the diagonal of
 * Dᵀ W D. */
void pp_incr_diag(size_t h, size_t w, const double *wh, const double *wv, double *d);

#endif
