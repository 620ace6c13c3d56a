/* pixpost — marginal-then-conditional sampler for the linear-Gaussian
 * model (Fox & Norton, SIAM/ASA JUQ 4, 2016), periodic boundaries.
 *
 * (lambda, delta) are drawn from their marginal posterior p(lambda, delta|y);
 * x is then drawn from x | lambda, delta, y exactly as gibbs does (shared
 * code in sampler_gibbs.c), only for kept draws.
 *
 * The marginal. With periodic boundaries y ~ N(A m, 1/lambda I + 1/delta
 * A Q^+ A') is diagonal in Fourier space. Over the n = rank frequencies
 * with q_k > 0 (the zero frequency of an intrinsic prior has a flat prior:
 * its integral does not depend on lambda or delta and is left out), with
 * rho = lambda / delta, a_k = |A_k|^2 / q_k and s_k = |Y_k - A_k M_k|^2 / N,
 * the per-frequency variance is c_k = (1 + rho a_k) / lambda, so
 *   log p(y|lambda,delta) = -n/2 log(2 pi) + n/2 log lambda
 *                           - 1/2 D(rho) - lambda/2 S(rho),
 *   D(rho) = sum_k w_k log1p(rho a_k),  S(rho) = sum_k w_k s_k / (1 + rho a_k),
 * w_k the half-spectrum weights. With Gamma(al, bl) on lambda, Gamma(ad, bd)
 * on delta and the change (lambda, delta) -> (lambda, rho), delta = lambda /
 * rho, |d delta / d rho| = lambda / rho^2:
 *   p(lambda, rho | y) ~ lambda^(n/2 + al + ad - 1) rho^-(ad + 1)
 *                        exp(-lambda beta(rho)) exp(-D(rho)/2),
 *   beta(rho) = bl + bd / rho + S(rho) / 2,
 * so lambda | rho, y ~ Gamma(n/2 + al + ad, beta(rho)) exactly, and on
 * r = log rho (Jacobian rho)
 *   log p(r | y) = -(n/2 + al + ad) log beta - ad r - D / 2 + const.
 * One iteration: an independence Metropolis step on r, proposal a Student-t
 * (T_DOF) centred at the mode of log p(r|y) with T_WIDEN times the Laplace
 * scale (Newton with analytic derivatives, from a deterministic start, so
 * the proposal is fixed: no adaptation is needed); then lambda | rho exactly
 * and delta = lambda / rho. One O(M) evaluation of (S, D) per iteration,
 * one log1p and one division per distinct a_k.
 * Fixed lambda (gaussian:sigma=S) or delta (delta=D): a 1-D random-walk
 * Metropolis on the free log-precision, SUBSTEPS per iteration, scale from
 * the curvature refreshed every REFRESH burn-in iterations and Robbins-
 * Monro towards acceptance 0.44 (Roberts & Rosenthal 2001; common
 * practice), both frozen after burn-in. Both fixed: no step.
 *
 * Uncertain PSF width (src/psfwidth.c): after the (lambda, delta) draw one
 * random-walk step on the width on the same marginal (one kernel rebuild
 * and one r2c per proposal). The terms a_k then belong to the chain; after
 * an accepted width they are rebuilt (one pass) and the Laplace proposal
 * recomputed by Newton from the chain's first mode (a few passes): the
 * proposal is a function of the width only, which the (lambda, delta) step
 * leaves unchanged, so the step stays exact.
 *
 * --boundary pad or missing pixels (NaN, src/observed.h): the padding or
 * missing pixels are unobserved, so the marginal is no longer diagonal;
 * this kernel then runs the gibbs chain (data augmentation) and says so
 * (summary.json "pad_scheme" and a warning).
 *
 * Cost per iteration (grid N, half spectrum M ~ N/2): one evaluation over
 * the G <= M distinct a_k (fixed PSF; grouped once in prepare, O(M log M));
 * (mirror frequencies of a symmetric PSF differ in the last bits of the
 * FFT, so exact grouping merges little: G = 28906 of 33023 at 256^2,
 * 116601 of 131583 at 512^2; the step, vectorised (rho_eval), costs
 * 0.05-0.07 / 0.24-0.30 / 1.2-1.5 ms at 256^2 / 512^2 / 1024^2, bench/run);
 * a kept draw adds the gibbs conditional draw: M complex normals, one fused
 * pass, one c2r, moments and 9 probe sums. Memory: fixed PSF, 3 shared
 * arrays of G doubles (the entries' index and arrays are dropped once
 * grouped); sampled width, an index and 2 arrays of the M' <= M entries
 * with q > 0, and one array of M' doubles per chain.
 */
#include "internal.h"
#include "padscale.h"
#include "psfwidth.h"
#include "sampler_gibbs.h"
#include "sampler_internal.h"
#include "sampler_mtc.h"
#include "spectral.h"
#include "vmath.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Random-walk steps per iteration in the 1-D case (one of lambda, delta
 * fixed): an evaluation costs far less than the x draw it feeds. */
#define SUBSTEPS 8
/* Burn-in iterations between refreshes of the 1-D walk's curvature. */
#define REFRESH 10
/* Independence proposal on log rho: Student-t degrees of freedom and the
 * factor on the Laplace scale. Tails heavier than the target's keep the
 * sampler uniformly ergodic. For a Gaussian target t20 at the Laplace scale
 * accepts 0.98 of proposals (t10: 0.96; widening by 1.15: 0.90; numpy
 * simulation); measured 0.98 on 28 x 24 (tests/ref_mtc_rho.py) and on
 * 256^2 to 1024^2 frames (bench/mtc_bench.py). */
#define T_DOF 20.0
#define T_WIDEN 1.0
#define NEWTON_MAX 200

/* Terms of the marginal in rho: n entries (groups) of a, weight, w * s. */
typedef struct rho_terms {
    const double *a, *w, *ws;
    size_t n;
} rho_terms;

typedef struct mtc_shared {
    size_t nk;             /* entries with q > 0 */
    size_t *idx;           /* their half-spectrum indices (NULL once grouped) */
    double *w;             /* their half-spectrum weights (NULL once grouped) */
    double *ws;            /* w_k |Y_k - A_k M_k|^2 / N (NULL once grouped) */
    double *ga, *gw, *gws; /* fixed PSF: groups of equal a_k, summed w and ws */
    size_t ng;
    int fallback; /* pad or missing pixels: run the gibbs chain */
} mtc_shared;

/* Sums of the marginal at one rho; the derivatives are in r = log rho. */
typedef struct rho_sums {
    double S, D, S1, S2, D1, D2;
} rho_sums;

/* S and D at rho: per block of RHO_BLOCK entries an elementwise loop into
 * stack arrays (vectorised: pp_vlog1p for libm's log1p), then lane sums in
 * a fixed order (src/vmath.h). */
#define RHO_BLOCK 256
PP_VECTOR_CLONES static void rho_eval(const rho_terms *t, double rho, rho_sums *o)
{
    double ts[RHO_BLOCK], td[RHO_BLOCK], as[PP_LANES] = {0}, ad[PP_LANES] = {0};
    const double *restrict a = t->a, *restrict w = t->w, *restrict ws = t->ws;
    for (size_t j0 = 0; j0 < t->n; j0 += RHO_BLOCK) {
        size_t m = t->n - j0 < RHO_BLOCK ? t->n - j0 : RHO_BLOCK;
        for (size_t j = 0; j < m; j++) {
            double x = rho * a[j0 + j];
            ts[j] = ws[j0 + j] / (1 + x);
            td[j] = w[j0 + j] * pp_vlog1p(x);
        }
        pp_lanes_add(as, ts, m);
        pp_lanes_add(ad, td, m);
    }
    *o = (rho_sums){pp_lanes_total(as), pp_lanes_total(ad), 0, 0, 0, 0};
}

/* As rho_eval plus first and second derivatives in r: with g = 1/(1+x),
 * u = x g, dg/dr = -u g and du/dr = u g. */
static void rho_eval_deriv(const rho_terms *t, double rho, rho_sums *o)
{
    rho_sums z = {0, 0, 0, 0, 0, 0};
    for (size_t j = 0; j < t->n; j++) {
        double x = rho * t->a[j], g = 1 / (1 + x), u = x * g;
        z.S += t->ws[j] * g;
        z.D += t->w[j] * log1p(x);
        z.S1 -= t->ws[j] * u * g;
        z.S2 -= t->ws[j] * u * g * (g - u);
        z.D1 += t->w[j] * u;
        z.D2 += t->w[j] * u * g;
    }
    *o = z;
}

/* The marginal log p(y | lambda, delta) from the sums at rho = lambda/delta. */
static double marginal_from(const pp_sampler *s, double lam, const rho_sums *z)
{
    return -0.5 * s->rank * log(2 * PP_PI) + 0.5 * s->rank * log(lam) - 0.5 * z->D -
           0.5 * lam * z->S;
}

double pp_mtc_log_marginal(const pp_sampler *s, const double *otf2, double lam, double del)
{
    const mtc_shared *m = s->kshared;
    double rho = lam / del;
    rho_sums z = {0, 0, 0, 0, 0, 0};
    if (otf2 == s->otf2 && m->ga) { /* the fixed PSF's groups (the entries are gone) */
        rho_terms g = {m->ga, m->gw, m->gws, m->ng};
        rho_eval(&g, rho, &z);
        return marginal_from(s, lam, &z);
    }
    for (size_t j = 0; j < m->nk; j++) {
        size_t i = m->idx[j];
        double x = rho * (otf2[i] / s->q[i]);
        z.S += m->ws[j] / (1 + x);
        z.D += m->w[j] * log1p(x);
    }
    return marginal_from(s, lam, &z);
}

/* ---- per-chain state ----------------------------------------------------- */

typedef struct mtc_chain {
    double *a;                     /* sampled width: this chain's a_k over the q > 0 entries */
    rho_terms t;                   /* the terms this chain evaluates */
    double r0;                     /* Newton's start (log rho) */
    double mode, sd;               /* Laplace approximation of log p(r | y) */
    double r, f;                   /* current log rho and log p(r | y) there */
    rho_sums z;                    /* sums at the current rho */
    unsigned long tried, accepted; /* after burn-in */
    /* 1-D walk (one of lambda, delta fixed) */
    double x, lm, wsd, logsc; /* free log-precision, log marginal, curvature sd, log scale */
    double wt;                /* the walk's log target at x */
    unsigned long n;          /* adaptation steps so far */
} mtc_chain;

/* Each chain's state (c->kstate), with its own a_k when the width is
 * sampled; freed by mtc_release. */
static pp_status chains_alloc(pp_sampler *s, const mtc_shared *m)
{
    for (unsigned i = 0; i < s->cfg.chains; i++) {
        mtc_chain *k = calloc(1, sizeof *k);
        s->chain[i].kstate = k;
        if (!k || (s->cfg.psf.width_auto && !(k->a = malloc((m->nk ? m->nk : 1) * sizeof(double)))))
            return pp_fail(PP_ERR_NOMEM, "out of memory");
    }
    return PP_OK;
}

/* ---- preparation: the entries with q > 0 and their groups -------------- */

typedef struct akey {
    double a;
    size_t j;
} akey;

static int akey_cmp(const void *x, const void *y)
{
    const akey *p = x, *q = y;
    return p->a < q->a ? -1 : p->a > q->a ? 1 : (p->j > q->j) - (p->j < q->j);
}

/* Groups the entries by equal a_k (exactly equal doubles only, so the sums
 * are the same up to the order of additions). */
static pp_status make_groups(const pp_sampler *s, mtc_shared *m)
{
    akey *k = malloc((m->nk ? m->nk : 1) * sizeof *k);
    m->ga = malloc((m->nk ? m->nk : 1) * sizeof(double));
    m->gw = malloc((m->nk ? m->nk : 1) * sizeof(double));
    m->gws = malloc((m->nk ? m->nk : 1) * sizeof(double));
    if (!k || !m->ga || !m->gw || !m->gws) {
        free(k);
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    }
    for (size_t j = 0; j < m->nk; j++)
        k[j] = (akey){s->otf2[m->idx[j]] / s->q[m->idx[j]], j};
    qsort(k, m->nk, sizeof *k, akey_cmp);
    size_t g = 0;
    for (size_t j = 0; j < m->nk; j++) {
        if (g == 0 || k[j].a != m->ga[g - 1]) {
            m->ga[g] = k[j].a;
            m->gw[g] = m->gws[g] = 0;
            g++;
        }
        m->gw[g - 1] += m->w[k[j].j];
        m->gws[g - 1] += m->ws[k[j].j];
    }
    m->ng = g;
    free(k);
    /* The groups replace the entries for good: trim them to their number and
     * drop the per-entry arrays (12 bytes per half-spectrum entry). */
    double **arr[] = {&m->ga, &m->gw, &m->gws};
    for (int a = 0; a < 3; a++) {
        double *shrunk = realloc(*arr[a], (g ? g : 1) * sizeof(double));
        if (shrunk)
            *arr[a] = shrunk;
    }
    free(m->idx);
    free(m->w);
    free(m->ws);
    m->idx = NULL;
    m->w = m->ws = NULL;
    return PP_OK;
}

static pp_status mtc_prepare(pp_sampler *s)
{
    mtc_shared *m = calloc(1, sizeof *m);
    s->kshared = m;
    if (!m)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    if (s->augment && s->cfg.boundary != PP_BOUNDARY_PAD) {
        m->fallback = 1;
        s->pad_scheme = "gibbs (data augmentation): with unobserved (missing) pixels the "
                        "marginal of (lambda, delta) is not Fourier-diagonal";
        pp_sampler_warn(s, "%s mtc with %zu unobserved (masked or saturated) pixels "
                           "runs the gibbs chain (data augmentation); use %s gibbs",
                        pp_setting_name(s->cfg.setting_names, PP_SET_SAMPLER), s->nmissing, pp_setting_name(s->cfg.setting_names, PP_SET_SAMPLER));
        return PP_OK; /* (the padding scale move is for --boundary pad only) */
    }
    if (s->augment) {
        m->fallback = 1;
        s->pad_scheme = "gibbs (data augmentation): with unobserved padding the marginal of "
                        "(lambda, delta) is not Fourier-diagonal";
        pp_sampler_warn(s, "%s mtc with %s pad runs the gibbs chain (data "
                           "augmentation); use %s periodic for marginal-then-"
                           "conditional draws",
                        pp_setting_name(s->cfg.setting_names, PP_SET_SAMPLER), pp_setting_name(s->cfg.setting_names, PP_SET_BOUNDARY),
                        pp_setting_name(s->cfg.setting_names, PP_SET_BOUNDARY));
        return pp_kernel_gibbs.prepare(s); /* the padding scale move, src/padscale.h */
    }
    m->idx = malloc(s->gm * sizeof *m->idx);
    m->w = malloc(s->gm * sizeof(double));
    m->ws = malloc(s->gm * sizeof(double));
    if (!m->idx || !m->w || !m->ws)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    const double invn = 1.0 / (double)s->gn;
    size_t n = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            if (!(s->q[i] > 0))
                continue;
            pp_complex r = s->yhat[i] - (i == 0 ? s->otf[0] * s->mean_dc : 0.0);
            m->idx[n] = i;
            m->w[n] = pp_half_weight(k2, s->gw);
            m->ws[n] = m->w[n] * (creal(r) * creal(r) + cimag(r) * cimag(r)) * invn;
            n++;
        }
    m->nk = n;
    pp_status st = chains_alloc(s, m);
    if (st != PP_OK || s->cfg.psf.width_auto)
        return st; /* a sampled width changes the a_k: per chain, no groups */
    return make_groups(s, m);
}

static void mtc_release(pp_sampler *s)
{
    mtc_shared *m = s->kshared;
    for (unsigned i = 0; s->chain && i < s->cfg.chains; i++) {
        mtc_chain *k = s->chain[i].kstate;
        if (k)
            free(k->a);
        free(k);
        s->chain[i].kstate = NULL;
    }
    if (m) {
        free(m->idx);
        free(m->w);
        free(m->ws);
        free(m->ga);
        free(m->gw);
        free(m->gws);
    }
    free(m);
    s->kshared = NULL;
}

/* The chain's terms for its current transfer function c->otf2. */
static void chain_terms(const pp_sampler *s, const pp_chain *c, mtc_chain *k)
{
    const mtc_shared *m = s->kshared;
    if (!k->a) {
        k->t = (rho_terms){m->ga, m->gw, m->gws, m->ng};
        return;
    }
    for (size_t j = 0; j < m->nk; j++)
        k->a[j] = c->otf2[m->idx[j]] / s->q[m->idx[j]];
    k->t = (rho_terms){k->a, m->w, m->ws, m->nk};
}

/* ---- both free: rho from its marginal, lambda | rho exact ---------------- */

static double shape_lambda(const pp_sampler *s)
{
    return 0.5 * s->rank + s->cfg.hyper_lambda[0] + s->cfg.hyper_delta[0];
}

static double rate_lambda(const pp_sampler *s, double r, const rho_sums *z)
{
    return s->cfg.hyper_lambda[1] + s->cfg.hyper_delta[1] * exp(-r) + 0.5 * z->S;
}

/* log p(r | y) up to a constant, from the sums at rho = e^r. */
static double log_pr(const pp_sampler *s, double r, const rho_sums *z)
{
    return -shape_lambda(s) * log(rate_lambda(s, r, z)) - s->cfg.hyper_delta[0] * r - 0.5 * z->D;
}

/* log p(r|y) with its first and second derivatives in r. */
static double log_pr_deriv(const pp_sampler *s, const rho_terms *t, double r, double *d1,
                           double *d2)
{
    rho_sums z;
    rho_eval_deriv(t, exp(r), &z);
    const double al = shape_lambda(s), bd = s->cfg.hyper_delta[1] * exp(-r);
    double b = rate_lambda(s, r, &z), b1 = -bd + 0.5 * z.S1, b2 = bd + 0.5 * z.S2;
    *d1 = -al * b1 / b - s->cfg.hyper_delta[0] - 0.5 * z.D1;
    *d2 = -al * (b2 / b - (b1 / b) * (b1 / b)) - 0.5 * z.D2;
    return log_pr(s, r, &z);
}

/* Mode and Laplace sd of log p(r|y) by safeguarded Newton from k->r0 (a
 * deterministic start, so the result depends on the terms only). Falls
 * back to sd 1 (log units) around the best point when no negative
 * curvature is found (an improper or flat marginal). */
static void laplace(const pp_sampler *s, mtc_chain *k)
{
    double r = k->r0, d1, d2, f = log_pr_deriv(s, &k->t, r, &d1, &d2);
    for (int it = 0; it < NEWTON_MAX && isfinite(f); it++) {
        double step = d2 < 0 ? -d1 / d2 : (d1 > 0 ? 1.0 : -1.0);
        if (d2 < 0 && fabs(step) * sqrt(-d2) < 1e-5)
            break; /* within 1e-5 sd of the mode: closer is lost in rounding */
        step = fmax(-3.0, fmin(3.0, step));
        double e1, e2, fn = log_pr_deriv(s, &k->t, r + step, &e1, &e2);
        for (int h = 0; h < 30 && !(fn >= f); h++) {
            step *= 0.5;
            fn = log_pr_deriv(s, &k->t, r + step, &e1, &e2);
        }
        if (!(fn >= f))
            break; /* no ascent left: r is the mode to rounding */
        r += step;
        f = fn;
        d1 = e1;
        d2 = e2;
        if (d2 < 0 && fabs(step) * sqrt(-d2) < 1e-5)
            break; /* a halved step below 1e-5 sd: rounding in the sums (a volume
                    * of ~1e6 voxels holds the gradient at ~3e-5 sd), not progress */
    }
    k->mode = r;
    k->sd = d2 < 0 && isfinite(d2) ? 1.0 / sqrt(-d2) : 1.0;
}

/* Log density (up to a constant) of the t proposal at r. */
static double log_prop(const mtc_chain *k, double r)
{
    double z = (r - k->mode) / (T_WIDEN * k->sd);
    return -0.5 * (T_DOF + 1) * log1p(z * z / T_DOF);
}

/* One independence Metropolis step on r, then lambda | rho and delta. */
static void rho_step(const pp_sampler *s, pp_chain *c, mtc_chain *k, int burn)
{
    double g = pp_rng_gamma(&c->rng, 0.5 * T_DOF, 0.5 * T_DOF); /* chi2_nu / nu */
    double rp = k->mode + T_WIDEN * k->sd * pp_rng_normal(&c->rng) / sqrt(g);
    rho_sums zp;
    rho_eval(&k->t, exp(rp), &zp);
    double fp = log_pr(s, rp, &zp);
    double la = fp - k->f + log_prop(k, k->r) - log_prop(k, rp);
    int acc = isfinite(fp) && (!isfinite(k->f) || log(pp_rng_uniform(&c->rng)) < la);
    if (acc) {
        k->r = rp;
        k->f = fp;
        k->z = zp;
    }
    if (!burn) {
        k->tried++;
        k->accepted += (unsigned long)acc;
    }
    c->lambda = pp_rng_gamma(&c->rng, shape_lambda(s), rate_lambda(s, k->r, &k->z));
    c->delta = c->lambda * exp(-k->r);
}

/* ---- one of lambda, delta fixed: 1-D random walk --------------------------- */

/* Log target of the free log-precision x (log lambda or log delta). */
static double walk_target(const pp_sampler *s, const pp_chain *c, const mtc_chain *k, double x,
                          double *lm)
{
    int free_l = !s->cfg.noise.sigma_set;
    double lam = free_l ? exp(x) : c->lambda, del = free_l ? c->delta : exp(x);
    const double *h = free_l ? s->cfg.hyper_lambda : s->cfg.hyper_delta;
    rho_sums z;
    rho_eval(&k->t, lam / del, &z);
    *lm = marginal_from(s, lam, &z);
    return *lm + h[0] * x - h[1] * exp(x);
}

/* The walk's sd from the curvature at the current point (kept if not
 * positive). */
static void walk_refresh(const pp_sampler *s, const pp_chain *c, mtc_chain *k)
{
    const double e = 1e-3;
    double lm, f0 = walk_target(s, c, k, k->x, &lm);
    double fm = walk_target(s, c, k, k->x - e, &lm), fp = walk_target(s, c, k, k->x + e, &lm);
    double h = -(fp - 2 * f0 + fm) / (e * e);
    if (h > 0 && isfinite(h))
        k->wsd = 1.0 / sqrt(h);
}

static void walk_step(const pp_sampler *s, pp_chain *c, mtc_chain *k, int adapt)
{
    double xp = k->x + exp(k->logsc) * k->wsd * pp_rng_normal(&c->rng);
    double lm, t1 = walk_target(s, c, k, xp, &lm);
    int acc = isfinite(t1) && log(pp_rng_uniform(&c->rng)) < t1 - k->wt;
    if (acc) {
        k->x = xp;
        k->lm = lm;
        k->wt = t1;
    }
    if (adapt) {
        k->logsc += (acc - 0.44) * pow((double)(++k->n), -0.6);
    } else {
        k->tried++;
        k->accepted += (unsigned long)acc;
    }
    if (!s->cfg.noise.sigma_set)
        c->lambda = exp(k->x);
    else
        c->delta = exp(k->x);
}

/* ---- the chain --------------------------------------------------------- */

/* Log marginal of a proposed PSF width (pp_width_step's density). */
static double width_logp(const pp_sampler *s, const pp_chain *c, const pp_complex *otf,
                         const double *otf2, void *ctx)
{
    (void)otf;
    (void)ctx;
    return pp_mtc_log_marginal(s, otf2, c->lambda, c->delta);
}

/* x | lambda, delta, y for a kept draw (as gibbs), recorded. */
static void conditional_draw(const pp_sampler *s, pp_chain *c)
{
    double *probe = c->trace + c->kept * s->trace.ncols + s->col_probe0;
    /* with draw statistics (regions, above maps) x-hat is kept in cbuf2 */
    pp_fused_sums f = pp_gibbs_fused_pass(s, c, s->draw_stats ? 0 : -1, 1, probe);
    double ll = 0.5 * (double)s->gn * log(c->lambda / (2 * PP_PI)) - 0.5 * c->lambda * f.resid;
    pp_gibbs_record(s, c, &f, ll, 1, 1);
}

/* Which (lambda, delta) move the chain makes. */
enum { MOVE_NONE, MOVE_RHO, MOVE_WALK };

static int move_kind(const pp_sampler *s)
{
    int fl = s->cfg.noise.sigma_set, fd = s->cfg.prior.delta_set;
    return fl && fd ? MOVE_NONE : !fl && !fd ? MOVE_RHO : MOVE_WALK;
}

/* Sets up the chain's state from its dispersed start (c->lambda, c->delta). */
static void chain_start(const pp_sampler *s, pp_chain *c, mtc_chain *k)
{
    chain_terms(s, c, k);
    k->r0 = log(s->lambda0 / s->delta0);
    k->r = log(c->lambda / c->delta);
    if (move_kind(s) == MOVE_RHO) {
        laplace(s, k);
        k->r0 = k->mode; /* later widths start Newton here */
        rho_eval(&k->t, exp(k->r), &k->z);
        k->f = log_pr(s, k->r, &k->z);
    } else if (move_kind(s) == MOVE_WALK) {
        k->x = s->cfg.noise.sigma_set ? log(c->delta) : log(c->lambda);
        k->wsd = 0.1;
        k->logsc = log(2.38);
        k->wt = walk_target(s, c, k, k->x, &k->lm);
        walk_refresh(s, c, k);
    }
}

/* After an accepted width: new terms, and for the rho move the sums at the
 * current rho and the Laplace proposal of the new width. */
static void width_changed(const pp_sampler *s, const pp_chain *c, mtc_chain *k)
{
    chain_terms(s, c, k);
    if (move_kind(s) == MOVE_WALK)
        k->wt = walk_target(s, c, k, k->x, &k->lm);
    if (move_kind(s) != MOVE_RHO)
        return;
    laplace(s, k);
    rho_eval(&k->t, exp(k->r), &k->z);
    k->f = log_pr(s, k->r, &k->z);
}

/* The (lambda, delta) move of iteration t; returns log p(y | lambda, delta). */
static double hyper_move(const pp_sampler *s, pp_chain *c, mtc_chain *k, unsigned long t)
{
    int burn = t < s->cfg.burn;
    switch (move_kind(s)) {
    case MOVE_RHO:
        rho_step(s, c, k, burn);
        return marginal_from(s, c->lambda, &k->z);
    case MOVE_WALK:
        if (burn && t % REFRESH == REFRESH - 1)
            walk_refresh(s, c, k);
        for (int j = 0; j < SUBSTEPS; j++)
            walk_step(s, c, k, burn);
        return k->lm;
    default:
        return pp_mtc_log_marginal(s, c->otf2, c->lambda, c->delta);
    }
}

static pp_status run_iterations(pp_sampler *s, pp_chain *c, mtc_chain *k)
{
    const pp_sampler_config *cfg = &s->cfg;
    for (unsigned long t = c->t; t < s->t_end; t++) {
        int burn = t < cfg->burn;
        double lm = hyper_move(s, c, k, t);
        if (c->wstate && pp_width_step(s, c, width_logp, NULL, &lm, burn ? t + 1 : 0))
            width_changed(s, c, k);
        if (!(isfinite(lm) && isfinite(c->lambda) && c->lambda > 0 && isfinite(c->delta) &&
              c->delta > 0))
            return pp_fail(PP_ERR_NUMERIC,
                           "the marginal of (lambda, delta) is not finite at iteration %lu "
                           "(lambda=%g, delta=%g); rescale the frame or fix one with "
                           "gaussian:sigma=S or delta=D",
                           t + 1, c->lambda, c->delta);
        if (t >= s->keep_from && (t - s->keep_from + 1) % cfg->thin == 0)
            conditional_draw(s, c);
        if (pp_sampler_tick(s))
            return pp_fail(PP_ERR_INTERRUPTED, "sampling stopped at the caller's request");
    }
    return PP_OK;
}

static pp_status mtc_run_chain(pp_sampler *s, pp_chain *c)
{
    const mtc_shared *m = s->kshared;
    if (m->fallback)
        return pp_kernel_gibbs.run_chain(s, c);
    mtc_chain *k = c->kstate;
    if (c->t == 0) {
        double *a = k->a;
        memset(k, 0, sizeof *k);
        k->a = a;
        chain_start(s, c, k);
    }
    pp_status st = run_iterations(s, c, k);
    if (st == PP_OK)
        c->t = s->t_end;
    c->acceptance = k->tried ? (double)k->accepted / (double)k->tried : 0.0;
    c->step = move_kind(s) == MOVE_RHO    ? T_WIDEN * k->sd
              : move_kind(s) == MOVE_WALK ? exp(k->logsc) * k->wsd
                                          : 0.0;
    return st;
}

/* The slots' padding scale moves of the pad fallback (NULL otherwise). */
static void mtc_free_work(void *p) { pp_padscale_free(p); }

const pp_kernel pp_kernel_mtc = {"mtc",       mtc_prepare,   mtc_run_chain, NULL,
                                 mtc_release, mtc_free_work, NULL};
