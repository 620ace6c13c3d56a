/* pixpost — x | W, λ, δ by perturbation–optimisation with PCG (internal).
 *
 * Model (Gaussian noise, periodic H x W grid or D x H x W volume, PSF as
 * its transfer function): precision P = λ AᵀA + δ Dᵀ W D, with A the
 * periodic convolution whose half spectrum is otf (FFTW's r2c layout,
 * (D·H) x (W/2+1), otf[0] the DC gain), D, W as in incr.h. One draw
 * (Orieux, Féron & Giovannelli, IEEE SPL 2012): η = λ Aᵀ(y + λ^{-1/2} ε₁)
 * + δ^{1/2} Dᵀ(√w ⊙ ε₂), ε₁ ~ N(0, I_N), ε₂ ~ N(0, I_kN) (k = 2 increments
 * per voxel on a frame, 3 on a volume); solve P x = η; then x ~ N(P⁻¹λAᵀy, P⁻¹)
 * up to the solver tolerance. Preconditioner "scal" of
 * bench/adaptive/NOTES.md §4 (see po_solve.c).
 *
 * Plan once, execute many: pp_po_create allocates and plans for one grid;
 * pp_po_draw allocates nothing. One workspace serves one thread at a time.
 */
#ifndef PIXPOST_PO_SOLVE_H
#define PIXPOST_PO_SOLVE_H

#include "pixpost/fft.h"
#include "pixpost/rng.h"
#include "pixpost/status.h"
#include <signal.h>
#include <stddef.h>

typedef struct pp_po pp_po;

/* Workspace for a grid of the given shape (rank 2: h x w, rank 3: d x h x
 * w; h, w >= 2, d >= 1), the axes' weight factors axis = {c_z, c_y, c_x}
 * of src/adaptive.h (NULL: all 1; they shape the preconditioner only, the
 * weights passed to pp_po_draw already hold them), FFT plans of the given
 * effort (PP_FFT_ESTIMATE / PP_FFT_MEASURE). Memory: 8 real grids (9 on
 * a volume) + one half spectrum (complex) + three real half spectra ≈
 * 84 B/px (92 B/voxel). *out is NULL on failure (PP_ERR_ARG,
 * PP_ERR_NOMEM). */
pp_status pp_po_create(const pp_shape *shape, const double axis[3], int effort, pp_po **out);

/* Accepts NULL. */
void pp_po_free(pp_po *po);
/* Grid k (0 or 1) of the solver's working buffers (N doubles each): free
 * for the caller's use between draws (a draw overwrites them). */
double *pp_po_scratch(pp_po *po, int k);

/* While *stop (if stop is not NULL) is non-zero, pp_po_draw gives up at its
 * next CG iteration with PP_ERR_INTERRUPTED (a draw on a large grid can
 * take seconds: a caller's stop request must not wait for it). */
void pp_po_set_stop(pp_po *po, const volatile sig_atomic_t *stop);

/* What one draw did: CG iterations and the final relative residual
 * ‖r‖₂/‖η − η̄‖₂ of CG's recursively updated residual (the mean of x is solved
 * exactly, see po_solve.c, so η's mean η̄ is left out of the reference);
 * pp_po_draw_rj: the true residual ‖z − PG‖₂/‖z − z̄‖₂, whether the move was
 * accepted and its log acceptance ratio (pp_po_draw: accepted 1, 0). */
typedef struct pp_po_stats {
    size_t iters;
    double relres;
    int accepted;
    double logratio;
    int unresolved; /* pp_po_draw_rj: the ratio was below its rounding (see po_solve.c) */
} pp_po_stats;

/* One draw of x | W, λ, δ into x (N = d*h*w reals), warm-started at the x
 * passed in. otf: d*h*(w/2+1) values (not modified); y: the frame, N reals;
 * lam, delta > 0; wz, wh, wv: N positive finite weights each (wz on a
 * volume only, may be NULL on a frame); rng advanced by 3N normals (ε₁ then
 * ε₂'s horizontal then vertical part; a volume: 4N, then ε₂'s z part); tol > 0: stop
 * at ‖r‖₂ ≤ tol‖η − η̄‖₂; cap: most iterations. Needs λ|otf[0]|² > 0 (the
 * constant field is fixed by the data alone, Dᵀ W D being blind to it).
 * None of the arrays may alias x. stats may be NULL.
 * Returns PP_OK when converged; PP_ERR_LIMIT when cap iterations were done
 * without reaching tol (x then holds the last iterate and stats says how
 * far it got: the caller must count this, never ignore it); PP_ERR_ARG on
 * a bad argument (x untouched); PP_ERR_NUMERIC if CG broke down (x
 * undefined); PP_ERR_INTERRUPTED when asked to stop (pp_po_set_stop; x
 * then holds the last iterate). Cost: 2 FFT pairs per CG iteration + 3 per draw (see
 * po_solve.c). */
pp_status pp_po_draw(pp_po *po, const pp_complex *otf, const double *y, double lam, double delta,
                     const double *wz, const double *wh, const double *wv, pp_rng *rng,
                     double tol, size_t cap, double *x, pp_po_stats *stats);

/* One exact Metropolis–Hastings move of x | W, λ, δ by reversible-jump
 * perturbation–optimisation (Gilavert, Moussaoui & Idier, IEEE TSP 63,
 * 2015; acceptance ratio derived in po_solve.c): z = (2 − α)Px + αλAᵀy +
 * √(α(2 − α)) η₀ with η₀ ~ N(0, P), G ≈ P⁻¹z by PCG from a start that does
 * not depend on x (twice the Fourier operator's posterior mean), stopped once the last 10 steps lowered the squared
 * P-norm of the error by ≤ eps² (or at relative residual 1e-14, or at
 * cap), proposal x' = G − x accepted
 * with probability min(1, exp((x' − x)ᵀ(z − PG)/α)). Leaves N(P⁻¹λAᵀy,
 * P⁻¹) invariant whatever eps and cap are (they set the cost and the
 * acceptance: about 2Φ(−‖e‖_P/√2) at α = 1, e = G − P⁻¹z, i.e. ≈ 0.94 at
 * ‖e‖_P = 0.1). alpha in (0, 2): 1 draws x' independently of x when
 * accepted, above 1 over-relaxes (x' anti-correlated with x). Arguments
 * as pp_po_draw, x the chain's current state (no warm start: x is only
 * read for z and the ratio); rng advanced as pp_po_draw's plus one
 * uniform. Returns PP_OK (x moved or not: stats->accepted), PP_ERR_LIMIT
 * when CG stopped at cap (the move is still made and still exact, but
 * costly: the caller counts it), PP_ERR_ARG (also alpha outside (0, 2)),
 * PP_ERR_NUMERIC, PP_ERR_INTERRUPTED (x untouched in all three). Cost:
 * 2 FFT pairs per CG iteration + 6 per draw (η's data term, P x, the
 * start, P G₀, M⁻¹r₀, the true residual P G). */
pp_status pp_po_draw_rj(pp_po *po, const pp_complex *otf, const double *y, double lam,
                        double delta, const double *wz, const double *wh, const double *wv,
                        pp_rng *rng, double alpha, double eps, size_t cap, double *x,
                        pp_po_stats *stats);

#endif
