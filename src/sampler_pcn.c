/* pixpost — preconditioned Crank-Nicolson samplers for non-Gaussian
 * likelihoods and positive intensities: pcn and gpcn, and the Hamiltonian
 * sampler hmc built on gpcn's Gaussian reference.
 *
 * Model (DESIGN.md sections 1-2): z = m + u on the grid, u ~ N(0, (delta Q)^-1)
 * (Fourier-diagonal GMRF; when q(0) = 0, i.e. an intrinsic prior or a matern
 * prior without mean=M, the zero frequency of u is held at 0 and the level m
 * has a flat prior and is sampled; with mean=M, m = M is fixed). The
 * intensity is x = exp(z) (positivity log) or x = z (positivity none).
 * Data: photons n = (y - offset)/gain with mean mu = A x + b (poisson), or the
 * shifted-Poisson approximation of the Poisson-Gaussian camera model,
 * n + R^2 ~ Poisson(A x + b + R^2) (Snyder, Hammoud & White, JOSA A 10, 1993:
 * it matches the first two moments; with R = 0 it is exactly poisson);
 * gaussian: y ~ N(A x, 1/lambda). Phi(z) is the negative log-likelihood summed
 * over the OBSERVED pixels (the frame block of the grid but its NaN,
 * missing pixels: s->obs, src/observed.h), plus, at each censored pixel
 * (s->cens, saturated: y >= level), -log P(Y >= level | mu): the Poisson
 * tail of src/poisson_tail.h, or under gaussian noise -log Q((level - mu)
 * sqrt(lambda)), Q = 1 - Phi (src/truncnorm.h), slope -sqrt(lambda) times
 * the normal hazard at that point.
 *
 * Moves per iteration:
 *   1. field: pcn  u' = sqrt(1-beta^2) u + beta xi,  xi ~ N(0, (delta Q)^-1),
 *      accepted with min(1, exp(Phi(z) - Phi(z'))) (Cotter, Roberts, Stuart &
 *      White, Statist. Sci. 28, 2013);
 *      gpcn  u' = a + sqrt(1-beta^2)(u - a) + beta xi,  xi ~ N(0, P^-1) with
 *      P(k) = delta q(k) + I_F |A(k)|^2, reversible w.r.t. N(a, P^-1), so the
 *      exact acceptance is pi(z') N(u; a, P^-1) / (pi(z) N(u'; a, P^-1))
 *      (Law, J. Comput. Appl. Math. 2014; Rudolf & Sprungk, Found. Comput.
 *      Math. 2018). I_F is the mean Fisher information of one pixel's
 *      likelihood w.r.t. the sampled field at the data level x0 = mean photons
 *      - b: for log intensity x0^2/(x0 + b + R^2) (d mu/dz = x, Var n = mu),
 *      for x itself 1/(x0 + b + R^2), for gaussian lambda. It is exact for a
 *      flat scene; a varying scene lowers the acceptance, not the exactness.
 *      The centre a is the mean of the Gauss-Newton points of the last (<= 50)
 *      states over the first half of burn-in, then fixed, so that beta
 *      adapts in the second half against the proposal that will be used.
 *      hmc  Hamiltonian Monte Carlo with the same reference N(a, P^-1)
 *      integrated exactly and the rest of the target by kicks (see
 *      hmc_move); the gradient makes up for the reference's misfit.
 *   2. delta (when free): log random walk, partially non-centred: u
 *      rescaled per frequency by how much the prior dominates it there.
 *   3. m (when free): random walk, flat prior (z shifted, x rescaled).
 *   4. lambda (gaussian, sigma free): exact Gamma draw given ||Ax - y||^2;
 *      with censored pixels, after drawing their latent values from the
 *      truncated normal (data augmentation: lambda_censored).
 *   5. delta (when free) again, centred: its exact Gamma draw given u.
 * Photon models with log positivity and a stationary prior (issue 16):
 * move 2 is src/hyper_photon.c's delta move (the field scaled per pixel
 * where the data do not reach, e.g. the padding, and per frequency where
 * the prior dominates; 3 + 2 per Taylor term transforms, ~8-10 terms), and
 * after move 3 its level move (z + dm h, h where the data do not reach; 2
 * transforms). Their references are set from the mean field of the second
 * quarter of burn-in, then frozen.
 * With a padding (--boundary pad, frames), after those: src/padmove.c's
 * refresh of the padding beyond PM_DMIN pixels from its exact prior
 * conditional given the rest (Crank-Nicolson, step adapted to T_FIELD,
 * accepted on the likelihood ratio; the level moves with it; its solve by
 * conjugate gradients preconditioned by the padding bands' exact inverses,
 * ~10 iterations of 2 transforms on the demo frame).
 * Adaptive prior (--prior adaptive, hmc only; src/adaptive.h): the prior
 * part of the target is z'Dᵀ W D z / 2 (D ignores the level m) instead of
 * |u|^2_dQ / 2. hmc keeps its Fourier-diagonal reference with delta = the
 * level exp(mean s) (pp_adapt_level) and moves the difference through the
 * kicks: the gradient holds the DFT of Dᵀ W D z (added before grad_phi's
 * last transform: no extra transform with positivity log; one c2r for z and
 * one r2c with none), and the energy z'Dᵀ W D z (one grid pass). Move 2 is
 * adapt_level_move (the level of s, partially non-centred like delta_move);
 * move 5 is W | z by pp_adapt_update (τ, the block log-precisions, κ), so
 * the gradient is recomputed each iteration (+3 transforms, log). In the
 * first burn / ADAPT_HOLD iterations W stays at the start's delta (the
 * gmrf1 prior): W drawn from the over-smooth start field made the padding
 * blocks' precisions climb to ~1e9 and the step fall to 1e-4 on the demo
 * frame (a trap of slow mixing, not of the model). On a volume D holds the
 * z increments too, weighted c_z (src/adaptive.h; the reference's q is
 * weighted alike), and the start's W is c_a delta. Per thread: wh, wv (wz
 * on a volume: 16 or 24 bytes per grid voxel) and the blocks' state.
 * beta (hmc: eps) and the steps of 2-3 adapt during burn-in only
 * (Robbins-Monro on their logarithms towards acceptance 0.25 for the pCN
 * field moves, 0.65 for hmc, 0.44 for the scalars), and the weights of move
 * 2 follow delta; all then stay fixed, so the kept chain is an exact,
 * time-homogeneous MCMC.
 * Warnings (pp_sampler_warn): gpcn with a burn-in under GPCN_MIN_BURN (too
 * short to place the centre and adapt beta: one camera chain was seen at 3 %
 * acceptance after 100), and any chain whose field move accepted under
 * LOW_ACCEPT after burn-in.
 * Tried and not kept (issue 5 follow-up), before hmc: a second, spatially
 * scaled gpcn move, w = D^1/2 (z - c) with D the local Fisher information;
 * its covariance matched the Laplace approximation (eigenvalues of
 * P^-1/2 H_w P^-1/2 in [0.91, 1.38] on the data-dominated band, 32 x 32), but
 * the chains adapted to beta 0.13-0.2 and ESS/s did not beat gpcn. A
 * gradient-free proposal must match the posterior in every one of ~10^4
 * directions at once; hmc's kicks correct the misfit instead.
 *
 * Bounds: per pixel and chain, stochastic-approximation (Robbins-Monro)
 * estimates of the two tail quantiles of z, q += g (p - 1{z <= q}) with
 * g = sd_t / (phi(z_p) t) (phi(z_p) the normal density at the quantile: the
 * optimal gain for a Gaussian marginal), started from the Gaussian guess
 * after 10 kept draws; averaged over chains and mapped through exp (log
 * mode). Memory: 2 quantiles = 16 bytes per pixel per chain, and 2 moments
 * of z (16) per thread with the rest of a running chain's state: 3 half
 * spectra and 6 grids (hmc: 6 half spectra), 72-96 bytes per grid pixel.
 *
 * Transforms per iteration (r2c/c2r on the grid):
 *   log:  field move 3 (c2r u' -> z', r2c exp(z'), c2r A x'); hmc 6 per
 *         leapfrog step (those 3, then r2c r, c2r A'r, r2c x A'r for the
 *         gradient), plus 3 when delta, m or lambda moved since the last
 *         gradient; delta move 3 (z', x', A x'), m move 0 (A x' = e^dm A x),
 *         centred delta draw 0. Kept draws 0 extra. pcn/gpcn: 3, or 6 with
 *         delta free; hmc: 6 L (+3) (+3), L = round(pi / (2 eps)).
 *   none: field move 1 (c2r A u'; A x is linear in u); hmc 2 per step (c2r
 *         A u', r2c r); delta move 1, m move 0, +1 c2r per kept draw for z.
 *   gpcn/hmc, first half of burn-in only: +3 (log) or +1 (none) for the
 *         centre.
 * Measured (bench/pcn_bench.py, 64 x 64, Poisson, one core, delta fixed,
 * level free, intensity varying several-fold): ESS/s of the worst probe
 * pixel relative to pcn: gpcn 3.7x at ~5 and 0.9x at ~500 photons/pixel,
 * hmc 136x and 71x (hmc adapts to eps 0.7 / 0.35, L = 2 / 5). On a nearly
 * flat scene gpcn alone reaches 77x at ~500: one Fourier-diagonal I_F
 * cannot follow a Fisher information proportional to the local intensity,
 * and that misfit is what hmc's gradient kicks absorb.
 * Passes: about 6 over the half spectrum and 4 over the grid per iteration
 * (pcn/gpcn); about 3 and 4 per leapfrog step (hmc: one for the merged kick
 * and rotation, two in the gradient, and the grid passes of the likelihood).
 * Memory per chain: 4 half spectra (hmc 7) and 6 grids, plus 48 bytes per
 * frame pixel (moments and quantiles).
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "adaptive.h"
#include "hyper_photon.h"
#include "padmove.h"
#include "incr.h"
#include "internal.h"
#include "observed.h"
#include "poisson_tail.h"
#include "pp_assert.h"
#include "quantiles.h"
#include "sampler_internal.h"
#include "spectral.h"
#include "stats.h"
#include "truncnorm.h"
#include "vmath.h"
#include "pixpost/setting_extra.h"

#define T_FIELD 0.25 /* target acceptance of the field move (common practice) */
#define T_HMC 0.65   /* hmc target (Beskos, Pillai, Roberts, Sanz-Serna & Stuart 2013) */
#define T_SCALAR 0.44 /* target of the 1-D random walks (Roberts & Rosenthal 2001) */
#define GPCN_MIN_BURN 200 /* burn-in below which gpcn's adaptation is warned about */
#define LOW_ACCEPT 0.05   /* field-move acceptance below which a chain is warned about */
/* src/padmove.c's conditional refresh of the padding (photon frames with
 * --boundary pad and a free level; 1, the default; 0 builds the sampler
 * without it, for before/after measurements) */
#ifndef PIXPOST_PADMOVE
#define PIXPOST_PADMOVE 1
#endif
/* its block: the padding at least PM_DMIN pixels from the frame (the demo
 * frame, Airy PSF of ~3.5 px to the first zero: level tau 26 at 3, 54 at
 * 6; 1 or 2 not tried; bench/NOTES.md, 2026-12-05) */
#define PM_DMIN 3
#define ADAPT_HOLD 4      /* adaptive prior: W held at the start's delta for burn / ADAPT_HOLD */

/* Shared, read-only during the run. */
typedef struct pcn_shared {
    int gpcn, hmc, logx, gauss, free_dc;
    int adaptive;    /* hmc with --prior adaptive (see "adaptive prior" above) */
    double ca[3];    /* adaptive prior: the axes' weight factors {z, y, x} (src/adaptive.h) */
    double *data;    /* grid: photons (+R^2, clamped at 0) or y (gaussian) */
    double shift;    /* b + R^2 added to A x (photon models) */
    double lgam;     /* -sum lgamma(n + 1) over observed pixels (photon) */
    double cens_a;   /* photon models with censored pixels (s->cens): their level in
                      * counts, (level - offset) / gain + R^2; each adds
                      * -log P(Y >= cens_a | mu) to Phi (src/poisson_tail.h) */
    double fisher;   /* I_F for photon models */
    double *zstart;  /* grid: the start field */
    double x0;       /* data level: mean photons - b - R^2 (log/none photon models) */
    double m0, mdisp, delta0, a0; /* level, its dispersion, delta, A's gain at k=0 */
    pp_squant_law law; /* the bounds' tail probabilities (src/quantiles.h) */
} pcn_shared;

/* A running chain's state and buffers: one per thread (the slot's kwork),
 * set up afresh by start() for each chain the thread runs. */
typedef struct pcn_chain {
    pp_complex *u, *up, *ctr; /* current and proposed u, gpcn centre a */
    pp_complex *g, *gp, *v;   /* hmc: gradients of Phi at u and up, velocity */
    int gvalid;               /* hmc: g belongs to the current state */
    double *z, *zp, *x, *xp, *ax, *axp;
    pp_moments zm;
    double m, beta, dstep, mstep, phi, ss;
    double dref; /* delta of the partially non-centred move's weights */
    unsigned long acc;
    pp_adapt *ad;     /* adaptive prior: its local precisions (src/adaptive.h) */
    double *wh, *wv;  /* adaptive prior: the weights W on the grid's increments */
    double *wz;       /* adaptive prior on a volume: the z increments' weights, else NULL */
    pp_hphot *hp;     /* photon models, stationary prior: src/hyper_photon.h, else NULL */
    pp_padmove *pm;   /* frames with padding, same models: src/padmove.h, else NULL */
    double pstep;     /* its step sqrt(1 - rho^2) */
} pcn_chain;

/* What outlives a chain's run (its c->kstate): the quantile estimates, a
 * pp_squant (src/quantiles.h). */

/* ---- likelihood ------------------------------------------------------- */

/* One row of the Poisson negative log-likelihood, the sum of mu - d log mu
 * with mu = scale a + add over n pixels: per block of PHI_BLOCK pixels an
 * elementwise loop (vectorised) into a stack array, then PP_LANES partial
 * sums combined in a fixed order. A mu that is not > 0 counts in *bad
 * (positivity none: not defined) or, with floor, is raised to 1e-300 (log
 * positivity: the FFT's rounding of a positive A x); a NaN always counts. */
#define PHI_BLOCK 256
PP_VECTOR_CLONES static double poisson_row(const double *restrict a, const double *restrict d,
                                           size_t n, double scale, double add, int floor,
                                           int *bad)
{
    double term[PHI_BLOCK], flag[PHI_BLOCK], acc[PP_LANES] = {0}, nbad = 0;
    const double nofloor = floor ? 0.0 : 1.0;
    for (size_t c0 = 0; c0 < n; c0 += PHI_BLOCK) {
        size_t m = n - c0 < PHI_BLOCK ? n - c0 : PHI_BLOCK;
        for (size_t j = 0; j < m; j++) {
            double v = scale * a[c0 + j] + add, dj = d[c0 + j];
            double mu = v > 0 ? v : 1e-300;
            term[j] = mu - dj * pp_vlog(mu); /* d >= 0; log mu finite */
            flag[j] = v != v ? 1.0 : (v > 0 ? 0.0 : nofloor);
        }
        pp_lanes_add(acc, term, m);
        for (size_t j = 0; j < m; j++)
            nbad += flag[j];
    }
    *bad += nbad > 0;
    return pp_lanes_total(acc);
}

/* Gaussian noise, censored pixels: sum of -log Q((level - mu) sqrt(lambda))
 * over them, mu = scale ax + add, Q = 1 - Phi (src/truncnorm.h). */
static double gauss_cens_phi(const pp_sampler *s, const double *ax, double scale, double add,
                             double lambda)
{
    const double sl = sqrt(lambda);
    double acc = 0;
    for (size_t i = 0; i < s->gn; i++)
        if (s->cens[i])
            acc -= pp_normal_logsf((s->censor_level - (scale * ax[i] + add)) * sl);
    return acc;
}

/* Phi = negative log-likelihood of the mean image ax (grid) over the
 * observed pixels and the censored ones; *ss receives ||ax - y||^2 over the
 * observed pixels (gaussian). INFINITY when not defined. A row's Poisson sum goes by its runs of observed pixels (one run,
 * the whole row, when none is missing). */
static double phi_of(const pp_sampler *s, const pcn_shared *sh, const double *ax, double scale,
                     double add, double lambda, double *ss)
{
    double acc = 0;
    if (!sh->gauss) {
        int bad = 0;
        for (size_t fr = 0; fr < s->depth * s->height && !bad; fr++) {
            size_t r = pp_frame_row(s, fr);
            const unsigned char *ob = s->obs + r * s->gw;
            for (size_t c0 = 0, c1; c0 < s->width; c0 = c1) {
                for (; c0 < s->width && !ob[c0]; c0++)
                    ;
                for (c1 = c0; c1 < s->width && ob[c1]; c1++)
                    ;
                if (c1 > c0)
                    acc += poisson_row(ax + r * s->gw + c0, sh->data + r * s->gw + c0, c1 - c0,
                                       scale, add + sh->shift, sh->logx, &bad);
            }
        }
        for (size_t i = 0; s->cens && i < s->gn && !bad; i++) {
            if (!s->cens[i])
                continue;
            double v = scale * ax[i] + add + sh->shift;
            bad += v != v || (!(v > 0) && !sh->logx);
            acc -= pp_poisson_logtail(sh->cens_a, v > 0 ? v : 1e-300, NULL);
        }
        return bad || !isfinite(acc) ? INFINITY : acc;
    }
    for (size_t fr = 0; fr < s->depth * s->height; fr++) {
        size_t r = pp_frame_row(s, fr);
        const double *a = ax + r * s->gw, *d = sh->data + r * s->gw;
        for (size_t c = 0; c < s->width; c++) {
            if (!s->obs[r * s->gw + c])
                continue;
            double e = scale * a[c] + add - d[c];
            acc += e * e;
        }
    }
    *ss = acc;
    acc *= 0.5 * lambda;
    if (s->cens)
        acc += gauss_cens_phi(s, ax, scale, add, lambda);
    return isfinite(acc) ? acc : INFINITY;
}

static double loglik_of(const pp_sampler *s, const pcn_shared *sh, const pp_chain *c,
                        const pcn_chain *k)
{
    double nobs = (double)s->nobs;
    if (sh->gauss)
        return 0.5 * nobs * log(c->lambda / (2 * PP_PI)) - k->phi;
    return sh->lgam - k->phi;
}

/* ---- fields ----------------------------------------------------------- */

/* A x on the grid from x (grid): one r2c, one c2r. */
static void blur_grid(const pp_sampler *s, pp_chain *c, const double *x, double *ax)
{
    double invn = 1.0 / (double)s->gn;
    pp_fft_forward(s->fft, x, c->cbuf2);
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf2[i] *= s->otf[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf2, ax);
}

/* x = exp(z) elementwise (src/vmath.h: vectorised; libm's exp was 14 % of
 * an hmc run on a photon frame). */
PP_VECTOR_CLONES static void exp_grid(const double *restrict z, double *restrict x, size_t n)
{
    for (size_t i = 0; i < n; i++)
        x[i] = pp_vexp(z[i]);
}

/* z = m + c2r(u)/N on the grid (one c2r; u is not modified). */
static void z_of(const pp_sampler *s, pp_chain *c, const pp_complex *u, double m, double *z)
{
    double invn = 1.0 / (double)s->gn;
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf[i] = u[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf, z);
    for (size_t i = 0; i < s->gn; i++)
        z[i] += m;
}

/* From u and m: z, x (log), A x. Transforms: 3 (log) or 1 (none; z is left
 * stale and made by z_of when a draw is kept). */
static void field_of(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, const pp_complex *u,
                     double m, double *z, double *x, double *ax)
{
    if (sh->logx) {
        z_of(s, c, u, m, z);
        exp_grid(z, x, s->gn);
        blur_grid(s, c, x, ax);
        return;
    }
    double invn = 1.0 / (double)s->gn;
    if (sh->adaptive) /* the adaptive prior's terms need z */
        z_of(s, c, u, m, z);
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf[i] = u[i] * s->otf[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf, ax);
    for (size_t i = 0; i < s->gn; i++)
        ax[i] += m * sh->a0;
}

static void swap_d(double **a, double **b)
{
    double *t = *a;
    *a = *b;
    *b = t;
}

static void swap_c(pp_complex **a, pp_complex **b)
{
    pp_complex *t = *a;
    *a = *b;
    *b = t;
}

/* ---- moves ------------------------------------------------------------ */

/* sum over the half spectrum of w(k) (a q(k) + b |A(k)|^2) |f(k)|^2 / N,
 * the held zero frequency left out: by Parseval f' (a Q + b A'A) f for the
 * field whose DFT is f. */
static double half_form(const pp_sampler *s, const pcn_shared *sh, const pp_complex *f, double a,
                        double b)
{
    double acc = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            if (i == 0 && sh->free_dc)
                continue;
            acc += pp_half_weight(k2, s->gw) * (a * s->q[i] + b * s->otf2[i]) *
                   (creal(f[i]) * creal(f[i]) + cimag(f[i]) * cimag(f[i]));
        }
    return acc / (double)s->gn;
}

/* The proposed state (up, zp, xp, axp) becomes the current one. */
static void take_proposal(pcn_chain *k, double phin, double ssn)
{
    swap_c(&k->u, &k->up);
    swap_d(&k->z, &k->zp);
    swap_d(&k->x, &k->xp);
    swap_d(&k->ax, &k->axp);
    k->phi = phin;
    k->ss = ssn;
}

static double fisher_of(const pcn_shared *sh, const pp_chain *c)
{
    return sh->gauss ? c->lambda : sh->fisher;
}

/* Robbins-Monro on a log step: gain (t+1)^-0.6 (common practice). */
static double adapt(double step, double alpha, double target, unsigned long t, double cap)
{
    double v = step * exp(pow((double)t + 1.0, -0.6) * (alpha - target));
    return v > cap ? cap : (v < 1e-8 ? 1e-8 : v);
}

/* Field move; returns the acceptance probability, *accepted the outcome. */
static double field_move(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k,
                         int *accepted)
{
    const double b = k->beta, rho = sqrt(fmax(0.0, 1.0 - b * b)), del = c->delta;
    const double fi = fisher_of(sh, c), invn = 1.0 / (double)s->gn;
    pp_half_noise_shape(&c->rng, &s->gshape, c->cbuf);
    double g_cur = 0, g_new = 0; /* log prior - log N(.; a, P^-1), times 2N */
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            if (i == 0 && sh->free_dc) {
                k->up[0] = 0;
                continue;
            }
            double pq = del * s->q[i];
            if (!sh->gpcn) {
                k->up[i] = rho * k->u[i] + b * c->cbuf[i] / sqrt(pq);
                continue;
            }
            double p = pq + fi * s->otf2[i], w = pp_half_weight(k2, s->gw);
            pp_complex a = k->ctr[i], un = a + rho * (k->u[i] - a) + b * c->cbuf[i] / sqrt(p);
            pp_complex dc = k->u[i] - a, dn = un - a;
            g_cur += w * (p * (creal(dc) * creal(dc) + cimag(dc) * cimag(dc)) -
                          pq * (creal(k->u[i]) * creal(k->u[i]) + cimag(k->u[i]) * cimag(k->u[i])));
            g_new += w * (p * (creal(dn) * creal(dn) + cimag(dn) * cimag(dn)) -
                          pq * (creal(un) * creal(un) + cimag(un) * cimag(un)));
            k->up[i] = un;
        }
    field_of(s, sh, c, k->up, k->m, k->zp, k->xp, k->axp);
    double ssn = 0, phin = phi_of(s, sh, k->axp, 1.0, 0.0, c->lambda, &ssn);
    double loga = k->phi - phin + 0.5 * invn * (g_new - g_cur);
    double alpha = loga >= 0 ? 1.0 : exp(loga);
    *accepted = 0;
    if (!isfinite(phin))
        return 0.0;
    if (pp_rng_uniform(&c->rng) < alpha) {
        *accepted = 1;
        take_proposal(k, phin, ssn);
    }
    return alpha;
}

/* The partially non-centred rescaling shared by delta_move and
 * adapt_level_move: up = e^(om(k) ls) u per frequency, om(k) = dref q /
 * (dref q + I_F |A|^2) (the prior's share); returns the log-Jacobian
 * sum over the real dimensions of om ls. With quad/quadn (delta_move) also
 * the stationary quadratic forms u'Qu and up'Qu (Parseval, times N). One
 * pass over the half spectrum. */
static double scale_u(const pp_sampler *s, const pcn_shared *sh, pcn_chain *k, double fi,
                      double ls, double *quad, double *quadn)
{
    double ljac = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            if (i == 0 && sh->free_dc) {
                k->up[0] = 0;
                continue;
            }
            double pq = k->dref * s->q[i], om = pq > 0 ? pq / (pq + fi * s->otf2[i]) : 0.0;
            double w = pp_half_weight(k2, s->gw), sc = exp(om * ls);
            pp_complex u = k->u[i];
            k->up[i] = sc * u;
            if (quad) {
                double a2 = creal(u) * creal(u) + cimag(u) * cimag(u);
                *quad += w * s->q[i] * a2;
                *quadn += w * s->q[i] * sc * sc * a2;
            }
            ljac += w * om * ls;
        }
    return ljac;
}

/* delta move, partially non-centred (Papaspiliopoulos, Roberts & Skold,
 * Statist. Sci. 22, 2007): log delta' = log delta + step N(0,1), and each
 * frequency of u rescaled by s^w(k), s = sqrt(delta/delta'), where
 * w(k) = dref q(k) / (dref q(k) + I_F |A(k)|^2) is the prior's share of the
 * gpcn precision there: fully non-centred (u = delta^-1/2 Q^-1/2 w, w fixed)
 * where the prior dominates, centred (u fixed) where the data do, so neither
 * kind of mode holds delta back. dref is the chain's delta, frozen after
 * burn-in, so that the map is its own inverse (delta' -> delta undoes it);
 * the acceptance ratio carries its Jacobian, s^(sum of w over the real
 * dimensions). Transforms: 3 (log: z', x', A x'), 1 (none). Returns the
 * acceptance probability. */
static double delta_move(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k)
{
    const pp_sampler_config *cfg = &s->cfg;
    const double del = c->delta, fi = fisher_of(sh, c);
    double dn = del * exp(k->dstep * pp_rng_normal(&c->rng)), ls = 0.5 * log(del / dn);
    double quad = 0, quadn = 0, ljac = scale_u(s, sh, k, fi, ls, &quad, &quadn);
    const double invn = 1.0 / (double)s->gn;
    field_of(s, sh, c, k->up, k->m, k->zp, k->xp, k->axp);
    double ssn = 0, phin = phi_of(s, sh, k->axp, 1.0, 0.0, c->lambda, &ssn);
    double loga = k->phi - phin + 0.5 * s->rank * log(dn / del) -
                  0.5 * invn * (dn * quadn - del * quad) + ljac +
                  cfg->hyper_delta[0] * log(dn / del) - cfg->hyper_delta[1] * (dn - del);
    double alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!isfinite(phin) || !(pp_rng_uniform(&c->rng) < alpha))
        return isfinite(phin) && isfinite(loga) ? alpha : 0.0;
    c->delta = dn;
    take_proposal(k, phin, ssn);
    return alpha;
}

/* delta in the centred parameterisation: with u fixed the likelihood does
 * not change, so delta | u ~ Gamma(a + rank/2, b + u'Qu/2) is drawn exactly
 * (u'Qu by Parseval, no transform). Alternating it with the non-centred move
 * above follows Yu & Meng (J. Comput. Graph. Stat. 2011): the non-centred
 * move mixes where the prior dominates, this one where the data do. */
static void delta_centred(const pp_sampler *s, const pcn_shared *sh, pp_chain *c,
                          const pcn_chain *k)
{
    double quad = half_form(s, sh, k->u, 1.0, 0.0);
    c->delta = pp_rng_gamma(&c->rng, s->cfg.hyper_delta[0] + 0.5 * s->rank,
                            s->cfg.hyper_delta[1] + 0.5 * quad);
}

static double ref_delta(const pcn_chain *k)
{
    return pp_adapt_level(k->ad);
}

/* Adaptive prior: the global level of the block log-precisions s, the
 * counterpart of delta_move. s -> s + dl in every block (W -> e^dl W, τ and
 * the differences of s unchanged), dl ~ N(0, step^2), and each frequency of
 * u rescaled by e^(-om(k) dl / 2) with delta_move's weights om(k) (fully
 * non-centred where the prior dominates: there the increments' weighted
 * squares w d^2 do not change). The joint density of src/adaptive.h
 * changes by e^(N dl/2) (the blocks' factors, N the grid's pixels) and
 * the quadratic form; p(s | κ) is blind to a common shift, and the level's
 * Gamma hyperprior (pp_adapt_level_dlogp) enters the ratio. The proposal is symmetric (dl and -dl undo each
 * other with om fixed, as dref is after burn-in), and the Jacobian is
 * e^(sum over the real dimensions of -om dl / 2). Transforms as
 * delta_move. Returns the acceptance probability. */
static double adapt_level_move(const pp_sampler *s, const pcn_shared *sh, pp_chain *c,
                               pcn_chain *k)
{
    const double fi = fisher_of(sh, c);
    double dl = k->dstep * pp_rng_normal(&c->rng), ls = -0.5 * dl;
    double ljac = scale_u(s, sh, k, fi, ls, NULL, NULL);
    field_of(s, sh, c, k->up, k->m, k->zp, k->xp, k->axp);
    double ssn = 0, phin = phi_of(s, sh, k->axp, 1.0, 0.0, c->lambda, &ssn);
    double quad = pp_incr_quad(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, k->z);
    double quadn = pp_incr_quad(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, k->zp);
    double loga = k->phi - phin + 0.5 * (double)s->gn * dl - 0.5 * (exp(dl) * quadn - quad) + ljac +
                  pp_adapt_level_dlogp(k->ad, dl);
    double alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!isfinite(phin) || !(pp_rng_uniform(&c->rng) < alpha))
        return isfinite(phin) && isfinite(loga) ? alpha : 0.0;
    take_proposal(k, phin, ssn);
    pp_adapt_shift(k->ad, dl, k->wz, k->wh, k->wv);
    c->delta = ref_delta(k);
    return alpha;
}

/* Adaptive prior: W | z by src/adaptive.c (τ, the block log-precisions, κ);
 * delta (the reference's prior precision) follows the level. */
static void adapt_weights(const pp_sampler *s, pp_chain *c, pcn_chain *k)
{
    (void)s;
    pp_adapt_update(k->ad, k->z, k->wz, k->wh, k->wv, &c->rng);
    c->delta = ref_delta(k);
}

/* level move (flat prior); returns the acceptance probability. */
static double level_move(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k)
{
    double dm = k->mstep * pp_rng_normal(&c->rng), ssn = 0;
    double sc = sh->logx ? exp(dm) : 1.0, add = sh->logx ? 0.0 : dm * sh->a0;
    double phin = phi_of(s, sh, k->ax, sc, add, c->lambda, &ssn);
    double loga = k->phi - phin, alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!isfinite(phin) || !(pp_rng_uniform(&c->rng) < alpha))
        return isfinite(phin) ? alpha : 0.0;
    k->m += dm;
    for (size_t i = 0; i < s->gn; i++) {
        k->ax[i] = sc * k->ax[i] + add;
        if (sh->logx) {
            k->z[i] += dm;
            k->x[i] *= sc;
        }
    }
    k->phi = phin;
    k->ss = ssn;
    return alpha;
}

/* d Phi / d(A x) on the grid, 0 off the observed pixels: branch-free so
 * that the loops vectorise (the ternaries give fmax's values, NaN
 * included: mu NaN -> 1e-300). */
PP_VECTOR_CLONES static void poisson_residual(const unsigned char *restrict obs,
                                              const double *restrict ax,
                                              const double *restrict d, double shift,
                                              double *restrict r, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double mu = ax[i] + shift;
        mu = mu > 1e-300 ? mu : 1e-300;
        double v = 1.0 - d[i] / mu;
        r[i] = obs[i] ? v : 0.0;
    }
}

PP_VECTOR_CLONES static void gauss_residual(const unsigned char *restrict obs,
                                            const double *restrict ax,
                                            const double *restrict d, double lambda,
                                            double *restrict r, size_t n)
{
    for (size_t i = 0; i < n; i++) {
        double v = lambda * (ax[i] - d[i]);
        r[i] = obs[i] ? v : 0.0;
    }
}

/* grad Phi in Fourier (the DFT of x * A'r, log; A'r, none) into out, from x
 * and A x on the grid; r is the likelihood residual on the observed pixels.
 * With the adaptive prior, out also holds the prior's gradient, the DFT of
 * Dᵀ W D z (z the field on the grid; added to x * A'r before the last
 * transform, log; its own r2c, none). Transforms: 3 (log) or 1 (none; 2
 * with the adaptive prior). */
static void grad_phi(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, const pcn_chain *k,
                     const double *z, const double *x, const double *ax, pp_complex *out)
{
    const double invn = 1.0 / (double)s->gn;
    double *r = c->rbuf;
    if (sh->gauss)
        gauss_residual(s->obs, ax, sh->data, c->lambda, r, s->gn);
    else
        poisson_residual(s->obs, ax, sh->data, sh->shift, r, s->gn);
    const double sl = sqrt(c->lambda);
    for (size_t i = 0; s->cens && i < s->gn; i++) { /* censored: d/dmu of -log P(Y >= a) */
        if (!s->cens[i])
            continue;
        if (sh->gauss) { /* -log Q((level - mu) sl): slope -sl phi / Q */
            r[i] = -sl * pp_normal_hazard((s->censor_level - ax[i]) * sl);
            continue;
        }
        double slope;
        pp_poisson_logtail(sh->cens_a, fmax(ax[i] + sh->shift, 1e-300), &slope);
        r[i] = -slope;
    }
    pp_fft_forward(s->fft, r, out);
    for (size_t i = 0; i < s->gm; i++)
        out[i] *= conj(s->otf[i]);
    if (sh->logx) {
        for (size_t i = 0; i < s->gm; i++)
            out[i] *= invn;
        pp_fft_inverse(s->fft, out, r);
        for (size_t i = 0; i < s->gn; i++)
            r[i] *= x[i];
        if (sh->adaptive)
            pp_incr_apply_add(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, z, r);
        pp_fft_forward(s->fft, r, out);
    } else if (sh->adaptive) {
        pp_incr_apply(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, z, r);
        pp_fft_forward(s->fft, r, c->cbuf);
        for (size_t i = 0; i < s->gm; i++)
            out[i] += c->cbuf[i];
    }
}

/* gpcn/hmc, burn-in only: moves the centre a towards the Gauss-Newton point
 * of the current state, u - (delta Q u + grad Phi) / P, with weight w.
 * Transforms: 3 (log) or 1 (none). For a Gaussian likelihood without
 * censored pixels the point is the exact posterior mean from any state. */
static void newton_centre(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k,
                          double w)
{
    const double del = c->delta, fi = fisher_of(sh, c);
    grad_phi(s, sh, c, k, k->z, k->x, k->ax, c->cbuf2);
    for (size_t i = sh->free_dc ? 1 : 0; i < s->gm; i++) {
        double p = del * s->q[i] + fi * s->otf2[i];
        pp_complex prior = sh->adaptive ? 0 : del * s->q[i] * k->u[i]; /* adaptive: in cbuf2 */
        pp_complex a = k->u[i] - (prior + c->cbuf2[i]) / p;
        k->ctr[i] += w * (a - k->ctr[i]);
    }
}

/* hmc: Hamiltonian Monte Carlo on u with mass matrix P (the gpcn
 * precision), where the Gaussian part of the target, N(a, P^-1), is
 * integrated exactly as a rotation and only the remainder
 * Phi~ = Phi + |u|^2_dQ / 2 - |u - a|^2_P / 2 enters through half kicks
 * (split HMC: Beskos, Pinski, Sanz-Serna & Stuart, Stoch. Proc. Appl. 2011;
 * Shahbaba, Lan, Johnson & Neal, Stat. Comput. 2014). Velocity v = P^-1 p,
 * so v ~ N(0, P^-1) at the start and the kinetic energy is |v|^2_P / 2.
 * Without kicks one step is gpcn with beta = sin(eps). Quadratic forms by
 * Parseval: |f|^2 = sum over the half spectrum of w |f_k|^2 / N. */
/* A kick of length h with the force at up (gradient gp), then, when
 * rotate, the reference's exact flow for the step (cs, sn) = (cos, sin) eps:
 * one pass. The zero frequency, when free, stays 0 (u, v and a are 0 there). */
static void hmc_kick_rotate(const pp_sampler *s, const pcn_shared *sh, const pp_chain *c,
                            pcn_chain *k, double h, double cs, double sn, int rotate)
{
    const double del = c->delta, fi = fisher_of(sh, c);
    for (size_t i = sh->free_dc ? 1 : 0; i < s->gm; i++) {
        double pq = del * s->q[i], p = pq + fi * s->otf2[i];
        pp_complex up = k->up[i], a = k->ctr[i];
        pp_complex f = sh->adaptive ? k->gp[i] : k->gp[i] + pq * up; /* adaptive: in gp */
        pp_complex v = k->v[i] - h * (f - p * (up - a)) / p;
        if (rotate) {
            pp_complex w = up - a;
            k->up[i] = a + cs * w + sn * v;
            v = cs * v - sn * w;
        }
        k->v[i] = v;
    }
}

/* 2 (potential prior part + kinetic energy): u'(delta Q)u + v'Pv, or with
 * the adaptive prior z'Dᵀ W D z + v'Pv (z the field of u on the grid). */
static double hmc_quad(const pp_sampler *s, const pcn_shared *sh, const pp_chain *c,
                       const pcn_chain *k, const pp_complex *u, const double *z,
                       const pp_complex *v)
{
    double prior = sh->adaptive ? pp_incr_quad(s->gd, s->gh, s->gw, k->wz, k->wh, k->wv, z)
                                : half_form(s, sh, u, c->delta, 0.0);
    return prior + half_form(s, sh, v, c->delta, fisher_of(sh, c));
}

/* The trajectory: about a quarter period of the reference (pi/2), which
 * turns a position into an independent one when the reference is exact. */
#define HMC_SPAN 1.5707963267948966
#define HMC_MAX_STEPS 32

static double hmc_move(const pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k,
                       int *accepted)
{
    const double del = c->delta, fi = fisher_of(sh, c);
    if (!k->gvalid) {
        grad_phi(s, sh, c, k, k->z, k->x, k->ax, k->g);
        k->gvalid = 1;
    }
    /* step jittered by +-20 % against periodic trajectories (Neal 2011) */
    double eps = k->beta * (0.8 + 0.4 * pp_rng_uniform(&c->rng));
    unsigned steps = (unsigned)lround(HMC_SPAN / eps);
    if (steps < 1)
        steps = 1;
    if (steps > HMC_MAX_STEPS)
        steps = HMC_MAX_STEPS;
    pp_half_noise_shape(&c->rng, &s->gshape, k->v);
    for (size_t i = 0; i < s->gm; i++)
        k->v[i] /= sqrt(del * s->q[i] + fi * s->otf2[i]);
    if (sh->free_dc)
        k->v[0] = 0;
    double h0 = k->phi + 0.5 * hmc_quad(s, sh, c, k, k->u, k->z, k->v);
    memcpy(k->up, k->u, s->gm * sizeof(pp_complex));
    memcpy(k->gp, k->g, s->gm * sizeof(pp_complex));
    const double cs = cos(eps), sn = sin(eps);
    double phin = INFINITY, ssn = 0;
    *accepted = 0;
    /* leapfrog (kick h, rotate, kick h) per step, the two half kicks
     * between steps merged into one of 2h */
    hmc_kick_rotate(s, sh, c, k, 0.5 * eps, cs, sn, 1);
    for (unsigned l = 0; l < steps; l++) {
        field_of(s, sh, c, k->up, k->m, k->zp, k->xp, k->axp);
        phin = phi_of(s, sh, k->axp, 1.0, 0.0, c->lambda, &ssn);
        if (!isfinite(phin))
            return 0.0;
        grad_phi(s, sh, c, k, k->zp, k->xp, k->axp, k->gp);
        int more = l + 1 < steps;
        hmc_kick_rotate(s, sh, c, k, more ? eps : 0.5 * eps, cs, sn, more);
    }
    double h1 = phin + 0.5 * hmc_quad(s, sh, c, k, k->up, k->zp, k->v);
    double loga = h0 - h1, alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!isfinite(loga))
        return 0.0;
    if (pp_rng_uniform(&c->rng) < alpha) {
        *accepted = 1;
        swap_c(&k->g, &k->gp);
        take_proposal(k, phin, ssn);
    }
    return alpha;
}

/* ---- recording -------------------------------------------------------- */

/* Moments of x, quantile recursion on z, probes and the trace row. */
static void record(pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k)
{
    if (!sh->logx)
        z_of(s, c, k->u, k->m, k->z); /* x = z */
    const double *x = sh->logx ? k->x : k->z;
    pp_chain_add_draw(s, c, x);
    pp_moments_add_box(&k->zm, k->z, s->depth, s->height, s->width, s->gw, s->gh * s->gw);
    pp_squant_add_box(&sh->law, c->kstate, k->z, s->depth, s->height, s->width, s->gw,
                      s->gh * s->gw, &k->zm);
    PP_ASSERT(c->kept < s->trace_cap); /* the row is inside this chain's store */
    double *row = c->trace + c->kept * s->trace.ncols;
    row[PP_COL_LAMBDA] = sh->gauss ? c->lambda : NAN;
    row[PP_COL_DELTA] = c->delta;
    row[PP_COL_LOGLIK] = loglik_of(s, sh, c, k);
    if (sh->adaptive)
        row[s->col_kappa] = pp_adapt_kappa(k->ad);
    if (s->col_level >= 0)
        row[s->col_level] = k->m;
    for (size_t p = 0; p < s->nprobe; p++)
        row[s->col_probe0 + p] = x[pp_probe_index(s, p)];
    c->kept++;
}

/* ---- spatially non-centred hyperparameter moves (src/hyper_photon.c) --- */

typedef struct hp_ctx {
    const pp_sampler *s;
    const pcn_shared *sh;
    const pp_chain *c;
} hp_ctx;

static double hp_phi(const void *ctx, const double *ax)
{
    const hp_ctx *h = ctx;
    double ss = 0;
    return phi_of(h->s, h->sh, ax, 1.0, 0.0, h->c->lambda, &ss);
}

static double hp_quad(const void *ctx, const pp_complex *u)
{
    const hp_ctx *h = ctx;
    return half_form(h->s, h->sh, u, 1.0, 0.0);
}

/* The chain's state seen by src/hyper_photon.c (valid while h lives). */
static pp_hphot_view hp_view(pp_chain *c, pcn_chain *k, const hp_ctx *h)
{
    return (pp_hphot_view){&k->u, &k->up, &k->z, &k->zp, &k->x, &k->xp, &k->ax, &k->axp,
                           &k->m, &k->phi, &c->delta, hp_phi, hp_quad, h};
}

/* ---- chain ------------------------------------------------------------ */

/* lambda (gaussian, sigma free) with censored pixels, whose likelihood
 * Q((level - mu) sqrt(lambda)) is not conjugate to the Gamma prior: data
 * augmentation (Tanner & Wong, JASA 82, 1987). The joint of (x, lambda)
 * and latent data y_c ~ N(mu_c, 1/lambda) restricted to y_c >= level has
 * the censored posterior as its marginal; drawing y_c | x, lambda
 * (truncated normal, src/observed.h) and then lambda | x, y_o, y_c ~
 * Gamma(a + (nobs + ncens)/2, b + (||A x - y||^2_obs + sum (y_c - mu_c)^2)/2)
 * are two exact Gibbs steps of that joint, and y_c is dropped after: the
 * pair leaves the posterior of (x, lambda) invariant. Phi is then
 * recomputed at the new lambda (one pass over the grid). */
static void lambda_censored(const pp_sampler *s, pp_chain *c, pcn_chain *k)
{
    const pp_sampler_config *cfg = &s->cfg;
    const double sd = 1.0 / sqrt(c->lambda);
    double ssc = 0;
    for (size_t i = 0; i < s->gn; i++) {
        if (!s->cens[i])
            continue;
        double e = pp_censored_draw(s, &c->rng, k->ax[i], sd) - k->ax[i];
        ssc += e * e;
    }
    c->lambda = pp_rng_gamma(&c->rng,
                             cfg->hyper_lambda[0] + 0.5 * ((double)s->nobs + (double)s->ncensored),
                             cfg->hyper_lambda[1] + 0.5 * (k->ss + ssc));
    k->phi = 0.5 * c->lambda * k->ss + gauss_cens_phi(s, k->ax, 1.0, 0.0, c->lambda);
}

static void clear_zm(pcn_chain *k)
{
    k->zm.count = 0;
    memset(k->zm.mean, 0, k->zm.len * sizeof(double));
    memset(k->zm.m2, 0, k->zm.len * sizeof(double));
}

static void start(pp_sampler *s, const pcn_shared *sh, pp_chain *c, pcn_chain *k)
{
    k->m = sh->m0;
    if (sh->free_dc)
        k->m += sh->mdisp * pp_rng_normal(&c->rng);
    c->delta = s->cfg.prior.delta_set ? s->cfg.prior.delta
                                      : sh->delta0 * exp(0.5 * pp_rng_normal(&c->rng));
    for (size_t i = 0; i < s->gn; i++)
        c->rbuf[i] = sh->zstart[i] - k->m;
    pp_fft_forward(s->fft, c->rbuf, k->u);
    if (sh->free_dc)
        k->u[0] = 0;
    memcpy(k->ctr, k->u, s->gm * sizeof(pp_complex));
    field_of(s, sh, c, k->u, k->m, k->z, k->x, k->ax);
    k->phi = phi_of(s, sh, k->ax, 1.0, 0.0, c->lambda, &k->ss);
    if (sh->adaptive) { /* s = log delta and τ = 1: W = c_a delta, the gmrf1 prior (see ADAPT_HOLD) */
        pp_adapt_start(k->ad, c->delta);
        for (size_t i = 0; i < s->gn; i++) {
            k->wh[i] = sh->ca[2] * c->delta;
            k->wv[i] = sh->ca[1] * c->delta;
            if (k->wz)
                k->wz[i] = sh->ca[0] * c->delta;
        }
    }
    if (sh->gpcn)
        newton_centre(s, sh, c, k, 1.0);
    if (k->hp) {
        hp_ctx h = {s, sh, c};
        pp_hphot_view v = hp_view(c, k, &h);
        pp_hphot_reference(s, c, k->hp, &v, k->z, sh->shift, c->delta, fisher_of(sh, c),
                           sh->free_dc);
        k->hp->dstep = 0.02;
        k->hp->lstep = 0.01;
    }
    k->pstep = 0.3;
    k->beta = sh->gpcn ? 0.5 : 0.1;
    k->gvalid = 0;
    k->dref = c->delta;
    k->dstep = 0.1;
    k->mstep = 0.02 * (sh->mdisp > 0 ? sh->mdisp / 0.1 : 1.0);
    k->acc = 0;
    clear_zm(k);
}

static pp_status pcn_run_chain(pp_sampler *s, pp_chain *c)
{
    const pp_sampler_config *cfg = &s->cfg;
    const pcn_shared *sh = s->kshared;
    pcn_chain *k = c->kwork;
    const int fix_d = cfg->prior.delta_set, fix_l = !sh->gauss || cfg->noise.sigma_set;
    const double nobs = (double)s->nobs;
    if (c->t == 0)
        start(s, sh, c, k);
    if (!isfinite(k->phi))
        return pp_fail(PP_ERR_NUMERIC, "the start image has no finite likelihood");
    const unsigned long half = cfg->burn / 2;
    for (unsigned long t = c->t; t < s->t_end; t++) {
        int burn = t < cfg->burn;
        if (t == s->keep_from) /* the kept phase starts (again, after a longer burn-in) */
            clear_zm(k);
        int accepted;
        double a = sh->hmc ? hmc_move(s, sh, c, k, &accepted) : field_move(s, sh, c, k, &accepted);
        if (burn) { /* gpcn: restart the gain once the centre is frozen */
            k->beta = adapt(k->beta, a, sh->hmc ? T_HMC : T_FIELD,
                            sh->gpcn && t >= half ? t - half : t, 1.0);
        } else {
            k->acc += (unsigned long)accepted;
        }
        double d_was = c->delta, m_was = k->m;
        if (burn)
            k->dref = c->delta;
        hp_ctx hc = {s, sh, c};
        pp_hphot_view hv = hp_view(c, k, &hc);
        if (!fix_d && k->hp) {
            double ad = pp_hphot_delta_move(s, c, k->hp, &hv, cfg->hyper_delta, s->rank,
                                            sh->free_dc, sh->m0);
            if (burn)
                k->hp->dstep = adapt(k->hp->dstep, ad, T_SCALAR, t, 5.0);
        } else if (!fix_d) {
            double ad = sh->adaptive ? adapt_level_move(s, sh, c, k) : delta_move(s, sh, c, k);
            if (burn)
                k->dstep = adapt(k->dstep, ad, T_SCALAR, t, 5.0);
        }
        if (sh->free_dc) {
            double am = level_move(s, sh, c, k);
            if (burn)
                k->mstep = adapt(k->mstep, am, T_SCALAR, t, 1e300);
        }
        if (k->hp && sh->free_dc) {
            double al = pp_hphot_level_move(s, c, k->hp, &hv);
            if (burn)
                k->hp->lstep = adapt(k->hp->lstep, al, T_SCALAR, t, 1e300);
        }
        if (k->pm && sh->free_dc) {
            int moved;
            double ap = pp_padmove_step(s, c, k->pm, &hv, sqrt(1.0 - k->pstep * k->pstep), &moved);
            if (burn)
                k->pstep = adapt(k->pstep, ap, T_FIELD, t, 1.0);
            if (moved)
                k->gvalid = 0;
        }
        if (!fix_l && s->cens) {
            lambda_censored(s, c, k);
        } else if (!fix_l) {
            c->lambda = pp_rng_gamma(&c->rng, cfg->hyper_lambda[0] + 0.5 * nobs,
                                     cfg->hyper_lambda[1] + 0.5 * k->ss);
            k->phi = 0.5 * c->lambda * k->ss;
        }
        if (!fix_l || c->delta != d_was || k->m != m_was)
            k->gvalid = 0; /* hmc: grad Phi changed with the state */
        if (sh->adaptive) { /* W moves (after the hold), and the prior's gradient with it */
            if (t >= cfg->burn / ADAPT_HOLD)
                adapt_weights(s, c, k);
            k->gvalid = 0;
        } else if (!fix_d) { /* leaves u, hence Phi and its gradient, as they are */
            delta_centred(s, sh, c, k);
        }
        if (sh->gpcn && t < half) /* centre: mean of the last <= 50 Newton points */
            newton_centre(s, sh, c, k, 1.0 / (double)(t + 2 < 50 ? t + 2 : 50));
        if (k->hp && burn && t >= half / 2) { /* references: mean field of [half/2, half) */
            if (t < half)
                pp_hphot_add_mean(s, k->hp, k->z);
            else if (t == half)
                pp_hphot_reference(s, c, k->hp, &hv, k->hp->c, sh->shift, c->delta,
                                   fisher_of(sh, c), sh->free_dc);
        }
        if (!(isfinite(c->delta) && c->delta > 0 && isfinite(k->m) && isfinite(k->phi)))
            return pp_fail(PP_ERR_NUMERIC,
                           "the state left the floating-point range at iteration %lu "
                           "(delta=%g, level=%g); fix delta=D or rescale the frame",
                           t + 1, c->delta, k->m);
        if (t >= s->keep_from && (t - s->keep_from + 1) % cfg->thin == 0)
            record(s, sh, c, k);
        if (pp_sampler_tick(s))
            return pp_fail(PP_ERR_INTERRUPTED, "sampling stopped at the caller's request");
    }
    c->t = s->t_end;
    c->acceptance = c->t > cfg->burn ? (double)k->acc / (double)(c->t - cfg->burn) : 0.0;
    c->step = k->beta;
    if (sh->adaptive) {
        unsigned long long acc, tried;
        pp_adapt_acceptance(k->ad, &acc, &tried);
        c->block_acceptance = tried ? (double)acc / (double)tried : 0;
    }
    c->condvar_sum = 0;
    return PP_OK;
}

/* ---- planning --------------------------------------------------------- */

static pp_status fail_nomem(void)
{
    return pp_fail(PP_ERR_NOMEM, "out of memory for the pCN chains");
}

/* Data on the grid and the constants of the likelihood. */
static pp_status plan_likelihood(pp_sampler *s, pcn_shared *sh)
{
    const pp_noise_spec *nz = &s->cfg.noise;
    double r2 = nz->kind == PP_NOISE_CAMERA ? nz->read * nz->read : 0.0, b = s->cfg.background;
    if (!(b >= 0 && isfinite(b)))
        return pp_fail(PP_ERR_ARG, "%s %g: must be finite and >= 0 (photons/pixel)",
                       pp_setting_name(s->cfg.setting_names, PP_SET_BACKGROUND), b);
    sh->data = pp_fft_alloc_real(s->gn);
    if (!sh->data)
        return fail_nomem();
    double sum = 0, lg = 0;
    for (size_t i = 0; i < s->gn; i++) {
        double v = s->ygrid[i];
        if (!sh->gauss)
            v = fmax(0.0, (v - nz->offset) / nz->gain + r2);
        sh->data[i] = v;
    }
    for (size_t i = 0; i < s->gn; i++) { /* observed pixels lie in the frame box */
        if (!s->obs[i])
            continue;
        double v = sh->data[i];
        sum += v;
        lg -= sh->gauss ? 0.0 : lgamma(v + 1.0);
    }
    double nobs = (double)s->nobs;
    sh->shift = b + r2;
    sh->lgam = lg;
    sh->cens_a = (s->censor_level - nz->offset) / nz->gain + r2;
    double x0 = fmax(sum / nobs - sh->shift, 1e-3 * (sum / nobs) + 1e-9);
    sh->x0 = x0;
    sh->fisher = sh->logx ? x0 * x0 / (x0 + sh->shift) : 1.0 / (x0 + sh->shift);
    if (sh->gauss)
        snprintf(s->likelihood, sizeof s->likelihood, "gaussian: y ~ N(A x, 1/lambda)");
    else if (nz->kind == PP_NOISE_POISSON)
        snprintf(s->likelihood, sizeof s->likelihood,
                 "poisson: (y - %g)/%g ~ Poisson(A x + %g) (exact)", nz->offset, nz->gain, b);
    else
        snprintf(s->likelihood, sizeof s->likelihood,
                 "camera, shifted-Poisson approximation (Snyder, Hammoud & White, JOSA A 1993): "
                 "(y - %g)/%g + %g ~ Poisson(A x + %g + %g); read=0 is exactly poisson",
                 nz->offset, nz->gain, r2, b, r2);
    return PP_OK;
}

/* Start field: the data blurred once by A (noise suppressed), as photons
 * minus background floored (log) or as is (none); level and delta guesses. */
static pp_status plan_start(pp_sampler *s, pcn_shared *sh)
{
    sh->zstart = pp_fft_alloc_real(s->gn);
    pp_complex *buf = pp_fft_alloc_complex(s->gm);
    if (!sh->zstart || !buf) {
        pp_fft_free_buffer(buf);
        return fail_nomem();
    }
    double invn = 1.0 / (double)s->gn, sum = 0, sum2 = 0;
    pp_fft_forward(s->fft, sh->data, buf);
    for (size_t i = 0; i < s->gm; i++)
        buf[i] *= s->otf[i] * invn;
    pp_fft_inverse(s->fft, buf, sh->zstart);
    double floor = fmax(0.05 * sh->x0, 1e-6);
    for (size_t i = 0; i < s->gn; i++) {
        double v = sh->zstart[i];
        if (sh->logx)
            v = log(fmax(v - sh->shift, floor));
        sh->zstart[i] = v;
        sum += v;
        sum2 += v * v;
    }
    double mean = sum * invn, var = fmax(sum2 * invn - mean * mean, 1e-12);
    const pp_prior_spec *pr = &s->cfg.prior;
    sh->m0 = sh->free_dc ? mean : pr->mean;
    sh->mdisp = sh->free_dc ? (sh->logx ? 0.1 : 0.1 * sqrt(var)) : 0.0;
    /* delta guess: rank / (u' Q u) of the start field */
    for (size_t i = 0; i < s->gn; i++)
        s->slot[0].rbuf[i] = sh->zstart[i] - sh->m0;
    pp_fft_forward(s->fft, s->slot[0].rbuf, buf);
    double quad = half_form(s, sh, buf, 1.0, 0.0);
    sh->delta0 = quad > 0 ? s->rank / quad : 1.0;
    sh->a0 = creal(s->otf[0]);
    pp_fft_free_buffer(buf);
    return PP_OK;
}

static void pcn_free_work(void *work)
{
    pcn_chain *k = work;
    if (!k)
        return;
    void *bufs[] = {k->u, k->up, k->ctr, k->g, k->gp, k->v,
                    k->z, k->zp, k->x, k->xp, k->ax, k->axp};
    for (int j = 0; j < 12; j++)
        pp_fft_free_buffer(bufs[j]);
    pp_moments_free(&k->zm);
    pp_adapt_free(k->ad);
    pp_hphot_free(k->hp);
    pp_padmove_free(k->pm);
    pp_fft_free_buffer(k->wh);
    pp_fft_free_buffer(k->wv);
    pp_fft_free_buffer(k->wz);
    free(k);
}

static pp_status plan_work(pp_sampler *s, const pcn_shared *sh, pp_slot *b)
{
    pcn_chain *k = calloc(1, sizeof *k);
    if (!k)
        return fail_nomem();
    b->kwork = k;
    k->u = pp_fft_alloc_complex(s->gm);
    k->up = pp_fft_alloc_complex(s->gm);
    k->ctr = pp_fft_alloc_complex(s->gm);
    if (sh->hmc) {
        k->g = pp_fft_alloc_complex(s->gm);
        k->gp = pp_fft_alloc_complex(s->gm);
        k->v = pp_fft_alloc_complex(s->gm);
        if (!k->g || !k->gp || !k->v)
            return fail_nomem();
    }
    double **g[] = {&k->z, &k->zp, &k->x, &k->xp, &k->ax, &k->axp};
    for (int i = 0; i < 6; i++)
        *g[i] = pp_fft_alloc_real(s->gn);
    if (!k->u || !k->up || !k->ctr || !k->z || !k->zp || !k->x || !k->xp || !k->ax || !k->axp)
        return fail_nomem();
    if (!sh->gauss && sh->logx && !sh->adaptive &&
        pp_hphot_create(s->gn, s->gm, &k->hp) != PP_OK)
        return fail_nomem();
    if (PIXPOST_PADMOVE && k->hp && s->depth == 1 && s->gn > s->npix) {
        pp_status st = pp_padmove_create(s, PM_DMIN, &k->pm);
        if (st != PP_OK)
            return st == PP_ERR_NOMEM ? fail_nomem() : st;
    }
    if (sh->adaptive) {
        pp_status st = pp_adapt_create(&s->gshape, &s->fshape, s->cfg.prior.block, sh->ca,
                                       s->cfg.prior.nu, s->cfg.hyper_delta, &k->ad);
        if (st != PP_OK)
            return st;
        k->wh = pp_fft_alloc_real(s->gn);
        k->wv = pp_fft_alloc_real(s->gn);
        if (s->gd > 1 && !(k->wz = pp_fft_alloc_real(s->gn)))
            return fail_nomem();
        if (!k->wh || !k->wv)
            return fail_nomem();
    }
    return pp_moments_init(&k->zm, s->npix);
}

static pp_status prepare_common(pp_sampler *s, int gpcn, int hmc)
{
    pp_sampler_config *cfg = &s->cfg;
    if (cfg->psf.width_auto)
        return pp_fail(PP_ERR_ARG, "%s ...=auto: sampling the PSF width is available with "
                                   "%s gibbs or mtc only (give pcn/gpcn/hmc a fixed width)",
                       pp_setting_name(cfg->setting_names, PP_SET_PSF),
                       pp_setting_name(cfg->setting_names, PP_SET_SAMPLER));
    if (cfg->positivity == PP_POSITIVITY_AUTO)
        cfg->positivity =
            cfg->noise.kind == PP_NOISE_GAUSSIAN ? PP_POSITIVITY_NONE : PP_POSITIVITY_LOG;
    pcn_shared *sh = calloc(1, sizeof *sh);
    if (!sh)
        return fail_nomem();
    s->kshared = sh;
    sh->gpcn = gpcn || hmc;
    sh->hmc = hmc;
    sh->logx = cfg->positivity == PP_POSITIVITY_LOG;
    sh->gauss = cfg->noise.kind == PP_NOISE_GAUSSIAN;
    sh->free_dc = s->q[0] == 0.0;
    pp_squant_law_init(&sh->law, cfg->level);
    sh->adaptive = cfg->prior.kind == PP_PRIOR_ADAPTIVE; /* hmc only (sampler.c checks) */
    pp_adapt_axis_weights(s->depth, cfg->voxel, sh->ca);
    if (sh->adaptive && (s->gh < 2 || s->gw < 2))
        return pp_fail(PP_ERR_ARG, "%s adaptive: the frame must be at least 2 x 2 pixels",
                       pp_setting_name(cfg->setting_names, PP_SET_PRIOR));
    if (sh->gpcn && cfg->burn < GPCN_MIN_BURN)
        pp_sampler_warn(s,
                        "%s: a burn-in of %lu iterations is too short to adapt the proposal "
                        "(the first half places its centre, the second adapts %s); use "
                        "%s %d or more, or expect a low acceptance rate",
                        hmc ? "hmc" : "gpcn", cfg->burn, hmc ? "the step" : "beta",
                        pp_setting_name(cfg->setting_names, PP_SET_BURN), GPCN_MIN_BURN);
    pp_status st = plan_likelihood(s, sh);
    if (st == PP_OK)
        st = plan_start(s, sh);
    if (st == PP_OK)
        st = pp_squant_plan_chains(s->chain, cfg->chains, s->npix);
    for (unsigned b = 0; st == PP_OK && b < s->nslots; b++)
        st = plan_work(s, sh, &s->slot[b]);
    return st;
}

static pp_status prepare_pcn(pp_sampler *s)
{
    return prepare_common(s, 0, 0);
}

static pp_status prepare_gpcn(pp_sampler *s)
{
    return prepare_common(s, 1, 0);
}

static pp_status prepare_hmc(pp_sampler *s)
{
    return prepare_common(s, 0, 1);
}

/* Pooled bounds: the chains' quantile estimates averaged, mapped to x. */
static pp_status pcn_finish(pp_sampler *s)
{
    const pcn_shared *sh = s->kshared;
    pp_squant_pool(s->chain, s->cfg.chains, s->npix, sh->logx, s->lo->data,
                   s->hi->data);
    for (unsigned j = 0; j < s->cfg.chains; j++)
        if (s->chain[j].acceptance < LOW_ACCEPT)
            pp_sampler_warn(s,
                            "chain %u: the field move accepted %.1f %% of its proposals after "
                            "burn-in (step %.3g): the chain moves slowly; lengthen %s",
                            j + 1, 100 * s->chain[j].acceptance, s->chain[j].step,
                            pp_setting_name(s->cfg.setting_names, PP_SET_BURN));
    snprintf(s->bound_method, sizeof s->bound_method,
             "streaming quantiles: per pixel and chain, Robbins-Monro recursion q += g (p - "
             "1{z <= q}), g = sd/(phi(z_p) t), on %s, started from the Gaussian guess after %d "
             "kept draws, averaged over chains%s; 16 bytes per pixel per chain",
             sh->logx ? "z = log x" : "x", PP_SQUANT_WARM, sh->logx ? " and mapped through exp" : "");
    return PP_OK;
}

static void pcn_release(pp_sampler *s)
{
    pcn_shared *sh = s->kshared;
    if (sh) {
        pp_fft_free_buffer(sh->data);
        pp_fft_free_buffer(sh->zstart);
        free(sh);
        s->kshared = NULL;
    }
    pp_squant_release_chains(s->chain, s->cfg.chains);
}

/* A running chain's state in the slot (pointers follow take_proposal's
 * swaps): u, the gpcn centre, hmc's gradient, z, x, A x, the moments of z,
 * the scalars, the adaptive prior's weights and blocks. The proposal
 * buffers and hmc's velocity are scratch. */
static size_t pcn_state(const pp_sampler *s, void *kwork, pp_region *out)
{
    pcn_chain *k = kwork;
    const pcn_shared *sh = s->kshared;
    size_t n = 0, h = s->gm * sizeof(pp_complex), g = s->gn * sizeof(double);
    size_t f = k->zm.len * sizeof(double);
    out[n++] = (pp_region){k->u, h};
    out[n++] = (pp_region){k->ctr, h};
    if (sh->hmc)
        out[n++] = (pp_region){k->g, h};
    out[n++] = (pp_region){k->z, g};
    out[n++] = (pp_region){k->x, g};
    out[n++] = (pp_region){k->ax, g};
    out[n++] = (pp_region){k->zm.mean, f};
    out[n++] = (pp_region){k->zm.m2, f};
    out[n++] = (pp_region){&k->zm.count, sizeof k->zm.count};
    out[n++] = (pp_region){&k->gvalid, sizeof k->gvalid};
    out[n++] = (pp_region){&k->m, sizeof k->m};
    out[n++] = (pp_region){&k->beta, sizeof k->beta};
    out[n++] = (pp_region){&k->dstep, sizeof k->dstep};
    out[n++] = (pp_region){&k->mstep, sizeof k->mstep};
    out[n++] = (pp_region){&k->phi, sizeof k->phi};
    out[n++] = (pp_region){&k->ss, sizeof k->ss};
    out[n++] = (pp_region){&k->dref, sizeof k->dref};
    out[n++] = (pp_region){&k->acc, sizeof k->acc};
    out[n++] = (pp_region){&k->pstep, sizeof k->pstep};
    if (sh->adaptive) {
        out[n++] = (pp_region){k->wh, g};
        out[n++] = (pp_region){k->wv, g};
        if (k->wz)
            out[n++] = (pp_region){k->wz, g};
        n += pp_adapt_state(k->ad, out + n);
    }
    if (k->hp)
        n += pp_hphot_state(k->hp, s->gn, s->gm, out + n);
    return n;
}

const pp_kernel pp_kernel_pcn = {"pcn", prepare_pcn, pcn_run_chain, pcn_finish, pcn_release,
                                 pcn_free_work, pcn_state};
const pp_kernel pp_kernel_gpcn = {"gpcn", prepare_gpcn, pcn_run_chain, pcn_finish, pcn_release,
                                 pcn_free_work, pcn_state};
const pp_kernel pp_kernel_hmc = {"hmc", prepare_hmc, pcn_run_chain, pcn_finish, pcn_release,
                                 pcn_free_work, pcn_state};
