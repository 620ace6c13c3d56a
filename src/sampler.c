/* pixpost — the sampler handle: validation, planning, chains in parallel,
 * pooled estimates. The per-iteration kernels live in sampler_<kind>.c.
 *
 * Planning (pp_sampler_create) does the allocation the chains need, the FFT
 * plans, the transfer function, the prior eigenvalues, the data spectrum and
 * rough scale estimates for dispersed chain starts. Chains run in parallel
 * over OpenMP threads, each on its own Philox stream; chain k always runs on
 * the working buffers of slot k % nslots (one slot per thread). A fixed run
 * (--iters N) runs each chain start to finish in one go; a run in rounds
 * (--iters auto, sampler.h "Run length") advances every chain to the
 * round's end, checks the diagnostics and decides the next round, and a
 * slot that hosts several chains swaps their working state with park
 * stores in between (park_swap; bytes per pixel in README "Limits"). Results
 * are pooled in chain order, so they do not depend on the number of threads.
 * pp_sampler_run then frees the grid-sized buffers before it allocates the
 * estimates and maps, and the chains' frame moments once those are made.
 *
 * Memory (periodic gibbs, T threads, C chains, per frame pixel; the grid is
 * the frame): per chain 20 bytes (mean and M2 of the recorded field, its
 * first half's mean in single precision); per thread 24 (2 half spectra,
 * 1 grid); shared 24 (transfer function, |A|^2, prior eigenvalues, data
 * spectrum). 4 chains on 1 thread: 80 + 24 + 24 = 128 at the peak, 136 with
 * the caller's frame (measured 136-152: bench/NOTES.md, glibc's heap). The
 * results (mean, sd, lo, hi, rhat, mcse: 48) come after the grid buffers
 * are gone. Pad: the grid terms scale with the padded grid and each thread
 * adds a grid and a half spectrum.
 */
#include <math.h>
#include <omp.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "grid.h"
#include "observed.h"
#include "psfwidth.h"
#include "sampler_diag.h"
#include "sampler_internal.h"
#include "spectral.h"
#include "stats.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/spots.h"
#include "pixpost/psf.h"
#include "pixpost/image_extra.h"
#include "pixpost/model_extra.h"
#include "pixpost/prior_extra.h"
#include "pixpost/psf_extra.h"
#include "pixpost/regions_extra.h"
#include "pixpost/sampler_extra.h"
#include "pixpost/setting_extra.h"
#if defined(__GLIBC__)
#include <malloc.h>
#endif

/* ---- names and defaults ---------------------------------------------- */

static const char *const kind_names[] = {"auto", "gibbs", "mtc", "pcn", "gpcn", "hmc"};

pp_status pp_sampler_kind_parse(const char *text, const char *const *names, pp_sampler_kind *out)
{
    for (int k = 0; k < 6; k++)
        if (strcmp(text, kind_names[k]) == 0) {
            *out = (pp_sampler_kind)k;
            return PP_OK;
        }
    return pp_fail(PP_ERR_ARG, "%s '%s': unknown sampler (accepted: gibbs, mtc, pcn, gpcn, hmc)",
                   pp_setting_name(names, PP_SET_SAMPLER), text);
}

const char *pp_sampler_kind_name(pp_sampler_kind k)
{
    return (unsigned)k < 6 ? kind_names[k] : "unknown";
}

void pp_sampler_defaults(pp_sampler_config *cfg)
{
    memset(cfg, 0, sizeof *cfg);
    cfg->kind = PP_SAMPLER_AUTO;
    cfg->chains = 4;
    cfg->burn = 200;
    cfg->iters = 1000;
    cfg->thin = 1;
    cfg->iters_auto = 1;
    cfg->seed = 1;
    cfg->boundary = PP_BOUNDARY_PAD;
    cfg->level = 0.95;
    cfg->noise.kind = PP_NOISE_GAUSSIAN;
    cfg->noise.gain = 1.0;
    cfg->prior.kind = PP_PRIOR_DEFAULT; /* pp_prior_resolve in check_config */
    cfg->hyper_lambda[0] = cfg->hyper_delta[0] = 1.0;
    cfg->hyper_lambda[1] = cfg->hyper_delta[1] = 1e-4;
    cfg->fft_effort = PP_FFT_ESTIMATE;
}

/* ---- validation ------------------------------------------------------- */

/* The kernel of each sampler kind and prior (NULL: not in this version). */
static const pp_kernel *kernel_for(pp_sampler_kind k, pp_prior_kind prior)
{
    switch (k) {
    case PP_SAMPLER_GIBBS:
        return prior == PP_PRIOR_ADAPTIVE ? &pp_kernel_gibbs_adaptive : &pp_kernel_gibbs;
    case PP_SAMPLER_MTC:
        return &pp_kernel_mtc;
    case PP_SAMPLER_PCN:
        return &pp_kernel_pcn;
    case PP_SAMPLER_GPCN:
        return &pp_kernel_gpcn;
    case PP_SAMPLER_HMC:
        return &pp_kernel_hmc;
    default:
        return NULL;
    }
}

/* A setting's name in messages: the caller's (cfg->setting_names) or the
 * library's word (include/pixpost/setting.h). */
#define NAME(k) pp_setting_name(cfg->setting_names, (k))

/* An uncertain PSF width (sigma=auto / na=auto) needs gibbs or mtc and a
 * model the sampler can rebuild. */
static pp_status check_width(const pp_sampler_config *cfg)
{
    const pp_psf_spec *p = &cfg->psf;
    if (!p->width_auto)
        return PP_OK;
    if (cfg->kind != PP_SAMPLER_GIBBS && cfg->kind != PP_SAMPLER_MTC)
        return pp_fail(PP_ERR_ARG, "%s ...=auto: the PSF width is sampled by gibbs and mtc "
                                   "only (not %s)",
                       NAME(PP_SET_PSF), pp_sampler_kind_name(cfg->kind));
    if (cfg->prior.kind == PP_PRIOR_ADAPTIVE)
        return pp_fail(PP_ERR_ARG, "%s ...=auto: the PSF width is sampled with the "
                                   "stationary priors only; add %s gmrf1 (or gmrf2, matern)",
                       NAME(PP_SET_PSF), NAME(PP_SET_PRIOR));
    if (p->kind == PP_PSF_FILE || !(p->width_lo > 0 && p->width_hi > p->width_lo))
        return pp_fail(PP_ERR_ARG, "%s ...=auto: needs a gaussian or airy model with "
                                   "0 < lo < hi",
                       NAME(PP_SET_PSF));
    return PP_OK;
}

/* What volumes (frame depth > 1) support today: every sampler with a
 * stationary prior and a fixed PSF (sampler.h "Volumes"). The rest is
 * refused here, saying what to use instead. */
static pp_status check_volume(const pp_sampler_config *cfg)
{
    /* (the adaptive prior runs on volumes as on frames: gibbs, hmc; check_config) */
    if (cfg->psf.width_auto)
        return pp_fail(PP_ERR_ARG, "%s ...=auto: sampling the PSF width is not available for "
                                   "volumes; give the width (sigma=S, na=NA)",
                       NAME(PP_SET_PSF));
    for (int a = 0; a < 3; a++)
        if (!(cfg->voxel[a] >= 0 && isfinite(cfg->voxel[a])))
            return pp_fail(PP_ERR_ARG, "voxel size: each spacing must be finite and >= 0 "
                                       "micrometres (0: unknown, taken as cubic), not %g",
                           cfg->voxel[a]);
    return PP_OK;
}

/* A volume's kernel beyond pp_psf_check: with periodic boundaries no deeper
 * than the volume (pad adds its z radius to the grid, so any odd depth
 * fits). A frame-like kernel (depth 1) blurs within each slice only. */
static pp_status check_volume_psf(const pp_sampler_config *cfg, const pp_image *k,
                                  const pp_shape *fs)
{
    if (k->depth > fs->n[0] && cfg->boundary == PP_BOUNDARY_PERIODIC)
        return pp_fail(PP_ERR_LIMIT, "the PSF has %zu slices, more than the volume's %zu: "
                                     "with %s periodic it would wrap onto itself; use %s pad",
                       k->depth, fs->n[0], NAME(PP_SET_BOUNDARY), NAME(PP_SET_BOUNDARY));
    return PP_OK;
}

static pp_status check_config(pp_sampler_config *cfg, int missing, int volume)
{
    pp_prior_resolve(&cfg->prior, &cfg->noise); /* the default prior, by noise model */
    pp_status st = volume ? check_volume(cfg) : PP_OK;
    if (st != PP_OK)
        return st;
    /* Gaussian noise, periodic: mtc (ESS/s of delta 6.2-6.8x gibbs's at 256^2
     * to 1024^2, bench/mtc_bench.py); pad or missing pixels keep gibbs (mtc
     * would fall back). */
    if (cfg->kind == PP_SAMPLER_AUTO && cfg->noise.kind != PP_NOISE_GAUSSIAN)
        cfg->kind = PP_SAMPLER_HMC;
    /* The adaptive prior is not Fourier-diagonal: gibbs (x by perturbation-
     * optimisation) whatever the boundary; mtc needs a stationary prior. */
    if (cfg->kind == PP_SAMPLER_AUTO)
        cfg->kind = cfg->boundary == PP_BOUNDARY_PERIODIC && !missing &&
                            cfg->prior.kind != PP_PRIOR_ADAPTIVE
                        ? PP_SAMPLER_MTC
                        : PP_SAMPLER_GIBBS;
    if (cfg->prior.kind == PP_PRIOR_ADAPTIVE && cfg->kind != PP_SAMPLER_GIBBS &&
        cfg->kind != PP_SAMPLER_HMC)
        return pp_fail(PP_ERR_ARG, "%s %s: the adaptive prior (the default) runs with "
                                   "gibbs (gaussian noise) or hmc (photon counts); for %s add "
                                   "%s gmrf1 (or gmrf2, matern)",
                       NAME(PP_SET_SAMPLER), pp_sampler_kind_name(cfg->kind),
                       pp_sampler_kind_name(cfg->kind), NAME(PP_SET_PRIOR));
    if (cfg->noise.kind != PP_NOISE_GAUSSIAN && cfg->kind != PP_SAMPLER_PCN &&
        cfg->kind != PP_SAMPLER_GPCN && cfg->kind != PP_SAMPLER_HMC)
        return pp_fail(PP_ERR_ARG, "%s %s: needs gaussian noise; the photon-counting "
                                   "models (poisson, camera) use %s hmc, gpcn or pcn",
                       NAME(PP_SET_SAMPLER), pp_sampler_kind_name(cfg->kind),
                       NAME(PP_SET_SAMPLER));
    if (!kernel_for(cfg->kind, cfg->prior.kind))
        return pp_fail(PP_ERR_ARG, "%s %s: not available in this version (use gibbs)",
                       NAME(PP_SET_SAMPLER), pp_sampler_kind_name(cfg->kind));
    if (cfg->chains < 1 || cfg->chains > 1024)
        return pp_fail(PP_ERR_ARG, "%s %u: must be between 1 and 1024", NAME(PP_SET_CHAINS),
                       cfg->chains);
    if (cfg->iters < 1)
        return pp_fail(PP_ERR_ARG, "%s: must be at least 1", NAME(PP_SET_ITERS));
    if (!(cfg->max_seconds >= 0 && isfinite(cfg->max_seconds)))
        return pp_fail(PP_ERR_ARG, "%s %g: must be a finite number of seconds >= 0",
                       NAME(PP_SET_MAX_SECONDS), cfg->max_seconds);
    if (cfg->iters_auto && cfg->max_iters && cfg->max_iters < cfg->burn + cfg->iters)
        /* (the first round, rounded up to whole thins, may still pass it: next_round cuts) */
        return pp_fail(PP_ERR_ARG,
                       "%s %lu: must be at least %s + the first "
                       "round (%lu + %lu)",
                       NAME(PP_SET_MAX_ITERS), cfg->max_iters, NAME(PP_SET_BURN), cfg->burn,
                       cfg->iters);
    if (cfg->thin < 1 || (!cfg->iters_auto && cfg->thin > cfg->iters))
        return pp_fail(PP_ERR_ARG, "%s %lu: must be between 1 and %s (%lu)", NAME(PP_SET_THIN),
                       cfg->thin, NAME(PP_SET_ITERS), cfg->iters);
    if (!(cfg->level > 0 && cfg->level < 1))
        return pp_fail(PP_ERR_ARG, "%s %g: must be strictly between 0 and 1", NAME(PP_SET_LEVEL),
                       cfg->level);
    for (int i = 0; i < 2; i++)
        if (!(cfg->hyper_lambda[i] >= 0 && cfg->hyper_delta[i] >= 0 &&
              isfinite(cfg->hyper_lambda[i]) && isfinite(cfg->hyper_delta[i])))
            return pp_fail(PP_ERR_ARG, "%s/%s: shape and rate must be finite and >= 0",
                           NAME(PP_SET_HYPER_LAMBDA), NAME(PP_SET_HYPER_DELTA));
    return check_width(cfg);
}

/* ---- planning --------------------------------------------------------- */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* Noise sd from the median absolute deviation of horizontal differences
 * (a robust estimate; common practice for smooth, blurred frames); pairs
 * with an unobserved (NaN) pixel are left out. -1 when out of memory. */
static double robust_noise_sd(const pp_image *y)
{
    size_t rows = pp_image_count(y) / y->width, n = rows * (y->width - 1);
    if (y->width < 2 || n < 2)
        return 0;
    double *d = malloc(n * sizeof *d);
    if (!d)
        return -1;
    size_t k = 0;
    for (size_t r = 0; r < rows; r++)
        for (size_t c = 0; c + 1 < y->width; c++) {
            double v = y->data[r * y->width + c + 1] - y->data[r * y->width + c];
            if (!isnan(v))
                d[k++] = v;
        }
    if ((n = k) < 2) {
        free(d);
        return 0;
    }
    qsort(d, n, sizeof *d, cmp_double);
    double med = d[n / 2];
    for (size_t i = 0; i < n; i++)
        d[i] = fabs(d[i] - med);
    qsort(d, n, sizeof *d, cmp_double);
    double mad = d[n / 2];
    free(d);
    return 1.4826 * mad / sqrt(2.0);
}

/* Rough lambda and delta for the chains' dispersed starts. */
static pp_status rough_scales(pp_sampler *s, const pp_image *frame)
{
    double lo, hi;
    pp_image_range(frame, &lo, &hi);
    double sd = robust_noise_sd(frame);
    if (sd == -1)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the noise estimate of the starts");
    if (!(sd > 0))
        sd = 1e-3 * (hi - lo) + 1e-12;
    s->lambda0 = s->cfg.noise.sigma_set ? 1.0 / (s->cfg.noise.sigma * s->cfg.noise.sigma)
                                        : 1.0 / (sd * sd);
    /* y'Qy minus its expected noise part tr(Q)/lambda, floored. */
    double qy = 0, trq = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            double w = pp_half_weight(k2, s->gw);
            pp_complex y = s->yhat[i];
            qy += w * s->q[i] * (creal(y) * creal(y) + cimag(y) * cimag(y));
            trq += w * s->q[i];
        }
    qy /= (double)s->gn;
    double signal = qy - trq / s->lambda0;
    if (signal < 0.1 * qy)
        signal = 0.1 * qy;
    s->delta0 = s->cfg.prior.delta_set ? s->cfg.prior.delta
                                       : (signal > 0 ? s->rank / signal : 1.0);
    return PP_OK;
}

/* The grid: the frame's shape, or with pad the PSF's margin added on every
 * axis (PP_GRID_PAD_SCENE; a volume's z axis by the kernel's own z radius,
 * none for a depth-1 kernel). A frame keeps its rank-2 plans. */
static pp_status plan_grid(pp_sampler *s, const pp_image *psf)
{
    size_t r = psf->width / 2, rz = psf->depth / 2;
    pp_shape fs = s->fshape, gs = fs;
    if (s->cfg.boundary == PP_BOUNDARY_PAD) {
        pp_grid_padded(&fs, r, PP_GRID_PAD_SCENE, &gs);
        if (fs.rank == 3) {
            pp_shape gz;
            pp_grid_padded(&fs, rz, PP_GRID_PAD_SCENE, &gz);
            gs.n[0] = gz.n[0];
        }
    }
    s->gshape = gs;
    int k = gs.rank;
    s->gd = k == 3 ? gs.n[0] : 1;
    s->gh = gs.n[k - 2];
    s->gw = gs.n[k - 1];
    s->grows = s->gd * s->gh;
    s->gwh = s->gw / 2 + 1;
    size_t bytes;
    if (pp_shape_count(&gs, 64, &bytes) != PP_OK)
        return k == 2 ? pp_fail(PP_ERR_LIMIT, "frame %zux%zu is too large", s->width, s->height)
                      : pp_fail(PP_ERR_LIMIT, "volume %zux%zux%zu is too large", s->width,
                                s->height, s->depth);
    s->gn = s->grows * s->gw;
    s->gm = s->grows * s->gwh;
    if (k == 2)
        return pp_fft_create(s->gh, s->gw, s->cfg.fft_effort, &s->fft);
    return pp_fft_create_shape(&gs, s->cfg.fft_effort, &s->fft);
}

static pp_status plan_data(pp_sampler *s, const pp_image *frame, const pp_image *psf)
{
    s->otf = pp_fft_alloc_complex(s->gm);
    s->otf2 = malloc(s->gm * sizeof(double));
    s->q = malloc(s->gm * sizeof(double));
    s->ygrid = pp_fft_alloc_real(s->gn);
    s->yhat = pp_fft_alloc_complex(s->gm);
    if (!s->otf || !s->otf2 || !s->q || !s->ygrid || !s->yhat)
        return pp_fail(PP_ERR_NOMEM, "out of memory planning a %zux%zu grid", s->gw, s->gh);
    pp_status st = pp_psf_transfer(psf, s->fft, s->otf);
    if (st != PP_OK)
        return st;
    size_t zeros = 0;
    for (size_t i = 0; i < s->gm; i++) {
        s->otf2[i] = creal(s->otf[i]) * creal(s->otf[i]) + cimag(s->otf[i]) * cimag(s->otf[i]);
        zeros += s->otf2[i] < 1e-20; /* |A(k)| < 1e-10 of its value at k = 0 */
    }
    if (zeros) /* a property of the PSF, not of the run: a note, not a warning */
        pp_sampler_add_note(s,
                            "the PSF's transfer function is zero (below 1e-10) at %zu of %zu "
                            "half-spectrum frequencies: there the data say nothing and the "
                            "estimate comes from the prior alone",
                            zeros, s->gm);
    if ((st = pp_prior_eigen_shape(&s->cfg.prior, &s->gshape,
                                   s->depth > 1 ? s->cfg.voxel : NULL, s->q, &s->rank)) != PP_OK)
        return st;
    s->mean_dc = s->cfg.prior.mean_set ? s->cfg.prior.mean * (double)s->gn : 0.0;
    /* Embed the frame at the grid's origin; the latent pixels (padding,
     * missing pixels) start at the mean of the observed ones. */
    double fill = pp_observed_mean(frame);
    pp_grid_put_box(s->ygrid, &s->gshape, frame->data, &s->fshape);
    for (size_t i = 0; i < s->gn; i++)
        if (!s->obs[i]) /* a censored pixel starts at its level (inside its support) */
            s->ygrid[i] = s->cens && s->cens[i] ? fmax(fill, s->censor_level) : fill;
    pp_fft_forward(s->fft, s->ygrid, s->yhat);
    return PP_OK;
}

/* A fixed 3 x 3 spread of probe pixels at the quarter points of the frame
 * (of a volume: of its middle slice, z = (depth - 1) / 2, the slice least
 * touched by the z boundary), with their twiddle tables for direct
 * half-spectrum evaluation. */
static pp_status plan_probes(pp_sampler *s)
{
    s->nprobe = 0;
    for (int a = 1; a <= 3; a++)
        for (int b = 1; b <= 3; b++) {
            s->probe_z[s->nprobe] = (s->depth - 1) / 2;
            s->probe_r[s->nprobe] = (size_t)a * (s->height - 1) / 4;
            s->probe_c[s->nprobe] = (size_t)b * (s->width - 1) / 4;
            s->nprobe++;
        }
    s->tw_row = malloc(s->nprobe * s->grows * sizeof(pp_complex));
    s->tw_col = malloc(s->nprobe * s->gwh * sizeof(pp_complex));
    if (!s->tw_row || !s->tw_col)
        return pp_fail(PP_ERR_NOMEM, "out of memory for probe tables");
    for (size_t p = 0; p < s->nprobe; p++) {
        for (size_t kz = 0; kz < s->gd; kz++) {
            /* 0 for a frame: e^0 = 1 exactly, so its twiddles are the 2-D ones */
            double tz = 2 * PP_PI * (double)((kz * s->probe_z[p]) % s->gd) / (double)s->gd;
            pp_complex wz = s->gd > 1 ? cos(tz) + I * sin(tz) : 1.0;
            for (size_t k = 0; k < s->gh; k++) {
                double th = 2 * PP_PI * (double)((k * s->probe_r[p]) % s->gh) / (double)s->gh;
                pp_complex w = cos(th) + I * sin(th);
                s->tw_row[p * s->grows + kz * s->gh + k] = s->gd > 1 ? wz * w : w;
            }
        }
        for (size_t k = 0; k < s->gwh; k++) {
            double th = 2 * PP_PI * (double)((k * s->probe_c[p]) % s->gw) / (double)s->gw;
            s->tw_col[p * s->gwh + k] =
                pp_half_weight(k, s->gw) / (double)s->gn * (cos(th) + I * sin(th));
        }
    }
    return PP_OK;
}

static pp_status plan_trace(pp_sampler *s)
{
    /* A sampled PSF width gets the column after loglik, then the adaptive
     * prior's kappa, then the pCN family's free level (the grid mean of the
     * sampled field, when q(0) = 0); probes follow. */
    size_t col = PP_COL_PROBE0;
    const pp_sampler_kind kind = s->cfg.kind;
    const int pcn_family =
        kind == PP_SAMPLER_PCN || kind == PP_SAMPLER_GPCN || kind == PP_SAMPLER_HMC;
    s->col_width = s->cfg.psf.width_auto ? (long)col++ : -1;
    s->col_kappa = s->cfg.prior.kind == PP_PRIOR_ADAPTIVE ? (long)col++ : -1;
    s->col_level = pcn_family && s->q[0] == 0.0 ? (long)col++ : -1;
    s->col_probe0 = col;
    size_t ncols = s->col_probe0 + s->nprobe;
    /* a run in rounds: room for the first round (rounded up to whole thins) */
    size_t kept = s->cfg.iters_auto ? (s->cfg.iters + s->cfg.thin - 1) / s->cfg.thin
                                    : s->cfg.iters / s->cfg.thin,
           rows, n;
    if (!pp_mul_ok(kept, s->cfg.chains, &rows) || !pp_mul_ok(rows, ncols, &n) ||
        !pp_mul_ok(n, sizeof(double), &n))
        return pp_fail(PP_ERR_LIMIT, "%s/%s: the trace would not fit in memory",
                       pp_setting_name(s->cfg.setting_names, PP_SET_ITERS),
                       pp_setting_name(s->cfg.setting_names, PP_SET_CHAINS));
    s->trace_values = calloc(rows * ncols, sizeof(double));
    if (!s->trace_values)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the traces (%zu rows)", rows);
    static const char *const fixed[] = {"lambda", "delta", "loglik"};
    for (size_t i = 0; i < ncols; i++) {
        char buf[64];
        if (i < PP_COL_PROBE0)
            snprintf(buf, sizeof buf, "%s", fixed[i]);
        else if ((long)i == s->col_width)
            snprintf(buf, sizeof buf, "psf_width");
        else if ((long)i == s->col_kappa)
            snprintf(buf, sizeof buf, "kappa");
        else if ((long)i == s->col_level)
            snprintf(buf, sizeof buf, "level");
        else if (s->depth > 1) /* a volume's probes: p_<z>_<r>_<c> */
            snprintf(buf, sizeof buf, "p_%zu_%zu_%zu", s->probe_z[i - s->col_probe0],
                     s->probe_r[i - s->col_probe0], s->probe_c[i - s->col_probe0]);
        else
            snprintf(buf, sizeof buf, "p_%zu_%zu", s->probe_r[i - s->col_probe0],
                     s->probe_c[i - s->col_probe0]);
        s->names[i] = strdup(buf);
        if (!s->names[i])
            return pp_fail(PP_ERR_NOMEM, "out of memory");
    }
    if (s->cfg.regions && !pp_regions_fit(s->cfg.regions, s->depth, s->height, s->width))
        return pp_fail(PP_ERR_ARG, "the regions were planned for another frame size");
    if (s->cfg.profiles && !pp_profiles_fit(s->cfg.profiles, s->depth, s->height, s->width))
        return pp_fail(PP_ERR_ARG, "the profiles were planned for another frame size");
    if (s->cfg.spots && !pp_spots_fit(s->cfg.spots, s->depth, s->height, s->width))
        return pp_fail(PP_ERR_ARG, "the spots were planned for another frame size");
    s->nreg = s->cfg.regions ? pp_regions_count(s->cfg.regions) : 0;
    s->nprof = s->cfg.profiles ? pp_profiles_points(s->cfg.profiles) : 0;
    s->nfun = s->nreg + s->nprof + (s->cfg.spots ? pp_spots_count(s->cfg.spots) : 0);
    if (s->nfun) {
        if (!pp_mul_ok(rows, s->nfun, &n) || !pp_mul_ok(n, sizeof(double), &n))
            return pp_fail(PP_ERR_LIMIT, "the regions' and profiles' draws would not fit in "
                                         "memory");
        if (!(s->reg_values = calloc(rows * s->nfun, sizeof(double))))
            return pp_fail(PP_ERR_NOMEM, "out of memory for the regions' and profiles' draws");
    }
    if (s->cfg.nabove > PP_MAX_ABOVE || (s->cfg.nabove && !s->cfg.above))
        return pp_fail(PP_ERR_ARG, "at most %d thresholds for the above maps", PP_MAX_ABOVE);
    s->nabove = s->cfg.nabove;
    for (size_t t = 0; t < s->nabove; t++)
        if (!isfinite(s->above_t[t] = s->cfg.above[t]))
            return pp_fail(PP_ERR_ARG, "an above map's threshold is not finite");
    s->cfg.above = NULL; /* not kept: the thresholds are copied here */
    s->cfg.nabove = 0;
    s->draw_stats = s->nfun || s->nabove;
    s->trace = (pp_trace){s->cfg.chains, kept, ncols, (const char *const *)s->names,
                          s->trace_values};
    s->trace_cap = kept;
    return PP_OK;
}

/* Threads of the run: --threads (all available if 0), at most one per chain. */
static unsigned run_threads(const pp_sampler *s)
{
    int nt = s->cfg.threads > 0 ? s->cfg.threads : omp_get_max_threads();
    return nt < 1 ? 1 : (unsigned)nt < s->cfg.chains ? (unsigned)nt : s->cfg.chains;
}

static pp_status plan_chains(pp_sampler *s)
{
    int pad = s->augment;
    s->nslots = run_threads(s);
    s->chain = calloc(s->cfg.chains, sizeof *s->chain);
    s->slot = calloc(s->nslots, sizeof *s->slot);
    if (!s->chain || !s->slot)
        return pp_fail(PP_ERR_NOMEM, "out of memory for %u chains", s->cfg.chains);
    for (unsigned k = 0; k < s->nslots; k++) {
        pp_slot *b = &s->slot[k];
        b->resident = -1;
        b->cbuf = pp_fft_alloc_complex(s->gm);
        b->cbuf2 = pp_fft_alloc_complex(s->gm);
        b->rbuf = pp_fft_alloc_real(s->gn);
        b->yhat = pad ? pp_fft_alloc_complex(s->gm) : NULL;
        b->yaug = pad ? pp_fft_alloc_real(s->gn) : NULL;
        int dpad = pad && s->draw_stats;
        b->xcopy = dpad ? pp_fft_alloc_complex(s->gm) : NULL;
        b->xdraw = dpad ? pp_fft_alloc_real(s->gn) : NULL;
        if (!b->cbuf || !b->cbuf2 || !b->rbuf || (pad && (!b->yhat || !b->yaug)) ||
            (dpad && (!b->xcopy || !b->xdraw)))
            return pp_fail(PP_ERR_NOMEM, "out of memory for the buffers of thread %u", k + 1);
    }
    for (unsigned k = 0; k < s->cfg.chains; k++) {
        pp_chain *c = &s->chain[k];
        pp_status st = pp_moments_init(&c->mom, s->npix);
        if (st != PP_OK)
            return st;
        if (!(c->mean1 = malloc(s->npix * sizeof(float))))
            return pp_fail(PP_ERR_NOMEM, "out of memory for chain %u", k + 1);
        c->trace = s->trace_values + (size_t)k * s->trace_cap * s->trace.ncols;
        c->regs = s->reg_values ? s->reg_values + (size_t)k * s->trace_cap * s->nfun : NULL;
        if (s->nabove && !(c->above_n = calloc(s->nabove * s->npix, sizeof(double))))
            return pp_fail(PP_ERR_NOMEM, "out of memory for the above maps of chain %u", k + 1);
        c->otf = s->otf;
        c->otf2 = s->otf2;
        if (s->cfg.psf.width_auto) {
            pp_status st = pp_width_create(s, &c->wstate);
            if (st != PP_OK)
                return st;
        }
    }
    return PP_OK;
}

pp_status pp_sampler_create(const pp_sampler_config *cfg, const pp_image *frame,
                            const pp_image *psf, pp_sampler **out)
{
    *out = NULL;
    pp_sampler *s = calloc(1, sizeof *s);
    if (!s)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    s->cfg = *cfg;
    s->height = frame->height;
    s->width = frame->width;
    s->depth = frame->depth;
    s->npix = pp_image_count(frame);
    s->fshape = pp_image_shape(frame);
    int missing = 0;
    for (size_t i = 0; i < s->npix && !missing; i++)
        missing = isnan(frame->data[i]);
    pp_status st = check_config(&s->cfg, missing, s->depth > 1);
    pp_image *kernel = NULL;
    if (st == PP_OK && (st = pp_image_clone(psf, &kernel)) == PP_OK)
        st = s->depth == 1 && psf->depth > 1
                 ? pp_fail(PP_ERR_ARG, "the PSF is 3-D (%zu slices) but the frame is 2-D: a "
                                       "3-D PSF needs a volume (a z-stack)",
                           psf->depth)
                 : pp_psf_check(kernel, s->height, s->width);
    if (st == PP_OK && s->depth > 1)
        st = check_volume_psf(&s->cfg, kernel, &s->fshape);
    if (st == PP_OK)
        s->psf_size = kernel->width;
    if (st == PP_OK)
        st = plan_grid(s, kernel);
    if (st == PP_OK)
        st = pp_observed_plan(s, frame);
    if (st == PP_OK)
        st = plan_data(s, frame, kernel);
    pp_image_free(kernel);
    if (st == PP_OK)
        st = plan_probes(s);
    if (st == PP_OK)
        st = plan_trace(s);
    if (st == PP_OK)
        st = plan_chains(s);
    if (st == PP_OK) {
        s->kernel = kernel_for(s->cfg.kind, s->cfg.prior.kind);
        s->records_mean = s->kernel == &pp_kernel_gibbs || s->kernel == &pp_kernel_mtc;
        if (s->kernel->prepare)
            st = s->kernel->prepare(s);
    }
    if (st == PP_OK)
        st = rough_scales(s, frame);
    if (st == PP_OK && s->lost_sentence)
        st = pp_fail(PP_ERR_NOMEM, "out of memory for the sampler's warnings");
    if (st != PP_OK) {
        pp_sampler_free(s);
        return st;
    }
    s->nwarn_setup = s->nwarnings;
    /* The chains read the data in one form only: the spectrum (periodic),
     * or the embedded frame from which each chain with latent pixels starts
     * its own augmented copy and spectrum (start_chain). */
    if (s->augment) {
        pp_fft_free_buffer(s->yhat);
        s->yhat = NULL;
    } else {
        pp_fft_free_buffer(s->ygrid);
        s->ygrid = NULL;
    }
    *out = s;
    return PP_OK;
}

void pp_sampler_return_memory(void)
{
#if defined(__GLIBC__) && defined(M_MMAP_THRESHOLD)
    mallopt(M_MMAP_THRESHOLD, 128 * 1024);
#endif
}

/* ---- running ---------------------------------------------------------- */

/* Chain k runs on the buffers of slot b (every time it runs). */
static void bind_chain(pp_sampler *s, pp_chain *c, const pp_slot *b)
{
    c->cbuf = b->cbuf;
    c->cbuf2 = b->cbuf2;
    c->rbuf = b->rbuf;
    c->yaug = b->yaug;
    c->yhat = b->yhat ? b->yhat : s->yhat;
    c->kwork = b->kwork;
    c->xcopy = b->xcopy;
    c->xdraw = b->xdraw;
}

/* Chain k's first iteration: a dispersed start, the rough scales times a
 * log-normal factor (sd 1). */
static void start_chain(pp_sampler *s, unsigned k)
{
    pp_chain *c = &s->chain[k];
    pp_rng_seed(&c->rng, s->cfg.seed, 1000 + (uint64_t)k);
    c->lambda = s->lambda0 * (s->cfg.noise.sigma_set ? 1.0 : exp(pp_rng_normal(&c->rng)));
    c->delta = s->delta0 * (s->cfg.prior.delta_set ? 1.0 : exp(pp_rng_normal(&c->rng)));
    c->solver_draws = c->solver_iters = c->solver_capped = c->solver_accepted = 0;
    c->solver_fallback = 0;
    c->solver_max = 0;
    if (c->yaug) {
        memcpy(c->yaug, s->ygrid, s->gn * sizeof(double));
        pp_fft_forward(s->fft, c->yaug, c->yhat); /* as plan_data made s->yhat */
    }
    if (c->wstate) {
        /* Sampled PSF width: chains start spread evenly over the middle
         * half of the prior range (dispersed, away from the edges). */
        const pp_psf_spec *p = &s->cfg.psf;
        double f = 0.25 + 0.5 * ((double)k + 0.5) / (double)s->cfg.chains;
        pp_width_start(s, c, p->width_lo + f * (p->width_hi - p->width_lo));
    }
}

/* Forgets chain c's kept draws (a fresh start of its kept phase). */
static void clear_kept(const pp_sampler *s, pp_chain *c)
{
    c->kept = 0;
    c->condvar_sum = 0;
    c->mom.count = 0;
    memset(c->mom.mean, 0, c->mom.len * sizeof(double));
    memset(c->mom.m2, 0, c->mom.len * sizeof(double));
    if (c->above_n)
        memset(c->above_n, 0, s->nabove * s->npix * sizeof(double));
}

/* The regions of slot b that hold its running chain's state: the kernel's
 * (state) and, with padding, the augmented frame (its spectrum yhat is
 * made again from it: the r2c is deterministic, so the same bytes). */
static size_t slot_regions(const pp_sampler *s, pp_slot *b, pp_region *out)
{
    size_t n = s->kernel->state ? s->kernel->state(s, b->kwork, out) : 0;
    if (b->yaug)
        out[n++] = (pp_region){b->yaug, s->gn * sizeof(double)};
    return n;
}

/* Makes chain k the one whose state slot b holds: swaps the bytes of the
 * slot's state regions with those of the park store holding chain k's,
 * which then holds the resident chain's. Lossless (a byte swap). Chain k
 * (k >= nslots) starts out owning store k - nslots, empty; slot b starts
 * out holding chain b. A store only ever passes between the chains of one
 * slot (k % nslots), so the threads, one per slot, never share one. */
static void park_swap(pp_sampler *s, pp_slot *b, unsigned k)
{
    if (!s->park || b->resident == (long)k)
        return;
    long p = s->park_of[k], r = b->resident;
    pp_region reg[PP_MAX_REGIONS + 1];
    size_t n = slot_regions(s, b, reg), off = 0;
    unsigned char *st = s->park[p];
    for (size_t j = 0; j < n; j++) {
        unsigned char *a = reg[j].p;
        for (size_t i = 0; i < reg[j].bytes; i++) {
            unsigned char v = a[i];
            a[i] = st[off + i];
            st[off + i] = v;
        }
        off += reg[j].bytes;
    }
    s->park_of[r] = p;
    s->park_of[k] = -1;
    b->resident = (long)k;
    if (b->yaug && s->chain[k].t > 0)
        pp_fft_forward(s->fft, b->yaug, b->yhat);
}

/* Bytes of one park store: the state regions of a slot. */
static size_t park_store_bytes(const pp_sampler *s)
{
    pp_region r[PP_MAX_REGIONS + 1];
    size_t n = slot_regions(s, &s->slot[0], r), bytes = 0;
    for (size_t j = 0; j < n; j++)
        bytes += r[j].bytes;
    return bytes;
}

/* Park stores for a run in rounds with more chains than slots: one per
 * chain beyond the slots (a slot holds one chain's state itself). */
static pp_status plan_park(pp_sampler *s)
{
    if (s->cfg.chains <= s->nslots)
        return PP_OK;
    size_t bytes = park_store_bytes(s), nstore = s->cfg.chains - s->nslots;
    if (bytes == 0)
        return PP_OK;
    s->park = calloc(nstore, sizeof *s->park);
    s->park_of = malloc(s->cfg.chains * sizeof *s->park_of);
    if (!s->park || !s->park_of)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the chains' park stores");
    s->park_bytes = bytes;
    for (unsigned k = 0; k < s->cfg.chains; k++)
        s->park_of[k] = k < s->nslots ? -1 : (long)(k - s->nslots);
    for (unsigned b = 0; b < s->nslots; b++)
        s->slot[b].resident = b;
    for (size_t p = 0; p < nstore; p++)
        if (!(s->park[p] = calloc(1, bytes)))
            return pp_fail(PP_ERR_NOMEM,
                           "out of memory for the chains' park stores (%zu bytes "
                           "each)",
                           bytes);
    return PP_OK;
}

void pp_sampler_memory_plan(const pp_sampler *s, size_t *run_bytes, unsigned *threads)
{
    size_t park = 0;
    if (s->cfg.iters_auto && s->cfg.chains > s->nslots) /* plan_park's stores */
        park = park_store_bytes(s) * (s->cfg.chains - s->nslots);
    /* + the R-hat map of a round's check, + the six result maps (mean, sd,
     * lo, hi, rhat, mcse) made at the end */
    *run_bytes = park + ((s->cfg.iters_auto ? 1 : 0) + 6) * s->npix * sizeof(double);
    *threads = s->nslots;
}

static void free_park(pp_sampler *s)
{
    for (unsigned p = 0; s->park && p + s->nslots < s->cfg.chains; p++)
        free(s->park[p]);
    free(s->park);
    free(s->park_of);
    s->park = NULL;
    s->park_of = NULL;
}

static void free_slots(pp_sampler *s)
{
    for (unsigned k = 0; s->slot && k < s->nslots; k++) {
        pp_slot *b = &s->slot[k];
        pp_fft_free_buffer(b->cbuf);
        pp_fft_free_buffer(b->cbuf2);
        pp_fft_free_buffer(b->rbuf);
        pp_fft_free_buffer(b->yhat);
        pp_fft_free_buffer(b->yaug);
        pp_fft_free_buffer(b->xcopy);
        pp_fft_free_buffer(b->xdraw);
        if (s->kernel && s->kernel->free_work)
            s->kernel->free_work(b->kwork);
    }
    free(s->slot);
    s->slot = NULL;
}

/* After the chains: the grid-sized working memory goes before the estimates
 * are allocated, so the peak is that of sampling, not of both together. */
static void release_grid(pp_sampler *s)
{
    free_slots(s);
    free_park(s);
    pp_fft_free_buffer(s->otf);
    free(s->otf2);
    free(s->q);
    pp_fft_free_buffer(s->ygrid);
    pp_fft_free_buffer(s->yhat);
    free(s->obs);
    free(s->cens);
    s->obs = s->cens = NULL;
    s->otf = NULL;
    s->otf2 = s->q = s->ygrid = NULL;
    s->yhat = NULL;
    for (unsigned k = 0; s->chain && k < s->cfg.chains; k++)
        s->chain[k].otf = NULL, s->chain[k].otf2 = NULL;
}

/* The chains' frame moments (after the maps, or when the sampler goes). */
static void free_moments(pp_sampler *s)
{
    for (unsigned k = 0; s->chain && k < s->cfg.chains; k++) {
        pp_moments_free(&s->chain[k].mom);
        free(s->chain[k].mean1);
        s->chain[k].mean1 = NULL;
        free(s->chain[k].above_n);
        s->chain[k].above_n = NULL;
    }
}

/* P(x_i > T): the kept draws above each threshold, over all chains. */
static pp_status pool_above(pp_sampler *s)
{
    double kept = 0;
    for (unsigned k = 0; k < s->cfg.chains; k++)
        kept += (double)s->chain[k].kept;
    for (size_t t = 0; t < s->nabove; t++) {
        pp_status st = pp_image_create3(s->depth, s->height, s->width, &s->above[t]);
        if (st != PP_OK)
            return st;
        double *m = s->above[t]->data;
        for (unsigned k = 0; k < s->cfg.chains; k++) {
            const double *n = s->chain[k].above_n + t * s->npix;
            for (size_t i = 0; i < s->npix; i++)
                m[i] += n[i];
        }
        for (size_t i = 0; i < s->npix; i++)
            m[i] /= kept;
    }
    return PP_OK;
}

static pp_status pool_estimates(pp_sampler *s)
{
    pp_image **out[] = {&s->mean, &s->sd, &s->lo, &s->hi};
    for (int i = 0; i < 4; i++) {
        pp_status st = pp_image_create3(s->depth, s->height, s->width, out[i]);
        if (st != PP_OK)
            return st;
    }
    /* The chains' moments pooled in chain order, straight into mean/sd. */
    size_t n = s->npix, bad = 0;
    pp_moments pool = {n, 0, s->mean->data, s->sd->data}, *acc = &pool;
    double condvar = 0;
    unsigned long long kept = 0;
    for (unsigned k = 0; k < s->cfg.chains; k++) {
        pp_moments_merge(acc, &s->chain[k].mom);
        condvar += s->chain[k].condvar_sum;
        kept += s->chain[k].kept;
    }
    condvar /= (double)kept;
    double z = pp_norm_quantile(0.5 + 0.5 * s->cfg.level);
    for (size_t i = 0; i < n; i++) {
        double var = condvar + (kept > 1 ? acc->m2[i] / (double)(kept - 1) : 0.0);
        double m = acc->mean[i], sd = sqrt(var);
        s->mean->data[i] = m;
        s->sd->data[i] = sd;
        s->lo->data[i] = m - z * sd;
        s->hi->data[i] = m + z * sd;
        bad += !isfinite(m) || !isfinite(sd);
    }
    if (bad)
        return pp_fail(PP_ERR_NUMERIC, "%zu pixels of the estimates are not finite", bad);
    snprintf(s->bound_method, sizeof s->bound_method, "gaussian: mean +/- %.6g x sd%s", z,
             condvar > 0 ? " (Rao-Blackwellised mean, variance by the law of total variance)"
                         : "");
    return PP_OK;
}

/* Runs every chain from its c->t to t_end: slot b runs chains b, b +
 * nslots, ... in turn (so a chain's slot, and the results, do not depend on
 * timing), swapping park stores when a slot hosts several. */
static pp_status run_segment(pp_sampler *s, unsigned long t_end)
{
    unsigned nc = s->cfg.chains, ns = s->nslots;
    pp_status *st = calloc(nc, sizeof *st);
    char(*msg)[1024] = calloc(nc, sizeof *msg);
    if (!st || !msg) {
        free(st);
        free(msg);
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    }
    s->t_end = t_end;
    s->diag_kept = 0; /* new draws: the diagnostics are stale */
    s->progress_total = (unsigned long long)nc * t_end;
    if (s->cfg.progress) /* shown at once: an iteration may take seconds */
        s->cfg.progress(s->cfg.progress_ctx, s->progress_done, s->progress_total);
#pragma omp parallel for num_threads((int)ns) schedule(static, 1)
    for (unsigned b = 0; b < ns; b++)
        for (unsigned k = b; k < nc; k += ns) {
            pp_chain *c = &s->chain[k];
            pp_slot *sl = &s->slot[b];
            int failed = 0;
            for (unsigned j = b; j < k; j += ns)
                failed |= st[j] != PP_OK; /* the slot's state may be half-made */
            if (failed || c->t >= t_end)
                continue;
            park_swap(s, sl, k);
            bind_chain(s, c, sl);
            if (c->t == 0)
                start_chain(s, k);
            st[k] = s->kernel->run_chain(s, c);
            if (st[k] != PP_OK)
                snprintf(msg[k], sizeof msg[k], "%s", pp_error_message());
            c->cbuf = c->cbuf2 = c->yhat = NULL; /* the slot passes to the next chain */
            c->rbuf = c->yaug = NULL;
            c->kwork = NULL;
            c->xcopy = NULL;
            c->xdraw = NULL;
        }
    pp_status res = PP_OK;
    for (unsigned k = 0; k < nc && res == PP_OK; k++)
        if (st[k] != PP_OK)
            res = pp_fail(st[k], "chain %u: %s", k + 1, msg[k]);
    free(st);
    free(msg);
    s->trace.kept = s->chain[0].kept;
    return res;
}

/* A chain-major store of ncols values per kept draw, with room for cap rows
 * per chain, made room for `rows` (each chain's block moves up, last chain
 * first); *store is unchanged on failure. */
static pp_status grow_store(const pp_sampler *s, double **store, size_t ncols, size_t rows)
{
    size_t nc = s->cfg.chains, n;
    if (!pp_mul_ok(rows, nc * ncols, &n) || !pp_mul_ok(n, sizeof(double), &n))
        return pp_fail(PP_ERR_LIMIT, "%s: the trace would not fit in memory",
                       pp_setting_name(s->cfg.setting_names, PP_SET_MAX_ITERS));
    double *v = realloc(*store, n);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the traces (%zu rows)", rows * nc);
    for (size_t k = nc; k-- > 0;)
        memmove(v + k * rows * ncols, v + k * s->trace_cap * ncols,
                s->trace_cap * ncols * sizeof(double));
    *store = v;
    return PP_OK;
}

/* Room in the trace, and in the regions' and profiles' store, for `rows`
 * kept draws per chain. */
static pp_status grow_trace(pp_sampler *s, size_t rows)
{
    if (rows <= s->trace_cap)
        return PP_OK;
    pp_status st = grow_store(s, &s->trace_values, s->trace.ncols, rows);
    if (st == PP_OK && s->nfun)
        st = grow_store(s, &s->reg_values, s->nfun, rows);
    if (st != PP_OK)
        return st; /* the run fails: the stores are not read again */
    s->trace_cap = rows;
    s->trace.values = s->trace_values;
    for (size_t k = 0; k < s->cfg.chains; k++) {
        s->chain[k].trace = s->trace_values + k * rows * s->trace.ncols;
        s->chain[k].regs = s->reg_values ? s->reg_values + k * rows * s->nfun : NULL;
    }
    return PP_OK;
}

/* Rows a segment to t_end keeps per chain (all chains alike). */
static size_t kept_at(const pp_sampler *s, unsigned long t_end)
{
    return t_end > s->keep_from ? (t_end - s->keep_from) / s->cfg.thin : 0;
}

/* Runs to t_end, trace room first. */
static pp_status run_round(pp_sampler *s, unsigned long t_end)
{
    pp_status st = grow_trace(s, kept_at(s, t_end));
    return st == PP_OK ? run_segment(s, t_end) : st;
}

/* The end of a round: the kept draws so far become the maps' first half;
 * the round's R-hat map goes (not to sit beside the next round's buffers). */
static void close_round(pp_sampler *s)
{
    pp_image_free(s->rhat_map);
    s->rhat_map = NULL;
    for (unsigned k = 0; k < s->cfg.chains; k++)
        pp_chain_freeze_mean(&s->chain[k]);
    s->half_n = s->chain[0].kept;
    s->freeze_at = 0;
}

/* The kept draws so far become burn-in: the next round starts the kept
 * phase afresh (its first half frozen at its midpoint, as a fixed run). */
static void extend_burn(pp_sampler *s, unsigned long first)
{
    s->keep_from = s->chain[0].t;
    for (unsigned k = 0; k < s->cfg.chains; k++)
        clear_kept(s, &s->chain[k]);
    s->trace.kept = 0;
    s->freeze_at = first / s->cfg.thin / 2;
    s->half_n = s->freeze_at;
    s->length.burn_extensions++;
}

/* Allocations of a run: park stores when chains share slots in rounds. */
static pp_status begin_run(pp_sampler *s, int rounds)
{
    if (s->ran)
        return pp_fail(PP_ERR_ARG, "pp_sampler_run: a sampler runs once; create a new one");
    s->ran = 1;
    s->keep_from = s->cfg.burn;
    s->half_n = s->freeze_at = s->trace_cap / 2;
    s->length.iters_auto = s->cfg.iters_auto;
    return rounds ? plan_park(s) : PP_OK;
}

/* After the last round: estimates, bounds, final diagnostics. */
static pp_status end_run(pp_sampler *s, pp_status res, double t0)
{
    s->seconds = omp_get_wtime() - t0;
    pp_run_length *L = &s->length;
    L->burn = s->keep_from;
    L->kept = s->trace.kept;
    L->iters = s->chain[0].t > s->keep_from ? s->chain[0].t - s->keep_from : 0;
    release_grid(s);
    s->cfg.regions = NULL; /* read no more: the caller may free them */
    s->cfg.profiles = NULL;
    s->cfg.spots = NULL;
    for (size_t i = s->nwarn_setup; i < s->nwarnings; i++)
        free(s->warnings[i]);
    s->nwarnings = s->nwarn_setup < s->nwarnings ? s->nwarn_setup : s->nwarnings;
    if (res == PP_OK)
        res = pool_estimates(s);
    if (res == PP_OK)
        res = pool_above(s);
    if (res == PP_OK && s->kernel->finish)
        res = s->kernel->finish(s);
    size_t keep = s->nwarnings; /* finish's warnings stay */
    if (res == PP_OK) {
        s->nwarn_setup = keep;
        s->maps_final = 1;
        res = pp_sampler_diagnose(s);
    }
    if (res == PP_OK && s->lost_sentence)
        res = pp_fail(PP_ERR_NOMEM, "out of memory for the run's warnings");
    free_moments(s); /* they have served the estimates and the maps */
    return res;
}

pp_status pp_sampler_run_schedule(pp_sampler *s, const unsigned long *ends, size_t n)
{
    pp_status res = begin_run(s, n > 1);
    if (res != PP_OK)
        return res;
    double t0 = omp_get_wtime();
    s->freeze_at = s->half_n = (size_t)(ends[0] / s->cfg.thin / 2);
    for (size_t r = 0; r < n && res == PP_OK; r++) {
        res = run_round(s, s->cfg.burn + ends[r]);
        if (res == PP_OK && r + 1 < n) {
            res = pp_sampler_diagnose(s);
            close_round(s);
        }
    }
    s->length.rounds = (unsigned)n;
    s->length.stop = s->cfg.iters_auto ? PP_STOP_MAX_ITERS : PP_STOP_FIXED;
    return end_run(s, res, t0);
}

/* The default time cap: PP_MAX_SECONDS_PER_MP per megapixel, floored. */
static double max_seconds(const pp_sampler *s)
{
    if (s->cfg.max_seconds > 0)
        return s->cfg.max_seconds;
    double mp = (double)s->depth * (double)s->height * (double)s->width * 1e-6;
    return fmax(PP_MAX_SECONDS_FLOOR, PP_MAX_SECONDS_PER_MP * mp);
}

/* Burn-in check (step 3 of the header's "Run length"): R-hat above this in
 * any trace column after the first round means the chains still disagree
 * grossly: the older threshold of Gelman et al., BDA3 (2013) section 11.4,
 * common practice for "not yet converged at all". */
#define BURN_RHAT 1.1
/* The least kept draws per chain of a first round cut by the time cap: the
 * ESS criteria ask for 100 per chain. */
#define FIRST_MIN 100UL

/* The worst R-hat over the trace columns (NaN columns ignored). */
static double worst_rhat(const pp_sampler *s)
{
    pp_convergence cv;
    pp_sampler_convergence(s, &cv);
    return cv.rhat_max;
}

/* The next round's length in iterations (a multiple of thin), cut to the
 * caps; 0 when a cap leaves no room, with the reason in *stop. */
static unsigned long next_round(const pp_sampler *s, unsigned long want, double spi, double left,
                                pp_stop_reason *stop)
{
    unsigned long th = s->cfg.thin, t = s->chain[0].t, len = want / th * th;
    if (s->cfg.max_iters) {
        unsigned long room = s->cfg.max_iters > t ? (s->cfg.max_iters - t) / th * th : 0;
        if (room < len) {
            len = room;
            *stop = PP_STOP_MAX_ITERS;
        }
    }
    double fit = spi > 0 ? left / spi : (double)len;
    if (fit < (double)len) {
        len = fit > 0 ? (unsigned long)fit / th * th : 0;
        *stop = PP_STOP_MAX_TIME;
    }
    /* a round under a tenth of the planned one is not worth its diagnostics */
    if (len < th || len * 10 < want)
        return 0;
    return len;
}

/* The run in rounds of the header's "Run length". */
static pp_status run_auto(pp_sampler *s, double t0)
{
    pp_run_length *L = &s->length;
    const double cap = max_seconds(s);
    const unsigned long th = s->cfg.thin, first = (s->cfg.iters + th - 1) / th * th;
    L->max_seconds = cap;
    L->max_iters = s->cfg.max_iters;
    /* The burn-in runs first, alone, whatever the caps (the samplers tune
     * there); its speed decides how much of the first round fits the time
     * cap, at least FIRST_MIN kept draws (fewer can never pass the ESS
     * criteria). A zero burn-in leaves the first round whole. */
    unsigned long len = first;
    pp_status res = s->cfg.burn ? run_round(s, s->cfg.burn) : PP_OK;
    if (res != PP_OK)
        return end_run(s, res, t0);
    double spent = omp_get_wtime() - t0, fit = (cap - spent) / (spent / (double)s->cfg.burn);
    if (s->cfg.burn && spent > 0 && fit < (double)first)
        len = fit > (double)(FIRST_MIN * th) ? (unsigned long)fit / th * th : FIRST_MIN * th;
    len = len < first ? len : first;
    s->freeze_at = s->half_n = len / th / 2;
    int burn_ok = 0;
    for (;;) {
        double r0 = omp_get_wtime();
        unsigned long t_from = s->chain[0].t;
        res = run_round(s, t_from + len);
        if (res == PP_OK)
            res = pp_sampler_diagnose(s);
        if (res != PP_OK)
            break;
        L->rounds++;
        double now = omp_get_wtime(), spi = (now - r0) / (double)len;
        if (pp_sampler_criteria(s, L->failed, sizeof L->failed)) {
            L->stop = PP_STOP_CONVERGED;
            L->failed[0] = 0;
            L->iters_needed = 0;
            break;
        }
        L->iters_needed = pp_sampler_iters_suggested(s);
        pp_stop_reason why = PP_STOP_MAX_TIME;
        if (!burn_ok && worst_rhat(s) > BURN_RHAT) {
            /* further burn-in: as long as all burn-in added so far */
            unsigned long extra = s->chain[0].t - s->cfg.burn;
            unsigned long want = extra > first ? extra : first;
            unsigned long next = next_round(s, want, spi, cap - (now - t0), &why);
            if (next == want) { /* only when the full round fits */
                extend_burn(s, want);
                pp_image_free(s->rhat_map);
                s->rhat_map = NULL;
                L->rounds = 0;
                len = next;
                continue;
            }
        }
        burn_ok = 1;
        len = next_round(s, s->chain[0].t - s->keep_from, spi, cap - (now - t0), &why);
        if (len == 0) {
            L->stop = why;
            break;
        }
        close_round(s);
    }
    return end_run(s, res, t0);
}

pp_status pp_sampler_run(pp_sampler *s)
{
    pp_status res = begin_run(s, s->cfg.iters_auto);
    if (res != PP_OK)
        return res;
    double t0 = omp_get_wtime();
    if (s->cfg.iters_auto)
        return run_auto(s, t0);
    res = run_round(s, s->cfg.burn + s->cfg.iters);
    s->length.rounds = 1;
    s->length.stop = PP_STOP_FIXED;
    return end_run(s, res, t0);
}

static const char *const stop_names[] = {"fixed", "converged", "max-time", "max-iters"};
const char *pp_stop_reason_name(pp_stop_reason r)
{
    return (unsigned)r < 4 ? stop_names[r] : "unknown";
}
const pp_run_length *pp_sampler_run_length(const pp_sampler *s) { return &s->length; }

/* ---- results and cleanup ---------------------------------------------- */

const pp_sampler_config *pp_sampler_config_used(const pp_sampler *s) { return &s->cfg; }
const pp_image *pp_sampler_mean(const pp_sampler *s) { return s->mean; }
const pp_image *pp_sampler_sd(const pp_sampler *s) { return s->sd; }
const pp_image *pp_sampler_lo(const pp_sampler *s) { return s->lo; }
const pp_image *pp_sampler_hi(const pp_sampler *s) { return s->hi; }
void pp_sampler_observed(const pp_sampler *s, size_t *observed, size_t *missing)
{
    *observed = s->nobs;
    *missing = s->nmissing;
}
const pp_trace *pp_sampler_trace(const pp_sampler *s) { return &s->trace; }

const double *pp_sampler_region_draws(const pp_sampler *s, size_t *cap, size_t *stride)
{
    *cap = s->trace_cap;
    *stride = s->nfun;
    return s->reg_values;
}

const pp_image *pp_sampler_above_map(const pp_sampler *s, size_t t)
{
    return t < s->nabove ? s->above[t] : NULL;
}
const char *pp_sampler_bound_method(const pp_sampler *s) { return s->bound_method; }
double pp_sampler_seconds(const pp_sampler *s) { return s->seconds; }
pp_fft_plans pp_sampler_fft_plans(const pp_sampler *s) { return pp_fft_plans_source(s->fft); }
size_t pp_sampler_warning_count(const pp_sampler *s) { return s->nwarnings; }
const char *pp_sampler_warning(const pp_sampler *s, size_t i)
{
    return i < s->nwarnings ? s->warnings[i] : NULL;
}
pp_warning_part pp_sampler_warning_part(const pp_sampler *s, size_t i)
{
    return i < s->nwarnings ? s->warning_part[i] : PP_WARN_OTHER;
}
size_t pp_sampler_note_count(const pp_sampler *s) { return s->nnotes; }
const char *pp_sampler_note(const pp_sampler *s, size_t i)
{
    return i < s->nnotes ? s->notes[i] : NULL;
}

void pp_sampler_free(pp_sampler *s)
{
    if (!s)
        return;
    if (s->kernel && s->kernel->release)
        s->kernel->release(s);
    for (unsigned k = 0; s->chain && k < s->cfg.chains; k++)
        pp_width_free(s->chain[k].wstate);
    free_moments(s);
    release_grid(s);
    free(s->chain);
    free(s->diag);
    pp_image_free(s->rhat_map);
    pp_image_free(s->mcse_map);
    free(s->tw_row);
    free(s->tw_col);
    free(s->trace_values);
    free(s->reg_values);
    for (size_t t = 0; t < s->nabove; t++)
        pp_image_free(s->above[t]);
    for (size_t i = 0; i < 5 + PP_MAX_PROBES; i++)
        free(s->names[i]);
    for (size_t i = 0; i < s->nwarnings; i++)
        free(s->warnings[i]);
    for (size_t i = 0; i < s->nnotes; i++)
        free(s->notes[i]);
    pp_image_free(s->mean);
    pp_image_free(s->sd);
    pp_image_free(s->lo);
    pp_image_free(s->hi);
    pp_fft_free(s->fft);
    free(s);
}
