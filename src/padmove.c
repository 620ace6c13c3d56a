/* pixpost — an exact conditional refresh of the photon field on the
 * padding, for the pCN family (hmc by default) with photon noise, log
 * positivity, a stationary prior and a free level (issue 16).
 *
 * Why: with --boundary pad the level m (the grid mean of z, padding
 * included) mixed in hundreds of hmc iterations: the padding's smooth part
 * is held by the prior alone, and hmc's Fourier-diagonal reference moves it
 * by small steps (bench/NOTES.md, 2026-12-04 and 2026-12-05).
 *
 * Move: B = the padding pixels at least dmin pixels (Chebyshev, on the
 * periodic grid) from the frame, A = the rest. Under the prior
 * exp(-delta z'Qz / 2) (Q with its zero frequency 0: the flat level), z_B
 * given z_A is Gaussian (Rue & Held, Gaussian Markov Random Fields, 2005,
 * thm 2.5, which holds for an intrinsic prior as long as Q_BB is positive
 * definite: Q's null space is the constants, which are not zero on A):
 *   mu_B = -Q_BB^-1 Q_BA z_A,   covariance (delta Q_BB)^-1.
 * The proposal is a Crank-Nicolson step on that conditional,
 *   z_B' = rho z_B + (1 - rho) mu_B + sqrt(1 - rho^2) xi,
 *   xi = Q_BB^-1 (L eta)_B / sqrt(delta), eta ~ N(0, I) on the grid,
 * L = the circulant square root of Q (sqrt q(k) per frequency, so L'L = Q
 * and Q_BB = (L_.B)'(L_.B)): cov xi = Q_BB^-1 Q_BB Q_BB^-1 / delta, the
 * conditional's (the perturbation trick of Papandreou & Yuille, 2010, in
 * its exact form). The step is reversible for the prior's conditional of z_B
 * (an AR(1) about its mean), z_A is held, so for the posterior
 *   pi(z) = prior(z_A) prior(z_B | z_A) exp(-Phi(z))
 * the Metropolis-Hastings ratio is exp(Phi(z) - Phi(z')) (the data's
 * likelihood ratio: B's pixels near the frame reach the data through the
 * PSF; dmin keeps the ratio near 1). One solve covers mu_B and xi:
 *   z_B' = rho z_B + Q_BB^-1 [(1 - rho)(-Q zA0)_B + sqrt(1 - rho^2) (L eta)_B / sqrt(delta)]
 * with zA0 = z with B set to 0; the right-hand side is one c2r of the two
 * spectra combined. The solve: conjugate gradients on Q_BB (Q by FFT,
 * restricted), preconditioned by (Qr^-1)_BB, Qr = Q with q(0) replaced by
 * the smallest nonzero q (positive definite), to a relative residual of
 * PM_TOL (so the move is exact up to that tolerance); a solve that does not
 * converge in PM_MAXIT iterations rejects (counted in cg_fail, never seen).
 * The level moves with z_B: m' = mean z', u' = DFT(z' - m').
 *
 * Cost: 6 transforms (3 for the right-hand side, 1 for u', 2 for A x') plus
 * 4 per CG iteration, and a normal per grid pixel. Memory: |B| indices and
 * 5 vectors of |B| doubles per chain.
 */
#include "padmove.h"
#include "internal.h"
#include "sampler_internal.h"
#include "vmath.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define PM_TOL 1e-10  /* relative residual of the solve */
#define PM_MAXIT 2000 /* solve iterations before a rejection */

pp_status pp_padmove_create(const pp_sampler *s, size_t dmin, pp_padmove **out)
{
    *out = NULL;
    if (dmin < 1)
        dmin = 1;
    size_t nb = 0;
    for (int pass = 0; pass < 2; pass++) {
        pp_padmove *pm = *out;
        nb = 0;
        for (size_t r = 0; r < s->gh; r++)
            for (size_t cc = 0; cc < s->gw; cc++) {
                size_t dr = r < s->height ? 0 : r - s->height + 1;
                size_t dc = cc < s->width ? 0 : cc - s->width + 1;
                if (r >= s->height && s->gh - r < dr)
                    dr = s->gh - r;
                if (cc >= s->width && s->gw - cc < dc)
                    dc = s->gw - cc;
                if ((dr > dc ? dr : dc) >= dmin) {
                    if (pm)
                        pm->ib[nb] = r * s->gw + cc;
                    nb++;
                }
            }
        if (pass == 0) {
            if (nb == 0)
                return PP_OK;
            pm = calloc(1, sizeof *pm);
            if (!pm)
                return PP_ERR_NOMEM;
            pm->nb = nb;
            pm->ib = malloc(nb * sizeof *pm->ib);
            double **vec[] = {&pm->x, &pm->r, &pm->p, &pm->ap, &pm->zz};
            int bad = !pm->ib;
            for (int i = 0; i < 5; i++)
                bad |= !(*vec[i] = malloc(nb * sizeof(double)));
            *out = pm;
            if (bad) {
                pp_padmove_free(pm);
                *out = NULL;
                return PP_ERR_NOMEM;
            }
        }
    }
    return PP_OK;
}

void pp_padmove_free(pp_padmove *pm)
{
    if (!pm)
        return;
    free(pm->ib);
    free(pm->x);
    free(pm->r);
    free(pm->p);
    free(pm->ap);
    free(pm->zz);
    free(pm);
}

PP_VECTOR_CLONES static void exp_into(const double *restrict z, double *restrict x, size_t n)
{
    for (size_t i = 0; i < n; i++)
        x[i] = pp_vexp(z[i]);
}

/* out_B = (M in_B)_B, M the circulant multiplier q(k)^p (p = 1: Q; p = -1:
 * Qr^-1, q(0) taken as qmin); g (grid) and f (half spectrum) scratch. */
static void apply_b(const pp_sampler *s, const pp_padmove *pm, const double *in, double *out,
                    double p, double qmin, double *g, pp_complex *f)
{
    const double invn = 1.0 / (double)s->gn;
    memset(g, 0, s->gn * sizeof(double));
    for (size_t j = 0; j < pm->nb; j++)
        g[pm->ib[j]] = in[j];
    pp_fft_forward(s->fft, g, f);
    for (size_t i = 0; i < s->gm; i++) {
        double q = s->q[i];
        f[i] *= (p > 0 ? q : 1.0 / (q > 0 ? q : qmin)) * invn;
    }
    pp_fft_inverse(s->fft, f, g);
    for (size_t j = 0; j < pm->nb; j++)
        out[j] = g[pm->ib[j]];
}

static double dot(const double *a, const double *b, size_t n)
{
    double acc = 0;
    for (size_t i = 0; i < n; i++)
        acc += a[i] * b[i];
    return acc;
}

/* pm->x = Q_BB^-1 pm->r (pm->r overwritten): preconditioned conjugate
 * gradients from 0. Returns 1 when the relative residual reached PM_TOL. */
static int solve_b(const pp_sampler *s, pp_padmove *pm, double qmin, double *g, pp_complex *f)
{
    const size_t nb = pm->nb;
    double *x = pm->x, *r = pm->r, *p = pm->p, *ap = pm->ap, *zz = pm->zz;
    memset(x, 0, nb * sizeof(double));
    double bn = sqrt(dot(r, r, nb));
    if (!(bn > 0))
        return 1;
    apply_b(s, pm, r, zz, -1.0, qmin, g, f);
    memcpy(p, zz, nb * sizeof(double));
    double rz = dot(r, zz, nb);
    for (int it = 0; it < PM_MAXIT; it++) {
        pm->cg_iters++;
        apply_b(s, pm, p, ap, 1.0, qmin, g, f);
        double a = rz / dot(p, ap, nb);
        for (size_t j = 0; j < nb; j++) {
            x[j] += a * p[j];
            r[j] -= a * ap[j];
        }
        if (sqrt(dot(r, r, nb)) <= PM_TOL * bn)
            return 1;
        apply_b(s, pm, r, zz, -1.0, qmin, g, f);
        double rzn = dot(r, zz, nb), beta = rzn / rz;
        rz = rzn;
        for (size_t j = 0; j < nb; j++)
            p[j] = zz[j] + beta * p[j];
    }
    return 0;
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

double pp_padmove_step(const pp_sampler *s, struct pp_chain *c, pp_padmove *pm,
                       const pp_hphot_view *v, double rho)
{
    const size_t gn = s->gn, gm = s->gm, nb = pm->nb;
    const double invn = 1.0 / (double)gn, del = *v->delta;
    double qmin = INFINITY;
    for (size_t i = 0; i < gm; i++)
        if (s->q[i] > 0 && s->q[i] < qmin)
            qmin = s->q[i];
    if (!isfinite(qmin) || !(del > 0))
        return 0.0;
    const double *z = *v->z;
    double *zp = *v->zp, *g = *v->xp, *eta = *v->axp;
    pp_complex *fa = c->cbuf, *fe = c->cbuf2;
    /* right-hand side: (1 - rho)(-Q zA0)_B + sqrt(1 - rho^2) (L eta)_B / sqrt(delta) */
    memcpy(g, z, gn * sizeof(double));
    for (size_t j = 0; j < nb; j++)
        g[pm->ib[j]] = 0;
    pp_fft_forward(s->fft, g, fa);
    for (size_t i = 0; i < gn; i++)
        eta[i] = pp_rng_normal(&c->rng);
    pp_fft_forward(s->fft, eta, fe);
    const double a1 = -(1.0 - rho), a2 = sqrt(1.0 - rho * rho) / sqrt(del);
    for (size_t i = 0; i < gm; i++)
        fa[i] = (a1 * s->q[i] * fa[i] + a2 * sqrt(s->q[i]) * fe[i]) * invn;
    pp_fft_inverse(s->fft, fa, g);
    for (size_t j = 0; j < nb; j++)
        pm->r[j] = g[pm->ib[j]];
    if (!solve_b(s, pm, qmin, g, fa)) {
        pm->cg_fail++;
        return 0.0;
    }
    memcpy(zp, z, gn * sizeof(double));
    for (size_t j = 0; j < nb; j++)
        zp[pm->ib[j]] = rho * z[pm->ib[j]] + pm->x[j];
    /* u', m' */
    pp_complex *up = *v->up;
    memcpy(g, zp, gn * sizeof(double));
    pp_fft_forward(s->fft, g, up);
    const double mn = creal(up[0]) * invn;
    up[0] = 0;
    double *xp = *v->xp, *axp = *v->axp;
    exp_into(zp, xp, gn);
    pp_fft_forward(s->fft, xp, fe);
    for (size_t i = 0; i < gm; i++)
        fe[i] *= s->otf[i] * invn;
    pp_fft_inverse(s->fft, fe, axp);
    double phin = v->phi_of(v->ctx, axp);
    double loga = *v->phi - phin;
    if (!isfinite(phin) || !isfinite(loga))
        return 0.0;
    double alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!(pp_rng_uniform(&c->rng) < alpha))
        return alpha;
    swap_c(v->u, v->up);
    swap_d(v->z, v->zp);
    swap_d(v->x, v->xp);
    swap_d(v->ax, v->axp);
    *v->phi = phin;
    *v->m = mn;
    return alpha;
}
