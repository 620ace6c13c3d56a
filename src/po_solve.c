/* pixpost — x | W, λ, δ by perturbation–optimisation with PCG.
 *
 * Method: Orieux, Féron & Giovannelli (IEEE SPL 2012); see po_solve.h for
 * the model and bench/adaptive/NOTES.md §4–6 for the measurements behind
 * the choices below.
 *
 * Preconditioner "scal" (NOTES.md §4, bench/adaptive/proto.py make_prec):
 *   M⁻¹ = S^{-1/2} F* diag(1/C(k)) F S^{-1/2},
 *   C(k) = λ|Â(k)|² + c q(k),  q(k) = Σ_a c_a (2 − 2cos(2πk_a/n_a)) (a frame:
 *   4 − 2cos(2πk₁/H) − 2cos(2πk₂/W)), c_a the axes' weight factors,
 *   c = δ × geometric mean of the 2N (volume: 3N) weights w_e / c_a(e),
 *   S = diag(P)/diag(C): diag(P)_i = λ a₂ + δ(sum of the 4 (6) weights
 *   touching voxel i), diag(C) = λ a₂ + 2c Σ_a c_a (a frame: 4c), a₂ =
 *   mean over the full spectrum of |Â|² (= Σ psf², the diagonal of AᵀA).
 * On a volume the same preconditioner on the rank-3 transform: the weights'
 * axis factors are in q(k), so strongly anisotropic voxels stay balanced.
 * q(0) = 0, so C(0) = λ|Â(0)|², which pp_po_draw requires to be > 0.
 * Measured in the prototype (48², first-order Student-t weights, tol 1e-6):
 * 16–33 iterations per draw, 1.3–4× fewer than the plain Fourier operator.
 * Measured here (tests/ref_po_dense.py, iid log-uniform weights, λ = 1e4,
 * δ = 0.5, Gaussian PSF σ = 1.2 px): 8×8, 6 decades, tol 1e-10: 75–78;
 * 32×32, tol 1e-6: 49 (3 decades), 292 (6 decades). Weights that are
 * independent from one increment to the next are the hard case for a
 * diagonal scaling (NOTES.md §4: the Laplace prior's weights).
 *
 * Reversible-jump PO (pp_po_draw_rj; Gilavert, Moussaoui & Idier, IEEE
 * TSP 63(1):70-80, 2015, arXiv:1409.0606 — only its abstract could be
 * read here, so the move below is derived from scratch; it is a
 * reversible-jump move of the same kind, with its own parametrisation).
 * Target π(x) = N(μ, P⁻¹), P μ = b = λAᵀy. Auxiliary variable z | x ~
 * N((2 − α)Px + αb, α(2 − α)P), α ∈ (0, 2), drawn as z = (2 − α)Px + αb +
 * √(α(2 − α)) η₀, η₀ ~ N(0, P) by the perturbation above. Joint density,
 * with the P⁻¹-forms expanded (zᵀP⁻¹z does not depend on x; μᵀPx = bᵀx):
 *   log π(x) + log q(z | x)
 *     = −½xᵀPx + bᵀx − [−2(2 − α)zᵀx + (2 − α)²xᵀPx + 2α(2 − α)bᵀx]
 *       / (2α(2 − α)) + f(z)
 *     = (zᵀx − xᵀPx)/α + f(z).
 * Deterministic move (x, z) → (x', z) with x' = G(z) − x, G any function
 * of z alone (here: PCG from a start that does not involve x, stopped by
 * a rule that reads only z's iterates): an involution (G − (G − x) = x)
 * with Jacobian |det [−I, ∂G/∂z; 0, I]| = 1, so MH accepts with
 *   min(1, exp(ℓ(x', z) − ℓ(x, z))),  ℓ(x, z) = (zᵀx − xᵀPx)/α,
 *   ℓ(x', z) − ℓ(x, z) = [zᵀ(G − 2x) − GᵀPG + 2GᵀPx]/α
 *                      = (G − 2x)ᵀ(z − PG)/α = (x' − x)ᵀ r / α,
 * r = z − PG the solve's (true) residual. With the exact G = P⁻¹z, r = 0
 * and x' = (1 − α)x + αμ + √(α(2 − α)) P⁻¹η₀: the exact over-relaxed
 * Gaussian draw, always accepted (α = 1: an independent draw). With e = G
 * − P⁻¹z and α = 1, x'* − x (x'* the exact move) is independent of x +
 * x'* = P⁻¹z and so of e, and the log ratio is −(x'* − x)ᵀPe − eᵀPe ~
 * N(−‖e‖²_P, 2‖e‖²_P): acceptance 2Φ(−‖e‖_P/√2). What stops CG is
 * therefore an estimate of ‖e‖_P (pcg below), not a relative residual.
 * x itself may not seed the solve (the move would not be an involution),
 * so the warm start of pp_po_draw is lost: CG starts at 2m, m the
 * posterior mean under the preconditioner's Fourier operator (a function of
 * y, λ and W, not of x), with the mean mode exact. Checked: a numpy prototype (30-dimensional dense P, truncated
 * CG, 60000 moves) matched the target's moments within 3 batch standard
 * errors at acceptance 0.58-0.93 and missed by 16-98 with the ratio's
 * sign flipped; tests/ref_po_dense.py checks the C move against numpy's
 * dense posterior.
 *
 * Cost, in FFT pairs (one r2c + one c2r of the grid): per CG iteration 2
 * (P p: λAᵀA p by one pair plus the Dᵀ W D stencil; M⁻¹ r: one pair) and
 * about 10 passes over the grid (two of them keep CG on zero-mean fields);
 * per draw 3 more (η's data term, P x₀ and
 * M⁻¹ r₀), 3N normals and 2 setup passes; the reversible-jump draw 6
 * (η's data term, P x, the start m, P G₀, M⁻¹ r₀ and the true residual
 * P G) and one uniform.
 * Memory: 8 real grids, one complex and three real half spectra ≈ 84 B/px.
 */
#include "po_solve.h"

#include "incr.h"
#include "internal.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>

#define TWO_PI 6.283185307179586476925

struct pp_po {
    size_t d, h, w, n, hw, nh; /* grid, N = d*h*w, half width, half-spectrum size */
    double ca[3];              /* the axes' weight factors {z, y, x} */
    pp_fft *fft;
    double *b, *r, *z, *p, *q, *t, *si; /* real grids (si = S^{-1/2}) */
    double *g;                          /* the reversible-jump draw's solve G */
    double *u;                          /* volume only: ε₂'s z third */
    pp_complex *spec;                   /* half spectrum scratch */
    double *qk, *pm, *cinv;             /* half: q(k), λ|Â|²/N, 1/(N C(k)) */
    double pnorm;                       /* bound on ‖P‖₂ (Gershgorin; prepare) */
    const volatile sig_atomic_t *stop;  /* see pp_po_set_stop */
};

void pp_po_set_stop(pp_po *po, const volatile sig_atomic_t *stop) { po->stop = stop; }

double *pp_po_scratch(pp_po *po, int k) { return k ? po->p : po->r; }

void pp_po_free(pp_po *po)
{
    if (!po)
        return;
    double *reals[] = {po->b,  po->r,  po->z,  po->p,    po->q, po->t,
                       po->si, po->qk, po->pm, po->cinv, po->u, po->g};
    for (size_t i = 0; i < sizeof reals / sizeof *reals; i++)
        pp_fft_free_buffer(reals[i]);
    pp_fft_free_buffer(po->spec);
    pp_fft_free(po->fft);
    free(po);
}

pp_status pp_po_create(const pp_shape *shape, const double axis[3], int effort, pp_po **out)
{
    *out = NULL;
    int rk = shape->rank;
    size_t d = rk == 3 ? shape->n[0] : 1, h = rk >= 2 ? shape->n[rk - 2] : 0, w = shape->n[rk - 1];
    double ca[3] = {1.0, 1.0, 1.0};
    for (int i = 0; axis && i < 3; i++)
        ca[i] = axis[i];
    if ((rk != 2 && rk != 3) || h < 2 || w < 2 || d < 1)
        return pp_fail(PP_ERR_ARG, "PO solver grid %zux%zux%zu: both in-plane sides must be at "
                                   "least 2", w, h, d);
    if (!(ca[0] > 0 && ca[1] > 0 && ca[2] > 0 && isfinite(ca[0] + ca[1] + ca[2])))
        return pp_fail(PP_ERR_ARG, "PO solver: axis weights must be positive and finite");
    pp_po *po = calloc(1, sizeof *po);
    if (!po)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the PO solver of %zux%zux%zu", w, h, d);
    pp_status st = pp_fft_create_shape(shape, effort, &po->fft);
    if (st != PP_OK) {
        free(po);
        return st;
    }
    po->d = d, po->h = h, po->w = w, po->n = d * h * w, po->hw = w / 2 + 1;
    po->nh = d * h * (w / 2 + 1);
    po->ca[0] = ca[0], po->ca[1] = ca[1], po->ca[2] = ca[2];
    double **grids[] = {&po->b, &po->r, &po->z, &po->p, &po->q, &po->t, &po->si, &po->g};
    for (size_t i = 0; i < sizeof grids / sizeof *grids; i++)
        *grids[i] = pp_fft_alloc_real(po->n);
    po->qk = pp_fft_alloc_real(po->nh);
    po->pm = pp_fft_alloc_real(po->nh);
    po->cinv = pp_fft_alloc_real(po->nh);
    po->spec = pp_fft_alloc_complex(po->nh);
    if (d > 1)
        po->u = pp_fft_alloc_real(po->n);
    int ok = po->qk && po->pm && po->cinv && po->spec && (d == 1 || po->u);
    for (size_t i = 0; i < sizeof grids / sizeof *grids; i++)
        ok = ok && *grids[i];
    if (!ok) {
        pp_po_free(po);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the PO solver of %zux%zux%zu", w, h, d);
    }
    /* q(k), written so that a frame (c = 1, k0 = 0) rounds as 4 − 2cos − 2cos */
    const double cz = ca[0], cy = ca[1], cx = ca[2];
    for (size_t k0 = 0; k0 < d; k0++)
        for (size_t k1 = 0; k1 < h; k1++)
            for (size_t k2 = 0; k2 < po->hw; k2++) {
                double qz = d > 1 ? cz * (2.0 - 2.0 * cos(TWO_PI * (double)k0 / (double)d)) : 0.0;
                double q = (2.0 * cy + 2.0 * cx) - 2.0 * cy * cos(TWO_PI * (double)k1 / (double)h) -
                           2.0 * cx * cos(TWO_PI * (double)k2 / (double)w);
                po->qk[(k0 * h + k1) * po->hw + k2] = d > 1 ? q + qz : q;
            }
    *out = po;
    return PP_OK;
}

/* out = F⁻¹(m ⊙ F in) with the 1/N of the round trip folded into m. One
 * FFT pair. in and out may alias. */
static void fourier_mul(pp_po *po, const double *in, const double *m, double *out)
{
    pp_fft_forward(po->fft, in, po->spec);
    for (size_t k = 0; k < po->nh; k++)
        po->spec[k] *= m[k];
    pp_fft_inverse(po->fft, po->spec, out);
}

/* out = P v = λAᵀA v + δ Dᵀ W D v (uses po->t). */
static void apply_p(pp_po *po, double delta, const double *wz, const double *wh, const double *wv,
                    const double *v, double *out)
{
    fourier_mul(po, v, po->pm, out);
    pp_incr_apply(po->d, po->h, po->w, wz, wh, wv, v, po->t);
    for (size_t i = 0; i < po->n; i++)
        out[i] += delta * po->t[i];
}

/* z = M⁻¹ r = S^{-1/2} F* C⁻¹ F S^{-1/2} r (uses po->t). */
static void apply_minv(pp_po *po, const double *r, double *z)
{
    for (size_t i = 0; i < po->n; i++)
        po->t[i] = po->si[i] * r[i];
    fourier_mul(po, po->t, po->cinv, z);
    for (size_t i = 0; i < po->n; i++)
        z[i] *= po->si[i];
}

/* Per-draw setup: checks the weights, builds λ|Â|²/N, 1/(N C(k)) and
 * S^{-1/2}. Two passes over the grid, one over the half spectrum. */
static pp_status prepare(pp_po *po, const pp_complex *otf, double lam, double delta,
                         const double *wz, const double *wh, const double *wv)
{
    double logsum = 0.0;
    const int vol = po->d > 1;
    for (size_t i = 0; i < po->n; i++) {
        if (!(wh[i] > 0 && wv[i] > 0 && isfinite(wh[i]) && isfinite(wv[i]) &&
              (!vol || (wz[i] > 0 && isfinite(wz[i])))))
            return pp_fail(PP_ERR_ARG,
                           "PO solver: increment weight at pixel %zu is not a "
                           "positive finite number",
                           i);
        logsum += log(wh[i]) + log(wv[i]);
        if (vol)
            logsum += log(wz[i]);
    }
    /* the weights' geometric mean without the axis factors (a frame's are 1:
     * nothing to take out) */
    const double kinc = vol ? 3.0 : 2.0, cz = po->ca[0], cy = po->ca[1], cx = po->ca[2];
    double lca = log(cy) + log(cx) + (vol ? log(cz) : 0.0);
    if (lca != 0.0)
        logsum -= (double)po->n * lca;
    double c = delta * exp(logsum / (kinc * (double)po->n)), nn = (double)po->n, a2 = 0.0;
    double m2max = 0.0, dmax = 0.0;
    for (size_t k = 0; k < po->nh; k++) {
        size_t k2 = k % po->hw; /* half-spectrum columns other than 0 and W/2 count twice */
        double m = cabs(otf[k]) * cabs(otf[k]), twice = (k2 == 0 || 2 * k2 == po->w) ? 1.0 : 2.0;
        a2 += twice * m;
        if (m > m2max)
            m2max = m;
        po->pm[k] = lam * m / nn;
        double ck = lam * m + c * po->qk[k];
        if (!(ck > 0 && isfinite(ck)))
            return pp_fail(PP_ERR_ARG,
                           "PO solver: the precision's Fourier part is %g at "
                           "frequency %zu (the PSF must pass the mean: otf[0] != 0)",
                           ck, k);
        po->cinv[k] = 1.0 / (nn * ck);
    }
    /* CG runs on zero-mean fields (pp_po_draw): the preconditioner drops the
     * constant mode. Keeping 1/C(0) = 1/(λ|Â(0)|²) would let the diagonal
     * scaling leak the mean of S^{-1/2} r into it and amplify it by the
     * ratio of prior to data precision (1e49 on a frame of values ~1e-27). */
    po->cinv[0] = 0.0;
    a2 /= nn;
    double dc = lam * a2 + (2.0 * cy + 2.0 * cx + (vol ? 2.0 * cz : 0.0)) * c;
    pp_incr_diag(po->d, po->h, po->w, wz, wh, wv, po->si);
    for (size_t i = 0; i < po->n; i++) {
        if (po->si[i] > dmax)
            dmax = po->si[i];
        po->si[i] = sqrt(dc / (lam * a2 + delta * po->si[i]));
    }
    /* ‖Dᵀ W D‖₂ ≤ 2 max diag (Gershgorin: each row's off-diagonal sum equals its diagonal) */
    po->pnorm = lam * m2max + 2.0 * delta * dmax;
    return PP_OK;
}

/* b = ca λAᵀ(y − ybar) + cn η₀, η₀ = λAᵀλ^{-1/2}ε₁ + δ^{1/2}Dᵀ(√w ⊙ ε₂) ~ N(0, P)
 * (ca = cn = 1: η of po_solve.h). One FFT pair. */
static void perturbed_rhs(pp_po *po, const pp_complex *otf, const double *y, double ybar,
                          double lam, double delta, const double *wz, const double *wh, const double *wv,
                          pp_rng *rng, double ca, double cn)
{
    pp_rng_normals(rng, po->z, po->n); /* ε₁ */
    pp_rng_normals(rng, po->p, po->n); /* ε₂, horizontal part */
    pp_rng_normals(rng, po->q, po->n); /* ε₂, vertical part */
    if (po->d > 1)
        pp_rng_normals(rng, po->u, po->n); /* ε₂, z part (volumes) */
    double s = cn / sqrt(lam), scale = lam / (double)po->n;
    for (size_t i = 0; i < po->n; i++)
        po->t[i] = ca * (y[i] - ybar) + s * po->z[i];
    pp_fft_forward(po->fft, po->t, po->spec);
    for (size_t k = 0; k < po->nh; k++)
        po->spec[k] *= conj(otf[k]) * scale;
    pp_fft_inverse(po->fft, po->spec, po->b);
    pp_incr_perturb(po->d, po->h, po->w, wz, wh, wv, po->u, po->p, po->q, po->t);
    double sd = cn * sqrt(delta);
    for (size_t i = 0; i < po->n; i++)
        po->b[i] += sd * po->t[i];
}

static double mean_of(const double *a, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += a[i];
    return s / (double)n;
}

/* a -= mean(a) */
static void center(double *a, size_t n)
{
    double m = mean_of(a, n);
    for (size_t i = 0; i < n; i++)
        a[i] -= m;
}

static double dot(const double *a, const double *b, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += a[i] * b[i];
    return s;
}

/* Preconditioned CG on P v = rhs over zero-mean fields, from the v whose
 * centred residual rhs − P v is in po->r; v updated in place. Stops at
 * ‖r‖₂ ≤ tol·bn (tol > 0), or (eps > 0) when the last ENERGY_WINDOW steps'
 * decrease of the energy norm of the error, Σ α_j r_jᵀM⁻¹r_j (Strakoš &
 * Tichý, ETNA 13, 2002: ‖e_k‖²_P = Σ_{j≥k} α_j r_jᵀM⁻¹r_j in exact
 * arithmetic), is ≤ eps², or at cap iterations. *iters, *rn: iterations
 * done and the final recursive ‖r‖₂. PP_OK, or PP_ERR_NUMERIC /
 * PP_ERR_INTERRUPTED (v then holds the last iterate). Also stops when
 * rᵀM⁻¹r is no longer positive (r = 0: solved exactly). */
#define ENERGY_WINDOW 10
static pp_status pcg(pp_po *po, double delta, const double *wz, const double *wh,
                     const double *wv, double *v, double bn, double tol, double eps, size_t cap,
                     size_t *iters, double *rn_out)
{
    size_t n = po->n, k = 0;
    double rn, win[ENERGY_WINDOW] = {0}, wsum = 0.0;
    apply_minv(po, po->r, po->z);
    center(po->z, n);
    for (size_t i = 0; i < n; i++)
        po->p[i] = po->z[i];
    double rz = dot(po->r, po->z, n);
    for (;;) {
        rn = sqrt(dot(po->r, po->r, n));
        *iters = k, *rn_out = rn;
        if (!isfinite(rn))
            return pp_fail(PP_ERR_NUMERIC,
                           "PO solver: CG residual is not finite after %zu "
                           "iterations",
                           k);
        if ((tol > 0 && rn <= tol * bn) || k == cap || !(rz > 0) ||
            (eps > 0 && k >= ENERGY_WINDOW && wsum <= eps * eps))
            break;
        if (po->stop && *po->stop)
            return pp_fail(PP_ERR_INTERRUPTED, "PO solver: stopped at the caller's request");
        apply_p(po, delta, wz, wh, wv, po->p, po->q);
        double pq = dot(po->p, po->q, n);
        if (!(pq > 0))
            return pp_fail(PP_ERR_NUMERIC,
                           "PO solver: CG found pᵀPp = %g <= 0 at iteration "
                           "%zu (the precision is not positive definite)",
                           pq, k);
        double alpha = rz / pq;
        for (size_t i = 0; i < n; i++) {
            v[i] += alpha * po->p[i];
            po->r[i] -= alpha * po->q[i];
        }
        /* the error's energy fell by α rᵀM⁻¹r = α rz in this step */
        wsum += alpha * rz - win[k % ENERGY_WINDOW];
        win[k % ENERGY_WINDOW] = alpha * rz;
        center(po->r, n);
        apply_minv(po, po->r, po->z);
        center(po->z, n);
        double rz2 = dot(po->r, po->z, n), beta = rz2 / rz;
        for (size_t i = 0; i < n; i++)
            po->p[i] = po->z[i] + beta * po->p[i];
        rz = rz2;
        k++;
    }
    return PP_OK;
}

static pp_status check_args(double lam, double delta, double tol)
{
    if (lam > 0 && delta > 0 && tol > 0 && isfinite(lam) && isfinite(delta) && isfinite(tol))
        return PP_OK;
    return pp_fail(PP_ERR_ARG,
                   "PO solver: lambda %g, delta %g and tolerance %g must be "
                   "positive and finite",
                   lam, delta, tol);
}

static double dc_gain(const pp_complex *otf, double lam)
{
    return lam * (creal(otf[0]) * creal(otf[0]) + cimag(otf[0]) * cimag(otf[0]));
}

/* ‖a − ā‖₂ */
static double centred_norm(const double *a, size_t n)
{
    double m = mean_of(a, n), s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += (a[i] - m) * (a[i] - m);
    return sqrt(s);
}

pp_status pp_po_draw(pp_po *po, const pp_complex *otf, const double *y, double lam, double delta,
                     const double *wz, const double *wh, const double *wv, pp_rng *rng,
                     double tol, size_t cap, double *x, pp_po_stats *stats)
{
    pp_status st = check_args(lam, delta, tol);
    if (st == PP_OK)
        st = prepare(po, otf, lam, delta, wz, wh, wv);
    if (st != PP_OK)
        return st;
    perturbed_rhs(po, otf, y, 0.0, lam, delta, wz, wh, wv, rng, 1.0, 1.0);
    size_t n = po->n, k = 0;
    double rn;
    /* P is block-diagonal between the constant field and its orthogonal
     * complement: Dᵀ W D annihilates constants and (symmetric) maps into
     * zero-mean fields, and AᵀA, a convolution, keeps both. So the mean of
     * x is solved exactly, x̄ = b̄ / (λ|Â(0)|²), and CG runs on zero-mean
     * fields only (its iterates, residuals and preconditioned residuals are
     * kept at mean 0). Without this the diagonal scaling of the
     * preconditioner couples the mean to the rest, and when the prior
     * dwarfs the data (weights 1e49 times λ) CG cannot resolve the mean to
     * any tolerance. The tolerance is relative to the zero-mean part of η. */
    double bbar = mean_of(po->b, n), xbar = mean_of(x, n), bn = centred_norm(po->b, n);
    double xbar_new = bbar / dc_gain(otf, lam);
    for (size_t i = 0; i < n; i++)
        x[i] += xbar_new - xbar;
    apply_p(po, delta, wz, wh, wv, x, po->r);
    for (size_t i = 0; i < n; i++)
        po->r[i] = po->b[i] - po->r[i];
    center(po->r, n);
    st = pcg(po, delta, wz, wh, wv, x, bn, tol, 0.0, cap, &k, &rn);
    if (st != PP_OK)
        return st;
    double rel = bn > 0 ? rn / bn : 0.0;
    if (stats)
        *stats = (pp_po_stats){k, rel, 1, 0.0, 0};
    if (rn <= tol * bn)
        return PP_OK;
    return pp_fail(PP_ERR_LIMIT,
                   "PO solver: CG reached its cap of %zu iterations at relative "
                   "residual %.3g (tolerance %.3g)",
                   cap, rel, tol);
}

/* CG's relative residual below which its steps are rounding noise: the
 * reversible-jump solve stops there too, whatever eps asks (a rule that
 * reads z's iterates only, so the move stays an involution). */
#define RJ_FLOOR 1e-14
/* the most rounding the log ratio may carry (see the guard below) */
#define RJ_NOISE 0.1

pp_status pp_po_draw_rj(pp_po *po, const pp_complex *otf, const double *y, double lam,
                        double delta, const double *wz, const double *wh, const double *wv,
                        pp_rng *rng, double alpha, double eps, size_t cap, double *x,
                        pp_po_stats *stats)
{
    pp_status st = check_args(lam, delta, eps);
    if (st == PP_OK && !(alpha > 0 && alpha < 2))
        st = pp_fail(PP_ERR_ARG, "PO solver: relaxation %g must be in (0, 2)", alpha);
    if (st == PP_OK)
        st = prepare(po, otf, lam, delta, wz, wh, wv);
    if (st != PP_OK)
        return st;
    const size_t n = po->n;
    /* The move runs on x̃ = x − c, c = ȳ/Â(0), whose data are ỹ = y − ȳ
     * (P c1 = λ|Â(0)|² c 1 and λAᵀy − P c1 = λAᵀỹ: the same target shifted
     * by a constant). Without the shift, a frame whose values are large
     * against its posterior sd (a constant frame of 60000, λ ~ 1e24 at the
     * start) puts ε·λ·c of rounding into z − PG, far above the log ratio's
     * true scale: 12 of 30 seeds accepted garbage moves (log ratio ~1e45)
     * and diverged (tests/ref_hostile_images.py). x̃ is kept in po->q while
     * P x̃ is formed. */
    const double ybar = mean_of(y, n), c = ybar / creal(otf[0]);
    /* z = (2 − α) P x̃ + α λAᵀỹ + √(α(2 − α)) η₀ into po->b (the normals
     * pass through po->q, so x̃ goes there after them) */
    perturbed_rhs(po, otf, y, ybar, lam, delta, wz, wh, wv, rng, alpha,
                  sqrt(alpha * (2.0 - alpha)));
    for (size_t i = 0; i < n; i++)
        po->q[i] = x[i] - c;
    apply_p(po, delta, wz, wh, wv, po->q, po->r);
    for (size_t i = 0; i < n; i++)
        po->b[i] += (2.0 - alpha) * po->r[i];
    /* G ≈ P⁻¹z from a start that does not depend on x: its mean exact (see
     * pp_po_draw) ... */
    double zbar = mean_of(po->b, n), gbar = zbar / dc_gain(otf, lam);
    double zn = centred_norm(po->b, n);
    /* ... and its zero-mean part from 2m, m = F⁻¹(C⁻¹F(λAᵀỹ)) the posterior
     * mean under the preconditioner's Fourier operator (a function of y, λ
     * and the weights' geometric mean, not of x): one FFT pair, and one for
     * P G₀. Measured: 54 → 40 CG iterations per draw on a 96² photograph,
     * 130 → 115 on the demo frame (bench/NOTES.md). */
    for (size_t i = 0; i < n; i++)
        po->t[i] = y[i] - ybar;
    pp_fft_forward(po->fft, po->t, po->spec);
    for (size_t j = 0; j < po->nh; j++)
        po->spec[j] *= 2.0 * lam * conj(otf[j]) * po->cinv[j];
    pp_fft_inverse(po->fft, po->spec, po->g);
    center(po->g, n);
    for (size_t i = 0; i < n; i++)
        po->g[i] += gbar;
    apply_p(po, delta, wz, wh, wv, po->g, po->r);
    for (size_t i = 0; i < n; i++)
        po->r[i] = po->b[i] - po->r[i];
    center(po->r, n);
    size_t k = 0;
    double rn;
    st = pcg(po, delta, wz, wh, wv, po->g, zn, RJ_FLOOR, eps, cap, &k, &rn);
    if (st != PP_OK)
        return st; /* x untouched */
    /* the true residual r = z − P G (not CG's recursive one), then
     * log ratio = (x' − x)ᵀ r / α with x' = G − x */
    apply_p(po, delta, wz, wh, wv, po->g, po->q);
    double lr = 0.0, rr = 0.0, dn = 0.0, gn2 = 0.0, zz = 0.0;
    for (size_t i = 0; i < n; i++) {
        double r = po->b[i] - po->q[i], dx = po->g[i] - 2.0 * (x[i] - c);
        lr += dx * r;
        rr += r * r;
        dn += dx * dx, gn2 += po->g[i] * po->g[i], zz += po->b[i] * po->b[i];
    }
    lr /= alpha;
    /* Rounding guard. r = z − PG carries rounding of about ε(‖z‖ + ‖P‖‖G‖)
     * (ε = 2⁻⁵², DBL_EPSILON), so lr is known only to within
     * ν = ‖G − 2x̃‖ ε(‖z‖ + ‖P‖‖G‖)/α, a bound (Cauchy–Schwarz). When the
     * weights span more decades than doubles hold (a constant frame drives
     * them to 1e22 and more) ν reaches 1e10 and the ratio is noise: such a
     * move is refused. The rule reads z, G and ‖G − 2x̃‖ = ‖x̃' − x̃‖, which
     * the involution leaves unchanged (x̃' = G − x̃ gives G − 2x̃' = −(G −
     * 2x̃)), so choosing between this move and staying put by it keeps the
     * target invariant. The caller is told (stats->unresolved) so that it
     * can make a converged draw instead (src/sampler_adaptive.c). */
    double noise = sqrt(dn) * DBL_EPSILON * (sqrt(zz) + po->pnorm * sqrt(gn2)) / alpha;
    const int unresolved = !(noise <= RJ_NOISE);
    double u = pp_rng_uniform(rng);
    int acc = !unresolved && isfinite(lr) && log(u) < lr;
    if (acc) /* x' = c + G̃ − x̃ */
        for (size_t i = 0; i < n; i++)
            x[i] = po->g[i] - x[i] + 2.0 * c;
    if (stats)
        *stats = (pp_po_stats){k, zn > 0 ? sqrt(rr) / zn : 0.0, acc, lr, unresolved};
    if (!unresolved && !isfinite(lr))
        return pp_fail(PP_ERR_NUMERIC, "PO solver: reversible-jump log ratio is not finite");
    if (k < cap)
        return PP_OK;
    return pp_fail(PP_ERR_LIMIT,
                   "PO solver: CG reached its cap of %zu iterations (the draw stays exact, "
                   "the move was %s)",
                   cap, acc ? "accepted" : "rejected");
}
