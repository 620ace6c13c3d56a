/* pixpost — the spatially adaptive prior's local precisions (internal).
 *
 * Model (`--prior adaptive`; bench/adaptive/NOTES.md §5, the prototype's
 * "ns"): given weights W = diag(wz, wh, wv), one per first-order increment
 * of the periodic H x W grid or D x H x W volume (incr.h: 2 increments per
 * voxel on a frame, 3 on a volume), the field is an intrinsic GMRF with
 * precision Dᵀ W D, and
 *     w_e = c_a(e) exp(s_B(e)) τ_e,
 *     c_a  the fixed factor of the increment's axis a: (spacing_x /
 *          spacing_a)², as the stationary priors weight a volume's
 *          increments (pp_prior_eigen_shape); 1 on a frame and for cubic
 *          or unknown voxels. Every formula below reads d_e² as c_a d_e²;
 *     τ_e ~ Gamma(ν/2, ν/2)           a heavy-tailed local factor (Student-t
 *                                     increments, ν = 2 by default),
 *     s_B  one log-precision per B x B block of pixels (B = 8 by default;
 *          on a volume B x B in-plane by B_z slices, B_z = round(B ·
 *          spacing_x / spacing_z) clipped to 1 ... the grid's depth, so a
 *          block spans about the same length on every axis and a thin
 *          volume has one layer of blocks):
 *          a first-order intrinsic GMRF on the block grid (4 neighbours,
 *          6 on a volume, free edges) with precision κ ~ Gamma(1, rate
 *          0.5); its mean L
 *          plays the role of log δ of gmrf1 and has gmrf1's hyperprior,
 *          δ = e^{L} ~ Gamma(a_δ, b_δ) (--hyper-delta; a flat prior on L
 *          makes the posterior improper when the data cannot bound the
 *          prior's scale, e.g. a frame whose noise the λ hyperprior
 *          outweighs).
 * An increment belongs to the block of its first pixel. The joint density
 * that defines the prior (and that the conditionals below sample exactly) is
 *     p(x, τ, s, κ) ∝ Π_B e^{n_B s_B / 2} · Π_e τ_e^{1/2} e^{-w_e d_e² / 2}
 *                      · Π_e Gamma(τ_e; ν/2, ν/2) · p(s | κ) p(κ) p(L),
 * p(s | κ) the intrinsic GMRF density (blind to L), p(L) ∝ e^{a_δ L − b_δ e^L}.
 * n_B the pixels (voxels) of block B: each block counts its share of the field's
 * rank (N − 1), not its increments (NOTES.md §1: counting increments tilts
 * the global level and collapses the field). For constant s this is exactly
 * the normaliser of x | W; otherwise it is a local approximation, and the
 * joint above (not an exact scale mixture) is the model.
 *
 * Conditionals (one pp_adapt_update):
 *   τ_e | x, s  ~ Gamma(ν/2 + 1/2, ν/2 + e^{s} d_e² / 2);
 *   s_B | τ, x, s_nb  ∝ exp(n_B s/2 − e^{s} R_B/2 − κ m_B (s − s̄_B)²/2),
 *       R_B = Σ_{e in B} τ_e d_e², m_B neighbours with mean s̄_B: an
 *       independence Metropolis step from the Laplace approximation at the
 *       mode (Newton), blocks in two checkerboard colours (prototype
 *       acceptance 0.96–0.98);
 *   κ | s ~ Gamma(1 + (nB − 1)/2, 0.5 + Σ_{neighbour pairs} (s_B − s_B')²/2);
 *   and two scale moves along the ridge W = e^{s}τ (W fixed, see adaptive.c),
 *       u ~ Gamma(n(kν + k − 1)/2, ...) with k increments per voxel.
 * Every move that changes L includes p(L) in its acceptance ratio.
 * With ν = 2 the τ draws use Gamma(3/2) = Exp(1) + Z²/2 (exact).
 */
#ifndef PIXPOST_ADAPTIVE_H
#define PIXPOST_ADAPTIVE_H

#include <stddef.h>
#include "pixpost/rng.h"
#include "pixpost/shape.h"
#include "pixpost/status.h"

typedef struct pp_adapt pp_adapt;

/* State for a grid of shape grid (rank 2: h x w, or rank 3: d x h x w;
 * h, w >= 2, d >= 1) whose observed frame is its first corner of shape
 * frame (same rank, 1 <= each extent <= the grid's; the rest is padding),
 * with blocks of side block (>= 1), the axes' weight factors axis = {c_z,
 * c_y, c_x} (each > 0 and finite; NULL: all 1; a frame reads c_y, c_x and
 * must pass 1, 1 to be the model above), Student-t degrees of freedom nu
 * (> 0) and the level's hyperprior Gamma(hyper[0], rate hyper[1]) (both
 * >= 0; 0, 0 is the flat prior on L).
 * Memory: a few doubles per block. *out is NULL on failure (PP_ERR_ARG,
 * PP_ERR_NOMEM). */
pp_status pp_adapt_create(const pp_shape *grid, const pp_shape *frame,
                          size_t block, const double axis[3], double nu, const double hyper[2],
                          pp_adapt **out);
void pp_adapt_free(pp_adapt *a); /* accepts NULL */

/* The axes' weight factors ca = {c_z, c_y, c_x} of a grid of the given
 * depth with voxel spacings voxel = {z, y, x} (µm; 0: unknown): (spacing_x
 * / spacing_a)², 1 where a spacing is not known and on a frame (depth 1),
 * as pp_prior_eigen_shape weights the stationary priors' increments. */
void pp_adapt_axis_weights(size_t depth, const double voxel[3], double ca[3]);

/* Starts at s = log(delta) everywhere, κ = 2 (the prior's mean), and the
 * acceptance counters at zero. delta > 0. */
void pp_adapt_start(pp_adapt *a, double delta);

/* One sweep of the conditionals above given the field x (N = d*h*w reals):
 * writes the new weights W = c_a e^{s} τ into wz, wh and wv (N each; their
 * input values are not read; wz only on a volume, may be NULL on a frame).
 * Draws 2N (volume: 3N) + O(blocks) variates from rng. Weights are
 * clamped to [1e-250, 1e250] (a draw outside needs increments beyond
 * 1e125 and is a numerical failure upstream). Cost: two passes over the
 * grid and O(blocks). */
void pp_adapt_update(pp_adapt *a, const double *x, double *wz, double *wh, double *wv,
                     pp_rng *rng);

/* Adds dl to every block's s and multiplies the weights by e^{dl} (a move
 * of the global level made elsewhere, e.g. by interweaving). */
/* log p(L + dl) − log p(L): the level hyperprior's part of the acceptance
 * ratio of such a move. */
double pp_adapt_level_dlogp(const pp_adapt *a, double dl);
void pp_adapt_shift(pp_adapt *a, double dl, double *wz, double *wh, double *wv);

/* The geometric mean of the block precisions over the blocks that hold a
 * frame pixel, exp(mean s): the level of the prior where there are data,
 * reported where gmrf1 reports δ (the padding's blocks are left out: they
 * follow the prior alone, wander slowly and say nothing about the frame). */
double pp_adapt_level(const pp_adapt *a);

/* Block geometry in the plane: side, block rows and columns (blocks are
 * numbered row by row, block b covering pixel rows (b / mw % mh) * side ...
 * and columns (b % mw) * side ..., clipped to the grid; on a volume, slices
 * (b / (mh mw)) * B_z ..., the layers of blocks slowest). */
void pp_adapt_geometry(const pp_adapt *a, size_t *side, size_t *mh, size_t *mw);
/* log p at s_B + ds − log p at s_B of the factors of the joint that hold
 * s_B but not the increments: e^{n_B s_B / 2}, the block field's GMRF
 * p(s | κ) and the level's hyperprior p(L) (src/fieldscale.c's move). */
double pp_adapt_block_dlogp(const pp_adapt *a, size_t b, double ds);
/* s_B += ds, and the weights of the increments of block B (those whose
 * first voxel lies in B) multiplied by e^{ds} (wz: volumes only). */
void pp_adapt_block_shift(pp_adapt *a, size_t b, double ds, double *wz, double *wh, double *wv);
double pp_adapt_kappa(const pp_adapt *a);
/* The regions (internal.h's pp_region) holding a's state between two
 * updates: the block log-precisions, κ, the level's sum and the counters
 * (the rest is scratch or fixed). Writes at most 5; returns the count. */
struct pp_region;
size_t pp_adapt_state(pp_adapt *a, struct pp_region *out);

/* Block moves accepted and tried since pp_adapt_start. */
void pp_adapt_acceptance(const pp_adapt *a, unsigned long long *accepted,
                         unsigned long long *tried);

#endif
