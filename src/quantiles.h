/* pixpost — streaming tail quantiles of a frame-sized field (internal).
 *
 * The credible bounds of the samplers whose draws are not Gaussian given
 * the rest (pcn/gpcn/hmc on z, gibbs under the adaptive prior on x): per
 * pixel and chain, stochastic-approximation (Robbins–Monro) estimates of
 * the lower and upper tail quantiles, q += g (p − 1{v <= q}) with
 * g = sd_t / (φ(z_p) t) (φ(z_p) the normal density at the quantile: the
 * optimal gain for a Gaussian marginal, sd_t the running sd of the pixel),
 * started from the Gaussian guess mean ∓ z_p sd after PP_SQUANT_WARM kept
 * draws. Chains' estimates are averaged when pooled. Memory: 16 bytes per
 * pixel per chain. Cost: one pass over the frame per kept draw.
 */
#ifndef PIXPOST_QUANTILES_H
#define PIXPOST_QUANTILES_H

#include <stddef.h>
#include "pixpost/status.h"

struct pp_moments; /* internal.h (which has no include guard of its own) */
struct pp_chain;

#define PP_SQUANT_WARM 10 /* kept draws before the recursion starts */

/* The two tail probabilities of a central interval at `level`. */
typedef struct pp_squant_law {
    double plo;   /* lower tail probability (1 − level)/2 */
    double zq;    /* standard normal quantile at 1 − plo */
    double phi_z; /* normal density there */
} pp_squant_law;

void pp_squant_law_init(pp_squant_law *law, double level);

/* One chain's estimates, n pixels each. */
typedef struct pp_squant {
    double *qlo, *qhi;
} pp_squant;

pp_status pp_squant_alloc(pp_squant *q, size_t n);
void pp_squant_free(pp_squant *q); /* accepts a zeroed struct */

/* Adds one kept draw v (a rows x cols block whose rows are `stride` apart)
 * whose running moments m already include it (m->count draws so far). */
void pp_squant_add(const pp_squant_law *law, pp_squant *q, const double *v, size_t rows,
                   size_t cols, size_t stride, const struct pp_moments *m);
/* The same for a slices x rows x cols box whose slices are slice_stride
 * apart (a volume's frame box in its grid; slices 1: pp_squant_add). */
void pp_squant_add_box(const pp_squant_law *law, pp_squant *q, const double *v, size_t slices,
                       size_t rows, size_t cols, size_t stride, size_t slice_stride,
                       const struct pp_moments *m);

/* Gives each of the nchains chains a pp_squant of n pixels as its kstate;
 * pp_squant_release_chains frees them (also after a partial failure). */
pp_status pp_squant_plan_chains(struct pp_chain *chains, unsigned nchains, size_t n);
void pp_squant_release_chains(struct pp_chain *chains, unsigned nchains);

/* Pooled bounds: chains[j].kstate points at chain j's pp_squant; their
 * estimates averaged over the nchains chains (in chain order), mapped
 * through exp when exp_map (a field sampled on the log scale), into lo and
 * hi (n pixels each). */
void pp_squant_pool(const struct pp_chain *chains, unsigned nchains, size_t n, int exp_map,
                    double *lo, double *hi);

#endif
