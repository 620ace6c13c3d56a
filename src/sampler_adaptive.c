/* pixpost — Gibbs sampler for Gaussian noise under the adaptive prior
 * (`--prior adaptive`, src/adaptive.h), periodic or padded grid, a frame
 * or a volume (rank-3 grid: the increments along z, y and x, weighted by
 * the voxel spacing as the stationary priors are; blocks B x B x B_z,
 * src/adaptive.h).
 *
 * One iteration, given the weights W (which carry the global level) and λ:
 *   1. x | W, λ, y ~ N(P⁻¹λAᵀy, P⁻¹), P = λAᵀA + DᵀWD, by one exact
 *      Metropolis–Hastings move of reversible-jump perturbation–
 *      optimisation (src/po_solve.h, pp_po_draw_rj; Orieux, Féron &
 *      Giovannelli, IEEE SPL 2012 for the perturbation; Gilavert,
 *      Moussaoui & Idier, IEEE TSP 2015 for the correction): preconditioned
 *      CG on P G = z stopped at a loose error (PO_EPS), the proposal G − x
 *      accepted with probability min(1, exp((G − 2x)ᵀ(z − PG))). Exact at
 *      any tolerance: the solve's accuracy sets the acceptance (about 0.89
 *      on the demo frame), not the target. CG cannot start at the previous
 *      x (that would break the move's reversibility): it starts at twice
 *      the Fourier operator's posterior mean. A draw that reaches the
 *      iteration cap is still exact but counted and warned about.
 *   2. pad or missing pixels (NaN, src/observed.h): the latent pixels of the
 *      augmented frame redrawn from N(Ax, 1/λ) (data augmentation, as
 *      gibbs); then
 *      λ | x ~ Gamma(a + N/2, b + ‖Ax − y‖²/2) over the grid.
 *   3. W | x by src/adaptive.c (τ, block log-precisions, κ, and κ with
 *      the block field in non-centred form), then on frames the block
 *      field-scale move (src/fieldscale.h).
 * Between 1 and 2, two moves of the level with the field: the
 * interweaving move (level_move) and the spectral level move
 * (level_move_spectral), which scales only the detail the data do not see.
 * Start: x = the gmrf1 posterior mean at the chain's dispersed (λ, δ),
 * one Fourier solve; s = log δ everywhere.
 * Estimates: plain Monte Carlo moments of the draws x (no conditional
 * mean in closed form: the variance is the draws' variance alone).
 * Trace: lambda, delta (= exp(mean s), the global level), loglik, kappa,
 * probes.
 * Cost per iteration: the CG draw (2 FFT pairs per CG iteration + 6), one
 * pair for A x and 1.5 for the spectral level move, plus 2N Gamma and 3N
 * normal draws.
 * Memory per thread: the solver (≈ 84 B/px, 92 B/voxel) + x, wh, wv (24
 * B/px; a volume adds wz, 8 B/voxel) on top of gibbs's buffers; shared:
 * the frame on the grid (periodic, 8 B/px).
 * Volumes: the block field-scale move (src/fieldscale.h) is built for
 * frames and is left out (its moves are an addition to the conditionals
 * above, which alone leave the posterior invariant; without it the level
 * δ mixes more slowly on flat regions).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "adaptive.h"
#include "fieldscale.h"
#include "incr.h"
#include "internal.h"
#include "observed.h"
#include "po_solve.h"
#include "quantiles.h"
#include "sampler_internal.h"
#include "spectral.h"
#include "pixpost/setting_extra.h"

#define PO_ALPHA 1.0 /* reversible-jump PO: no over-relaxation (x' independent of x) */
/* The solve's stop: the last 10 CG steps lowered the error's squared P-norm
 * by <= PO_EPS² (po_solve.h). Demo frame (bench/NOTES.md, 2026-12-04 RJPO):
 * eps 0.1 / 0.3 / 1.0 gave 155 / 130 / 105 CG iterations per draw at
 * acceptance 0.94 / 0.92 / 0.61; 0.3 needs the fewest per accepted move. */
#define PO_EPS 0.3
#define PO_CAP 2000
/* The fallback when the move's log ratio is below its rounding (po_solve.c:
 * weights spanning more decades than doubles resolve, as on a constant
 * frame): a draw by CG run to ‖r‖ ≤ 1e-6‖η‖ from the current x, within
 * 1.5e-4 conditional sd of the exact draw (tests/ref_po_dense.py) — the
 * method before the reversible-jump move. */
#define PO_TOL 1e-6

typedef struct {
    pp_po *po;
    pp_adapt *ad;
    /* the spectral level move: the frozen ratio λ/δ of its frequency
     * weights and its step (set in burn-in, then fixed) */
    double lv[2];
    pp_fieldscale *fs; /* the block field-scale move (NULL on tiny grids and volumes) */
    double *x, *wh, *wv;
    double *wz; /* volumes: the z increments' weights (NULL on a frame) */
} adapt_work;

typedef struct {
    double *y; /* periodic, no missing pixel: the frame on the grid (chains
                * with latent pixels use their yaug) */
    pp_squant_law law;
} adapt_shared;

static void free_work(void *p)
{
    adapt_work *k = p;
    if (!k)
        return;
    pp_po_free(k->po);
    pp_adapt_free(k->ad);
    pp_fieldscale_free(k->fs);
    pp_fft_free_buffer(k->x);
    pp_fft_free_buffer(k->wh);
    pp_fft_free_buffer(k->wv);
    pp_fft_free_buffer(k->wz);
    free(k);
}

static void release(pp_sampler *s)
{
    adapt_shared *sh = s->kshared;
    if (sh)
        pp_fft_free_buffer(sh->y);
    free(sh);
    s->kshared = NULL;
    pp_squant_release_chains(s->chain, s->cfg.chains);
}

static pp_status prepare(pp_sampler *s)
{
    if (s->gh < 2 || s->gw < 2)
        return pp_fail(PP_ERR_ARG, "%s adaptive: the frame must be at least 2 x 2 pixels",
                       pp_setting_name(s->cfg.setting_names, PP_SET_PRIOR));
    adapt_shared *sh = calloc(1, sizeof *sh);
    if (!sh)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    s->kshared = sh;
    pp_squant_law_init(&sh->law, s->cfg.level);
    pp_status st = pp_squant_plan_chains(s->chain, s->cfg.chains, s->npix);
    double ca[3];
    pp_adapt_axis_weights(s->depth, s->cfg.voxel, ca);
    if (st != PP_OK)
        return st;
    if (!s->augment) {
        if (!(sh->y = pp_fft_alloc_real(s->gn)))
            return pp_fail(PP_ERR_NOMEM, "out of memory for the frame");
        memcpy(sh->y, s->ygrid, s->gn * sizeof(double));
    }
    for (unsigned b = 0; b < s->nslots; b++) {
        adapt_work *k = calloc(1, sizeof *k);
        if (!k)
            return pp_fail(PP_ERR_NOMEM, "out of memory");
        s->slot[b].kwork = k;
        pp_status st = pp_po_create(&s->gshape, ca, s->cfg.fft_effort, &k->po);
        if (st == PP_OK)
            st = pp_adapt_create(&s->gshape, &s->fshape, s->cfg.prior.block, ca,
                                 s->cfg.prior.nu, s->cfg.hyper_delta, &k->ad);
        if (st == PP_OK && s->gd == 1)
            st = pp_fieldscale_create(s->gh, s->gw, s->psf_size,
                                      s->cfg.prior.block, s->otf, s->fft, &k->fs);
        if (st != PP_OK)
            return st;
        k->x = pp_fft_alloc_real(s->gn);
        k->wh = pp_fft_alloc_real(s->gn);
        k->wv = pp_fft_alloc_real(s->gn);
        if (s->gd > 1 && !(k->wz = pp_fft_alloc_real(s->gn)))
            return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior's buffers");
        if (!k->x || !k->wh || !k->wv)
            return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior's buffers");
    }
    return PP_OK;
}

/* x = the stationary (gmrf1) posterior mean at (λ, δ) from the chain's data
 * spectrum: one Fourier solve (cbuf, c2r into x). */
static void start_field(const pp_sampler *s, pp_chain *c, double *x)
{
    const double lam = c->lambda, del = c->delta, invn = 1.0 / (double)s->gn;
    for (size_t i = 0; i < s->gm; i++) {
        double p = lam * c->otf2[i] + del * s->q[i];
        c->cbuf[i] = p > 0 ? lam * conj(c->otf[i]) * c->yhat[i] / p * invn : 0;
    }
    pp_fft_inverse(s->fft, c->cbuf, x);
}

/* A x on the grid into c->rbuf (one FFT pair); returns ‖Ax − y‖² over the
 * observed pixels, y the data grid (the padding's part comes from augment), and in
 * *xmean the grid mean of x, read off the transform's zero frequency. */
static double residual(const pp_sampler *s, pp_chain *c, const double *x, const double *y,
                       double *xmean)
{
    const double invn = 1.0 / (double)s->gn;
    pp_fft_forward(s->fft, x, c->cbuf);
    *xmean = creal(c->cbuf[0]) * invn;
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf[i] *= c->otf[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf, c->rbuf);
    double so = 0;
    for (size_t fr = 0; fr < s->depth * s->height; fr++) {
        const size_t o = pp_frame_row(s, fr) * s->gw;
        for (size_t col = 0; col < s->width; col++) {
            if (!s->obs[o + col])
                continue;
            double d = c->rbuf[o + col] - y[o + col];
            so += d * d;
        }
    }
    return so;
}

/* Interweaving move on the global level (Yu & Meng, JCGS 20, 2011, as
 * gibbs's asis_delta): with L the mean of s and x = c + σ u, σ = e^{-L/2},
 * c the grid mean of x (the prior is blind to it), u held fixed. Given u
 * the model's joint density in σ is σ^{-2} p(L) (the Jacobian σ^{N-1} of
 * x − c, the blocks' e^{N L/2}, dL/dσ and the level's hyperprior) times the Gaussian
 * likelihood exp(−λ/2 (V σ² − 2 C σ)) with V = ‖Au‖², C = <Au, y − Ac>
 * over the grid; σ' is proposed from that Gaussian and accepted with the
 * ratio (σ/σ')² p(L')/p(L) (independence Metropolis, exact). On acceptance x, A x (in
 * rbuf), the frame's residual *obs and the weights move with it. cm: the
 * grid mean of x (from residual). One grid pass (two if accepted). */
static void level_move(const pp_sampler *s, pp_chain *c, adapt_work *k, const double *y,
                       double cm, double *obs)
{
    const size_t n = s->gn;
    const double a0 = creal(c->otf[0]);
    double s1 = 1.0 / sqrt(c->delta), v0 = 0, c0 = 0;
    for (size_t i = 0; i < n; i++) {
        double g = c->rbuf[i] - cm * a0;
        v0 += g * g;
        c0 += g * (y[i] - cm * a0);
    }
    double V = v0 / (s1 * s1), C = c0 / s1;
    if (!(V > 0) || !isfinite(V) || !isfinite(C))
        return;
    double sp = C / V + pp_rng_normal(&c->rng) / sqrt(c->lambda * V);
    double u = pp_rng_uniform(&c->rng);
    if (!(sp > 0) || !(log(u) < 2.0 * log(s1 / sp) + pp_adapt_level_dlogp(k->ad, -2.0 * log(sp / s1))))
        return;
    double ratio = sp / s1, so = 0;
    for (size_t i = 0; i < n; i++) {
        k->x[i] = cm + ratio * (k->x[i] - cm);
        c->rbuf[i] = cm * a0 + ratio * (c->rbuf[i] - cm * a0);
        double d = c->rbuf[i] - y[i];
        if (s->obs[i])
            so += d * d;
    }
    *obs = so;
    pp_adapt_shift(k->ad, -2.0 * log(ratio), k->wz, k->wh, k->wv);
    c->delta = pp_adapt_level(k->ad);
}

/* Spectral level move (issue 16): the level L of the block precisions
 * and the field's detail that the data do not see, moved together (the
 * Fourier-weighted non-centring of src/hyper_photon.c's δ move, on the
 * adaptive prior's level): ε ~ N(0, σ²), every s_B → s_B + ε (so W → e^ε
 * W and L → L + ε), and x → x + dx, dx = F⁻¹ diag(e^{−ε f_k / 2} − 1) F x,
 * f_k = q_k / (q_k + r |A_k|²) ∈ [0, 1] the stationary prior's share of
 * frequency k at the frozen ratio r = λ/δ (f = 0 at the DC: the mean is
 * held); the latent pixels of yaug (padding, missing) move with A dx, their
 * noise held. The map for −ε undoes the one for ε (the multipliers
 * invert), so Metropolis–Hastings accepts with π' / π times the Jacobian
 * exp(−ε/2 Σ_k f_k) (full spectrum): the blocks' e^{n_B s_B / 2} give
 * e^{N ε / 2}; the prior's form becomes e^ε Q_W(x + dx); the observed
 * residual changes; the level's hyperprior moves by ε; τ, κ and p(s | κ)
 * are unchanged. Where the prior dominates (f ≈ 1) the detail scales as
 * e^{−ε/2}, exactly what the precision's change asks for, so the level
 * is no longer held by the field's unobserved detail (the slowest
 * direction of the block precisions on 128² photograph crops, τ ~130, was
 * their common level: bench/NOTES.md, 2026-12-05 stop 33). Cost: one r2c
 * and two c2r, two passes of the prior's form. r and σ follow λ/δ and the
 * acceptance (towards 0.35) in burn-in only. */
#define LV_TARGET 0.35
static void level_move_spectral(const pp_sampler *s, pp_chain *c, adapt_work *k, double *y,
                                 double *obs, unsigned long t)
{
    const size_t n = s->gn, wh2 = s->gw / 2 + 1;
    const double invn = 1.0 / (double)n;
    const int burn = t < s->cfg.burn;
    if (burn || !(k->lv[0] > 0)) {
        k->lv[0] = c->lambda / c->delta;
        if (!(k->lv[1] > 0))
            k->lv[1] = 0.1;
    }
    if (!(k->lv[0] > 0 && isfinite(k->lv[0])))
        return;
    double *dx = pp_po_scratch(k->po, 0), *adx = pp_po_scratch(k->po, 1);
    const double r = k->lv[0], eps = k->lv[1] * pp_rng_normal(&c->rng);
    pp_fft_forward(s->fft, k->x, c->cbuf);
    double sumf = 0;
    for (size_t i = 0; i < s->gm; i++) {
        double q = s->q[i], f = q > 0 ? q / (q + r * c->otf2[i]) : 0.0;
        sumf += pp_half_weight(i % wh2, s->gw) * f;
        c->cbuf[i] *= expm1(-0.5 * eps * f) * invn;
        c->cbuf2[i] = c->cbuf[i] * c->otf[i];
    }
    pp_fft_inverse(s->fft, c->cbuf, dx);
    pp_fft_inverse(s->fft, c->cbuf2, adx);
    double q0 = pp_incr_quad(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, k->x);
    for (size_t i = 0; i < n; i++)
        dx[i] += k->x[i]; /* dx now holds x' */
    double q1 = pp_incr_quad(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, dx);
    double so = 0, lo, hi;
    for (size_t i = 0; i < n; i++)
        if (s->obs[i]) {
            double d = c->rbuf[i] + adx[i] - y[i];
            so += d * d;
        }
    /* the latent data move by adx: a censored one below its level has density 0 */
    pp_censored_range(s, y, adx, 1.0, 0.0, &lo, &hi);
    double la = -0.5 * eps * sumf + 0.5 * (double)n * eps - 0.5 * (exp(eps) * q1 - q0) -
                0.5 * c->lambda * (so - *obs) + pp_adapt_level_dlogp(k->ad, eps);
    int acc = hi >= 1.0 && isfinite(la) && log(pp_rng_uniform(&c->rng)) < la;
    if (burn) /* Robbins–Monro on log σ */
        k->lv[1] *= exp(((acc ? 1.0 : 0.0) - LV_TARGET) / sqrt((double)t + 10.0));
    if (!acc)
        return;
    for (size_t i = 0; i < n; i++) {
        k->x[i] = dx[i];
        c->rbuf[i] += adx[i];
        if (!s->obs[i])
            y[i] += adx[i]; /* the latent pixels' noise held */
    }
    *obs = so;
    pp_adapt_shift(k->ad, eps, k->wz, k->wh, k->wv);
    c->delta = pp_adapt_level(k->ad);
}

/* The latent pixels of yaug (padding, missing pixels) redrawn from
 * N(Ax, 1/λ) (Ax in rbuf); returns their residual sum of squares
 * ‖yaug − Ax‖² over them. */
static double augment(const pp_sampler *s, pp_chain *c)
{
    const double sd = 1.0 / sqrt(c->lambda);
    double sp = 0;
    for (size_t i = 0; i < s->gn; i++)
        if (!s->obs[i]) {
            double e;
            if (s->cens && s->cens[i]) { /* censored: truncated at its level */
                c->yaug[i] = pp_censored_draw(s, &c->rng, c->rbuf[i], sd);
                e = c->yaug[i] - c->rbuf[i];
            } else {
                e = sd * pp_rng_normal(&c->rng);
                c->yaug[i] = c->rbuf[i] + e;
            }
            sp += e * e;
        }
    return sp;
}

#define RANGE_MSG "the noise or prior precision left the floating-point range"

/* λ and the level δ must be positive finite numbers before a draw. */
static pp_status range_check(const pp_chain *c, unsigned long t)
{
    if (isfinite(c->lambda) && c->lambda > 0 && isfinite(c->delta) && c->delta > 0)
        return PP_OK;
    return pp_fail(PP_ERR_NUMERIC, "%s at iteration %lu (lambda=%g, delta=%g); rescale the frame "
                                   "or fix the noise with gaussian:sigma=S",
                   RANGE_MSG, t + 1, c->lambda, c->delta);
}

static pp_status adaptive_run_chain(pp_sampler *s, pp_chain *c)
{
    const pp_sampler_config *cfg = &s->cfg;
    const adapt_shared *sh = s->kshared;
    adapt_work *k = c->kwork;
    const int pad = s->augment, fix_l = cfg->noise.sigma_set;
    const double shape_l = cfg->hyper_lambda[0] + 0.5 * (double)s->gn;
    const double nobs = (double)s->nobs;
    double *y = pad ? c->yaug : sh->y;
    pp_po_set_stop(k->po, cfg->stop);
    double ss_obs, ss, xmean;
    if (c->t == 0) {
        start_field(s, c, k->x);
        pp_adapt_start(k->ad, c->delta);
        k->lv[0] = k->lv[1] = 0; /* the slot's previous chain left its own */
        pp_adapt_update(k->ad, k->x, k->wz, k->wh, k->wv, &c->rng);
        if (pad) {
            residual(s, c, k->x, y, &xmean);
            augment(s, c);
        }
    }
    for (unsigned long t = c->t; t < s->t_end; t++) {
        int keep = t >= s->keep_from && (t - s->keep_from + 1) % cfg->thin == 0;
        pp_po_stats ps = {0, 0, 0, 0, 0};
        pp_status st = range_check(c, t);
        if (st == PP_OK)
            st = pp_po_draw_rj(k->po, c->otf, y, c->lambda, 1.0, k->wz, k->wh, k->wv, &c->rng,
                               PO_ALPHA, PO_EPS, PO_CAP, k->x, &ps);
        if (st == PP_OK && ps.unresolved) {
            /* the move's ratio drowned in rounding: the converged draw (see above) */
            size_t rj_iters = ps.iters;
            st = pp_po_draw(k->po, c->otf, y, c->lambda, 1.0, k->wz, k->wh, k->wv, &c->rng,
                            PO_TOL, PO_CAP, k->x, &ps);
            ps.iters += rj_iters;
            c->solver_fallback++;
        }
        if (st == PP_ERR_INTERRUPTED)
            return pp_fail(st, "sampling stopped at the caller's request");
        if (st == PP_ERR_NUMERIC || st == PP_ERR_ARG) /* CG broke down: the same cause */
            return pp_fail(PP_ERR_NUMERIC, "%s at iteration %lu (lambda=%g, delta=%g); rescale "
                                           "the frame or fix the noise with gaussian:sigma=S",
                           RANGE_MSG, t + 1, c->lambda, c->delta);
        if (st != PP_OK && st != PP_ERR_LIMIT)
            return st;
        c->solver_draws++;
        c->solver_accepted += (unsigned long long)ps.accepted;
        c->solver_iters += ps.iters;
        if (ps.iters > c->solver_max)
            c->solver_max = ps.iters;
        if (st == PP_ERR_LIMIT && t >= cfg->burn)
            c->solver_capped++;
        ss_obs = residual(s, c, k->x, y, &xmean);
        level_move(s, c, k, y, xmean, &ss_obs);
        level_move_spectral(s, c, k, y, &ss_obs, t);
        ss = ss_obs + (pad ? augment(s, c) : 0.0); /* periodic: the frame is the grid */
        if (!fix_l)
            c->lambda = pp_rng_gamma(&c->rng, shape_l, cfg->hyper_lambda[1] + 0.5 * ss);
        pp_adapt_update(k->ad, k->x, k->wz, k->wh, k->wv, &c->rng);
        pp_fieldscale_sweep(k->fs, k->ad, k->x, c->rbuf, y, k->wh, k->wv, c->lambda,
                            pad ? s->obs : NULL, s->cens, s->censor_level, &c->rng, &ss_obs);
        c->delta = pp_adapt_level(k->ad);
        if (keep) {
            pp_chain_add_draw(s, c, k->x);
            pp_squant_add_box(&sh->law, c->kstate, k->x, s->depth, s->height, s->width, s->gw,
                              s->gh * s->gw, &c->mom);
            double *row = c->trace + c->kept * s->trace.ncols;
            row[PP_COL_LAMBDA] = c->lambda;
            row[PP_COL_DELTA] = c->delta;
            row[PP_COL_LOGLIK] =
                0.5 * (pad ? nobs : (double)s->gn) * log(c->lambda / (2 * PP_PI)) -
                0.5 * c->lambda * ss_obs;
            row[s->col_kappa] = pp_adapt_kappa(k->ad);
            for (size_t p = 0; p < s->nprobe; p++)
                row[s->col_probe0 + p] = k->x[pp_probe_index(s, p)];
            c->kept++;
        }
        if (pp_sampler_tick(s))
            return pp_fail(PP_ERR_INTERRUPTED, "sampling stopped at the caller's request");
    }
    unsigned long long acc, tried;
    pp_adapt_acceptance(k->ad, &acc, &tried);
    c->acceptance = tried ? (double)acc / (double)tried : 0;
    c->t = s->t_end;
    return PP_OK;
}

/* A running chain's state in the slot: x (the CG's warm start), the
 * weights and the prior's block state; the solver's buffers are scratch. */
static size_t state(const pp_sampler *s, void *kwork, pp_region *out)
{
    adapt_work *k = kwork;
    size_t g = s->gn * sizeof(double), n = 3;
    out[0] = (pp_region){k->x, g};
    out[1] = (pp_region){k->wh, g};
    out[2] = (pp_region){k->wv, g};
    if (k->wz) /* a volume's (every slot's alike) */
        out[n++] = (pp_region){k->wz, g};
    out[n++] = (pp_region){k->lv, sizeof k->lv};
    return n + pp_adapt_state(k->ad, out + n);
}

/* Pooled bounds: the chains' streaming quantiles averaged (the draws are
 * not Gaussian given the rest: heavier-tailed, kurtosis about 3.8 per pixel
 * on the reference frames of tests/ref_adaptive_coverage.py, where mean ±
 * 0.674 sd covered 0.519 and the draws' own quartiles 0.487). */
static pp_status finish(pp_sampler *s)
{
    pp_squant_pool(s->chain, s->cfg.chains, s->npix, 0, s->lo->data, s->hi->data);
    snprintf(s->bound_method, sizeof s->bound_method,
             "streaming quantiles: per pixel and chain, Robbins-Monro recursion q += g (p - "
             "1{x <= q}), g = sd/(phi(z_p) t), started from the Gaussian guess after %d kept "
             "draws, averaged over chains; 16 bytes per pixel per chain",
             PP_SQUANT_WARM);
    return PP_OK;
}

const pp_kernel pp_kernel_gibbs_adaptive = {"gibbs", prepare, adaptive_run_chain, finish,
                                            release, free_work,          state};
