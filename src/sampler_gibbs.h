/* pixpost — pieces of the Gibbs kernel (src/sampler_gibbs.c) that the mtc
 * kernel (src/sampler_mtc.c) uses too; not installed. */
#ifndef PIXPOST_SAMPLER_GIBBS_H
#define PIXPOST_SAMPLER_GIBBS_H

#include "sampler_internal.h"

/* Full-spectrum sums of one conditional draw (already divided by N). */
typedef struct pp_fused_sums {
    double resid; /* ||A x - y||^2 against the chain's data spectrum */
    double quad;  /* (x - m)' Q (x - m) */
    double cvar;  /* conditional variance of one pixel */
    double v0;    /* ||A (x - m)||^2 over the entries with q > 0 (for ASIS) */
    double c0;    /* <A (x - m), y - A m> over the same entries */
    double x00;   /* x-hat at frequency (0, 0) (real), not divided by N */
} pp_fused_sums;
/* x | lambda, delta, y with the chain's otf, drawing the white noise from
 * the chain's generator: cbuf receives mu/N (want_mu; otherwise only its
 * edge columns are written); cbuf2 receives x-hat (want_ax = 0) or A x-hat
 * (1), or is left untouched (-1: an iteration that needs only the sums, or
 * the sums and the probes). probes, if not NULL, receives the draw x at the
 * s->nprobe probe pixels, summed inside the pass. One pass, no transform. */
pp_fused_sums pp_gibbs_fused_pass(const pp_sampler *s, pp_chain *c, int want_ax, int want_mu,
                                  double *probes);
/* Stores a kept draw: one c2r of mu (moments), the conditional variance,
 * the trace row (lambda, delta, loglik, width; probes from cbuf2 = x-hat
 * unless probes_done), with regions_hat and draw statistics those of x-hat
 * in cbuf2 (pp_chain_draw_stats_hat: one more c2r, through cbuf).
 * Increments c->kept. */
void pp_gibbs_record(const pp_sampler *s, pp_chain *c, const pp_fused_sums *f, double loglik,
                     int probes_done, int regions_hat);

#endif
