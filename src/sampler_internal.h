/* pixpost — sampler internals (src/sampler.c, src/sampler_*.c): the
 * sampler's struct, its chains and working slots, the kernel interface, the
 * kernels' table and the services a running sampler gives the kernels and
 * the diagnostics (src/sampler_services.c); not installed. */
#ifndef PIXPOST_SAMPLER_INTERNAL_H
#define PIXPOST_SAMPLER_INTERNAL_H

#include <stddef.h>
#include "internal.h"
#include "pixpost/fft.h"
#include "pixpost/rng.h"
#include "stats.h"
#include "pixpost/sampler.h"

#define PP_MAX_PROBES 9
#define PP_MAX_WARNINGS 64
#define PP_MAX_NOTES 16

/* A piece of memory holding a running chain's state (see pp_kernel.state). */
typedef struct pp_region {
    void *p;
    size_t bytes;
} pp_region;
#define PP_MAX_REGIONS 32

/* The working buffers of one running chain, one set per thread: chain k
 * always runs on slot k % nslots, so 4 chains on 1 thread need one set,
 * not four (see pp_chain). When a run goes in rounds (pp_sampler_run with
 * cfg.iters_auto), a slot hosts its chains in turn: the state of the chain
 * it is not running waits in a park store (sampler.c, park_swap). */
typedef struct pp_slot {
    pp_complex *cbuf, *cbuf2, *yhat; /* yhat: augment only */
    double *rbuf, *yaug;             /* yaug: augment only */
    void *kwork;                     /* the kernel's working state (kernel->prepare) */
    pp_complex *xcopy;               /* draw statistics with augment: x-hat for its c2r */
    double *xdraw;                   /* ... and the draw on the grid, times N */
    long resident;                   /* the chain whose state the slot holds (rounds) */
} pp_slot;

/* One chain's state and scratch; owned by the sampler. */
typedef struct pp_chain {
    unsigned long t; /* iterations done (burn-in included); 0: not started */
    pp_rng rng;
    double lambda, delta;
    /* Working buffers, lent by the thread's pp_slot while the chain runs
     * (NULL otherwise; state that outlives the run is below): */
    pp_complex *cbuf;  /* half spectrum: noise, then the conditional mean */
    pp_complex *cbuf2; /* half spectrum: x-hat (kept draws) or A x-hat (pad) */
    double *rbuf;      /* grid: c2r output */
    double *yaug;      /* augment: observed pixels plus the latent ones (padding,
                        * missing pixels) */
    pp_complex *yhat;  /* this chain's data spectrum (augment) or the shared one */
    pp_moments mom;    /* frame-sized moments of the recorded field over all kept
                        * draws; add to them with pp_chain_add_draw only */
    float *mean1;      /* frame-sized: mom.mean frozen after the first half of the
                        * kept draws (s->half_n of them), for the split-R-hat maps
                        * only (sampler_diag.c says why single precision is enough) */
    double condvar_sum; /* sum over kept draws of the conditional variance */
    double *trace;     /* kept x ncols rows inside the sampler's trace */
    double *regs;      /* kept x nfun rows inside s->reg_values (regions, profiles) */
    double *above_n;   /* nabove x npix: kept draws above each threshold, else NULL */
    pp_complex *xcopy; /* lent by the slot (draw statistics with augment), else NULL */
    double *xdraw;     /* lent by the slot, likewise */
    size_t kept;
    void *kstate;      /* the kernel's own per-chain state (kernel->prepare) */
    void *kwork;       /* its working state, lent by the slot while the chain runs */
    const pp_complex *otf; /* transfer function this chain uses now (s->otf, or
                            * its width state's when the PSF width is sampled) */
    const double *otf2;    /* |otf|^2 */
    double width;          /* current PSF width (sigma or NA; 0 if fixed) */
    struct pp_width *wstate; /* PSF width sampling (src/psfwidth.c), else NULL */
    double acceptance; /* pcn/gpcn/hmc: field-move acceptance after burn-in; mtc: that of its
                        * (lambda, delta) move (else 0) */
    double step;       /* pcn/gpcn: the step beta (hmc: eps) fixed after burn-in; mtc: its
                        * proposal scale (else 0) */
    double block_acceptance; /* hmc with the adaptive prior: acceptance of the block
                              * log-precision moves over the whole run (gibbs keeps it
                              * in acceptance; else 0) */
    /* The adaptive prior's inner solver (gibbs: CG of the x-draws; 0 else):
     * draws made, CG iterations in total and at most, and kept-phase draws
     * that stopped at the iteration cap. */
    unsigned long long solver_draws, solver_iters, solver_capped, solver_accepted;
    unsigned long long solver_fallback; /* adaptive x-draws made by the converged solve */
    size_t solver_max;
} pp_chain;

struct pp_sampler;
/* A sampling kernel: one per sampler kind, in src/sampler_<kind>.c, listed
 * in sampler.c's kernel table. sampler.c plans the grid, transfer function,
 * prior eigenvalues, data spectrum, probes, traces and the chains' common
 * buffers; the kernel adds what it needs and runs one chain at a time.
 *   prepare   optional; after planning: allocate kernel state (s->kshared;
 *             each c->kstate for what outlives a chain's run, each
 *             s->slot[b].kwork for what a run only works with, which the
 *             chain then finds in c->kwork and must initialise). Runs once,
 *             single-threaded.
 *   run_chain advances chain c from iteration c->t to s->t_end and sets
 *             c->t = s->t_end (called in parallel for different chains;
 *             must touch only c and read s). At c->t == 0 it starts the
 *             chain (sampler.c has set rng, lambda, delta and the data);
 *             a later call resumes exactly where the last one stopped,
 *             finding in c->kwork what state() listed. Tuning (step
 *             sizes, centres) adapts while t < cfg.burn only; iteration t
 *             is kept when t >= s->keep_from and (t - s->keep_from + 1) %
 *             cfg.thin == 0. It records per kept draw the field it
 *             estimates with pp_chain_add_draw (the draw, or its
 *             conditional mean), c->condvar_sum (0 if it has no
 *             conditional variance), its trace rows and c->kept; what it
 *             accumulates over kept draws on its own (pcn's moments of z)
 *             starts afresh at t == s->keep_from (a run that finds its
 *             burn-in too short moves keep_from on, sampler.c).
 *   finish    optional; after pooling the moments into mean/sd and the
 *             default Gaussian bounds: override lo/hi and bound_method.
 *   release   optional; frees what prepare allocated but the slots' kwork
 *             (also after a failed prepare; pointers may be NULL).
 *   free_work optional; frees one slot's kwork (may be NULL): once the
 *             chains are done, or when a failed plan is undone.
 *   state     optional; lists in out (at most PP_MAX_REGIONS) the memory
 *             of a slot's kwork that holds a running chain's state (what
 *             run_chain reads at its next iteration), returns the count.
 *             A run in rounds swaps these bytes in and out of park stores
 *             when a slot hosts several chains: the list must be the same
 *             size for every slot and call, and complete (resuming from
 *             it gives the same bytes as not stopping). */
typedef struct pp_kernel {
    const char *name;
    pp_status (*prepare)(struct pp_sampler *s);
    pp_status (*run_chain)(struct pp_sampler *s, pp_chain *c);
    pp_status (*finish)(struct pp_sampler *s);
    void (*release)(struct pp_sampler *s);
    void (*free_work)(void *kwork);
    size_t (*state)(const struct pp_sampler *s, void *kwork, pp_region *out);
} pp_kernel;

struct pp_sampler {
    pp_sampler_config cfg;
    const pp_kernel *kernel;
    void *kshared;              /* the kernel's shared state */
    size_t height, width;       /* frame (one slice of a volume) */
    size_t gh, gw, gwh, gn, gm; /* grid rows (of one slice), cols, half cols, elements
                                 * (all slices), half-spectrum size (all slices) */
    /* Volumes (frame depth > 1): the sampler's grid is rank 3, slices of
     * gh x gw. Every array on the grid or its half spectrum keeps the
     * layout "rows x last axis" (src/pixpost/fft.h): grows = gd * gh
     * rows of gw reals, or of gwh half-spectrum entries, so a loop over
     * the half spectrum runs k1 < grows, k2 < gwh whatever the rank. A
     * frame has depth = gd = 1 and grows = gh. */
    size_t depth, gd, grows;
    size_t npix;                /* frame elements: depth * height * width */
    pp_shape fshape, gshape;    /* the frame's and the grid's shape (rank 2 or 3) */
    pp_fft *fft;
    pp_complex *otf;  /* transfer function, gm */
    double *otf2;     /* |otf|^2, gm */
    double *q;        /* prior eigenvalues, gm (these three and the data: freed when
                       * the chains are done) */
    double rank;      /* rank of Q over the full spectrum */
    double mean_dc;   /* prior mean spectrum at (0,0): M * gn, 0 if free */
    double *ygrid;    /* frame embedded in the grid (padding and missing pixels =
                       * the observed pixels' mean); kept after planning with
                       * augment only */
    pp_complex *yhat; /* r2c(ygrid); kept after planning without augment only */
    unsigned char *obs; /* gn: 1 where the grid pixel is observed (a finite frame
                         * pixel), 0 for the latent ones (padding, NaN pixels);
                         * src/observed.h */
    size_t nobs;        /* observed pixels */
    size_t nmissing;    /* frame pixels that are NaN (unobserved), censored ones included */
    unsigned char *cens; /* gn: 1 at censored grid pixels (latent, value >= censor_level;
                          * gibbs family only), or NULL: none; src/observed.h */
    size_t ncensored;
    double censor_level;
    int augment;        /* the grid has latent pixels that the Gibbs family redraws
                         * (pad, or missing pixels): yaug, per-chain yhat */
    double lambda0, delta0; /* rough scale estimates for dispersed starts */
    size_t nprobe;
    size_t probe_z[PP_MAX_PROBES], probe_r[PP_MAX_PROBES], probe_c[PP_MAX_PROBES];
    pp_complex *tw_row; /* nprobe x grows twiddles e^{+2 pi i (kz z / gd + k1 r / gh)}
                         * (row kz * gh + k1) */
    pp_complex *tw_col; /* nprobe x gwh twiddles e^{+2 pi i k2 c / gw}, weighted */
    pp_chain *chain;
    pp_slot *slot;  /* nslots sets of working buffers, one per thread of the run */
    unsigned nslots;
    unsigned char **park;    /* rounds with chains > nslots: park stores, one per chain
                              * beyond the slots (sampler.c, park_swap), else NULL */
    long *park_of;           /* per chain: the store holding its state, -1: in its slot */
    size_t park_bytes;       /* bytes of one store */
    unsigned long t_end;     /* run_chain advances every chain to this iteration */
    unsigned long keep_from; /* first iteration that may be kept (the burn-in used) */
    unsigned long freeze_at; /* pp_chain_add_draw copies mom.mean into mean1 when a
                              * chain's count reaches it (0: never) */
    size_t half_n;           /* draws per chain behind mean1 (the maps' first half) */
    size_t trace_cap;        /* rows per chain the trace has room for */
    size_t nwarn_setup;      /* warnings from set-up: kept when a round's go */
    size_t diag_kept;        /* kept draws per chain behind s->diag (0: stale) */
    int maps_final;          /* pp_sampler_diagnose makes the MCSE map too (the last call;
                              * a round's check makes the R-hat map only) */
    pp_run_length length;    /* what the run did (pp_sampler_run_length) */
    unsigned long long progress_total;
    pp_trace trace;
    struct pp_diag_scalar *diag;     /* one per trace column (sampler_diag.c) */
    pp_image *rhat_map, *mcse_map;   /* per-pixel split-R-hat and MCSE, or NULL */
    char *names[6 + PP_MAX_PROBES]; /* 3 scalars, psf_width, kappa, level, probes */
    double *trace_values;
    size_t nreg;          /* regions (cfg.regions), else 0 */
    size_t nprof;         /* the profiles' points (cfg.profiles), else 0 */
    size_t nfun;          /* nreg + nprof + the spots: values per kept draw */
    double *reg_values;   /* chains x trace_cap x nfun: each kept draw's region totals,
                           * then its profile points */
    int records_mean;     /* the kernel records the conditional mean in
                           * pp_chain_add_draw (gibbs, mtc): the draw statistics
                           * come from pp_chain_draw_stats(_hat) instead */
    int draw_stats;       /* regions or above maps: statistics of each kept draw */
    size_t nabove;
    double above_t[PP_MAX_ABOVE];
    pp_image *above[PP_MAX_ABOVE]; /* the pooled maps, after the run */
    pp_image *mean, *sd, *lo, *hi;
    char bound_method[256];
    char likelihood[256]; /* pcn/gpcn/hmc: the likelihood used, for summary.json ("" else) */
    size_t psf_size;      /* side of the kernel (for rebuilding it at a new width) */
    size_t col_probe0;    /* trace column of the first probe */
    long col_width;       /* trace column "psf_width", -1 when the width is fixed */
    long col_kappa;       /* trace column "kappa" (adaptive prior), else -1 */
    long col_level;       /* trace column "level" (pcn/gpcn/hmc, free level m), else -1 */
    const char *pad_scheme; /* mtc with --boundary pad: the scheme used (static text) */
    char *warnings[PP_MAX_WARNINGS]; /* convergence and set-up warnings (--strict) */
    pp_warning_part warning_part[PP_MAX_WARNINGS]; /* what each warning is about */
    size_t nwarnings;
    char *notes[PP_MAX_NOTES]; /* information about the data, not warnings */
    size_t nnotes;
    int lost_sentence; /* a warning or note could not be stored (out of memory):
                        * pp_sampler_create / pp_sampler_run then fail */
    double seconds;
    unsigned long long progress_done;
    int ran;
};

/* The grid row (of gw entries) that holds frame row fr, 0 <= fr < depth *
 * height: row fr % height of slice fr / height (a frame: fr itself). */
static inline size_t pp_frame_row(const struct pp_sampler *s, size_t fr)
{
    return fr / s->height * s->gh + fr % s->height;
}
/* The grid index of a probe voxel. */
static inline size_t pp_probe_index(const struct pp_sampler *s, size_t p)
{
    return (s->probe_z[p] * s->gh + s->probe_r[p]) * s->gw + s->probe_c[p];
}

/* Adds the frame box of a grid-sized field (rows s->gw apart) to the
 * moments of chain c, freezing their mean in c->mean1 when the count
 * reaches s->freeze_at (a fixed run: floor(kept / 2); a run in rounds also
 * copies it at each round's end). Call once per kept draw. */
void pp_chain_add_draw(const pp_sampler *s, pp_chain *c, const double *grid);
/* The statistics of a kept draw x = scale * f (f on the grid): its region
 * totals into chain c's row c->kept, its pixels above each threshold into
 * c->above_n. pp_chain_add_draw calls it for the kernels whose field is
 * the draw; gibbs and mtc call it (or the _hat form) themselves. */
void pp_chain_draw_stats(const pp_sampler *s, pp_chain *c, const double *f, double scale);
/* The same from the draw's half spectrum x-hat (not normalised: its c2r is
 * N x): copies x-hat to tmp (gm entries, may be c->cbuf when free) and
 * transforms it into out (gn reals, e.g. c->rbuf). */
void pp_chain_draw_stats_hat(const pp_sampler *s, pp_chain *c, const pp_complex *xhat,
                             pp_complex *tmp, double *out);
/* c->mean1 = c->mom.mean (in single precision): the maps' first half ends
 * here. */
void pp_chain_freeze_mean(pp_chain *c);

/* Runs the chains in rounds ending at the given iterations after burn-in
 * (ends[0] < ends[1] < ... < ends[n-1], each a multiple of cfg.thin), with
 * the diagnostics after each round, as a run in rounds does, but no
 * stopping rule: the schedule is the caller's. The tests' way to check that
 * rounds give the same bytes as one run of the same length (ends must then
 * double: ends[i] = 2 ends[i-1], so that each first half is all rounds but
 * the last). Replaces pp_sampler_run (a sampler runs once). */
pp_status pp_sampler_run_schedule(pp_sampler *s, const unsigned long *ends, size_t n);

/* Adds a warning sentence (printf-style) to the sampler: something that
 * makes the results less trustworthy (what --strict exits on). */
void pp_sampler_warn(pp_sampler *s, const char *fmt, ...) PP_PRINTF(2, 3);
/* The same, for a warning about one part of the convergence criteria
 * (pp_warning_part: the global columns or the pixel estimates). */
void pp_sampler_warn_part(pp_sampler *s, pp_warning_part part, const char *fmt, ...)
    PP_PRINTF(3, 4);
/* Adds a note: information about the data or the model that does not make
 * the run less trustworthy (e.g. frequencies the PSF removes entirely). */
void pp_sampler_add_note(pp_sampler *s, const char *fmt, ...) PP_PRINTF(2, 3);
/* Progress and stop handling for a chain: call once per iteration. Returns
 * non-zero when the caller asked to stop. */
int pp_sampler_tick(pp_sampler *s);

/* The kernels (src/sampler_<kind>.c). */
extern const pp_kernel pp_kernel_gibbs;
extern const pp_kernel pp_kernel_gibbs_adaptive;
extern const pp_kernel pp_kernel_mtc;
extern const pp_kernel pp_kernel_pcn;
extern const pp_kernel pp_kernel_gpcn;
extern const pp_kernel pp_kernel_hmc;

#endif
