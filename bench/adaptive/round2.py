#!/usr/bin/python3
"""Issue 15, prototype round 2 (see NOTES.md "Round 2"): two models that
proto.py did not have, on the same frames, noise, split and metrics
(imports proto.py for the operators, data, metrics and baselines).

H2  'sb'  stationary prior with a learned spectral slope:
          x ~ intrinsic N(0, (delta q(k)^beta)^-1), q the 5-point Laplacian
          symbol (beta = 1 is gmrf1, beta = 2 is gmrf2), beta ~ U[1, 2.5],
          lam, delta ~ Gamma(1, 1e-4). (lam, delta, beta) by random-walk
          Metropolis on the exact Gaussian marginal p(y | lam, delta, beta),
          a sum over frequencies (as pixpost's mtc does for lam, delta):
              log p = sum_{k != 0} -1/2 log v_k - |y_k|^2 / (2 v_k),
              v_k = |A_k|^2 / (delta q_k^beta) + 1/lam   (orthonormal FFT;
          the DC term drops: flat prior on the mean of x). x | lam, delta,
          beta exact (Fourier-diagonal). 'sb1' = the same code with beta
          fixed at 1 (a check against proto.py's gmrf1).
H3  'sp'  x = u + v: u the stationary field of 'sb' (beta learned, or
          fixed at 1 in 'sp1'), v a sparse per-pixel component,
          v_i ~ N(0, 1/(delta_v omega_i)), omega_i ~ Gamma(a, a) (Student-t
          with nu = 2a), delta_v ~ Gamma(1, 1e-4) (v is proper: rank N).
          'sp:a:g' (added): x = u + G v with G a normalised Gaussian blur of
          sd g px, so v's heavy tails cannot fill the frequencies the PSF
          removed (with g = 0, a = 0.5 they do: see NOTES.md Round 2).
          Blocked Gibbs, every block exact:
            1. (lam, delta, beta) | v, y  by RWM on the marginal of 'sb'
               with data y - A v (u integrated out);
            2. v | y, lam, delta, beta, omega, delta_v with u integrated
               out: precision S = delta_v Omega + F, F Fourier-diagonal with
               symbol |A_k|^2 / c_k, c_k = |A_k|^2/(delta q_k^beta) + 1/lam
               (the marginal covariance of A u + e); drawn by
               perturbation-optimisation + Jacobi-preconditioned CG
               (tol 1e-6, warm start), then u | v, y exact (Fourier);
            3. omega_i | v ~ Gamma(a + 1/2, a + delta_v v_i^2 / 2),
               delta_v | v, omega ~ Gamma(1 + N/2, 1e-4 + sum omega v^2 / 2).
'mxa:a:g' (added): proto.py's mx:g (Student-t first-order weights plus a
          stationary g q^2 part, one delta) with the Student-t shape a
          instead of 0.5: do heavier edge tails rescue edges under a steep
          stationary part?
Usage:
    nice -n 19 /usr/bin/python3 bench/adaptive/round2.py --models sb,sb1 \
        --set dev --out results/r2/h2_dev.json
Deterministic: seeds from (image, noise, model) as proto.py.
"""
import argparse
import json
import sys
import time

import numpy as np
from numpy.fft import rfft2, irfft2, fft2

import proto
from proto import Ops, load_truth, seed_of, metrics, baselines, EPS_RATE

BETA_LO, BETA_HI = 1.0, 2.5


class Spec:
    """Full-grid (fft2) symbols for the exact marginal."""

    def __init__(self, ops):
        n = ops.n
        big = irfft2(ops.otf, s=(n, n))
        self.a2 = np.abs(fft2(big)) ** 2
        f0 = np.fft.fftfreq(n)[:, None]
        f1 = np.fft.fftfreq(n)[None, :]
        q = 4 - 2 * np.cos(2 * np.pi * f0) - 2 * np.cos(2 * np.pi * f1)
        self.nz = q > 1e-12
        self.logq = np.log(q[self.nz])
        self.a2nz = self.a2[self.nz]

    def logmarg(self, y, th):
        """log p(y | lam, delta, beta) + log prior, th = (log lam, log
        delta, beta); constants dropped."""
        ll, ld, b = th
        if not BETA_LO <= b <= BETA_HI:
            return -np.inf
        lam, d = np.exp(ll), np.exp(ld)
        yk2 = self.yk2
        v = self.a2nz * np.exp(-ld - b * self.logq) + 1 / lam
        lp = -0.5 * np.log(v).sum() - 0.5 * (yk2 / v).sum()
        return lp - EPS_RATE * (lam + d) + ll + ld   # Gamma(1, 1e-4) priors + log Jacobian

    def set_data(self, y):
        self.yk2 = (np.abs(fft2(y)) ** 2 / y.size)[self.nz]


class RWM:
    """Random-walk Metropolis on th, proposal covariance adapted from the
    chain's history during burn-in only (frozen afterwards)."""

    def __init__(self, spec, rng, th0, fixed_beta=None):
        self.spec, self.rng, self.fixed = spec, rng, fixed_beta
        self.th = np.array(th0, float)
        if fixed_beta is not None:
            self.th[2] = fixed_beta
        self.cov = np.diag([0.02, 0.1, 0.02]) ** 2
        self.hist, self.nacc, self.n = [], 0, 0

    def steps(self, y, k, adapt):
        sp = self.spec
        sp.set_data(y)
        lp = sp.logmarg(y, self.th)
        L = np.linalg.cholesky(self.cov)
        for _ in range(k):
            prop = self.th + L @ self.rng.standard_normal(3)
            if self.fixed is not None:
                prop[2] = self.fixed
            lq = sp.logmarg(y, prop)
            self.n += 1
            if np.log(self.rng.random()) < lq - lp:
                self.th, lp = prop, lq
                self.nacc += 1
            self.hist.append(self.th.copy())
        if adapt and len(self.hist) >= 200:
            h = np.array(self.hist[len(self.hist) // 2:])
            c = np.cov(h.T) * 2.38 ** 2 / 3 + 1e-8 * np.eye(3)
            if self.fixed is not None:
                c[2, :] = c[:, 2] = 0
                c[2, 2] = 1e-12
            self.cov = c

    @property
    def lam(self):
        return np.exp(self.th[0])

    @property
    def delta(self):
        return np.exp(self.th[1])

    @property
    def beta(self):
        return self.th[2]


def u_draw(ops, rng, yd, lam, delta, beta):
    """Exact draw of the stationary field given data yd (rfft layout;
    leading batch axes of yd are independent draws)."""
    n = ops.n
    p = lam * ops.otf2 + delta * np.where(ops.q > 0, ops.q, 1) ** beta * (ops.q > 0)
    wn = rfft2(rng.standard_normal(yd.shape))
    return irfft2((lam * np.conj(ops.otf) * rfft2(yd) + wn * np.sqrt(p)) / p, s=(n, n))


def warm_theta(ops, y):
    return [np.log(1 / np.var(y)) + 2, np.log(10.0), 1.5]


def run_sb(ops, y, rng, n_burn, n_keep, fixed_beta=None, mh_per=20):
    sp = Spec(ops)
    mh = RWM(sp, rng, warm_theta(ops, y), fixed_beta)
    draws, tr = [], []
    for it in range(n_burn + n_keep):
        mh.steps(y, mh_per, adapt=it < n_burn and it % 25 == 24)
        x = u_draw(ops, rng, y, mh.lam, mh.delta, mh.beta)
        if it >= n_burn:
            draws.append(x)
            tr.append(mh.th.copy())
    tr = np.array(tr)
    return np.array(draws), {'hyp_lam': float(np.exp(np.median(tr[:, 0]))),
                             'hyp_delta': float(np.exp(np.median(tr[:, 1]))),
                             'hyp_beta': float(np.median(tr[:, 2])),
                             'beta_sd': float(tr[:, 2].std()),
                             'mh_acc': mh.nacc / max(1, mh.n), 'cg_it_mean': 0.0, 'cg_it_max': 0}


def jacobi_pcg(Sf, dS, b, x0, tol, maxit=3000):
    return proto.pcg(Sf, lambda r: r / dS, b, x0, tol, maxit)


def uv_draw(ops, rng, y, lam, d, b, Dv, H, v0, tol, batch=()):
    """Joint draw of (u, v) | y, lam, delta, beta, Dv = delta_v omega for
    y = A u + A G v + e (H = the symbol of A G): v from its marginal with u
    integrated out (precision Dv + F, F Fourier-diagonal, symbol
    |H_k|^2 / c_k, c_k = |A_k|^2/(delta q_k^beta) + 1/lam; DC: 1/c = 0),
    by perturbation-optimisation and Jacobi PCG (tol, warm start v0),
    then u | v exact. Returns u, v, CG iterations."""
    n = ops.n
    qpos = ops.q > 0
    qb = d * np.where(qpos, ops.q, 1) ** b * qpos
    invc = lam * qb / (lam * ops.otf2 + qb)             # 1/c_k, 0 at DC
    Fsym = np.abs(H) ** 2 * invc
    e1 = rfft2(rng.standard_normal(batch + (n, n)))
    eta = irfft2(np.conj(H) * (invc * rfft2(y) + np.sqrt(invc) * e1), s=(n, n)) \
        + np.sqrt(Dv) * rng.standard_normal(batch + (n, n))
    fdiag = irfft2(Fsym, s=(n, n))[0, 0]
    Sf = lambda z: Dv * z + irfft2(rfft2(z) * Fsym, s=(n, n))
    v, k = jacobi_pcg(Sf, Dv + fdiag, eta, np.broadcast_to(v0, eta.shape).copy(), tol)
    u = u_draw(ops, rng, y - irfft2(rfft2(v) * H, s=(n, n)), lam, d, b)
    return u, v, k


def validate(ndraw=20000, seed=3):
    """(u, v) draws of uv_draw against the dense Gaussian posterior of the
    stacked model on 8x8 (sigma 1.2 PSF, G sd 0.7, beta 1.6, omega over
    4 decades), tol 1e-10. The dense precision (numpy inverse):
    [[lam A'A + Q, lam A'AG], [lam G'A'A, lam G'A'AG + Dv]], Q the
    circulant with symbol delta q^beta (singular alone, the block is not)."""
    n, N = 8, 64
    ops = Ops(n, sigma=1.2)
    rng = np.random.default_rng(seed)
    lam, d, b = 1e3, 5.0, 1.6
    y = ops.A(rng.random((n, n))) + 0.03 * rng.standard_normal((n, n))
    Dv = 10 ** rng.uniform(0, 4, (n, n))
    og = Ops(n, sigma=0.7).otf
    H = ops.otf * og
    I = np.eye(N).reshape(N, n, n)
    circ = lambda sym: irfft2(rfft2(I) * sym, s=(n, n)).reshape(N, N).T
    qb = d * np.where(ops.q > 0, ops.q, 1) ** b * (ops.q > 0)
    AtA, Q, AG = circ(ops.otf2), circ(qb), circ(H)
    Am = circ(ops.otf)
    P = np.block([[lam * AtA + Q, lam * AtA @ circ(og)], [lam * AG.T @ Am, lam * AG.T @ AG + np.diag(Dv.ravel())]])
    P = 0.5 * (P + P.T)
    C = np.linalg.inv(P)
    mu = C @ np.concatenate([lam * Am.T @ y.ravel(), lam * AG.T @ y.ravel()])
    u, v, k = uv_draw(ops, rng, y, lam, d, b, Dv, H, np.zeros((n, n)), 1e-10, batch=(ndraw,))
    z = np.concatenate([u.reshape(ndraw, N), v.reshape(ndraw, N)], 1)
    zm = (z.mean(0) - mu) / np.sqrt(np.diag(C) / ndraw)
    vr = z.var(0, ddof=1) / np.diag(C)
    return {'cg_iters': int(k), 'max_abs_z_mean_of_128': float(np.abs(zm).max()),
            'var_ratio_min': float(vr.min()), 'var_ratio_max': float(vr.max()),
            'var_ratio_tol': float(4 * np.sqrt(2 / ndraw))}


def run_sp(ops, y, rng, n_burn, n_keep, a=0.5, fixed_beta=None, mh_per=20, tol=1e-6, sg=0.0):
    n, N = ops.n, ops.N
    sp = Spec(ops)
    # x = u + G v, G a normalised Gaussian of sd sg px (identity if sg = 0)
    og = Ops(n, sigma=sg).otf if sg > 0 else np.ones_like(ops.otf)
    H = ops.otf * og
    H2 = np.abs(H) ** 2
    AG = lambda z: irfft2(rfft2(z) * H, s=(n, n))
    G = lambda z: irfft2(rfft2(z) * og, s=(n, n))
    # warm start: 'sb' alone for a short while (v = 0)
    mh = RWM(sp, rng, warm_theta(ops, y), fixed_beta)
    for it in range(20):
        mh.steps(y, mh_per, adapt=it % 5 == 4)
    v = np.zeros((n, n))
    om = np.ones((n, n))
    dv = 1.0 / np.var(y) * 10       # v starts tight (sd ~ 0.3 of the data's sd)
    draws, its, tr = [], [], []
    for it in range(n_burn + n_keep):
        # 1. hypers of u | v (u integrated out)
        mh.steps(y - AG(v), mh_per, adapt=it < n_burn and it % 25 == 24)
        lam, d, b = mh.lam, mh.delta, mh.beta
        u, v, k = uv_draw(ops, rng, y, lam, d, b, dv * om, H, v, tol)
        its.append(k)
        # 3. omega, delta_v | v
        om = rng.gamma(a + 0.5, 1 / (a + dv * v * v / 2))
        dv = rng.gamma(1 + N / 2, 1 / (EPS_RATE + (om * v * v).sum() / 2))
        if it >= n_burn:
            draws.append(u + G(v))
            tr.append([lam, d, b, dv, np.mean(np.abs(v) > 0.05), np.abs(v).max()])
    tr = np.array(tr)
    its = np.array(its[n_burn:])
    return np.array(draws), {'hyp_lam': float(np.median(tr[:, 0])), 'hyp_delta': float(np.median(tr[:, 1])),
                             'hyp_beta': float(np.median(tr[:, 2])), 'beta_sd': float(tr[:, 2].std()),
                             'hyp_delta_v': float(np.median(tr[:, 3])),
                             'v_frac_gt_0.05': float(np.median(tr[:, 4])), 'v_absmax': float(np.median(tr[:, 5])),
                             'mh_acc': mh.nacc / max(1, mh.n),
                             'cg_it_mean': float(its.mean()), 'cg_it_max': int(its.max())}


def one(name, noise, model, n, n_burn, n_keep):
    ops = Ops(n)
    truth = load_truth(name, n)
    rng = np.random.default_rng(seed_of(name, noise))
    y = ops.A(truth) + noise * rng.standard_normal((n, n))
    rng = np.random.default_rng(seed_of(name, noise, model))
    base, _, par = model.partition(':')
    t0 = time.time()
    if base == 'mxa':                # 'mxa:a:gamma': proto.py's mx with Student-t shape a
        a_, g_ = par.split(':')
        proto.Mixed.A = float(a_)
        out = proto.one_config(name, noise, 'mx:' + g_, n, n_burn, n_keep, False)
        proto.Mixed.A = 0.5
        out.update({'prior': model, 'burn': n_burn, 'keep': n_keep})
        return out
    if base == 'sb':
        draws, info = run_sb(ops, y, rng, n_burn, n_keep)
    elif base == 'sb1':
        draws, info = run_sb(ops, y, rng, n_burn, n_keep, fixed_beta=1.0)
    elif base in ('sp', 'sp1'):      # 'sp:a:sg'
        ps = (par or '0.5').split(':')
        draws, info = run_sp(ops, y, rng, n_burn, n_keep, a=float(ps[0]),
                             fixed_beta=1.0 if base == 'sp1' else None,
                             sg=float(ps[1]) if len(ps) > 1 else 0.0)
    else:
        raise ValueError(model)
    out = {'image': name, 'noise': noise, 'prior': model, 'n': n, 'seconds': time.time() - t0,
           'burn': n_burn, 'keep': n_keep}
    mean, sd = draws.mean(0), draws.std(0, ddof=1)
    out.update(metrics(mean, sd, draws, truth))
    out.update(info)
    out['lam_true'] = 1 / noise ** 2
    f = (draws ** 2).mean((1, 2))
    out['ac1_msq'] = float(np.corrcoef(f[:-1], f[1:])[0, 1])
    return out


def main():
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--set', choices=['dev', 'held', 'all'], default='dev')
    ap.add_argument('--images', default=None)
    ap.add_argument('--models', default='sb,sb1')
    ap.add_argument('--noise', default='0.01,0.05')
    ap.add_argument('--n', type=int, default=48)
    ap.add_argument('--burn', type=int, default=300)
    ap.add_argument('--keep', type=int, default=600)
    ap.add_argument('--base-from', default='results/main_dev.json,results/main_held.json')
    ap.add_argument('--out', default=None)
    ap.add_argument('--validate', action='store_true', help='dense 8x8 check of the (u, v) draw')
    a = ap.parse_args()
    if a.validate:
        print(json.dumps(validate(), indent=1))
        return
    imgs = {'dev': proto.DEV, 'held': proto.HELD, 'all': proto.DEV + proto.HELD}[a.set]
    if a.images:
        imgs = a.images.split(',')
    cache = {}
    for p in a.base_from.split(','):
        for r in json.load(open(p)):
            cache[(r['image'], r['noise'], r.get('n', 48))] = {k: r[k] for k in ('rl_rmse', 'rl_iter', 'wiener_rmse')}
    rows = []
    for name in imgs:
        for nz in [float(s) for s in a.noise.split(',')]:
            base = cache.get((name, nz, a.n))
            if base is None:
                ops = Ops(a.n)
                truth = load_truth(name, a.n)
                y = ops.A(truth) + nz * np.random.default_rng(seed_of(name, nz)).standard_normal((a.n, a.n))
                base = baselines(ops, y, truth, seed_of(name, nz, 'wiener'))
            for m in a.models.split(','):
                r = one(name, nz, m, a.n, a.burn, a.keep)
                r.update(base)
                r['rmse_ratio'] = r['rmse'] / min(base['rl_rmse'], base['wiener_rmse'])
                rows.append(r)
                print(json.dumps({k: (round(v, 4) if isinstance(v, float) else v) for k, v in r.items()}), flush=True)
                if a.out:
                    json.dump(rows, open(a.out, 'w'), indent=0)


if __name__ == '__main__':
    sys.exit(main())
