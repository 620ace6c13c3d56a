/* pixpost — the sampler's accessors the tree uses beyond the public API
 * (pp_sampler_result gathers what they give into a pp_result).
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/sampler.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_SAMPLER_EXTRA_H
#define PIXPOST_SAMPLER_EXTRA_H

#include <stddef.h>
#include "pixpost/fft_plans.h"
#include "pixpost/sampler.h"

/* The configuration actually used (kind resolved from AUTO, etc.). */
const pp_sampler_config *pp_sampler_config_used(const pp_sampler *s);

const pp_run_length *pp_sampler_run_length(const pp_sampler *s);

/* For a memory check before pp_sampler_run (src/cli/memcheck.c): *run_bytes
 * the bytes the run will still allocate beyond what pp_sampler_create did
 * (the park stores of a run in rounds with more chains than threads, the
 * R-hat map of each round's check, the result's six maps), *threads the
 * threads that each hold one set of working buffers (min(threads,
 * chains)). */
void pp_sampler_memory_plan(const pp_sampler *s, size_t *run_bytes, unsigned *threads);

/* Frame pixels that were observed (finite) and unobserved (NaN). */
void pp_sampler_observed(const pp_sampler *s, size_t *observed, size_t *missing);

/* Convergence diagnostics (valid after a successful run): one
 * pp_diag_scalar (include/pixpost/diag.h) per trace column, in column
 * order; per-pixel split-R-hat and MCSE of the mean maps, frame-sized, or
 * NULL when a half-chain kept fewer than 2 draws. */
struct pp_diag_scalar;
const struct pp_diag_scalar *pp_sampler_diagnostics(const pp_sampler *s);

/* Short text naming how the bounds were computed (for summary.json). */
const char *pp_sampler_bound_method(const pp_sampler *s);

/* Timings of the last run, seconds. */
double pp_sampler_seconds(const pp_sampler *s);

/* Where the grid's FFT plans came from (cfg.fft_effort and the wisdom
 * loaded before pp_sampler_create; include/pixpost/fft_plans.h). */
pp_fft_plans pp_sampler_fft_plans(const pp_sampler *s);

/* Warnings raised while setting up or sampling (plain sentences): R-hat,
 * ESS, acceptance, a burn-in too short to adapt, a hyperprior that outweighs
 * the data. Each says the results are less trustworthy than they look; the
 * command line's --strict exits 3 when there is any. Count and i-th (NULL
 * when i >= count); the strings live until pp_sampler_free(). */
size_t pp_sampler_warning_count(const pp_sampler *s);
const char *pp_sampler_warning(const pp_sampler *s, size_t i);

/* The part of the i-th warning (PP_WARN_OTHER when i >= count). */
pp_warning_part pp_sampler_warning_part(const pp_sampler *s, size_t i);

/* The number of iterations after burn-in (--iters) to ask for so that every
 * convergence criterion that failed would pass, or 0 when none failed (or
 * before a successful run). An estimate, from two rules:
 *  - ESS: past burn-in, a chain's ESS grows about linearly with its number
 *    of draws, so a failing bulk- or tail-ESS (of any trace column or probe
 *    pixel) reaches 100 per chain after about iters * 100 * chains / ESS
 *    iterations; the largest such figure, times a margin for the ESS
 *    estimate's own error (src/sampler_diag.c), is taken.
 *  - R-hat (a column, or the pixel map's rule): chains that disagree need
 *    more draws by an amount no diagnostic predicts; the common practice
 *    of at least doubling the run is taken.
 * The larger of the two, rounded up to two significant digits. While the
 * chains disagree the ESS per draw of a short run looks better than it is,
 * so the figure is then a lower bound (measured in src/sampler_diag.c). "iters"
 * here is what the diagnostics saw: kept draws per chain times --thin.
 * Reads only the finished diagnostics (pp_sampler_diagnostics and the
 * R-hat map); cost: one pass over the trace columns and the map. */
unsigned long pp_sampler_iters_suggested(const pp_sampler *s);

void pp_sampler_convergence(const pp_sampler *s, pp_convergence *out);

/* One plain sentence saying whether the run converged and, when not, which
 * part failed (the hyperparameters, the pixel estimates, both, or only
 * other warnings), what that means for the pixel bounds (when only global
 * columns fail, the pixel bounds are sound as far as the diagnostics can
 * tell) and the --iters to ask for. Written into buf (always
 * NUL-terminated, truncated to len - 1 bytes; len >= 1); PP_VERDICT_MAX
 * bytes always suffice. Reads only *cv, so every program holding the
 * figures words them the same way. */
#define PP_VERDICT_MAX 512
void pp_convergence_verdict(const pp_convergence *cv, char *buf, size_t len);

/* Which part kept the run from converging, as a short label for tables
 * (batch manifests): "" when converged, else "hyperparameters", "pixels",
 * "hyperparameters and pixels", or "other" (only warnings of neither part).
 * Static text. */
const char *pp_convergence_failed(const pp_convergence *cv);

void pp_sampler_solver_stats(const pp_sampler *s, pp_solver_stats *out);

/* Notes (plain sentences): information about the data or the model that
 * does not make a run less trustworthy, e.g. that the PSF's transfer
 * function is zero at some frequencies (every Gaussian PSF of sigma above
 * about 1.5 px), where the estimate comes from the prior. Never counted as
 * warnings. Valid after pp_sampler_create(); same lifetime and NULL rule as
 * the warnings. */
size_t pp_sampler_note_count(const pp_sampler *s);
const char *pp_sampler_note(const pp_sampler *s, size_t i);

#endif
