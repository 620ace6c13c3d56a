/* pixpost — moves that let the pCN family's global hyperparameters (delta
 * and the free level m) mix for the photon models with a stationary prior.
 *
 * Why they are needed (issue 16, measured in bench/NOTES.md): with
 * --boundary pad the padding pixels are unobserved, so there the field is
 * held by the prior alone, while hmc's Fourier-diagonal reference (and
 * delta_move's frequency weights) assume the same Fisher information
 * everywhere. The padding's smooth part then moves by small steps, and
 * delta and m, which are tied to it, drift: on a 256^2 camera frame the
 * level's tau was ~2000 iterations and delta took over 1000 iterations to
 * reach equilibrium (periodic: tau 10 and 53). Measured effect (bench/
 * NOTES.md, 2026-12-04): the level's tau ~270, delta's approach faster,
 * delta's tau at equilibrium unchanged (~20-30) at 1.3-1.65x the CPU.
 *
 * The cure is a non-centred parameterisation in PIXEL space, where the data
 * are missing or weak (Papaspiliopoulos, Roberts & Skold, Statist. Sci. 22,
 * 2007; the interweaving argument of Yu & Meng, JCGS 20, 2011: the centred
 * Gibbs draw of delta in sampler_pcn.c is kept, these moves add the
 * non-centred side), with a weight omega_i in [0, 1] per pixel: the prior's
 * share of the local precision of z there, omega = f0 / (f0 + f_i), f_i the
 * local Fisher information of the data for z_i at a mean field, f0 = 0.1 dref
 * q_min (q_min: the prior precision of the smoothest free mode), smoothed by a
 * Gaussian of PP_HPHOT_SMOOTH pixels so that the moved direction is smooth
 * (a rough one would pay in the prior). omega is ~1 in the padding beyond
 * the PSF's reach, ~0 on bright observed pixels, between on dark ones.
 *
 * Moves (each a Metropolis-Hastings step with a deterministic map, so the
 * acceptance ratio is target ratio x |Jacobian|; the references c, omega,
 * fw are frozen after burn-in, so each map is fixed):
 *  1. delta: eps ~ N(0, dstep^2) (clamped to +-1, symmetrically), delta' =
 *     delta e^eps, ls = -eps/2 (= log sqrt(delta/delta')), and the field by
 *       z' = T(z) = c + E(ls/2) exp(ls S) E(ls/2) (z - c)
 *     with E(a) = diag e^(a omega) (per pixel, centre c) and
 *     S = R Fw R, R = diag sqrt(1 - omega), Fw the Fourier multiplier
 *     fw(k) = dref q / (dref q + I_F |A|^2) of sampler_pcn.c's delta_move
 *     (0 at the DC when the level is free). The exponent is thus about
 *     omega(x) + (1 - omega(x)) fw(k): 1 (fully non-centred) in the
 *     padding at every frequency, fw(k) on observed pixels. (A first
 *     version composed the pixel and frequency maps directly; their
 *     exponents added, the padding's high frequencies were scaled twice
 *     and the step adapted small.) T is linear about c with
 *       log |det| = ls (sum_i omega_i + tr S),
 *       tr S = sum_i (1 - omega_i) (1/N) sum_k fw(k)
 *     (Fw is circulant: its diagonal is the mean of fw over the full
 *     spectrum). T for -eps is exactly T^-1 (exp(-ls S) = exp(ls S)^-1 and
 *     the palindrome reverses), so (delta, z) -> (delta e^eps, T(z)) is
 *     undone by -eps, which has the same density, and the ratio is
 *       pi(z', delta') / pi(z, delta) * (delta'/delta) * |det|
 *     (delta'/delta: the log scale's Jacobian, the "+ a eps" below with the
 *     Gamma(a, b) hyperprior). exp(ls S) v by its Taylor series until a
 *     term is below 1e-17 of the sum (||S|| <= 1, |ls| <= 0.5), so T for
 *     -eps inverts T to rounding.
 *  2. level: dm ~ N(0, lstep^2), z' = z + dm h with h = omega / mean
 *     omega, so m' = m + dm (mean h = 1): a translation (Jacobian 1) with a
 *     symmetric proposal; the data pin z where omega ~ 0, so the level
 *     moves where nothing holds it.
 * In the target, z = m + u has density delta^(rank/2) exp(-delta u'Qu/2)
 * exp(-Phi(z)) p(delta) with respect to Lebesgue measure on z (the flat
 * level is z's constant direction, Q's null space); (m, u) is a fixed linear
 * image of z, so the Jacobians above hold in the sampler's coordinates.
 * tests/ref_hyper_photon.py checks the result against a numpy chain and
 * fails (221 se) with the sum-of-omega term left out.
 *
 * Cost per iteration: move 1 three transforms (r2c for u'; r2c + c2r for
 * A x') plus 2 per Taylor term (about 8-10 terms),
 * about 4 grid passes per term; move 2 two transforms (A x'), 3 grid and 2
 * half-spectrum passes. Measured: 1.3-1.65x the CPU per hmc iteration
 * (bench/NOTES.md, 2026-12-04). The references cost 7 transforms, twice per
 * burn-in. Memory: pp_hphot, 4 grids and 1.5 half spectra per chain.
 */
#include "hyper_photon.h"
#include "internal.h"
#include "sampler_internal.h"
#include "spectral.h"
#include "vmath.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Smoothing of omega (pixels, Gaussian sd): wide enough that the level
 * move's direction costs little prior energy, narrow next to a frame. Rule
 * of thumb (the default matern range, 6 px); other values not tried. */
#define PP_HPHOT_SMOOTH 6.0
/* omega = f0 / (f0 + f) with f0 = PP_HPHOT_F0 dref q_min: a pixel counts as
 * the prior's when its data hold the smoothest free mode less than a tenth
 * as much as the prior does (rule of thumb, tuned on the demo frame, whose
 * dark background at 2-5 photons/px is data-dominated 3:1 there). */
#define PP_HPHOT_F0 0.1
#define PP_HPHOT_TOL 1e-17 /* exp_s: relative size of the last Taylor term */
#define PP_HPHOT_TERMS 40

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

pp_status pp_hphot_create(size_t gn, size_t gm, pp_hphot **out)
{
    pp_hphot *hp = calloc(1, sizeof *hp);
    *out = NULL;
    if (!hp)
        return PP_ERR_NOMEM;
    hp->c = pp_fft_alloc_real(gn);
    hp->om = pp_fft_alloc_real(gn);
    hp->rw = pp_fft_alloc_real(gn);
    hp->h = pp_fft_alloc_real(gn);
    hp->hh = pp_fft_alloc_complex(gm);
    hp->fw = malloc(gm * sizeof(double));
    if (!hp->c || !hp->om || !hp->rw || !hp->h || !hp->hh || !hp->fw) {
        pp_hphot_free(hp);
        return PP_ERR_NOMEM;
    }
    hp->dstep = 0.02;
    hp->lstep = 0.01;
    *out = hp;
    return PP_OK;
}

size_t pp_hphot_state(pp_hphot *hp, size_t gn, size_t gm, pp_region *out)
{
    size_t n = 0, g = gn * sizeof(double);
    out[n++] = (pp_region){hp->c, g};
    out[n++] = (pp_region){hp->om, g};
    out[n++] = (pp_region){hp->rw, g};
    out[n++] = (pp_region){hp->h, g};
    out[n++] = (pp_region){hp->hh, gm * sizeof(pp_complex)};
    out[n++] = (pp_region){hp->fw, gm * sizeof(double)};
    out[n++] = (pp_region){&hp->sum_om, sizeof hp->sum_om};
    out[n++] = (pp_region){&hp->jac_f, sizeof hp->jac_f};
    out[n++] = (pp_region){&hp->dstep, sizeof hp->dstep};
    out[n++] = (pp_region){&hp->lstep, sizeof hp->lstep};
    out[n++] = (pp_region){&hp->nmean, sizeof hp->nmean};
    out[n++] = (pp_region){&hp->level_on, sizeof hp->level_on};
    return n;
}

void pp_hphot_free(pp_hphot *hp)
{
    if (!hp)
        return;
    pp_fft_free_buffer(hp->c);
    pp_fft_free_buffer(hp->om);
    pp_fft_free_buffer(hp->rw);
    pp_fft_free_buffer(hp->h);
    pp_fft_free_buffer(hp->hh);
    free(hp->fw);
    free(hp);
}

/* ax = A x on the grid (one r2c, one c2r; c->cbuf2 is scratch). */
static void blur(const pp_sampler *s, pp_chain *c, const double *x, double *ax)
{
    const double invn = 1.0 / (double)s->gn;
    pp_fft_forward(s->fft, x, c->cbuf2);
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf2[i] *= s->otf[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf2, ax);
}

PP_VECTOR_CLONES static void exp_into(const double *restrict z, double *restrict x, size_t n)
{
    for (size_t i = 0; i < n; i++)
        x[i] = pp_vexp(z[i]);
}

void pp_hphot_reference(const pp_sampler *s, pp_chain *c, pp_hphot *hp, const pp_hphot_view *v,
                        const double *cz, double shift, double dref, double fi, int free_dc)
{
    const size_t gn = s->gn, gm = s->gm;
    const double invn = 1.0 / (double)gn;
    double *x = *v->xp, *ax = *v->axp, *r = c->rbuf;
    if (cz != hp->c)
        memcpy(hp->c, cz, gn * sizeof(double));
    hp->nmean = 0;
    /* local Fisher information of z_i: x_i^2 sum_j psf(j - i)^2 / mu_j over
     * the observed j, taken as x_i^2 S2 (A' r)_i with r = 1/mu on the
     * observed pixels (0 elsewhere) and S2 = sum psf^2 (Parseval) */
    exp_into(hp->c, x, gn);
    blur(s, c, x, ax);
    memset(r, 0, gn * sizeof(double));
    for (size_t i = 0; i < s->gn; i++) { /* observed pixels lie in the frame box */
        if (!s->obs[i]) /* padding or a missing pixel (NaN): no data there */
            continue;
        r[i] = 1.0 / fmax(ax[i] + shift, 1e-12);
    }
    double s2 = 0, qmin = INFINITY;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            s2 += pp_half_weight(k2, s->gw) * s->otf2[i];
            if (s->q[i] > 0 && s->q[i] < qmin)
                qmin = s->q[i];
        }
    s2 *= invn;
    pp_fft_forward(s->fft, r, c->cbuf);
    for (size_t i = 0; i < gm; i++)
        c->cbuf[i] *= conj(s->otf[i]) * invn;
    pp_fft_inverse(s->fft, c->cbuf, r);
    const double f0 = PP_HPHOT_F0 * dref * (isfinite(qmin) ? qmin : 1.0);
    for (size_t i = 0; i < gn; i++) {
        double f = x[i] * x[i] * s2 * fmax(r[i], 0.0);
        hp->om[i] = f0 / (f0 + f);
    }
    /* smooth omega: Gaussian of sd PP_HPHOT_SMOOTH pixels (a volume: voxels,
     * the same sd in slices along z) */
    const double g = 2.0 * PP_PI * PP_PI * PP_HPHOT_SMOOTH * PP_HPHOT_SMOOTH;
    pp_fft_forward(s->fft, hp->om, c->cbuf);
    for (size_t kr = 0; kr < s->grows; kr++) {
        size_t kz = kr / s->gh, k1 = kr % s->gh;
        double fz = (double)(kz <= s->gd / 2 ? kz : s->gd - kz) / (double)s->gd;
        double f1 = (double)(k1 <= s->gh / 2 ? k1 : s->gh - k1) / (double)s->gh;
        double fz2 = fz * fz; /* 0 for a frame: the sum below is the 2-D one */
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            double f2 = (double)k2 / (double)s->gw;
            c->cbuf[kr * s->gwh + k2] *= exp(-g * (fz2 + f1 * f1 + f2 * f2)) * invn;
        }
    }
    pp_fft_inverse(s->fft, c->cbuf, hp->om);
    double sum = 0;
    for (size_t i = 0; i < gn; i++) {
        hp->om[i] = fmin(1.0, fmax(0.0, hp->om[i]));
        hp->rw[i] = sqrt(1.0 - hp->om[i]);
        sum += hp->om[i];
    }
    hp->sum_om = sum;
    /* the level direction: only when the level is free and omega is not ~0 */
    hp->level_on = free_dc && sum > 1e-3 * (double)gn;
    if (hp->level_on) {
        for (size_t i = 0; i < gn; i++)
            hp->h[i] = hp->om[i] * ((double)gn / sum);
        pp_fft_forward(s->fft, hp->h, hp->hh);
        hp->hh[0] = 0;
    }
    /* frequency weights, as sampler_pcn.c's delta_move */
    double jac = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            double pq = dref * s->q[i];
            double w = (i == 0 && free_dc) || !(pq > 0) ? 0.0 : pq / (pq + fi * s->otf2[i]);
            hp->fw[i] = w;
            jac += pp_half_weight(k2, s->gw) * w;
        }
    hp->jac_f = jac * ((double)gn - sum) / (double)gn; /* tr S = sum_i rw_i^2 (Fw)_ii */
}

void pp_hphot_add_mean(const pp_sampler *s, pp_hphot *hp, const double *z)
{
    double w = 1.0 / (double)(++hp->nmean);
    for (size_t i = 0; i < s->gn; i++)
        hp->c[i] += w * (z[i] - hp->c[i]);
}

/* out = S in = R IDFT(fw DFT(R in)) / N (R = diag sqrt(1 - omega)); tmp
 * (grid) is scratch; in may alias neither. Two transforms. */
static void apply_s(const pp_sampler *s, pp_chain *c, const pp_hphot *hp, const double *in,
                    double *tmp, double *out)
{
    const double invn = 1.0 / (double)s->gn;
    for (size_t i = 0; i < s->gn; i++)
        tmp[i] = hp->rw[i] * in[i];
    pp_fft_forward(s->fft, tmp, c->cbuf);
    for (size_t i = 0; i < s->gm; i++)
        c->cbuf[i] *= hp->fw[i] * invn;
    pp_fft_inverse(s->fft, c->cbuf, out);
    for (size_t i = 0; i < s->gn; i++)
        out[i] *= hp->rw[i];
}

/* v <- exp(ls S) v by its Taylor series, summed until a term's largest
 * entry is below PP_HPHOT_TOL times the sum's (||S|| <= 1, so with |ls| <=
 * 0.5 the remainder is below the last term); at most PP_HPHOT_TERMS terms.
 * term and tmp are scratch grids. 2 transforms per term. */
static void exp_s(const pp_sampler *s, pp_chain *c, const pp_hphot *hp, double ls, double *v,
                  double *term, double *tmp)
{
    memcpy(term, v, s->gn * sizeof(double));
    double vmax = 0;
    for (size_t i = 0; i < s->gn; i++)
        vmax = fmax(vmax, fabs(v[i]));
    for (int n = 1; n <= PP_HPHOT_TERMS; n++) {
        apply_s(s, c, hp, term, tmp, term);
        double f = ls / (double)n, tmax = 0;
        for (size_t i = 0; i < s->gn; i++) {
            term[i] *= f;
            v[i] += term[i];
            tmax = fmax(tmax, fabs(term[i]));
        }
        if (!(tmax > PP_HPHOT_TOL * vmax))
            break;
    }
}

/* The Metropolis decision of both moves: *alpha the acceptance probability
 * (0 when the proposal's likelihood or ratio is not finite, and then no
 * uniform is drawn); on acceptance the proposal (up, zp, xp, axp) becomes
 * the state and *v->phi its likelihood, and 1 is returned. */
static int accept(pp_chain *c, const pp_hphot_view *v, double loga, double phin, double *alpha)
{
    *alpha = 0.0;
    if (!isfinite(phin) || !isfinite(loga))
        return 0;
    *alpha = loga >= 0 ? 1.0 : exp(loga);
    if (!(pp_rng_uniform(&c->rng) < *alpha))
        return 0;
    swap_c(v->u, v->up);
    swap_d(v->z, v->zp);
    swap_d(v->x, v->xp);
    swap_d(v->ax, v->axp);
    *v->phi = phin;
    return 1;
}


double pp_hphot_delta_move(const pp_sampler *s, struct pp_chain *c, const pp_hphot *hp,
                           const pp_hphot_view *v, const double hyper[2], double rank, int free_dc,
                           double m_fixed)
{
    const size_t gn = s->gn;
    const double invn = 1.0 / (double)gn, del = *v->delta;
    double eps = hp->dstep * pp_rng_normal(&c->rng);
    eps = fmax(-1.0, fmin(1.0, eps)); /* |ls| <= 0.5 for exp_s (a symmetric clamp) */
    const double dn = del * exp(eps), ls = -0.5 * eps; /* log s, s = sqrt(delta/delta') */
    const double *z = *v->z;
    double *zp = *v->zp, *xp = *v->xp, *axp = *v->axp;
    pp_complex *up = *v->up;
    /* zp = c + E(ls/2) exp(ls S) E(ls/2) (z - c), E(a) = diag e^(a omega) */
    for (size_t i = 0; i < gn; i++)
        zp[i] = exp(0.5 * ls * hp->om[i]) * (z[i] - hp->c[i]);
    exp_s(s, c, hp, ls, zp, xp, axp);
    for (size_t i = 0; i < gn; i++)
        zp[i] = hp->c[i] + exp(0.5 * ls * hp->om[i]) * zp[i];
    /* u', m' */
    double mn = m_fixed, m0 = free_dc ? 0.0 : m_fixed;
    for (size_t i = 0; i < gn; i++)
        xp[i] = zp[i] - m0;
    pp_fft_forward(s->fft, xp, up);
    if (free_dc) {
        mn = creal(up[0]) * invn;
        up[0] = 0;
    }
    exp_into(zp, xp, gn);
    blur(s, c, xp, axp);
    double phin = v->phi_of(v->ctx, axp);
    double quad = v->quad_of(v->ctx, *v->u), quadn = v->quad_of(v->ctx, up);
    double ljac = ls * (hp->sum_om + hp->jac_f);
    double loga = *v->phi - phin + 0.5 * rank * eps - 0.5 * (dn * quadn - del * quad) + ljac +
                  hyper[0] * eps - hyper[1] * (dn - del);
    double alpha;
    if (accept(c, v, loga, phin, &alpha)) {
        *v->m = mn;
        *v->delta = dn;
    }
    return alpha;
}

double pp_hphot_level_move(const pp_sampler *s, pp_chain *c, const pp_hphot *hp,
                           const pp_hphot_view *v)
{
    if (!hp->level_on)
        return 1.0;
    const size_t gn = s->gn, gm = s->gm;
    const double dm = hp->lstep * pp_rng_normal(&c->rng), del = *v->delta;
    double *z = *v->z, *zp = *v->zp, *xp = *v->xp;
    pp_complex *u = *v->u, *up = *v->up;
    for (size_t i = 0; i < gn; i++)
        zp[i] = z[i] + dm * hp->h[i];
    for (size_t i = 0; i < gm; i++)
        up[i] = u[i] + dm * hp->hh[i];
    exp_into(zp, xp, gn);
    blur(s, c, xp, *v->axp);
    double phin = v->phi_of(v->ctx, *v->axp);
    double quad = v->quad_of(v->ctx, u), quadn = v->quad_of(v->ctx, up);
    double loga = *v->phi - phin - 0.5 * del * (quadn - quad);
    double alpha;
    if (accept(c, v, loga, phin, &alpha))
        *v->m += dm;
    return alpha;
}
