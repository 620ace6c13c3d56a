/* pixpost — the diagnostics on arrays (include/pixpost/diag.h describes them).
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/diag.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_DIAG_EXTRA_H
#define PIXPOST_DIAG_EXTRA_H

#include <stddef.h>
#include "pixpost/diag.h"
#include "pixpost/status.h"

/* Fills *out with the diagnostics of x[c * n + i], c < chains, i < n.
 * x: chains * n doubles, read only, not retained; out: written in full on
 * PP_OK (undefined fields NaN, see above) and left unchanged on failure.
 * chains >= 1, n >= 1. Errors: PP_ERR_ARG (NULL pointer, chains or n zero),
 * PP_ERR_LIMIT (chains * n overflows), PP_ERR_NOMEM (scratch or FFT plan). */
pp_status pp_diag_compute(const double *x, size_t chains, size_t n, pp_diag_scalar *out);

/* Per-pixel maps from streaming half-chain moments.
 *
 * half_mean[j][p] and half_m2[j][p] (j < nhalves, p < npix) are the mean and
 * the sum of squared deviations (Welford's M2) of pixel p over half-chain j;
 * every half-chain holds m draws. Typically nhalves = 2 * chains. Computes,
 * per pixel (BDA3, Gelman et al. 2013, section 11.4, with half-chains):
 *   W      = mean_j M2_j / (m - 1)                 within variance
 *   B/m    = sample variance (denominator nhalves-1) of the half-chain means
 *   var+   = (m - 1)/m W + B/m
 *   rhat   = sqrt(var+ / W)
 * and a batch-means MCSE of the pooled mean (each half-chain is one batch;
 * valid when a half-chain is much longer than the autocorrelation time):
 *   ess    = min(var+ / (var(half means) / nhalves), nhalves * m)
 *   mcse   = sqrt(var+ / ess)
 * i.e. mcse = sqrt(max(var(half means) / nhalves, var+ / (nhalves m))): the
 * cap at nhalves * m draws keeps a lucky small spread of the few batch means
 * from claiming more precision than independent draws would give.
 * With only nhalves batches this MCSE is itself uncertain (its variance
 * estimate has nhalves - 1 degrees of freedom): a rough map, not a bound.
 *
 * within_add (>= 0, usually 0) is added to W for rhat only: a sampler that
 * records a Rao-Blackwellised field mu = E[x | theta] passes the mean
 * conditional variance E[Var(x | theta)], so rhat is that of the draws x
 * (whose within variance is W + within_add), while mcse stays that of the
 * mean of mu, the estimator it reports.
 *
 * Outputs rhat, mcse, ess: npix doubles each; any of them may be NULL (not
 * computed). They must not alias the inputs. Undefined values: rhat is NaN
 * when W is 0 (a constant pixel) or any input is not finite; ess is NaN when
 * var+ is 0; mcse is 0 for a constant pixel (the draws agree exactly) and
 * NaN for non-finite input. Errors: PP_ERR_ARG for NULL inputs, nhalves < 2
 * or m < 2, PP_ERR_NOMEM (nothing is written).
 */
pp_status pp_diag_pixel_maps(const double *const *half_mean, const double *const *half_m2,
                             size_t nhalves, size_t m, size_t npix, double within_add,
                             double *rhat, double *mcse, double *ess);

#endif
