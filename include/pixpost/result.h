/* pixpost — what a finished run hands to the output writers.
 *
 * A plain struct: the estimates, traces, diagnostics, per-chain move
 * statistics and the few settings and sentences the writers print
 * (summary.json, trace.csv, the images, report.html). The writers
 * (pp_output_write, include/pixpost/output.h) read only this, never a
 * sampler, so a producer other than today's samplers (a volume sampler, a
 * test) fills one and gets the same files.
 *
 * Extents are pp_shape (include/pixpost/shape.h, slowest axis first): the
 * frame's and the sampling grid's (padding included). Maps are row-major
 * with the frame's shape.
 *
 * pp_sampler_result() fills one from a sampler after a successful
 * pp_sampler_run(). Ownership: every pointer but `chain` points into the
 * sampler and stays valid until pp_sampler_free(); `chain` (one entry per
 * chain) is allocated by pp_sampler_result and freed by pp_result_free().
 */
#ifndef PIXPOST_RESULT_H
#define PIXPOST_RESULT_H

#include <stddef.h>
#include "pixpost/fft_plans.h"
#include "pixpost/image.h"
#include "pixpost/sampler.h"
#include "pixpost/shape.h"
#include "pixpost/status.h"

struct pp_diag_scalar;

/* One chain's Metropolis move, after burn-in: pcn/gpcn/hmc the field move
 * (acceptance; step beta, hmc's eps), mtc its (lambda, delta) move
 * (acceptance; proposal scale in log units), gibbs with the adaptive prior
 * the block log-precision moves (acceptance). 0 where a sampler has none. */
typedef struct pp_chain_moves {
    double acceptance;
    double step;
} pp_chain_moves;

typedef struct pp_result {
    pp_sampler_config config; /* the configuration used (kind resolved) */
    pp_shape frame;           /* {height, width} of the frame */
    pp_shape grid;            /* the sampling grid (frame plus any padding) */
    /* Estimates with the frame's shape: posterior mean, sd, bounds at
     * config.level; split-R-hat and MCSE maps of the mean, or NULL when
     * a half-chain kept fewer than 2 draws. */
    const pp_image *mean, *sd, *lo, *hi;
    const pp_image *rhat_map, *mcse_map;
    /* Scalar traces, and one pp_diag_scalar (include/pixpost/diag.h) per
     * trace column, in column order. */
    pp_trace trace;
    const struct pp_diag_scalar *diag;
    /* Trace columns of the optional hyperparameters, -1 when absent: the
     * sampled PSF width, the adaptive prior's kappa, the pcn family's free
     * level. (lambda, delta, loglik are columns 0, 1, 2.) */
    long col_width, col_kappa, col_level;
    const pp_chain_moves *chain; /* config.chains entries */
    pp_run_length length;        /* what the run did about its length */
    pp_convergence convergence;  /* pp_sampler_convergence */
    pp_solver_stats solver;      /* pp_sampler_solver_stats */
    size_t observed, unobserved; /* frame pixels finite and NaN */
    pp_fft_plans fft_plans;      /* where the grid's plans came from */
    double seconds;              /* sampling wall time */
    /* Sentences: how the bounds were computed; pcn/gpcn/hmc the likelihood
     * used ("" else); mtc with padding the scheme it used (NULL else). */
    const char *bound_method, *likelihood, *pad_scheme;
    /* Warnings (with the part each is about) and notes, plain sentences. */
    const char *const *warnings;
    const pp_warning_part *warning_part;
    size_t nwarnings;
    const char *const *notes;
    size_t nnotes;
} pp_result;

/* Fills *out from s after a successful pp_sampler_run (PP_ERR_ARG before:
 * "the sampler has not run"); PP_ERR_NOMEM when the per-chain array cannot
 * be allocated (messages by pp_error_message). s and out: not NULL. *out
 * is cleared first, so on failure it holds nothing and pp_result_free on
 * it does nothing. Ownership as above: free the result (pp_result_free)
 * before or after the sampler, but use it only while the sampler lives.
 * Only reads s: thread-safe on a sampler that has finished running. */
pp_status pp_sampler_result(const pp_sampler *s, pp_result *out);

/* Frees what pp_sampler_result allocated (the per-chain array) and clears
 * the pointer; r may be NULL, and a result freed once may be freed again.
 * Not concurrently with other uses of r. */
void pp_result_free(pp_result *r);

#endif
