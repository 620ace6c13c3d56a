/* pixpost — posterior samplers.
 *
 * Plan once, run once: pp_sampler_create() validates the configuration,
 * allocates every buffer the chains need and makes the FFT plans;
 * pp_sampler_run() runs all chains (in parallel, OpenMP; one set of working
 * buffers per thread, not per chain), frees the grid-sized working memory,
 * then allocates the frame-sized estimates and diagnostic maps, so the peak
 * memory is that of sampling or of the results, not of both. The estimates
 * are then read from the handle and stay valid until pp_sampler_free().
 *
 * Estimates are streamed (nothing stores a chain of images): the posterior
 * mean (Rao-Blackwellised where the sampler has a conditional mean), the
 * pixelwise sd (law of total variance), central credible bounds at
 * cfg.level, and scalar traces per chain (lambda, delta, log-likelihood,
 * probe pixels). The same seed with the same FFT plans gives byte-identical
 * results whatever the thread count; other plans (another cfg.fft_effort,
 * other wisdom) give results equal to rounding.
 *
 * Run length. With cfg.iters_auto (the default) the run picks its own
 * length from its diagnostics, in rounds:
 *   1. burn-in of cfg.burn iterations (the samplers tune their steps here,
 *      and only here), then a first round of cfg.iters iterations;
 *   2. after each round: the diagnostics of all kept draws. The run stops
 *      when every criterion holds: R-hat <= 1.01 and bulk- and tail-ESS
 *      >= 100 per chain for every trace column (lambda, delta, loglik,
 *      kappa, psf_width, the probe pixels), and the pixel R-hat map's rule
 *      (at most 1 % of pixels above 1.01, none above 1.1);
 *   3. until a round has passed this check once, a round after which some
 *      column's R-hat is above 1.1 (the chains clearly still disagree) is
 *      thrown away as further burn-in (tuning stays frozen), and the next
 *      round is as long as the burn-in added so far;
 *   4. otherwise the next round is as long as all kept rounds together
 *      (the kept draws double), so the first half of the draws is exactly
 *      all rounds but the last: the split-R-hat maps stay exact. A round's
 *      length is fixed before it starts, the same for every chain, and is
 *      cut to what the caps leave (cfg.max_seconds, predicted from the
 *      measured seconds per iteration; cfg.max_iters). A cut last round
 *      makes the two halves unequal, which the maps allow for. The burn-in
 *      always runs in full, timed on its own; the first round is cut to
 *      what the time cap leaves but keeps at least 100 draws per chain.
 * Every chain keeps all its kept draws: estimates, maps and traces are
 * those of one run of the final length (rounds of doubling length give
 * the same bytes as one fixed run with the same seed). Stopping on the
 * diagnostics slightly biases the estimates towards runs that looked
 * converged; README "Run length" says what is done about it. Chain k
 * always runs on the working buffers of thread k % threads; with more
 * chains than threads, a chain's working state waits in a park store
 * between rounds (bytes per pixel: README "Limits"). What the run did is in
 * pp_result.length (include/pixpost/result.h).
 *
 * Volumes. A frame with depth > 1 (a z-stack, pp_image_create3) is sampled
 * on a rank-3 grid by every sampler (gibbs, mtc, pcn, gpcn, hmc; AUTO picks
 * as for a frame) with every noise model, the stationary priors (gmrf1,
 * gmrf2, matern: pp_prior_eigen_shape, increments weighted by cfg.voxel,
 * Matern alpha = nu + 3/2), the adaptive prior with gaussian noise (gibbs:
 * increments along z, y and x weighted by cfg.voxel as the stationary
 * priors', blocks of B x B pixels by round(B voxel_x / voxel_z) slices,
 * src/adaptive.h; the block field-scale move is for frames only), a fixed PSF, either boundary (pad adds the kernel's radius on every axis, its z
 * radius along z) and NaN voxels as missing data. The PSF is a volume of
 * odd extents with odd square slices no larger than the frame's (its depth
 * no larger than the volume's with periodic boundaries; any odd depth with
 * pad), or a frame-like kernel of depth 1, which blurs within each slice
 * only (no light crosses between slices). A 3-D PSF with a 2-D frame is
 * refused. The estimates, R-hat and MCSE maps are volumes
 * ({depth, height, width}, pp_result's frame and grid have rank 3); the 9
 * probe voxels sit at the quarter points of the middle slice z =
 * (depth - 1) / 2, trace columns "p_<z>_<r>_<c>". A frame (depth 1) gives
 * the same bytes as before volumes existed.
 * Not built for volumes, refused by pp_sampler_create with PP_ERR_ARG and
 * a message saying what to use instead: the adaptive prior with photon
 * counts or any sampler but gibbs (hmc's adaptive kernel is for frames;
 * the library never swaps a prior silently); sampling the PSF width
 * (psf.width_auto). The padding scale move of gibbs
 * with pad and gmrf1 (src/padscale.h) runs on volumes too, its increments
 * weighted by cfg.voxel as the prior's. The photon models' smoothing of
 * their delta move's weights (src/hyper_photon.c) is the same Gaussian, in
 * voxels, along z.
 */
#ifndef PIXPOST_SAMPLER_H
#define PIXPOST_SAMPLER_H

#include <signal.h>
#include <stddef.h>
#include <stdint.h>
#include "pixpost/image.h"
#include "pixpost/model.h"
#include "pixpost/noise.h"
#include "pixpost/prior.h"
#include "pixpost/psf.h"
#include "pixpost/setting.h"

typedef enum pp_sampler_kind {
    PP_SAMPLER_AUTO = 0, /* gibbs for gaussian (mtc for gaussian + periodic with a
                          * stationary prior), hmc for poisson/camera */
    PP_SAMPLER_GIBBS,
    PP_SAMPLER_MTC,
    PP_SAMPLER_PCN,
    PP_SAMPLER_GPCN,
    PP_SAMPLER_HMC    /* split Hamiltonian MC on the gpcn reference */
} pp_sampler_kind;

/* Parses a sampler's name ("auto", "gibbs", "mtc", "pcn", "gpcn", "hmc")
 * into *out. s and out: not NULL. Errors: PP_ERR_ARG, *out unchanged, the
 * message naming the setting by names (a PP_SET_COUNT table,
 * include/pixpost/setting.h; NULL: "sampler") and the accepted names.
 * Thread-safe. */
pp_status pp_sampler_kind_parse(const char *s, const char *const *names, pp_sampler_kind *out);
/* The name pp_sampler_kind_parse reads ("unknown" out of range): static
 * text, never NULL. Thread-safe. */
const char *pp_sampler_kind_name(pp_sampler_kind k);

/* How intensities are kept positive (pcn/gpcn/hmc): LOG samples z with the GMRF
 * prior and sets x = exp(z); NONE samples x itself. AUTO: LOG for the
 * photon models (poisson, camera), NONE for gaussian. gibbs/mtc use NONE. */
typedef enum pp_positivity {
    PP_POSITIVITY_AUTO = 0,
    PP_POSITIVITY_NONE,
    PP_POSITIVITY_LOG
} pp_positivity;

/* Called now and then from inside pp_sampler_run (from one thread at a
 * time): done and total count iterations over all chains. */
typedef void (*pp_progress_fn)(void *ctx, unsigned long long done,
                               unsigned long long total);

typedef struct pp_sampler_config {
    pp_sampler_kind kind;
    unsigned chains;        /* default 4 */
    unsigned long burn;     /* discarded iterations per chain (default 200); with
                             * iters_auto the first burn-in, which may grow */
    unsigned long iters;    /* iterations after burn-in (default 1000); with
                             * iters_auto the first round's length */
    unsigned long thin;     /* keep every thin-th of iters (default 1); with
                             * iters_auto every round is a multiple of it */
    /* Run length (see "Run length" above). iters_auto 1 (default): rounds
     * until the diagnostics pass or a cap is reached; 0: exactly burn +
     * iters iterations per chain. The caps apply to iters_auto only:
     * max_seconds > 0 the sampling wall time (default 0: max(120 s, 300 s
     * per megapixel of frame), PP_MAX_SECONDS_*), max_iters > 0 the
     * iterations per chain, burn-in included (default 0: none). */
    int iters_auto;
    double max_seconds;
    unsigned long max_iters;
    uint64_t seed;          /* default 1 */
    pp_boundary boundary;   /* default pad */
    int threads;            /* 0 = OpenMP's default */
    double level;           /* credible level of the bounds (default 0.95) */
    pp_noise_spec noise;    /* default gaussian, lambda sampled */
    pp_prior_spec prior;    /* default PP_PRIOR_DEFAULT: pp_prior_resolve (adaptive for
                             * gaussian, matern for photon counts) */
    double hyper_lambda[2]; /* Gamma shape, rate for lambda (default 1, 1e-4) */
    double hyper_delta[2];  /* Gamma shape, rate for delta (default 1, 1e-4) */
    int fft_effort;         /* PP_FFT_ESTIMATE (default) or PP_FFT_MEASURE; the
                             * caller loads wisdom first (pp_fft_wisdom_load) */
    pp_positivity positivity; /* pcn/gpcn/hmc (default AUTO) */
    double background;      /* known background, photons/pixel, photon models (default 0) */
    /* The PSF model behind the kernel given to pp_sampler_create; read only
     * when psf.width_auto is set (sigma=auto / na=auto): then gibbs and mtc
     * sample the width on [psf.width_lo, psf.width_hi] (uniform prior),
     * rebuilding the kernel at the given kernel's size for each proposal. */
    pp_psf_spec psf;
    pp_progress_fn progress;
    void *progress_ctx;
    const volatile sig_atomic_t *stop; /* non-zero: stop soon, PP_ERR_INTERRUPTED */
    /* How messages name the settings above (include/pixpost/setting.h):
     * PP_SET_COUNT names kept by the caller while the sampler lives, e.g.
     * a command line's flags; NULL (default): the library's words. */
    const char *const *setting_names;
    /* Voxel size of a volume (a frame with depth > 1), micrometres, slowest
     * axis first: {z step, y, x}. The prior weighs its increments along each
     * axis by (x spacing / that axis' spacing)^2, so roughness is measured in
     * physical units with the x pixel as the unit of length. 0 (default): not
     * known, taken as cubic voxels {1, 1, 1}; negative or not finite:
     * refused. Frames ignore it. See "Volumes" above. */
    double voxel[3];
    /* Regions (include/pixpost/regions.h), planned for the frame's size, or
     * NULL (default): the total of every kept draw over each region is
     * recorded (pp_sampler_region_draws). Not owned; read until
     * pp_sampler_run returns (pp_result.config then shows NULL). */
    const struct pp_regions *regions;
    /* Profiles (src/pixpost/profiles.h) planned for the frame or
     * volume, or NULL: each kept draw's values at their points are recorded
     * after the region totals. Not owned; read as the regions are. */
    const struct pp_profiles *profiles;
    /* Spots (src/pixpost/spots.h) planned for the frame or volume, or
     * NULL: each kept draw's spot contrasts are recorded after the
     * profiles' points. Not owned; read as the regions are. */
    const struct pp_spots *spots;
    /* Thresholds T (nabove of them, at most PP_MAX_ABOVE; not owned, read by
     * pp_sampler_create, which copies them; pp_result.config shows
     * none): the posterior probability map P(x_i > T), the share of kept
     * draws above T at each pixel (pp_sampler_above_map). */
    const double *above;
    size_t nabove;
    /* Censored pixels (saturated ones, pixpost/saturation.h): NULL (default)
     * or one byte per frame pixel (voxel), not owned, read by
     * pp_sampler_create; nonzero marks a NaN pixel whose true value is known
     * only to be at least censor_level (finite). See "Censoring" at
     * pp_sampler_create. Nonzero bytes at pixels that are not NaN are
     * refused (PP_ERR_ARG). pp_result.config then shows NULL. */
    const unsigned char *censored;
    double censor_level;
} pp_sampler_config;
#define PP_MAX_ABOVE 16

/* Fills *cfg (not NULL) with the defaults named field by field above
 * (every pointer NULL, the prior PP_PRIOR_DEFAULT: the library decides it
 * from the noise model). Start every configuration here, then change
 * fields. Never fails; thread-safe. */
void pp_sampler_defaults(pp_sampler_config *cfg);

/* The default time cap of a run in rounds: max(FLOOR, PER_MP x megapixels). */
#define PP_MAX_SECONDS_FLOOR 120.0
#define PP_MAX_SECONDS_PER_MP 300.0

typedef struct pp_sampler pp_sampler;

/* frame and psf are copied; the caller keeps ownership of both.
 * Missing data: a frame pixel that is NaN is UNOBSERVED (a masked or
 * saturated pixel; pp_saturation_find marks the latter). It is left out of
 * the likelihood and treated like the padding of --boundary pad (redrawn
 * each iteration from N(Ax, 1/lambda) by gibbs, mtc, and the adaptive
 * prior's gibbs, whatever the boundary; skipped by pcn, gpcn and hmc). The
 * estimates (mean, sd, lo, hi) still cover it: they are the posterior there,
 * wider than at observed pixels. With NaN pixels, kind AUTO picks gibbs
 * (not mtc) and mtc runs the gibbs chain (with a warning). Refused:
 * an infinite pixel (PP_ERR_NUMERIC), and fewer observed pixels than 1 %
 * of the frame or 2 (PP_ERR_ARG: the message gives the counts). A frame
 * without NaN gives the same bytes as before this rule.
 * Censoring: a NaN pixel marked in cfg.censored (a saturated pixel) is not
 * only unobserved: its value is known to be >= cfg.censor_level, and its
 * likelihood is P(y_i >= censor_level | x) instead of nothing. gibbs, mtc
 * (which then runs the gibbs chain) and the adaptive prior's gibbs redraw
 * it each iteration from N(Ax, 1/lambda) truncated to [censor_level, inf)
 * (data augmentation, Tanner & Wong, JASA 82, 1987: an exact Gibbs step;
 * src/truncnorm.h), and the moves that carry latent data along with x
 * (the delta interweaving step, the padding scale move) reject a move that
 * would take one below the level. Under the photon models pcn, gpcn and
 * hmc add -log P(Y >= a | A x + b) to the negative log-likelihood and its
 * gradient (a the level in counts, (level - offset) / gain + read^2 for
 * the camera model's shifted counts; the regularised incomplete gamma,
 * src/poisson_tail.h); under gaussian noise they add
 * -log Q((censor_level - (A x)_i) sqrt(lambda)), Q = 1 - Phi, and, when
 * lambda is sampled, draw the censored data from the truncated normal
 * before lambda's Gamma step (data augmentation, exact).
 * Contract: cfg, frame, psf, out not NULL; cfg is copied, but what its
 * pointers point to is not: cfg->setting_names must outlive the sampler,
 * cfg->regions / profiles / spots must live until pp_sampler_run returns
 * (cfg->above is copied here). *out receives a new sampler owned by the
 * caller (pp_sampler_free), NULL on failure. Errors, the message naming
 * the setting (by cfg->setting_names) and what to change: PP_ERR_ARG (a
 * setting out of range, a combination not built, a PSF that does not suit
 * the frame), PP_ERR_NUMERIC (an infinite pixel; a NaN/Inf PSF value),
 * PP_ERR_LIMIT (a PSF larger than the frame, a grid too large),
 * PP_ERR_NOMEM. Thread-safe (FFT planning is serialised inside; several
 * samplers may be created and run at once from different threads). */
pp_status pp_sampler_create(const pp_sampler_config *cfg, const pp_image *frame,
                            const pp_image *psf, pp_sampler **out);
/* Runs every chain of s (not NULL) on OpenMP threads (cfg.threads), then
 * computes the estimates, maps and diagnostics the accessors below return.
 * A sampler runs once: a second call fails (PP_ERR_ARG). cfg.progress is
 * called from inside now and then; cfg.stop, when it turns non-zero, ends
 * the run soon with PP_ERR_INTERRUPTED. Errors: PP_ERR_ARG (run twice),
 * PP_ERR_INTERRUPTED, PP_ERR_NUMERIC (the chains produced NaN/Inf
 * estimates; the message counts the pixels), PP_ERR_NOMEM. After a
 * failure only pp_sampler_free is meaningful. Not to be called on one
 * sampler from two threads; other samplers may run at the same time. */
pp_status pp_sampler_run(pp_sampler *s);
/* Frees s and everything it owns (the estimates, maps, traces, warnings
 * the accessors point into: they become invalid); s may be NULL. Not
 * concurrently with any other use of s. */
void pp_sampler_free(pp_sampler *s);


/* Optional, for programs, once at start before any sampler: makes glibc hand
 * every frame-sized buffer back to the system as soon as it is freed (fixes
 * its mmap threshold at its starting value, 128 KiB; a no-op elsewhere).
 * Otherwise glibc raises the threshold after the first such free and serves
 * later big blocks from its heap, where freed holes stay resident: 16 bytes
 * per pixel more at the peak of a 4-chain run (bench/NOTES.md). The library
 * never calls it itself, as it changes the whole process's allocator; it
 * allocates only while planning, so the extra system calls cost nothing
 * measurable. The pixpost command calls it. Never fails. Not thread-safe
 * in spirit: it changes the process's allocator, so call it before other
 * threads allocate. */
void pp_sampler_return_memory(void);

/* What a run did about its length (valid after pp_sampler_run; zero before). */
typedef enum pp_stop_reason {
    PP_STOP_FIXED = 0, /* iters_auto off: exactly burn + iters */
    PP_STOP_CONVERGED, /* every criterion holds */
    PP_STOP_MAX_TIME,  /* cfg.max_seconds (or its default) reached first */
    PP_STOP_MAX_ITERS  /* cfg.max_iters reached first */
} pp_stop_reason;
/* "fixed", "converged", "max-time", "max-iters" ("unknown" out of range):
 * static text, never NULL. Thread-safe. */
const char *pp_stop_reason_name(pp_stop_reason r);

typedef struct pp_run_length {
    int iters_auto; /* cfg.iters_auto */
    pp_stop_reason stop;
    unsigned long burn;       /* burn-in used per chain (cfg.burn plus any extension) */
    unsigned long iters;      /* iterations per chain after the burn-in */
    size_t kept;              /* kept draws per chain (iters / thin) */
    unsigned rounds;          /* sampling rounds kept (1 for a fixed run) */
    unsigned burn_extensions; /* rounds thrown away as further burn-in */
    double max_seconds;       /* the caps in force (0: none; fixed runs: 0) */
    unsigned long max_iters;
    /* When the run stopped at a cap: the first criterion that failed (a
     * short phrase, e.g. "bulk-ESS of delta 212 < 400"), and the
     * iterations after burn-in to ask for, pp_sampler_iters_suggested (its
     * rule: the ESS shortfall scaled with a margin, at least double the run
     * when an R-hat fails; a lower bound while the chains disagree). "" and
     * 0 otherwise. */
    char failed[160];
    unsigned long iters_needed;
} pp_run_length;

/* The accessors below (s not NULL; pp_sampler_result gathers all of them
 * and more into one pp_result) never fail and never allocate: what they
 * return points into the sampler, is read only, valid until
 * pp_sampler_free(s), and is never freed by the caller. They only read s:
 * several threads may call them at once on a sampler that has finished
 * running. */

/* Estimates with the frame's shape (a volume's for a volume): posterior
 * mean, pixelwise sd, and the central credible bounds at cfg.level; valid
 * after a successful pp_sampler_run, NULL before. */
const pp_image *pp_sampler_mean(const pp_sampler *s);
const pp_image *pp_sampler_sd(const pp_sampler *s);
const pp_image *pp_sampler_lo(const pp_sampler *s);
const pp_image *pp_sampler_hi(const pp_sampler *s);

/* Scalar traces: values[(chain * kept + i) * ncols + col]. */
typedef struct pp_trace {
    unsigned chains;
    size_t kept;             /* kept draws per chain */
    size_t ncols;
    const char *const *names; /* "lambda", "delta", "loglik", "p_<r>_<c>" ... */
    const double *values;
} pp_trace;

/* The scalar traces: never NULL; their values are meaningful after a
 * successful run only. */
const pp_trace *pp_sampler_trace(const pp_sampler *s);
/* With cfg.regions, cfg.profiles or cfg.spots, after pp_sampler_run: each
 * kept draw's totals over the regions, then its values at the profiles'
 * points, then its spot contrasts: v[(c * cap + i) * stride + j] for chain
 * c, kept draw i < kept (the trace's kept), j < stride = regions + profile
 * points + spots (in that order); NULL without any. cap and stride: not
 * NULL, always written. Points into the sampler. */
const double *pp_sampler_region_draws(const pp_sampler *s, size_t *cap, size_t *stride);
/* With cfg.above, after pp_sampler_run: the map P(x_i > above[t]) (the
 * frame's shape), pooled over every chain's kept draws; NULL when t >=
 * cfg.nabove or before the run. Points into the sampler. */
const pp_image *pp_sampler_above_map(const pp_sampler *s, size_t t);
/* The trace columns every sampler has, first in every row. PP_COL_PROBE0
 * is the column after them: the optional psf_width, kappa and level
 * columns start there when present, then the probe pixels. */
enum { PP_COL_LAMBDA = 0, PP_COL_DELTA = 1, PP_COL_LOGLIK = 2, PP_COL_PROBE0 = 3 };

/* Per-pixel split-R-hat and MCSE of the mean, the frame's shape (valid
 * after a successful run); NULL before, or when a half-chain kept fewer
 * than 2 draws. */
const pp_image *pp_sampler_rhat_map(const pp_sampler *s);
const pp_image *pp_sampler_mcse_map(const pp_sampler *s);

/* What a warning is about. PP_WARN_HYPER: a global trace column (lambda,
 * delta, the log-likelihood, psf_width, kappa: one number for the whole
 * frame) fails a convergence criterion. PP_WARN_PIXELS: the pixel estimates
 * do (the probe pixels' traces, or the per-pixel R-hat map). PP_WARN_OTHER:
 * everything else (acceptance, burn-in too short to adapt, a hyperprior
 * that outweighs the data, the inner solver's cap). */
typedef enum pp_warning_part {
    PP_WARN_OTHER = 0,
    PP_WARN_HYPER,
    PP_WARN_PIXELS
} pp_warning_part;


/* A run's headline convergence figures: what `sample` prints, what
 * summary.json records under "convergence" and what a batch manifest lists.
 * rhat_max is the worst R-hat and ess_bulk_min the lowest bulk-ESS over
 * every trace column (lambda, delta, log-likelihood, probe pixels; NaN
 * columns ignored; NaN when no column has a finite value, e.g. before a
 * successful run or with too few kept draws); warnings is
 * the number of warnings (pp_result.nwarnings); converged is 1 exactly when warnings is 0
 * (so `--strict` fails exactly the runs that are not converged).
 * The two parts (pp_warning_part): hyper_warnings and pixel_warnings count the
 * warnings of each part (the rest, warnings minus both, are
 * PP_WARN_OTHER); hyper_converged / pixels_converged are 1 exactly when
 * that part has no warning; hyper_failing names the global columns that
 * fail a criterion, ", "-separated ("" when none); iters_suggested is
 * pp_sampler_iters_suggested(s).
 * Cost: one pass over the trace columns, the map and the warnings. */
typedef struct pp_convergence {
    double rhat_max;
    double ess_bulk_min;
    size_t warnings;
    int converged;
    size_t hyper_warnings, pixel_warnings;
    int hyper_converged, pixels_converged;
    char hyper_failing[64];
    unsigned long iters_suggested;
    /* The caller's name of the iterations setting (cfg.setting_names'
     * PP_SET_ITERS, e.g. "--iters"), which the verdict names with the
     * suggestion; NULL when the caller gave no names. */
    const char *iters_name;
} pp_convergence;


/* The inner linear solver of gibbs under the adaptive prior (conjugate
 * gradients of the x-draws), summed over chains: draws made (burn-in
 * included), CG iterations in total and the most in one draw, and draws
 * after burn-in that stopped at the iteration cap. All 0 for the other
 * samplers and priors. Valid after pp_sampler_run. */
typedef struct pp_solver_stats {
    unsigned long long draws, iterations, capped;
    size_t most;
    unsigned long long accepted; /* draws whose Metropolis-Hastings move was accepted */
    unsigned long long fallback; /* draws whose move ratio was below its rounding, made by
                                  * the converged solve instead (counted as accepted) */
} pp_solver_stats;


#endif
