/* pixpost — an exact conditional refresh of the photon field on the
 * padding of --boundary pad (the pixels beyond the frame, where the prior
 * alone holds the field), which moves the free level with it; see
 * src/padmove.c for the method, its invariance argument and its cost.
 * Used by src/sampler_pcn.c only. */
#ifndef PIXPOST_PADMOVE_H
#define PIXPOST_PADMOVE_H

#include "hyper_photon.h"

/* The widest strip of the preconditioner (pixels across): a wider padding
 * is cut into strips of at most this many rows (or columns), so the
 * factors stay below (len/2 + 1) 64 doubles per row of the padding. */
#define PM_MAX_ACROSS 64

/* One strip of the refreshed padding (src/padmove.c), the preconditioner's
 * part: n pixels across, the whole grid's length len along. */
typedef struct pp_padstrip {
    size_t n, len;
    size_t *pos;    /* position in B of the strip's pixel (i, j): pos[i * len + j] */
    double *chol;   /* per frequency k <= len/2, the n x n lower Cholesky factor of T(k) */
    size_t *band;   /* per frequency, the factor's bandwidth (below the diagonal) */
    pp_fft *fft;    /* n transforms of length len */
    double *w;      /* n x len reals */
    pp_complex *rf; /* n x (len/2 + 1) */
} pp_padstrip;

/* Per chain slot: the refreshed block B (padding pixels at least dmin
 * pixels from the frame, Chebyshev distance on the periodic grid: a band of
 * rows and a band of columns, each cut into strips), the conjugate-gradient
 * vectors (5 vectors of |B| doubles) and the strips. */
typedef struct pp_padmove {
    size_t nb;  /* pixels in B */
    size_t *ib; /* their grid indices, increasing */
    double *x, *r, *p, *ap, *zz;
    pp_padstrip *st; /* ns strips */
    int ns;
    unsigned long cg_iters; /* conjugate-gradient iterations, summed (diagnostics) */
    unsigned long cg_fail;  /* solves that did not reach the tolerance (the move rejected) */
} pp_padmove;

/* For a frame (depth 1) of s->height x s->width at the origin of the
 * s->gh x s->gw grid. Returns PP_OK (*out NULL when B is empty),
 * PP_ERR_NOMEM, or PP_ERR_NUMERIC for a prior not even in each axis. Free
 * with pp_padmove_free (NULL accepted). */
pp_status pp_padmove_create(const pp_sampler *s, size_t dmin, pp_padmove **out);
void pp_padmove_free(pp_padmove *pm);

/* One Metropolis-Hastings step on z_B, delta and z outside B held:
 *   z_B' = mu_B + rho (z_B - mu_B) + sqrt(1 - rho^2) xi,
 * mu_B and (delta Q_BB)^-1 the mean and covariance of z_B given the rest
 * under the prior (flat level), xi ~ N(0, (delta Q_BB)^-1); accepted with
 * the likelihood ratio. rho in [0, 1). Returns the acceptance probability;
 * *moved = 1 when accepted (the view's state u, z, x, A x, m, Phi then holds
 * the new field). Needs a free level (q(0) = 0). 6 grid transforms plus 2
 * per conjugate-gradient iteration (and the strips' own, src/padmove.c). */
double pp_padmove_step(const pp_sampler *s, struct pp_chain *c, pp_padmove *pm,
                       const pp_hphot_view *v, double rho, int *moved);

#endif
