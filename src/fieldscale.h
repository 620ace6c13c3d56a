/* pixpost — the adaptive prior's block field-scale move (internal; issue
 * 16, item 2): a block's log-precision s_B moved together with the
 * field's detail inside the block.
 *
 * Why: s_B | x is Gibbs-sampled in the centred form, where it is pinned
 * by the block's 2 n_B increments (sd of s_B about 1/√n_B) while on flat
 * blocks (and on the padding, which has no data) the increments follow
 * s_B: each iteration then moves s_B by about 0.1–0.2 against a posterior
 * spread of ~0.6, and the level δ = exp(mean s) and κ inherit it (lag-1
 * autocorrelation of δ about 0.9). The move is the block's non-centred
 * form (Yu & Meng, JCGS 20, 2011, per block; a joint update of a
 * precision and its field as in Knorr-Held & Rue, Scand. J. Statist. 29,
 * 2002, but deterministic in the field):
 *     T_ρ: x_B → x_B + (e^{ρ} − 1) v,  v = Π x_B,  s_B → s_B − 2ρ,
 *          yaug_P → yaug_P + (e^{ρ} − 1) (A v)_P   (pad),
 * Π the orthogonal projection of the block's values off its held modes:
 * the 2-D DCT-II modes (u, v) whose frequency (π u / rows, π v / columns)
 * the PSF passes with |OTF| ≥ FS_HELD_OTF of the DC's, and always the
 * block's mean (mode 0, 0). So only the detail the data cannot see is
 * scaled with the block's precision; the content the data pin stays (with
 * the mean alone held, a first version, the data rejected most moves on
 * blocks with a gentle slope). Every other value (τ, κ, λ, the other
 * blocks, e = √λ (yaug_P − (Ax)_P)) is held. ρ ~ N(0, σ²) is symmetric,
 * and T_{−ρ} undoes T_ρ (Π T_ρ x = e^{ρ} Π x and the held part is
 * unchanged), so Metropolis–Hastings accepts with π(T_ρ z) / π(z) times
 * the Jacobian e^{(n_B − K) ρ} (K held modes; s_B and yaug_P are shifted,
 * Jacobian 1). In π: e^{n_B s_B/2} gives −n_B ρ; the increments with an
 * end in B change (w d² → w' d'², weights of those starting in B times
 * e^{−2ρ}: on the scaled detail alone they would not change), so the ratio is
 * exp((n_B − K) ρ − n_B ρ − ½ Δ(Σ w d² over those increments)
 * + Δ log p(s | κ) + Δ log p(L) − λ/2 (2 (e^{ρ} − 1) G1 + (e^{ρ} − 1)² G2)),
 * G1 = <A v, A x − y>, G2 = ‖A v‖² over the observed pixels (the frame;
 * with pad the padding's noise e is held, so its pixels do not count).
 * A v is a direct convolution with the PSF on the grid (window of the
 * block widened by the kernel's radius): exact to rounding.
 * Cost per sweep: Σ_B n_B k² multiply-adds (k the kernel's side), 2 n_B K
 * for Π and the block windows; memory: the k² kernel, one window and the
 * held modes' basis images (at most 4 block shapes × n_B² doubles) per
 * chain. */
#ifndef PIXPOST_FIELDSCALE_H
#define PIXPOST_FIELDSCALE_H

#include <stddef.h>
#include "adaptive.h"
#include "pixpost/fft.h"
#include "pixpost/rng.h"
#include "pixpost/status.h"

typedef struct pp_fieldscale pp_fieldscale;

/* For an h x w grid with the transfer function otf (half spectrum of the PSF on the grid,
 * centre at pixel (0, 0)) of a kernel of side ksize, and its FFT plans.
 * *out is NULL when the grid is too small for the move (it then does
 * nothing) or on failure (PP_ERR_NOMEM). */
pp_status pp_fieldscale_create(size_t h, size_t w, size_t ksize,
                               size_t block, const pp_complex *otf, const pp_fft *fft,
                               pp_fieldscale **out);
void pp_fieldscale_free(pp_fieldscale *f); /* accepts NULL */

/* One sweep of the move over every block, in order. x, the field; ax = A x
 * and y the data on the grid (y's latent pixels = yaug's, moved with the
 * field); obs, the grid's observed-pixel bytes (src/observed.h; NULL: every
 * grid pixel is observed); wh, wv the weights (moved with s); lambda the
 * noise precision. Adds the change of the observed residual sum of squares
 * to *ss_obs. cens (NULL: none), the grid's censored-pixel bytes: a move
 * that would carry a censored pixel's latent datum below level is
 * rejected (its density is 0 there).
 * Returns the accepted moves. */
unsigned pp_fieldscale_sweep(pp_fieldscale *f, pp_adapt *a, double *x, double *ax, double *y,
                             double *wh, double *wv, double lambda,
                             const unsigned char *obs, const unsigned char *cens,
                             double level, pp_rng *rng, double *ss_obs);

#endif
