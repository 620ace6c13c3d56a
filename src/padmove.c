/* pixpost — an exact conditional refresh of the photon field on the
 * padding, for the pCN family (hmc by default) with photon noise, log
 * positivity, a stationary prior and a free level (issue 16).
 *
 * Why: with --boundary pad the level m (the grid mean of z, padding
 * included) mixed in hundreds of hmc iterations: the padding's smooth part
 * is held by the prior alone, and hmc's Fourier-diagonal reference moves it
 * by small steps (bench/NOTES.md, 2026-12-04 and 2026-12-05).
 *
 * Blocks: the padding pixels at least dmin pixels (Chebyshev, on the
 * periodic grid) from the frame are two strips: B0, the rows
 * h + dmin - 1 .. gh - dmin across the whole width, and B1, the columns
 * w + dmin - 1 .. gw - dmin across the whole height (h x w the frame at the
 * grid's origin, gh x gw the grid; they share the corner). B = B0 u B1 is
 * refreshed by one Metropolis-Hastings step, the rest (A) held.
 * Under the prior exp(-delta z'Qz / 2) (Q with its zero frequency 0: the
 * flat level), z_B given z_A is Gaussian (Rue & Held, Gaussian Markov
 * Random Fields, 2005, thm 2.5, which holds for an intrinsic prior as long
 * as Q_BB is positive definite: Q's null space is the constants, which are
 * not zero on A):
 *   mu_B = -Q_BB^-1 Q_BA z_A,   covariance (delta Q_BB)^-1.
 * The proposal is a Crank-Nicolson step on that conditional,
 *   z_B' = rho z_B + (1 - rho) mu_B + sqrt(1 - rho^2) xi,  xi ~ N(0, (delta Q_BB)^-1),
 * reversible for the prior's conditional of z_B (an AR(1) about its mean);
 * z_A is held, so for the posterior pi(z) = prior(z_A) prior(z_B | z_A)
 * exp(-Phi(z)) the ratio is exp(Phi(z) - Phi(z')) (the data's likelihood
 * ratio: B's pixels near the frame reach the data through the PSF; dmin
 * keeps the ratio near 1).
 *
 * The two strips are refreshed as one block (two blocks in turn, each
 * exact, left delta with 3-5x its iterations per effective draw on the
 * demo frame: the padding's joint smooth modes mixed slowly between them).
 * One solve covers mu_B and xi:
 *   z_B' = rho z_B + Q_BB^-1 [(1 - rho)(-Q zA0)_B + sqrt(1 - rho^2) (L eta)_B / sqrt(delta)]
 * with zA0 = z with B set to 0, eta ~ N(0, I) on the grid and L the
 * circulant square root of Q (sqrt q(k) per frequency, so L'L = Q and
 * Q_BB = (L_.B)'(L_.B): cov xi = Q_BB^-1 / delta, the perturbation trick of
 * Papandreou & Yuille, 2010, in its exact form); the right-hand side is one
 * c2r of the two spectra combined. The solve: conjugate gradients on Q_BB
 * (Q by FFT, restricted) to a relative residual of PM_TOL (the move is
 * exact up to that tolerance; a solve that does not converge in PM_MAXIT
 * iterations rejects, counted in cg_fail), preconditioned by the strips'
 * own inverses, summed (additive Schwarz with the corner as the overlap):
 * a strip runs the whole way round the periodic grid along its length L
 * (gw for B0, gh for B1) and is n pixels across, so its own Q_SS is
 * circulant along it: the 1-D DFT along the strip (F, unnormalised) makes it
 * block diagonal, Q_SS = F^-1 diag_k T(k) F, with T(k) the n x n Toeplitz
 * matrix T(k)[i][j] = t_k(i - j),
 *   t_k(d) = (1/L') sum_k' q(k', k) cos(2 pi k' d / L')
 * (L' the grid's side across the strip, k' its frequencies; real because
 * our priors' symbols are even in each axis, checked when made), and
 * Q_SS^-1 v = F^-1 (T(k)^-1 (F v)(k)) by a Cholesky factor of each T(k),
 * made once (T does not depend on delta), within T(k)'s band (PM_BAND_TOL;
 * a matern prior with integer alpha has band alpha except at k = 0, where
 * the free level's q(0) = 0 makes T dense). With it CG takes ~10
 * iterations on the demo frame instead of ~30 with the grid's own inverse
 * (bench/NOTES.md, 2026-12-05, stop 32), and an iteration costs 2 grid
 * transforms instead of 4. A band wider than PM_MAX_ACROSS is cut into
 * several strips.
 * The level moves with z_B: m' = mean z', u' = DFT(z' - m').
 *
 * Cost: 6 grid transforms (3 for the right-hand side, 1 for u', 2 for
 * A x') and a normal per grid pixel, plus per CG iteration 2 grid
 * transforms and, per strip, 2 of its 1-D batches and about
 * 2 (L/2 + 1) n (band + 1) for the triangular solves. Memory per chain
 * slot: B's indices and 5 vectors of |B| doubles; per strip its factors,
 * (L/2 + 1) n^2 doubles (0.6 MB on the demo frame's 224 x 192 grid; n at
 * most PM_MAX_ACROSS, src/padmove.h), its positions in B and 2 strip
 * buffers.
 */
#include "padmove.h"
#include "internal.h"
#include "sampler_internal.h"
#include "vmath.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* |sine part| / t_k(0) beyond which Q is not even in each axis */
#define PM_EVEN_TOL 1e-9
#define PM_TOL 1e-10  /* relative residual of the solve */
#define PM_MAXIT 2000 /* solve iterations before a rejection */
/* t_k(d) below this fraction of t_k(0) is left out of the preconditioner's
 * T(k) (a banded prior, matern with integer alpha or gmrf1/2, has exact
 * zeros there up to rounding; dropping more would only weaken the
 * preconditioner, never the move's exactness, which the CG solve holds) */
#define PM_BAND_TOL 1e-13

static void strip_free(pp_padstrip *st)
{
    free(st->pos);
    free(st->chol);
    free(st->band);
    pp_fft_free(st->fft);
    pp_fft_free_buffer(st->w);
    pp_fft_free_buffer(st->rf);
}

/* q at the grid frequency (kr, kc), kc over the whole width (the half
 * spectrum holds kc <= gw/2; q(-k) = q(k) gives the rest). */
static double q_at(const pp_sampler *s, size_t kr, size_t kc)
{
    size_t hw = s->gw / 2 + 1;
    if (kc < hw)
        return s->q[kr * hw + kc];
    return s->q[((s->gh - kr) % s->gh) * hw + (s->gw - kc)];
}

/* t[d] = t_k(d), d < n, from the symbol qk[k'] across the strip (the
 * opening comment's sum; cs, sn: cos and sin of 2 pi m / across). Returns
 * the largest |sine part| (0 for a symbol even across the strip). */
static double toeplitz_column(const double *qk, const double *cs, const double *sn,
                              size_t across, size_t n, double *t)
{
    double odd = 0;
    for (size_t d = 0; d < n; d++) {
        double ac = 0, as = 0;
        for (size_t kk = 0; kk < across; kk++) {
            size_t m = kk * d % across;
            ac += qk[kk] * cs[m];
            as += qk[kk] * sn[m];
        }
        t[d] = ac / (double)across;
        odd = fmax(odd, fabs(as) / (double)across);
    }
    return odd;
}

/* c (n x n, lower triangle, row-major, zero beyond the band) = the Cholesky
 * factor of the symmetric Toeplitz matrix of t, within its band (entries
 * below PM_BAND_TOL t[0] left out; a band has no fill). *band: the band.
 * Returns -1 when the matrix is not positive definite. */
static int band_cholesky(const double *t, size_t n, double *c, size_t *band)
{
    size_t b = 0;
    for (size_t d = 1; d < n; d++)
        if (fabs(t[d]) > PM_BAND_TOL * t[0])
            b = d;
    *band = b;
    for (size_t i = 0; i < n; i++) {
        size_t lo = i > b ? i - b : 0;
        for (size_t j = lo; j <= i; j++) {
            double v = t[i - j];
            for (size_t l = lo; l < j; l++)
                v -= c[i * n + l] * c[j * n + l];
            if (i > j)
                c[i * n + j] = v / c[j * n + j];
            else if (v > 0)
                c[i * n + i] = sqrt(v);
            else
                return -1;
        }
    }
    return 0;
}

/* Strip `axis` (0: rows first..first+n-1 across the width; 1: those columns
 * across the height): indices, factors, plans and buffers. */
static pp_status strip_make(const pp_sampler *s, const size_t *where, int axis, size_t first,
                            size_t n, pp_padstrip *st)
{
    const size_t len = axis == 0 ? s->gw : s->gh, across = axis == 0 ? s->gh : s->gw;
    const size_t hl = len / 2 + 1;
    st->n = n;
    st->len = len;
    st->pos = malloc(n * len * sizeof *st->pos);
    st->chol = calloc(hl * n * n, sizeof *st->chol);
    st->band = malloc(hl * sizeof *st->band);
    double *cs = malloc(across * sizeof *cs), *sn = malloc(across * sizeof *sn);
    double *qk = malloc(across * sizeof *qk), *t = malloc(n * sizeof *t);
    st->w = pp_fft_alloc_real(n * len);
    st->rf = pp_fft_alloc_complex(n * hl);
    pp_status rc = PP_OK;
    if (!st->pos || !st->chol || !st->band || !cs || !sn || !qk || !t || !st->w || !st->rf)
        rc = PP_ERR_NOMEM;
    if (rc == PP_OK)
        rc = pp_fft_create_rows(n, len, s->cfg.fft_effort, &st->fft);
    if (rc != PP_OK)
        goto done;
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < len; j++)
            st->pos[i * len + j] = where[axis == 0 ? (first + i) * s->gw + j : j * s->gw + first + i];
    for (size_t m = 0; m < across; m++) {
        cs[m] = cos(2 * PP_PI * (double)m / (double)across);
        sn[m] = sin(2 * PP_PI * (double)m / (double)across);
    }
    for (size_t k = 0; k < hl; k++) {
        for (size_t kk = 0; kk < across; kk++) /* the symbol across, at frequency k along */
            qk[kk] = axis == 0 ? q_at(s, kk, k) : q_at(s, k, kk);
        double odd = toeplitz_column(qk, cs, sn, across, n, t);
        if (!(t[0] > 0) || odd > PM_EVEN_TOL * t[0]) {
            rc = pp_fail(PP_ERR_NUMERIC, "padding refresh: the prior is not even in each axis");
            break;
        }
        if (band_cholesky(t, n, st->chol + k * n * n, &st->band[k])) {
            rc = pp_fail(PP_ERR_NUMERIC, "padding refresh: the prior's conditional on the "
                                         "padding is not positive definite");
            break;
        }
    }
done:
    free(cs);
    free(sn);
    free(qk);
    free(t);
    return rc;
}

pp_status pp_padmove_create(const pp_sampler *s, size_t dmin, pp_padmove **out)
{
    *out = NULL;
    if (dmin < 1)
        dmin = 1;
    /* B: rows (or columns) r with min(r - h + 1, gh - r) >= dmin */
    size_t ext[2] = {s->gh, s->gw}, fr[2] = {s->height, s->width}, first[2], last[2];
    int on[2];
    for (int a = 0; a < 2; a++) {
        first[a] = fr[a] + dmin - 1;
        last[a] = ext[a] >= dmin ? ext[a] - dmin : 0;
        on[a] = ext[a] > fr[a] && ext[a] >= dmin && last[a] >= first[a];
    }
    if (!on[0] && !on[1])
        return PP_OK;
    pp_padmove *pm = calloc(1, sizeof *pm);
    size_t *where = malloc(s->gn * sizeof *where);
    if (!pm || !where) {
        free(pm);
        free(where);
        return PP_ERR_NOMEM;
    }
    for (size_t r = 0; r < s->gh; r++)
        for (size_t cc = 0; cc < s->gw; cc++) {
            int in = (on[0] && r >= first[0] && r <= last[0]) ||
                     (on[1] && cc >= first[1] && cc <= last[1]);
            where[r * s->gw + cc] = in ? pm->nb++ : SIZE_MAX;
        }
    pp_status rc = PP_OK;
    pm->ib = malloc(pm->nb * sizeof *pm->ib);
    double **vec[] = {&pm->x, &pm->r, &pm->p, &pm->ap, &pm->zz};
    for (int i = 0; i < 5; i++)
        if (!(*vec[i] = malloc(pm->nb * sizeof(double))))
            rc = PP_ERR_NOMEM;
    if (!pm->ib)
        rc = PP_ERR_NOMEM;
    for (size_t g = 0; g < s->gn && rc == PP_OK; g++)
        if (where[g] != SIZE_MAX)
            pm->ib[where[g]] = g;
    size_t nstrip = 0; /* strips of at most PM_MAX_ACROSS across */
    for (int axis = 0; axis < 2; axis++)
        if (on[axis])
            nstrip += (last[axis] - first[axis]) / PM_MAX_ACROSS + 1;
    pm->st = calloc(nstrip, sizeof *pm->st);
    if (!pm->st)
        rc = PP_ERR_NOMEM;
    for (int axis = 0; axis < 2 && rc == PP_OK; axis++)
        for (size_t f = first[axis]; on[axis] && f <= last[axis] && rc == PP_OK;
             f += PM_MAX_ACROSS) {
            size_t n = last[axis] - f + 1 < PM_MAX_ACROSS ? last[axis] - f + 1 : PM_MAX_ACROSS;
            rc = strip_make(s, where, axis, f, n, &pm->st[pm->ns++]);
        }
    free(where);
    if (rc != PP_OK) {
        pp_padmove_free(pm);
        return rc;
    }
    *out = pm;
    return PP_OK;
}

void pp_padmove_free(pp_padmove *pm)
{
    if (!pm)
        return;
    for (int i = 0; i < pm->ns; i++)
        strip_free(&pm->st[i]);
    free(pm->st);
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

/* zz += (Q_SS^-1 r_S) on strip st's pixels (r, zz over B). */
static void strip_inverse(const pp_padstrip *st, const double *r, double *zz)
{
    const size_t n = st->n, len = st->len, hl = len / 2 + 1;
    for (size_t j = 0; j < n * len; j++)
        st->w[j] = r[st->pos[j]];
    pp_fft_forward(st->fft, st->w, st->rf);
    pp_complex y[PM_MAX_ACROSS];
    for (size_t k = 0; k < hl; k++) {
        const double *ch = st->chol + k * n * n;
        const size_t b = st->band[k];
        for (size_t i = 0; i < n; i++) { /* C^-1 */
            pp_complex v = st->rf[i * hl + k];
            for (size_t j = i > b ? i - b : 0; j < i; j++)
                v -= ch[i * n + j] * y[j];
            y[i] = v / ch[i * n + i];
        }
        for (size_t i = n; i-- > 0;) { /* C^-T */
            pp_complex v = y[i];
            for (size_t j = i + 1; j < n && j <= i + b; j++)
                v -= ch[j * n + i] * y[j];
            y[i] = v / ch[i * n + i];
        }
        for (size_t i = 0; i < n; i++)
            st->rf[i * hl + k] = y[i] / (double)len;
    }
    pp_fft_inverse(st->fft, st->rf, st->w);
    for (size_t j = 0; j < n * len; j++)
        zz[st->pos[j]] += st->w[j];
}

/* The strips' inverses summed: symmetric positive definite on B. */
static void precondition(const pp_padmove *pm, const double *r, double *zz)
{
    memset(zz, 0, pm->nb * sizeof(double));
    for (int i = 0; i < pm->ns; i++)
        strip_inverse(&pm->st[i], r, zz);
}

/* out = (Q in_B)_B; g (grid) and f (half spectrum) scratch. */
static void apply_q(const pp_sampler *s, const pp_padmove *pm, const double *in, double *out,
                    double *g, pp_complex *f)
{
    const double invn = 1.0 / (double)s->gn;
    memset(g, 0, s->gn * sizeof(double));
    for (size_t j = 0; j < pm->nb; j++)
        g[pm->ib[j]] = in[j];
    pp_fft_forward(s->fft, g, f);
    for (size_t i = 0; i < s->gm; i++)
        f[i] *= s->q[i] * invn;
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
static int solve_b(const pp_sampler *s, pp_padmove *pm, double *g, pp_complex *f)
{
    const size_t nb = pm->nb;
    double *x = pm->x, *r = pm->r, *p = pm->p, *ap = pm->ap, *zz = pm->zz;
    memset(x, 0, nb * sizeof(double));
    double bn = sqrt(dot(r, r, nb));
    if (!(bn > 0))
        return 1;
    precondition(pm, r, zz);
    memcpy(p, zz, nb * sizeof(double));
    double rz = dot(r, zz, nb);
    for (int it = 0; it < PM_MAXIT; it++) {
        pm->cg_iters++;
        apply_q(s, pm, p, ap, g, f);
        double a = rz / dot(p, ap, nb);
        for (size_t j = 0; j < nb; j++) {
            x[j] += a * p[j];
            r[j] -= a * ap[j];
        }
        if (sqrt(dot(r, r, nb)) <= PM_TOL * bn)
            return 1;
        precondition(pm, r, zz);
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
                       const pp_hphot_view *v, double rho, int *moved)
{
    const size_t gn = s->gn, gm = s->gm, nb = pm->nb;
    const double invn = 1.0 / (double)gn, del = *v->delta;
    *moved = 0;
    if (!(del > 0))
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
    if (!solve_b(s, pm, g, fa)) {
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
    *moved = 1;
    return alpha;
}
