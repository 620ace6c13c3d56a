/* pixpost — convergence diagnostics on arrays (no sampler coupling).
 *
 * Public here: pp_diag_scalar, the diagnostics of one scalar quantity,
 * which every run reports per trace column (pp_result.diag). The two
 * functions that compute them are internal (src/pixpost/diag_extra.h);
 * what they compute, and so what the fields mean:
 *
 *
 * 1. pp_diag_compute(): for one scalar quantity with draws laid out chain by
 *    chain, x[c * n + i] (c < chains, i < n), the diagnostics of Vehtari,
 *    Gelman, Simpson, Carpenter & Buerkner, "Rank-normalization, folding, and
 *    localization: an improved R-hat", Bayesian Analysis 16 (2021), computed
 *    exactly as R's `posterior` package 1.4.0 does (its R sources were read
 *    and followed step by step; tests/ref_diag_posterior.py checks the
 *    agreement):
 *    - split chains: each chain becomes two half-chains of h = floor(n/2)
 *      draws, the first h and the last h; with odd n the middle draw is
 *      dropped from every split quantity (it still counts in mean, sd and
 *      in the median / quantiles, which posterior takes over all draws);
 *    - rank normalisation: ranks over all split draws together, ties get
 *      their average rank, z = Phi^-1((r - 3/8) / (S - 2*3/8 + 1)) (Blom),
 *      S the number of split draws;
 *    - rhat = max(bulk R-hat of z, tail R-hat of the rank-normalised folded
 *      draws |x - median(x)|), each the split-R-hat
 *      sqrt(((n-1)/n W + B/n) / W) on half-chains of length n = h;
 *    - ess_bulk = ESS of z; ess_basic = ESS of the split draws themselves;
 *      ess_tail = min of the ESS of the indicators I(x <= q05) and
 *      I(x <= q95), q the type-7 (R default) sample quantile of all draws;
 *    - ESS = S / tau with tau from the autocovariances averaged over the
 *      half-chains (computed by FFT, see src/diag.c), the variance estimate
 *      var+ = (h-1)/h W + B/h, Geyer's initial positive sequence on sums of
 *      adjacent pairs of autocorrelations and the initial monotone
 *      sequence; tau is bounded below by 1/log10(S), so ESS <= S log10(S)
 *      (posterior's cap, which it reports with a warning; we cap silently);
 *    - mcse_mean = sd / sqrt(ess_basic) (posterior's mcse_mean: sd of all
 *      draws over the square root of the split, non-rank ESS).
 *
 * 2. pp_diag_pixel_maps(): per-pixel classic split-R-hat and an MCSE of the
 *    pooled mean from streaming half-chain moments (no draws stored).
 *
 * Cost of pp_diag_compute: O(S log S) time (one sort per rank normalisation,
 * one FFT pair per half-chain and per ESS), about 5 S doubles of scratch
 * plus one FFT plan of length ~2h; it allocates and frees everything it
 * uses. pp_diag_pixel_maps is O(nhalves * npix) with nhalves doubles of scratch.
 * Both are re-entrant (may be called from several threads at once).
 */
#ifndef PIXPOST_DIAG_H
#define PIXPOST_DIAG_H

#include "pixpost/status.h"
#include <stddef.h>

/* Diagnostics of one scalar quantity.
 *
 * NaN policy (values are NaN, the call still returns PP_OK):
 * - any draw NaN or +-Inf: every field is NaN (posterior would return a
 *   finite rhat / ess_bulk for draws with Inf, since ranks ignore magnitude;
 *   we prefer not to report diagnostics for draws that are not numbers);
 * - as in posterior, a quantity whose input is constant (max - min below
 *   DBL_EPSILON, posterior's is_constant) is NaN: constant draws give NaN
 *   rhat, ess_*, mcse_mean (mean is the value, sd is 0); a tail indicator
 *   that is all 0 or all 1 (heavy ties) makes ess_tail NaN;
 * - too few draws: rhat (and its parts) NaN when n < 4 (half-chains of one
 *   draw have no variance), every ESS and mcse_mean NaN when n < 6
 *   (posterior needs at least 3 draws per half-chain); sd NaN for a single
 *   draw.
 * - rhat is NaN when either part is NaN (posterior's max() with NA);
 * - every half-chain constant while their values differ gives rhat_bulk =
 *   +Inf (within variance 0), as in posterior (rhat is then +Inf, or NaN if
 *   the folded draws are constant, e.g. two chains stuck at two values). */
typedef struct pp_diag_scalar {
    double rhat;      /* max(rhat_bulk, rhat_tail) */
    double rhat_bulk; /* split-R-hat of the rank-normalised draws */
    double rhat_tail; /* split-R-hat of the rank-normalised folded draws */
    double ess_bulk;  /* ESS of the rank-normalised split draws */
    double ess_tail;  /* min(ESS of I(x <= q05), ESS of I(x <= q95)) */
    double ess_basic; /* ESS of the split draws (no ranks); posterior's ess_mean */
    double mcse_mean; /* sd / sqrt(ess_basic) */
    double mean;      /* mean of all chains * n draws */
    double sd;        /* sample sd (denominator chains*n - 1) of all draws */
} pp_diag_scalar;

#endif
