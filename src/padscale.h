/* pixpost — the padding scale move of gibbs with --boundary pad and the
 * gmrf1 prior (internal; issue 16, item 2).
 *
 * Why: with pad the padding pixels x_P are tied to their imputed data
 * yaug_P (precision λ) and those to x_P, so x_P moves by about one noise
 * sd per iteration while its posterior spread is about δ^{-1/2} per
 * increment: a slow data-augmentation walk. δ | x sees x_P's roughness and
 * is held by it (τ of δ 300–1700 iterations on 128² photographs at 1 %
 * noise, bench/NOTES.md 2026-12-04).
 *
 * The move (a group move, Liu & Sabatti, Biometrika 87, 2000; the same
 * idea as a joint block update of a precision and its field, Knorr-Held &
 * Rue, Scand. J. Statist. 29, 2002, with the field's frame part held): with
 * c_P the frame's edge values carried out into the padding (each padding
 * pixel takes the value of the nearest frame pixel, around the periodic
 * grid; on a volume the nearest frame voxel, the frame box's nearest index
 * along each of the three axes), a function of x_F alone, and e = √λ (yaug_P − (Ax)_P) held fixed,
 *     T_ρ: δ → δ e^{−2ρ},  x_P → c_P + e^{ρ} (x_P − c_P),
 *          yaug_P → yaug_P + (e^{ρ} − 1) (A d)_P,  d = x_P − c_P (0 on F),
 * x_F, λ fixed. Its Jacobian is e^{(n_P − 2) ρ}; ρ is moved by random-walk
 * Metropolis steps on f(ρ) = π(T_ρ state) e^{(n_P − 2) ρ} started at 0
 * (symmetric on the additive group of ρ, so each step leaves π invariant
 * by Liu & Sabatti's theorem 1 with a Metropolis kernel on the group). The
 * padding's own roughness then scales with δ^{-1/2} and no longer holds δ:
 * along the path δ sees only the frame's increments, the frame-padding
 * increments and the frame's data.
 * log f(ρ) = −ρ (2a_δ + rank − n_P) − b_δ δ' − δ'/2 Σ_e (a_e + e^{ρ} b_e)²
 *            − λ/2 (2 (e^{ρ} − 1) G1 + (e^{ρ} − 1)² G2),
 * a_e, b_e the increment e of (x_F, c_P) and of d, each times √w_e, the
 * prior's weight of e's axis (1 on a frame; on a volume (voxel_x /
 * voxel_a)² along axis a, pp_prior_eigen_shape), rank that of Q on the
 * grid and n_P the grid's elements less the frame's (2-D or 3-D alike),
 * G1 = <A d, A x − y>_F, G2 = ‖A d‖²_F. All five sums are taken once per
 * iteration; the steps cost O(1) each.
 * Volumes (measured 2026-12-04, 4 chains x 4000 after 500 burn-in, R's
 * posterior ess_bulk of δ, τ = draws / ESS): the demo z-stack (16x64x64,
 * pad grid 28x80x80) ESS 247 → 466 (τ 65 → 34, seed 103) and 368 → 578
 * (τ 44 → 28, seed 104); a smooth 12x48x48 crop of a larger simulated
 * scene, voxel 0.1 x 0.3 µm, ESS 190 → 312 (τ 84 → 51). Time per
 * iteration ×1.35, so ESS per second ×1.1–1.4 only: the frame's own
 * increments then pin δ (ρ's steps are ~1/√(2 n_F)). A scene that is
 * zero just outside the volume (simulate --boundary pad) still needs
 * τ ~2400 with or without the move, as frames do (README).
 * Cost per iteration: three transforms (x from x-hat, A d) and three grid
 * passes. Memory: two real grids and a half spectrum per chain. */
#ifndef PIXPOST_PADSCALE_H
#define PIXPOST_PADSCALE_H

#include "pixpost/fft.h"
#include "pixpost/status.h"

struct pp_sampler;
struct pp_chain;

typedef struct pp_padscale pp_padscale;

/* State for chain runs of sampler s (pad boundary, gmrf1). *out NULL on
 * failure (PP_ERR_NOMEM). */
pp_status pp_padscale_create(const struct pp_sampler *s, pp_padscale **out);
void pp_padscale_free(pp_padscale *p); /* accepts NULL */

/* First half, from the draw's half spectrum xhat (not modified): x on the
 * grid, c_P, d, A d and the increment sums. Three transforms. */
void pp_padscale_prepare(pp_padscale *p, const struct pp_sampler *s, const struct pp_chain *c,
                         const pp_complex *xhat);

/* Second half, after the padding was redrawn: c->rbuf holds N A x, c->yaug
 * the augmented frame. Moves c->delta, the padding of c->yaug and c->rbuf
 * with ρ; adds the change of the frame's residual sum of squares to
 * *ss_obs and *ss and that of Σ x over the grid to *xsum. Returns the
 * number of accepted steps. */
int pp_padscale_move(pp_padscale *p, const struct pp_sampler *s, struct pp_chain *c, double *ss_obs,
                     double *ss, double *xsum);

#endif
