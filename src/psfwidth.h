/* pixpost — PSF width sampling (src/psfwidth.c), used by the sampler and
 * the gibbs and mtc kernels; not installed. */
#ifndef PIXPOST_PSFWIDTH_H
#define PIXPOST_PSFWIDTH_H

#include "sampler_internal.h"

/* ---- PSF width sampling (src/psfwidth.c) --------------------------------
 * Per-chain state: a kernel and grid to rebuild the PSF, two transfer
 * functions (current, proposal), the proposal scale (adapted in burn-in). */
typedef struct pp_width pp_width;
pp_status pp_width_create(const pp_sampler *s, pp_width **out);
void pp_width_free(pp_width *w);
/* Starts chain c at width `value` (builds its transfer function; sets
 * c->otf, c->otf2, c->width). Allocates nothing. */
void pp_width_start(const pp_sampler *s, pp_chain *c, double value);
/* Log density (up to a constant) of the width whose transfer function is
 * otf/otf2, for chain c; ctx is the caller's. */
typedef double (*pp_width_logp)(const pp_sampler *s, const pp_chain *c, const pp_complex *otf,
                                const double *otf2, void *ctx);
/* One random-walk Metropolis step on the width (uniform prior on the
 * spec's range): *logp holds the current value's log density on entry and
 * the new state's on exit. adapt_n > 0 (burn-in only) adapts the step
 * (Robbins-Monro towards acceptance 0.44) with gain adapt_n^-0.6. Cost:
 * one kernel rebuild and one r2c per proposal inside the range. Returns 1
 * if accepted. */
int pp_width_step(const pp_sampler *s, pp_chain *c, pp_width_logp f, void *ctx, double *logp,
                  unsigned long adapt_n);
/* Acceptance rate of the width steps after burn-in (0 if none). */
double pp_width_acceptance(const pp_width *w);

#endif
