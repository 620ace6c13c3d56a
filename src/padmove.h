/* pixpost — an exact conditional refresh of the photon field on the
 * padding of --boundary pad (the pixels beyond the frame, where the prior
 * alone holds the field), which moves the free level with it; see
 * src/padmove.c for the method, its invariance argument and its cost.
 * Used by src/sampler_pcn.c only. */
#ifndef PIXPOST_PADMOVE_H
#define PIXPOST_PADMOVE_H

#include "hyper_photon.h"

/* Per-chain state: the refreshed block B (padding pixels at least dmin
 * pixels from the frame, Chebyshev distance on the periodic grid) and the
 * conjugate-gradient vectors (5 vectors of |B| doubles). */
typedef struct pp_padmove {
    size_t nb;     /* pixels in B */
    size_t *ib;    /* their grid indices, increasing */
    double *x, *r, *p, *ap, *zz;
    unsigned long cg_iters; /* conjugate-gradient iterations, summed (diagnostics) */
    unsigned long cg_fail;  /* solves that did not reach the tolerance (the move rejected) */
} pp_padmove;

/* For a frame (depth 1) of s->height x s->width at the origin of the
 * s->gh x s->gw grid. Returns PP_OK (*out NULL when B is empty) or
 * PP_ERR_NOMEM. Free with pp_padmove_free (NULL accepted). */
pp_status pp_padmove_create(const pp_sampler *s, size_t dmin, pp_padmove **out);
void pp_padmove_free(pp_padmove *pm);

/* One Metropolis-Hastings step on z_B, delta and z outside B held:
 *   z_B' = mu_B + rho (z_B - mu_B) + sqrt(1 - rho^2) xi,
 * mu_B and (delta Q_BB)^-1 the mean and covariance of z_B given the rest
 * under the prior (flat level), xi ~ N(0, (delta Q_BB)^-1); accepted with
 * the likelihood ratio. rho in [0, 1). Returns the acceptance probability;
 * on acceptance the view's state (u, z, x, A x, m, Phi) holds the proposal.
 * Needs a free level (q(0) = 0). 6 transforms plus 4 per conjugate-gradient
 * iteration. */
double pp_padmove_step(const pp_sampler *s, struct pp_chain *c, pp_padmove *pm,
                       const pp_hphot_view *v, double rho);

#endif
