/* pixpost — marginal-then-conditional sampler for the linear-Gaussian
 * model (Fox & Norton, SIAM/ASA JUQ 4, 2016), periodic boundaries.
 *
 * (lambda, delta) are drawn from their marginal posterior p(lambda, delta|y)
 * by random-walk Metropolis on (u, v) = (log lambda, log delta); x is then
 * drawn from x | lambda, delta, y exactly as gibbs does (shared code in
 * sampler_gibbs.c), only for kept draws. With periodic boundaries the
 * marginal y ~ N(A m, 1/lambda I + 1/delta A Q^+ A') is diagonal in Fourier
 * space; over the frequencies with q(k) > 0 (the zero frequency of an
 * intrinsic prior carries no information about delta and is left out)
 *   log p(y|lambda,delta) = sum_k w_k [ -1/2 log(2 pi / q_k) - 1/2 log p_k
 *                            - lambda delta s_k / (2 p_k) ] + rank/2 (u + v)
 * with p_k = lambda |A_k|^2 + delta q_k, s_k = q_k |Y_k - A_k M_k|^2 / N and
 * w_k the half-spectrum weights; Gamma(a, b) hyperpriors on lambda and
 * delta add a u - b lambda + a' v - b' delta (log-scale Jacobian included).
 * |A|^2, q and s are precomputed once; an evaluation is one pass of one log
 * and one division per half-spectrum entry, no transform.
 *
 * Proposal: Gaussian with covariance sc^2 H^-1, H the negative Hessian of
 * the log target (finite differences, 9 evaluations) at the current point,
 * refreshed every REFRESH iterations during burn-in; sc adapts by
 * Robbins-Monro towards acceptance 0.35 (2-D) / 0.44 (1-D) (Roberts &
 * Rosenthal 2001; common practice). Both are frozen after burn-in, so the
 * kept chain is a fixed Metropolis kernel. SUBSTEPS Metropolis steps per
 * iteration: they cost far less than the x draw they feed.
 * Fixed lambda (gaussian:sigma=S) or delta (delta=D) make the step 1-D; both
 * fixed, no step.
 *
 * Uncertain PSF width (src/psfwidth.c): after the (lambda, delta) steps one
 * random-walk step on the width on the same marginal (one kernel rebuild
 * and one r2c per proposal).
 *
 * --boundary pad: the padding pixels are unobserved, so the marginal is no
 * longer diagonal; this kernel then runs the gibbs chain (data
 * augmentation) and says so (summary.json "pad_scheme" and a warning).
 *
 * Cost per iteration (grid N, half spectrum M ~ N/2): SUBSTEPS marginal
 * evaluations (M logs each); a kept draw adds the gibbs conditional draw:
 * M complex normals, one fused pass, one c2r, moments and 9 probe sums.
 * Memory: one shared array of M doubles; the chains' gibbs buffers.
 */
#include <math.h>
#include <stdlib.h>
#include "internal.h"

/* Metropolis steps on (u, v) per iteration. At 512^2 one marginal
 * evaluation costs ~1/15 of a kept x draw (bench/mtc_bench.sh), so 8 of them
 * make the kept (lambda, delta) nearly independent at modest cost. */
#define SUBSTEPS 8
/* Burn-in iterations between refreshes of the Hessian. */
#define REFRESH 10

typedef struct mtc_shared {
    double *sk;   /* q_k |Y_k - A_k M_k|^2 / N, 0 where q_k = 0 (left out) */
    double cst;   /* sum over kept k of w_k (-1/2) log(2 pi / q_k) */
    int fallback; /* pad: run the gibbs chain */
} mtc_shared;

double pp_mtc_log_marginal(const pp_sampler *s, const double *otf2, double lam, double del)
{
    const mtc_shared *m = s->kshared;
    double acc = 0;
    for (size_t k1 = 0; k1 < s->gh; k1++) {
        double r2 = 0, r1 = 0;
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            if (!(s->q[i] > 0))
                continue;
            double p = lam * otf2[i] + del * s->q[i];
            double e = log(p) + lam * del * m->sk[i] / p;
            if (pp_half_weight(k2, s->gw) == 1.0)
                r1 += e;
            else
                r2 += e;
        }
        acc += 2 * r2 + r1;
    }
    return m->cst - 0.5 * acc + 0.5 * s->rank * (log(lam) + log(del));
}

static pp_status mtc_prepare(pp_sampler *s)
{
    mtc_shared *m = calloc(1, sizeof *m);
    s->kshared = m;
    if (!m)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    if (s->cfg.boundary == PP_BOUNDARY_PAD) {
        m->fallback = 1;
        s->pad_scheme = "gibbs (data augmentation): with unobserved padding the marginal of "
                        "(lambda, delta) is not Fourier-diagonal";
        pp_sampler_warn(s, "--sampler mtc with --boundary pad runs the gibbs chain (data "
                           "augmentation); use --boundary periodic for marginal-then-"
                           "conditional draws");
        return PP_OK;
    }
    if (!(m->sk = malloc(s->gm * sizeof(double))))
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    double cst = 0, invn = 1.0 / (double)s->gn;
    for (size_t k1 = 0; k1 < s->gh; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            m->sk[i] = 0;
            if (!(s->q[i] > 0))
                continue;
            pp_complex r = s->yhat[i] - (i == 0 ? s->otf[0] * s->mean_dc : 0.0);
            m->sk[i] = s->q[i] * (creal(r) * creal(r) + cimag(r) * cimag(r)) * invn;
            cst += pp_half_weight(k2, s->gw) * -0.5 * log(2 * PP_PI / s->q[i]);
        }
    m->cst = cst;
    return PP_OK;
}

static void mtc_release(pp_sampler *s)
{
    mtc_shared *m = s->kshared;
    if (m)
        free(m->sk);
    free(m);
    s->kshared = NULL;
}

/* ---- the (u, v) Metropolis step ---------------------------------------- */

typedef struct hyper_walk {
    int free_u, free_v, dim;
    double u, v;       /* current log lambda, log delta */
    double lm;         /* log marginal at the current state */
    double chol[3];    /* lower Cholesky factor of the proposal covariance / sc^2 */
    double logsc;      /* log of the scale factor sc */
    unsigned long n;   /* adaptation steps so far */
    unsigned long tried, accepted; /* after burn-in */
} hyper_walk;

static double log_hyper(const pp_sampler *s, double u, double v)
{
    const double *hl = s->cfg.hyper_lambda, *hd = s->cfg.hyper_delta;
    return hl[0] * u - hl[1] * exp(u) + hd[0] * v - hd[1] * exp(v);
}

static double target(const pp_sampler *s, const pp_chain *c, double u, double v, double *lm)
{
    *lm = pp_mtc_log_marginal(s, c->otf2, exp(u), exp(v));
    return *lm + log_hyper(s, u, v);
}

/* Sets the proposal from the negative Hessian at the current point when it
 * is positive definite over the free coordinates (else keeps the old). */
static void refresh_proposal(const pp_sampler *s, const pp_chain *c, hyper_walk *h)
{
    const double e = 1e-3;
    double lm, f[3][3];
    for (int a = -1; a <= 1; a++)
        for (int b = -1; b <= 1; b++)
            f[a + 1][b + 1] = target(s, c, h->u + a * e * h->free_u, h->v + b * e * h->free_v, &lm);
    double huu = -(f[2][1] - 2 * f[1][1] + f[0][1]) / (e * e);
    double hvv = -(f[1][2] - 2 * f[1][1] + f[1][0]) / (e * e);
    double huv = -(f[2][2] - f[2][0] - f[0][2] + f[0][0]) / (4 * e * e);
    if (!h->free_u) {
        if (hvv > 0 && isfinite(hvv))
            h->chol[2] = 1.0 / sqrt(hvv);
        return;
    }
    if (!h->free_v) {
        if (huu > 0 && isfinite(huu))
            h->chol[0] = 1.0 / sqrt(huu);
        return;
    }
    double det = huu * hvv - huv * huv;
    if (!(huu > 0 && hvv > 0 && det > 0 && isfinite(det)))
        return;
    /* H^-1 = [hvv, -huv; -huv, huu] / det, then its Cholesky factor. */
    double cuu = hvv / det, cuv = -huv / det, cvv = huu / det;
    h->chol[0] = sqrt(cuu);
    h->chol[1] = cuv / h->chol[0];
    h->chol[2] = sqrt(cvv - h->chol[1] * h->chol[1]);
}

static void walk_init(const pp_sampler *s, pp_chain *c, hyper_walk *h)
{
    h->free_u = !s->cfg.noise.sigma_set;
    h->free_v = !s->cfg.prior.delta_set;
    h->dim = h->free_u + h->free_v;
    h->u = log(c->lambda);
    h->v = log(c->delta);
    h->chol[0] = h->chol[2] = 0.1;
    h->chol[1] = 0;
    h->logsc = log(2.38 / sqrt(h->dim > 0 ? h->dim : 1));
    h->n = 0;
    h->tried = h->accepted = 0;
    target(s, c, h->u, h->v, &h->lm);
    if (h->dim > 0)
        refresh_proposal(s, c, h);
}

/* One Metropolis step; adapt != 0 during burn-in. */
static void walk_step(const pp_sampler *s, pp_chain *c, hyper_walk *h, int adapt)
{
    double z1 = pp_rng_normal(&c->rng), z2 = pp_rng_normal(&c->rng);
    double sc = exp(h->logsc);
    double du = h->free_u ? sc * h->chol[0] * z1 : 0;
    double dv = h->free_v ? sc * (h->free_u ? h->chol[1] * z1 + h->chol[2] * z2 : h->chol[2] * z2)
                          : 0;
    double lm, t1 = target(s, c, h->u + du, h->v + dv, &lm);
    double t0 = h->lm + log_hyper(s, h->u, h->v);
    int acc = isfinite(t1) && log(pp_rng_uniform(&c->rng)) < t1 - t0;
    if (acc) {
        h->u += du;
        h->v += dv;
        h->lm = lm;
    }
    if (adapt) {
        double goal = h->dim == 2 ? 0.35 : 0.44;
        h->logsc += (acc - goal) * pow((double)(++h->n), -0.6);
    } else {
        h->tried++;
        h->accepted += (unsigned long)acc;
    }
    c->lambda = exp(h->u);
    c->delta = exp(h->v);
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
    pp_half_noise(&c->rng, s->gh, s->gw, c->cbuf);
    pp_fused_sums f = pp_gibbs_fused_pass(s, c, 0);
    double ll = 0.5 * (double)s->gn * log(c->lambda / (2 * PP_PI)) - 0.5 * c->lambda * f.resid;
    pp_gibbs_record(s, c, &f, ll, 0);
}

static pp_status mtc_run_chain(pp_sampler *s, pp_chain *c)
{
    const mtc_shared *m = s->kshared;
    if (m->fallback)
        return pp_kernel_gibbs.run_chain(s, c);
    const pp_sampler_config *cfg = &s->cfg;
    const unsigned long total = cfg->burn + cfg->iters;
    hyper_walk h;
    walk_init(s, c, &h);
    for (unsigned long t = 0; t < total; t++) {
        int burn = t < cfg->burn;
        if (burn && t % REFRESH == REFRESH - 1 && h.dim > 0)
            refresh_proposal(s, c, &h);
        for (int j = 0; j < SUBSTEPS && h.dim > 0; j++)
            walk_step(s, c, &h, burn);
        if (c->wstate)
            pp_width_step(s, c, width_logp, NULL, &h.lm, burn ? t + 1 : 0);
        if (!(isfinite(h.lm) && isfinite(c->lambda) && c->lambda > 0 && isfinite(c->delta) &&
              c->delta > 0))
            return pp_fail(PP_ERR_NUMERIC,
                           "the marginal of (lambda, delta) is not finite at iteration %lu "
                           "(lambda=%g, delta=%g); rescale the frame or fix one with "
                           "gaussian:sigma=S or delta=D",
                           t + 1, c->lambda, c->delta);
        if (!burn && (t - cfg->burn + 1) % cfg->thin == 0)
            conditional_draw(s, c);
        if (pp_sampler_tick(s))
            return pp_fail(PP_ERR_INTERRUPTED, "sampling stopped at the caller's request");
    }
    return PP_OK;
}

const pp_kernel pp_kernel_mtc = {"mtc", mtc_prepare, mtc_run_chain, NULL, mtc_release};
