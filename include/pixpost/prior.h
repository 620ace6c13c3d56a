/* pixpost — Gaussian Markov random field priors, diagonal in Fourier space.
 *
 * Prior precision delta * Q with periodic eigenvalues (Rue & Held 2005):
 *   gmrf1                 q(k) = 4 - 2cos(2 pi k1/H) - 2cos(2 pi k2/W)  (rank N-1)
 *   gmrf2                 q(k)^2                                          (rank N-1)
 *   matern:range=R,nu=V   (kappa^2 + q(k))^(nu+1), kappa = sqrt(8 nu)/R
 *                         (Lindgren, Rue & Lindstrom, JRSS-B 2011)
 *   adaptive:nu=V,block=B the default: a spatially adaptive GMRF on first-
 *                         order increments, precision D' W D with one weight
 *                         per increment, w = exp(s_block) tau, tau ~
 *                         Gamma(nu/2, nu/2) (Student-t increments, nu = 2)
 *                         and s one log-precision per B x B block (B = 8),
 *                         itself a first-order GMRF (src/adaptive.h). Its
 *                         eigenvalues here are gmrf1's (the stationary
 *                         reference that starts the chains).
 *   (default)             PP_PRIOR_DEFAULT, what pp_sampler_defaults sets:
 *                         no prior of its own but "the library's choice for
 *                         the noise model", resolved by pp_prior_resolve
 *                         (pp_sampler_create calls it, and the sampler's
 *                         used configuration, pp_result.config, and so
 *                         the result's summary name the prior that ran).
 * Keys for the stationary priors: delta=D fixes delta instead of sampling it; matern
 * also takes mean=M, a known prior mean. Without mean=M the zero frequency
 * carries no prior weight (the mean level is left to the data), so an
 * offset or background is never shrunk towards zero.
 */
#ifndef PIXPOST_PRIOR_H
#define PIXPOST_PRIOR_H

#include <stddef.h>
#include "pixpost/noise.h"
#include "pixpost/shape.h"
#include "pixpost/status.h"

typedef enum pp_prior_kind {
    PP_PRIOR_GMRF1,
    PP_PRIOR_GMRF2,
    PP_PRIOR_MATERN,
    PP_PRIOR_ADAPTIVE,
    PP_PRIOR_DEFAULT    /* the library's choice, see pp_prior_resolve */
} pp_prior_kind;

typedef struct pp_prior_spec {
    pp_prior_kind kind;
    double range, nu;   /* matern; nu also adaptive (Student-t degrees of freedom) */
    size_t block;       /* adaptive: side of the blocks of the log-precision field */
    double mean;        /* known prior mean when mean_set */
    int mean_set;
    double delta;       /* fixed prior precision when delta_set */
    int delta_set;
} pp_prior_spec;

/* Parses a spec (the forms above) into *out (not NULL; cleared first).
 * text may be NULL or empty (refused). Errors: PP_ERR_ARG, the message
 * naming the setting by names (a PP_SET_COUNT table, include/pixpost/
 * setting.h, e.g. a command line's "--prior"; NULL: the library's word
 * "prior"), the key and the accepted form. Thread-safe. */
pp_status pp_prior_parse(const char *text, const char *const *names, pp_prior_spec *out);
/* Writes the spec s (not NULL) in the form pp_prior_parse reads
 * ("default" for PP_PRIOR_DEFAULT, which pp_prior_parse does not take)
 * into buf, at most len bytes with the NUL (truncated when short; buf,
 * len >= 1, the caller's). Never fails; thread-safe. */
void pp_prior_format(const pp_prior_spec *s, char *buf, size_t len);

/* The default prior, decided here once for every caller (the command line
 * asks this too). When p->kind is PP_PRIOR_DEFAULT, *p becomes the prior
 * for the noise model, frames and volumes alike:
 *   gaussian                       adaptive:nu=2,block=8 (README "Which
 *                                  prior": edges kept, noise smoothed);
 *   photon counts (poisson, camera) matern:range=6,nu=1 (a proper field:
 *                                  pcn and gpcn need one, and hmc's log-
 *                                  intensity moves are tuned on it).
 * Any other kind is left as it is. noise may be NULL: taken as gaussian.
 * Never fails; thread-safe (touches *p only). */
void pp_prior_resolve(pp_prior_spec *p, const pp_noise_spec *noise);

#endif
