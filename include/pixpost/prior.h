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
 *                         used configuration, pp_sampler_config_used, and so
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

/* Parses a spec (the forms above). A refusal names the setting by names
 * (a PP_SET_COUNT table, include/pixpost/setting.h, e.g. a command line's
 * "--prior"; NULL: the library's word "prior"). */
pp_status pp_prior_parse(const char *text, const char *const *names, pp_prior_spec *out);
/* Writes the spec in the form pp_prior_parse reads ("default" for
 * PP_PRIOR_DEFAULT, which pp_prior_parse does not take). */
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

/* Eigenvalues of Q on the half spectrum of a grid of the given shape
 * (rank 1 to 3, slowest axis first; the last axis halved to n/2 + 1, as
 * FFTW's r2c), row-major. The Laplacian behind every stationary prior is
 *   L(k) = sum_a w_a (2 - 2 cos(2 pi k_a / n_a)),
 * with increments along axis a weighted w_a = (spacing[last] / spacing[a])^2
 * (the x pixel is the unit of length, so an axis sampled more coarsely, the
 * z step of a z-stack, is coupled more weakly): gmrf1 L, gmrf2 L^2, matern
 * (kappa^2 + L)^alpha with alpha = nu + d/2 for a rank-d grid (Lindgren,
 * Rue & Lindstrom 2011: the SPDE's exponent; nu + 1 for a frame).
 * spacing: `rank` positive spacings in any one unit (a volume's voxel size
 * {z, y, x}); NULL, or an entry <= 0, counts as 1 (unknown: cubic). Entry
 * 0 is 0 when the mean is free. *rank receives the number of non-zero
 * eigenvalues over the FULL spectrum (N-1 or N). The adaptive prior's
 * eigenvalues here are gmrf1's. PP_ERR_ARG for a bad rank or an
 * unresolved PP_PRIOR_DEFAULT (pp_prior_resolve it first). */
pp_status pp_prior_eigen_shape(const pp_prior_spec *s, const pp_shape *shape,
                               const double *spacing, double *q, double *rank);

/* The rank-2 case with unit spacing: H x (W/2+1) half spectrum of an
 * H x W frame (pp_prior_eigen_shape of pp_shape_2d(height, width)). */
pp_status pp_prior_eigen(const pp_prior_spec *s, size_t height, size_t width,
                         double *q, double *rank);

#endif
