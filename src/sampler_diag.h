/* pixpost — the sampler's diagnostics (src/sampler_diag.c), called by
 * src/sampler.c after each round; not installed. */
#ifndef PIXPOST_SAMPLER_DIAG_H
#define PIXPOST_SAMPLER_DIAG_H

#include <stddef.h>
#include "sampler_internal.h"

/* Scalar diagnostics, pixel maps and their warnings (src/sampler_diag.c),
 * from the chains' moments (c->mom, c->mean1, s->half_n) and the trace;
 * drops the results of an earlier call first (its diagnostics, maps and
 * every warning after the first s->nwarn_setup). */
pp_status pp_sampler_diagnose(pp_sampler *s);
/* After pp_sampler_diagnose: 1 when every stopping criterion holds (R-hat
 * <= 1.01, bulk- and tail-ESS >= 100 per chain for every trace column, the
 * pixel-map rule of the warnings); else 0, with the first failing criterion
 * in why (a short phrase). */
int pp_sampler_criteria(const pp_sampler *s, char *why, size_t len);

#endif
