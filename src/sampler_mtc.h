/* pixpost — the mtc kernel's marginal density (src/sampler_mtc.c), for the
 * tests; not installed. */
#ifndef PIXPOST_SAMPLER_MTC_H
#define PIXPOST_SAMPLER_MTC_H

#include "sampler_internal.h"

/* Log marginal density log p(y | lambda, delta) of the periodic model with
 * the transfer function |A|^2 = otf2, over the frequencies where q > 0
 * (src/sampler_mtc.c; s must be an mtc sampler with periodic boundaries). */
double pp_mtc_log_marginal(const pp_sampler *s, const double *otf2, double lam, double del);

#endif
