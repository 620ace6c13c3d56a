/* pixpost — the observed pixels of a sampler's grid (internal).
 *
 * A frame pixel whose value is NaN is unobserved (missing data: a --mask,
 * a saturated pixel); so are the padding pixels of --boundary pad. Both are
 * latent in the samplers: the Gibbs family redraws them each iteration from
 * N(Ax, 1/lambda) (data augmentation), the pCN family leaves them out of
 * the likelihood. One byte per grid pixel says which pixels are observed;
 * loops that visit the latent pixels run over the whole grid in row-major
 * order and skip the observed ones, which visits the padding in the order
 * the padding-only loops did (so a frame without NaN gives the same bytes).
 * Censored pixels (cfg.censored: saturated, value >= cfg.censor_level) are
 * latent too, and marked in s->cens for every sampler. The Gibbs family
 * redraws them from the truncated normal (pp_censored_draw); the moves that
 * carry the latent data along with x keep them above the level
 * (pp_censored_range). The pCN family adds their log tail probability to
 * the likelihood (src/sampler_pcn.c: src/poisson_tail.h under the photon
 * models, src/truncnorm.h under gaussian noise, whose lambda step draws
 * them by pp_censored_draw).
 * Cost: one grid pass at planning; 1 byte per grid pixel (2 with censored
 * pixels). */
#ifndef PIXPOST_OBSERVED_H
#define PIXPOST_OBSERVED_H

#include "pixpost/image.h"
#include "pixpost/rng.h"
#include "pixpost/status.h"

struct pp_sampler;

/* Builds s->obs (s->gn bytes, 1 = observed), s->nobs, s->nmissing and
 * s->augment (pad, or missing frame pixels) for frame (s->height x
 * s->width) on the planned grid (s->gh x s->gw). Refuses (PP_ERR_NUMERIC)
 * an infinite pixel, and (PP_ERR_ARG) a frame with fewer observed pixels
 * than pp_observed_min of its size. On failure s->obs may be allocated
 * (pp_sampler_free frees it). */
pp_status pp_observed_plan(struct pp_sampler *s, const pp_image *frame);

/* The latent datum of censored pixel: a draw of N(m, sd^2) truncated to
 * [s->censor_level, inf) (src/truncnorm.h, exact). */
double pp_censored_draw(const struct pp_sampler *s, pp_rng *r, double m, double sd);

/* The interval [*lo, *hi] of t (lo <= 0 <= hi for a feasible yaug) over
 * which yaug_i + t (g_i gs - off) >= s->censor_level at every censored grid
 * pixel i: a move of the latent data along the direction g gs - off stays
 * inside their support exactly when its t lies there. (-inf, inf) without
 * censored pixels (no pass); otherwise one grid pass. */
void pp_censored_range(const struct pp_sampler *s, const double *yaug, const double *g, double gs,
                       double off, double *lo, double *hi);

/* The least number of observed pixels accepted for a frame of n pixels:
 * 1 % of them and at least 2 (our own rule: below it the estimates would be
 * the prior's alone and the noise level is not identified). */
size_t pp_observed_min(size_t n);

/* The mean of the finite values of frame (0 if none). */
double pp_observed_mean(const pp_image *frame);

#endif
