#!/usr/bin/python3
"""Prototype for issue 15: which spatially adaptive prior, which x-sampler.

Model (periodic boundary, Gaussian noise, DESIGN.md section 1):
    y = A x + e,  e ~ N(0, 1/lam),  A = periodic convolution with a
    Gaussian PSF (sigma 1.8 px here),
    x | W ~ N(0, (D' W D)^-1) (intrinsic), D = first-order forward
    increments (horizontal and vertical, 2N of them), W diagonal, the
    global prior precision delta absorbed into W.
Priors (what sets W; each is Gibbs with exact conditionals):
    gmrf1  W = delta (today's default; baseline)
    st     (a) w_e = delta omega_e, omega_e ~ Gamma(a, a) per increment, a
           fixed, delta sampled (Student-t increments; learning a by Gibbs
           is biased, see delta_update and NOTES.md section 1;
           the r = -1 member of the generalised-gamma hypermodels of
           Calvetti, Pragliola, Somersalo & Strang, Inverse Problems 2020)
    lap    (b) Laplace increments (Bardsley, J. Inverse Ill-Posed Probl.
           2012): variance 1/w_e ~ Exp(rate alpha^2/2), w_e | x inverse
           Gaussian (Park & Casella 2008), alpha^2 = delta
    ns     (c) W_e = exp(s_B(e)) tau_e: tau_e ~ Gamma(nu/2, nu/2) (Student-t
           local factor, nu fixed) times a piecewise-constant
           log-precision field s on 8x8-pixel blocks with a first-order
           intrinsic GMRF prior of precision kappa (non-stationary GMRF in
           the sense of Lindgren, Rue & Lindstrom 2011 section 3.2 /
           Fuglstad et al. 2015, on a coarse grid); s by a checkerboard
           independence-Metropolis move from a Laplace approximation,
           kappa Gamma-conjugate
    pp     (d) one weight per pixel shared by its two forward increments
    added after the main table (see NOTES.md section 3):
    gmrf2  stationary q(k)^2 (today's gmrf2)
    lt     Student-t weights on the 5-point Laplacian
    mx     st:0.5 plus a stationary second-order part gamma L'L
    mp     one weight per pixel on both orders
    nq     ns plus a second-order part gated by a second block field
All priors: W = delta * omega with omega of fixed scale (mean 1) and ONE
global delta with the rank-correct update (delta_update); a prior key
'name:p' passes p (shape a, nu or gamma) to the class.
x | W, lam: perturbation-optimisation (Orieux, Feron & Giovannelli, IEEE SPL
2012): eta = lam A'(y + lam^-1/2 e1) + D' W^1/2 e2, solve P x = eta with
P = lam A'A + D'WD by preconditioned CG, warm-started at the previous draw,
stopped at ||r|| <= tol ||eta|| (tol 1e-6 unless stated). Preconditioners:
    four   Fourier-diagonal lam|A|^2 + c q(k), c = arithmetic mean of W
    fgeo   same, c = geometric mean of W
    scal   S^1/2 C S^1/2 with C the fgeo operator and S = diag(P)/diag(C):
           a Fourier operator that sees W through a diagonal scaling
The exact auxiliary-variable split (Marnissi et al., Entropy 2018) applied
to the prior term in increment space, u | x ~ N(Dx, (cI - W)^-1) with
c >= max W, makes x | u Fourier-diagonal (precision lam A'A + c D'D); its
mixing is measured through the spectrum of P0^-1 P (P0 that operator).

Real images from Debian's scikit-image data folder, grey, block-averaged,
centre crop n x n, scaled to [0, 1]; dev half and held-out half fixed below.
Baselines: scikit-image richardson_lucy (iterations tuned on the truth,
data wrap-padded so its boundary matches the periodic blur) and
unsupervised_wiener (its own FFT, periodic).

Usage:
    nice -n 19 /usr/bin/python3 bench/adaptive/proto.py --quick
    nice -n 19 /usr/bin/python3 bench/adaptive/proto.py --set dev --out dev.json
    nice -n 19 /usr/bin/python3 bench/adaptive/proto.py --validate
Deterministic: every run seeds numpy's PCG64 from (image, noise, prior).
"""
import argparse
import json
import sys
import time
import zlib

import numpy as np
from numpy.fft import rfft2, irfft2
from scipy import special, stats, linalg

DATA = '/usr/lib/python3/dist-packages/skimage/data/'
DEV = ['cell.png', 'hubble_deep_field.jpg', 'coins.png', 'text.png', 'gravel.png']
HELD = ['ihc.png', 'microaneurysms.png', 'camera.png', 'moon.png', 'brick.png']
PSF_SIGMA = 1.8
PRIORS = ['gmrf1', 'gmrf2', 'st:0.5', 'ns:2', 'pp:0.5', 'lap', 'mx:1']
EPS_RATE = 1e-4          # Gamma rate of the weak hyperpriors (DESIGN.md defaults)


# ---------------------------------------------------------------- operators
class Ops:
    """Periodic n x n operators; arrays may carry leading batch axes."""

    def __init__(self, n, sigma=PSF_SIGMA):
        self.n, self.N = n, n * n
        r = int(np.ceil(4 * sigma))
        t = np.arange(-r, r + 1)
        k = np.exp(-0.5 * (t[:, None] ** 2 + t[None, :] ** 2) / sigma ** 2)
        self.kernel = k / k.sum()
        big = np.zeros((n, n))                    # centre at pixel (0, 0),
        ii = (t[:, None] % n) * np.ones_like(t)[None, :]   # wrapped if larger
        jj = np.ones_like(t)[:, None] * (t[None, :] % n)
        np.add.at(big, (ii, jj), self.kernel)
        self.otf = rfft2(big)
        self.otf2 = np.abs(self.otf) ** 2
        f0 = np.fft.fftfreq(n)[:, None]
        f1 = np.fft.rfftfreq(n)[None, :]
        self.q = 4 - 2 * np.cos(2 * np.pi * f0) - 2 * np.cos(2 * np.pi * f1)

    def A(self, x):
        return irfft2(rfft2(x) * self.otf, s=x.shape[-2:])

    def AtA(self, x):
        return irfft2(rfft2(x) * self.otf2, s=x.shape[-2:])

    @staticmethod
    def D(x):
        return np.roll(x, -1, -1) - x, np.roll(x, -1, -2) - x

    @staticmethod
    def Dt(h, v):
        return np.roll(h, 1, -1) - h + np.roll(v, 1, -2) - v

    @staticmethod
    def Lap(x):
        return (np.roll(x, 1, -1) + np.roll(x, -1, -1) + np.roll(x, 1, -2)
                + np.roll(x, -1, -2) - 4 * x)

    def P(self, x, lam, wh, wv, g2=0.0):
        """lam A'A + D'WD x; wv None means the Laplacian prior L'WL with
        W = wh (one weight per pixel on the 5-point Laplacian)."""
        if wv is None:
            return lam * self.AtA(x) + self.Lap(wh * self.Lap(x))
        h, v = self.D(x)
        out = lam * self.AtA(x) + self.Dt(wh * h, wv * v)
        if np.any(g2):
            out += self.Lap(g2 * self.Lap(x))     # g2 scalar or per pixel
        return out

    def four(self, lam, c, power=-1.0, order=1, g2=0.0):
        m = (lam * self.otf2 + c * self.q ** order + g2 * self.q ** 2) ** power
        n = self.n
        return lambda r: irfft2(rfft2(r) * m, s=(n, n))


def make_prec(kind, ops, lam, wh, wv, g2=0.0):
    """Preconditioner M^-1 as a function (see module docstring); a per-
    pixel second-order weight g2 enters through its mean."""
    g2_arr, g2 = g2, float(np.mean(g2))
    order = 2 if wv is None else 1
    ws = [wh] if wv is None else [wh, wv]
    if kind == 'four':
        return ops.four(lam, np.mean([w.mean() for w in ws]), order=order, g2=g2)
    c = np.exp(np.mean([np.log(w).mean() for w in ws]))
    if kind == 'fgeo':
        return ops.four(lam, c, order=order, g2=g2)
    if kind == 'scal':
        a2 = (ops.kernel ** 2).sum()           # diag of A'A
        g2v = np.broadcast_to(g2_arr, wh.shape)
        d2 = 16 * g2v + (np.roll(g2v, 1, -1) + np.roll(g2v, -1, -1) + np.roll(g2v, 1, -2) + np.roll(g2v, -1, -2))
        if wv is None:
            dP = lam * a2 + 16 * wh + (np.roll(wh, 1, -1) + np.roll(wh, -1, -1)
                                       + np.roll(wh, 1, -2) + np.roll(wh, -1, -2))
            dC = lam * a2 + 20 * c
        else:
            dP = lam * a2 + wh + wv + np.roll(wh, 1, -1) + np.roll(wv, 1, -2) + d2
            dC = lam * a2 + 4 * c + 20 * g2
        si = 1 / np.sqrt(dP / dC)
        inner = ops.four(lam, c, order=order, g2=g2)
        return lambda r: si * inner(si * r)
    raise ValueError(kind)


def pcg(Pf, Mf, b, x0, tol, maxit=3000):
    """Preconditioned CG on the last two axes (leading axes = independent
    systems). Stops when every system has ||r|| <= tol ||b||. Returns x and
    the iteration count."""
    ax = (-2, -1)
    x = x0.copy()
    r = b - Pf(x)
    z = Mf(r)
    p = z.copy()
    rz = (r * z).sum(ax, keepdims=True)
    bn = np.sqrt((b * b).sum(ax, keepdims=True))
    k = 0
    while k < maxit:
        rn = np.sqrt((r * r).sum(ax, keepdims=True))
        if np.all(rn <= tol * bn):
            break
        Ap = Pf(p)
        alpha = rz / (p * Ap).sum(ax, keepdims=True)
        x += alpha * p
        r -= alpha * Ap
        z = Mf(r)
        rz2 = (r * z).sum(ax, keepdims=True)
        p = z + (rz2 / rz) * p
        rz = rz2
        k += 1
    return x, k


def po_draw(ops, rng, y, x0, lam, wh, wv, prec, tol, batch=(), g2=0.0):
    """One perturbation-optimisation draw of x | W, lam (exact up to the CG
    tolerance)."""
    n = ops.n
    e1 = rng.standard_normal(batch + (n, n))
    eh = rng.standard_normal(batch + (n, n))
    ev = rng.standard_normal(batch + (n, n))
    if wv is None:
        pert = ops.Lap(np.sqrt(wh) * eh)
    else:
        pert = ops.Dt(np.sqrt(wh) * eh, np.sqrt(wv) * ev)
        if np.any(g2):
            pert += ops.Lap(np.sqrt(g2) * rng.standard_normal(batch + (n, n)))
    eta = lam * ops.A(y + e1 / np.sqrt(lam)) + pert
    Pf = lambda v: ops.P(v, lam, wh, wv, g2)
    return pcg(Pf, make_prec(prec, ops, lam, wh, wv, g2), eta, x0, tol)


# ---------------------------------------------------------------- priors
def grid_draw(rng, logp, grid):
    p = np.exp(logp - logp.max())
    return grid[rng.choice(len(grid), p=p / p.sum())]


class Gmrf1:
    name = 'gmrf1'

    def __init__(self, n, rng, h, v, delta):
        self.N, self.rng, self.delta = n * n, rng, delta

    def weights(self):
        return self.delta, self.delta

    def update(self, h, v):
        ss = (h * h).sum() + (v * v).sum()
        self.delta = self.rng.gamma(1 + (self.N - 1) / 2, 1 / (EPS_RATE + ss / 2))

    def trace(self):
        return {'delta': self.delta}


def delta_update(rng, N, h, v, wh, wv):
    """Global precision delta | x, omega ~ Gamma(1 + (N-1)/2, 1e-4 + q/2),
    q = sum_e omega_e d_e^2. The exponent (N-1)/2 is the rank of the field
    (x has N-1 non-constant directions), NOT the number of increments 2N:
    p(x | delta) = delta^((N-1)/2) prod_e f(sqrt(delta) d_e) / C by scaling.
    Counting 2N (as a per-increment conjugate update of the mixing law's
    scale does) tilts the scale by delta^((N+1)/2) and collapses the field
    (measured: Laplace alpha^2 -> 1e7, z sd 50; Student-t z sd 3)."""
    q = (wh * h * h).sum() + (wv * v * v).sum()
    return rng.gamma(1 + (N - 1) / 2, 1 / (EPS_RATE + q / 2))


class StudentT:
    """(a) W = delta * omega, omega_e ~ Gamma(a, a) per increment (Student-t
    increments, nu = 2a), a fixed (the shape's normaliser C(a) over x is
    unknown, so a Gibbs update of a is biased; a is chosen on the dev set)."""
    name = 'st'

    def __init__(self, n, rng, h, v, delta, a=1.0):
        self.rng, self.a, self.delta, self.N = rng, a, delta, n * n
        self.draw_omega(h, v)

    def weights(self):
        return self.delta * self.oh, self.delta * self.ov

    def draw_omega(self, h, v):
        g, a, d = self.rng.gamma, self.a, self.delta
        self.oh = g(a + 0.5, 1 / (a + d * h * h / 2))
        self.ov = g(a + 0.5, 1 / (a + d * v * v / 2))

    def update(self, h, v):
        self.draw_omega(h, v)
        self.delta = delta_update(self.rng, self.N, h, v, self.oh, self.ov)

    def trace(self):
        return {'delta': self.delta}


class PerPixel(StudentT):
    """(d) one Gamma(a, a) weight per pixel shared by its two forward
    increments."""
    name = 'pp'

    def draw_omega(self, h, v):
        a, d = self.a, self.delta
        self.oh = self.ov = self.rng.gamma(a + 1.0, 1 / (a + d * (h * h + v * v) / 2))


class Laplace(StudentT):
    """(b) Laplace increments with rate sqrt(delta): omega_e = precision of
    the scaled increment, 1/omega ~ Exp(rate 1/2), omega | x inverse
    Gaussian(1/(sqrt(delta)|d|), 1) (Park & Casella 2008)."""
    name = 'lap'

    def draw_omega(self, h, v):
        sd = np.sqrt(self.delta)
        self.oh = self.rng.wald(1 / np.maximum(sd * np.abs(h), 1e-300), 1.0)
        self.ov = self.rng.wald(1 / np.maximum(sd * np.abs(v), 1e-300), 1.0)


class LapT(StudentT):
    """(e, added) Student-t on the 5-point Laplacian, one weight per
    pixel: W = delta * omega, omega_i ~ Gamma(a, a), precision L'WL. A
    point source or a ridge is one large Laplacian value (one weight frees
    it); flat areas get the steeper q(k)^2 spectral fall-off of gmrf2,
    which is what the stationary z sd < 1 on flat areas asks for."""
    name = 'lt'

    def weights(self):
        return self.delta * self.oh, None

    def draw_omega(self, l, _):
        a, d = self.a, self.delta
        self.oh = self.rng.gamma(a + 0.5, 1 / (a + d * l * l / 2))

    def update(self, l, _):
        self.draw_omega(l, None)
        q = (self.oh * l * l).sum()
        self.delta = self.rng.gamma(1 + (self.N - 1) / 2, 1 / (EPS_RATE + q / 2))


class Gmrf2(LapT):
    """Stationary gmrf2 (q(k)^2), today's selectable prior, by the same
    code (omega = 1)."""
    name = 'gmrf2'

    def draw_omega(self, l, _):
        self.oh = np.ones_like(l)


class Mixed(StudentT):
    """(f, added) Student-t first-order increments plus a stationary
    second-order term with a fixed ratio gamma: prior precision
    delta (D' Omega D + gamma Q2), Q2 = L'L (gmrf2's q(k)^2). One global
    delta (rank-correct, exact by scaling); omega | x as in (a); gamma
    fixed (chosen on dev). The q^2 term steepens the prior spectrum at the
    unresolved high frequencies (what flat areas need); the t weights free
    the first-order part at edges."""
    name = 'mx'
    A = 0.5

    def __init__(self, n, rng, h, v, delta, gamma=1.0):
        self.gamma = gamma
        super().__init__(n, rng, h, v, delta, self.A)

    @property
    def g2(self):
        return self.delta * self.gamma

    def update_mixed(self, h, v, x2):
        self.draw_omega(h, v)
        q = (self.oh * h * h).sum() + (self.ov * v * v).sum() + self.gamma * x2
        self.delta = self.rng.gamma(1 + (self.N - 1) / 2, 1 / (EPS_RATE + q / 2))


class MixPix(StudentT):
    """(g, added) one weight per pixel shared by its two forward
    increments AND its Laplacian: prior precision
    delta (D' Omega D + gamma L Omega L), omega_i ~ Gamma(a, a),
    omega | x ~ Gamma(a + 3/2, a + delta (h^2 + v^2 + gamma l^2) / 2),
    delta rank-correct. Flat areas get the steep q + gamma q^2 spectrum,
    an edge or a spot frees both orders at once."""
    name = 'mp'
    A = 0.5

    def __init__(self, n, rng, h, v, delta, gamma=1.0):
        self.gamma = gamma
        self.rng, self.a, self.delta, self.N = rng, self.A, delta, n * n
        self.oh = self.ov = np.ones((n, n))

    @property
    def g2(self):
        return self.delta * self.gamma * self.oh

    def update_mixed(self, h, v, l):
        a, d, gm = self.a, self.delta, self.gamma
        e = h * h + v * v + gm * l * l
        self.oh = self.ov = self.rng.gamma(a + 1.5, 1 / (a + d * e / 2))
        self.delta = self.rng.gamma(1 + (self.N - 1) / 2, 1 / (EPS_RATE + (self.oh * e).sum() / 2))


class BlockField:
    """What ns and nq share: a field s constant on BS x BS blocks times the
    per-increment factors th, tv (needs self.s, self.m, self.BS, self.th,
    self.tv)."""

    def up(self, a):
        return np.kron(a, np.ones((self.BS, self.BS)))

    def weights(self):
        e = np.exp(self.up(self.s))
        return e * self.th, e * self.tv

    def blocksum(self, a):
        m, b = self.m, self.BS
        return a.reshape(m, b, m, b).sum((1, 3))


class NonStatQ(BlockField):
    """(h, added) ns plus a second-order term gated per block:
    prior precision D'(e^s tau)D + L diag(e^s2) L, s and s2 piecewise
    constant on BS x BS blocks, each a first-order intrinsic GMRF on the
    coarse grid (precisions kappa1, kappa2 ~ Gamma(1, KRATE)), tau as ns.
    Block normaliser by the local-stationary (Whittle) approximation
    (BS^2/2) [s + g(s2 - s)], g(t) = mean_k log(q_k + e^t q_k^2) over the
    frame's non-zero frequencies (exact for block-constant fields equal
    everywhere; the ns rank-share count is its t -> -inf limit). Flat
    blocks can raise s2 (steep spectrum), edge blocks drop it."""
    name = 'nq'
    BS = 8
    KRATE = 0.5

    def __init__(self, n, rng, h, v, delta, nu=2.0):
        self.rng, self.n, self.nu = rng, n, nu
        self.m = n // self.BS
        self.s = np.full((self.m, self.m), np.log(delta))
        self.s2 = np.full((self.m, self.m), np.log(delta))
        self.k1 = self.k2 = 2.0
        f0 = np.fft.fftfreq(n)[:, None]
        q = (4 - 2 * np.cos(2 * np.pi * f0) - 2 * np.cos(2 * np.pi * f0.T)).ravel()[1:]
        self.tg = np.linspace(-40, 40, 1601)
        self.gt = np.array([np.mean(np.log(q + np.exp(t) * q * q)) for t in self.tg])
        self.g1 = np.gradient(self.gt, self.tg)
        self.g2t = np.gradient(self.g1, self.tg)
        self.acc = []
        self.l = np.zeros((n, n))
        self.th = np.ones((n, n))
        self.tv = np.ones((n, n))

    def g(self, t, which=0):
        return np.interp(t, self.tg, (self.gt, self.g1, self.g2t)[which])

    @property
    def g2(self):
        return self.up(np.exp(self.s2))

    def field_move(self, which, R, kappa):
        rng, nb = self.rng, self.BS ** 2
        k4 = 4 * kappa
        ii, jj = np.indices((self.m, self.m))
        for colour in (0, 1):
            cur = self.s if which == 0 else self.s2
            oth = self.s2 if which == 0 else self.s
            mbar = (np.roll(cur, 1, 0) + np.roll(cur, -1, 0) + np.roll(cur, 1, 1) + np.roll(cur, -1, 1)) / 4
            def parts(u):
                t = (oth - u) if which == 0 else (u - oth)
                # s's own count BS^2/2 (s2's is inside g); g carries the rest
                return t, nb / 2 * (u if which == 0 else 0.0) + nb / 2 * self.g(t)

            def logf(u):
                t, lin = parts(u)
                return lin - np.exp(u) * R / 2 - k4 / 2 * (u - mbar) ** 2
            u = cur.copy() * 0 + mbar
            for _ in range(12):
                t = (oth - u) if which == 0 else (u - oth)
                cnt = nb / 2 * ((1 - self.g(t, 1)) if which == 0 else self.g(t, 1))
                f1 = cnt - np.exp(u) * R / 2 - k4 * (u - mbar)
                f2 = nb / 2 * self.g(t, 2) - np.exp(u) * R / 2 - k4
                f2 = np.minimum(f2, -0.5)
                u = u - np.clip(f1 / f2, -3, 3)
            t = (oth - u) if which == 0 else (u - oth)
            f2 = np.minimum(nb / 2 * self.g(t, 2) - np.exp(u) * R / 2 - k4, -0.5)
            sd = 1 / np.sqrt(-f2)
            prop = u + sd * rng.standard_normal(cur.shape)
            lq = lambda w: -0.5 * ((w - u) / sd) ** 2
            la = logf(prop) - logf(cur) + lq(cur) - lq(prop)
            sel = (ii + jj) % 2 == colour
            ok = (np.log(rng.random(cur.shape)) < la) & sel
            self.acc.append(ok.sum() / max(1, sel.sum()))
            new = np.where(ok, prop, cur)
            if which == 0:
                self.s = new
            else:
                self.s2 = new

    def update_q(self, h, v, l):
        g = self.rng.gamma
        es = np.exp(self.up(self.s))
        nu = self.nu
        self.th = g(nu / 2 + 0.5, 1 / (nu / 2 + es * h * h / 2))
        self.tv = g(nu / 2 + 0.5, 1 / (nu / 2 + es * v * v / 2))
        self.field_move(0, self.blocksum(self.th * h * h + self.tv * v * v), self.k1)
        self.field_move(1, self.blocksum(l * l), self.k2)
        for nm in ('s', 's2'):
            a = getattr(self, nm)
            qs = ((np.roll(a, -1, 0) - a) ** 2).sum() + ((np.roll(a, -1, 1) - a) ** 2).sum()
            kk = g(1 + (a.size - 1) / 2, 1 / (self.KRATE + qs / 2))
            if nm == 's':
                self.k1 = kk
            else:
                self.k2 = kk

    def trace(self):
        return {'kappa1': self.k1, 'kappa2': self.k2, 'smean': self.s.mean(),
                's2mean': self.s2.mean(), 's2spread': self.s2.max() - self.s2.min(),
                'acc_s': float(np.mean(self.acc[-20:]))}


class NonStat(BlockField):
    """(c) W = exp(s_block) * tau, tau_e ~ Gamma(nu/2, nu/2) (nu fixed), s
    piecewise constant on BS x BS blocks with a first-order intrinsic GMRF
    prior of precision kappa ~ Gamma(1, KRATE); s carries the global level
    (flat prior on its mean). The block's count in the s-conditional is its
    pixel count BS^2 (its share of the field's rank; exact for a common
    shift of s, a local approximation of (1/2) log det(D'WD) otherwise),
    not its 2 BS^2 increments (see delta_update)."""
    name = 'ns'
    BS = 8
    KRATE = 0.5                    # kappa prior rate (our choice; mean 2)

    def __init__(self, n, rng, h, v, delta, nu=2.0):
        self.rng, self.n, self.nu = rng, n, nu
        self.m = n // self.BS
        self.s = np.full((self.m, self.m), np.log(delta))
        self.kappa = 2.0
        self.acc = []
        for _ in range(3):
            self.update(h, v)

    def update(self, h, v):
        g, rng = self.rng.gamma, self.rng
        es = np.exp(self.up(self.s))
        nu = self.nu
        self.th = g(nu / 2 + 0.5, 1 / (nu / 2 + es * h * h / 2))
        self.tv = g(nu / 2 + 0.5, 1 / (nu / 2 + es * v * v / 2))
        R = self.blocksum(self.th * h * h + self.tv * v * v)
        nb = self.BS ** 2
        k4 = 4 * self.kappa
        ii, jj = np.indices((self.m, self.m))
        for colour in (0, 1):
            s = self.s
            mbar = (np.roll(s, 1, 0) + np.roll(s, -1, 0) + np.roll(s, 1, 1) + np.roll(s, -1, 1)) / 4

            def logf(t):
                return nb / 2 * t - np.exp(t) * R / 2 - k4 / 2 * (t - mbar) ** 2
            t = s.copy()
            for _ in range(8):          # Newton to the mode (log-concave)
                f1 = nb / 2 - np.exp(t) * R / 2 - k4 * (t - mbar)
                f2 = -np.exp(t) * R / 2 - k4
                t = t - f1 / f2
            sd = 1 / np.sqrt(np.exp(t) * R / 2 + k4)
            prop = t + sd * rng.standard_normal(s.shape)
            lq = lambda u: -0.5 * ((u - t) / sd) ** 2
            la = logf(prop) - logf(s) + lq(s) - lq(prop)
            sel = (ii + jj) % 2 == colour
            ok = (np.log(rng.random(s.shape)) < la) & sel
            self.acc.append(ok.sum() / max(1, sel.sum()))
            self.s = np.where(ok, prop, s)
        s = self.s
        qs = ((np.roll(s, -1, 0) - s) ** 2).sum() + ((np.roll(s, -1, 1) - s) ** 2).sum()
        self.kappa = g(1 + (s.size - 1) / 2, 1 / (self.KRATE + qs / 2))

    def trace(self):
        return {'kappa': self.kappa, 'smean': self.s.mean(),
                'sspread': self.s.max() - self.s.min(),
                'acc_s': float(np.mean(self.acc[-20:]))}


PRIOR_CLASS = {'gmrf1': Gmrf1, 'st': StudentT, 'lap': Laplace, 'ns': NonStat, 'pp': PerPixel,
               'lt': LapT, 'gmrf2': Gmrf2, 'mx': Mixed, 'mp': MixPix, 'nq': NonStatQ}
ORDER2 = ('lt', 'gmrf2')


# ---------------------------------------------------------------- data
def load_truth(name, n):
    from skimage import io, color, transform
    im = io.imread(DATA + name)
    if im.ndim == 3:
        im = color.rgb2gray(im[..., :3])
    im = im.astype(float)
    f = max(1, min(im.shape[:2]) // (3 * n))
    im = transform.downscale_local_mean(im, (f, f))
    c0, c1 = im.shape[0] // 2 - n // 2, im.shape[1] // 2 - n // 2
    t = im[c0:c0 + n, c1:c1 + n]
    return (t - t.min()) / (t.max() - t.min())


def seed_of(*parts):
    return zlib.crc32('/'.join(map(str, parts)).encode())


# ---------------------------------------------------------------- baselines
def baselines(ops, y, truth, seed):
    from skimage import restoration
    r = ops.kernel.shape[0] // 2 + 4
    yp = np.pad(np.maximum(y, 1e-4), r, mode='wrap')
    best = (np.inf, 0)
    for it in (2, 5, 10, 20, 30, 50, 75, 100, 150, 200, 300):
        est = restoration.richardson_lucy(yp, ops.kernel, num_iter=it, clip=False)[r:-r, r:-r]
        best = min(best, (np.sqrt(np.mean((est - truth) ** 2)), it))
    w, _ = restoration.unsupervised_wiener(y, ops.kernel, clip=False,
                                          random_state=np.random.default_rng(seed))
    return {'rl_rmse': best[0], 'rl_iter': best[1],
            'wiener_rmse': float(np.sqrt(np.mean((w - truth) ** 2)))}


# ---------------------------------------------------------------- metrics
def classes(truth):
    gy = (np.roll(truth, -1, 0) - np.roll(truth, 1, 0)) / 2
    gx = (np.roll(truth, -1, 1) - np.roll(truth, 1, 1)) / 2
    g = np.hypot(gx, gy)
    return {'edges': g >= np.quantile(g, 0.9), 'bright': truth >= np.quantile(truth, 0.98),
            'dark': truth <= np.quantile(truth, 0.1), 'flat': g <= np.quantile(g, 0.5)}


def metrics(mean, sd, draws, truth):
    z = (mean - truth) / sd
    c95 = np.abs(z) <= 1.959964
    c50 = np.abs(z) <= 0.674490
    lo, hi = np.quantile(draws, [0.025, 0.975], axis=0)
    out = {'cov95': c95.mean(), 'cov50': c50.mean(),
           'cov95_emp': ((truth >= lo) & (truth <= hi)).mean(),
           'zsd': z.std(), 'spearman': stats.spearmanr(sd.ravel(), np.abs(mean - truth).ravel())[0],
           'rmse': np.sqrt(np.mean((mean - truth) ** 2))}
    for k, m in classes(truth).items():
        out['cov95_' + k] = c95[m].mean()
        out['zsd_' + k] = z[m].std()
    return out


# ---------------------------------------------------------------- sampler
def run_chain(ops, y, prior, rng, n_burn, n_keep, prec='four', tol=1e-6, log=None):
    """Gibbs: x | W, lam (PO-PCG); lam | x (Gamma); W and its hyper-
    parameters | x (the prior's conditionals). Starts from 40 exact
    Fourier-diagonal gmrf1 iterations."""
    n, N = ops.n, ops.N
    yh = rfft2(y)
    lam, delta = 1.0 / np.var(y), 1.0
    for _ in range(40):                         # exact gmrf1 warm-up
        p = lam * ops.otf2 + delta * ops.q
        wn = rfft2(rng.standard_normal((n, n)))
        x = irfft2((lam * np.conj(ops.otf) * yh + wn * np.sqrt(p)) / p, s=(n, n))
        res = ops.A(x) - y
        lam = rng.gamma(1 + N / 2, 1 / (EPS_RATE + (res ** 2).sum() / 2))
        h, v = ops.D(x)
        delta = rng.gamma(1 + (N - 1) / 2, 1 / (EPS_RATE + (h * h).sum() / 2 + (v * v).sum() / 2))
    base, _, par = prior.partition(':')
    if base in ORDER2:
        h, v = ops.Lap(x), None
        delta = (N - 1) / (h * h).sum()
    pr = PRIOR_CLASS[base](n, rng, h, v, delta, *([float(par)] if par else []))
    draws, its, tr = [], [], []
    for it in range(n_burn + n_keep):
        wh, wv = pr.weights()
        wh = np.broadcast_to(wh, (n, n)).astype(float)
        wv = None if wv is None else np.broadcast_to(wv, (n, n)).astype(float)
        x, k = po_draw(ops, rng, y, x, lam, wh, wv, prec, tol, g2=getattr(pr, 'g2', 0.0))
        its.append(k)
        res = ops.A(x) - y
        lam = rng.gamma(1 + N / 2, 1 / (EPS_RATE + (res ** 2).sum() / 2))
        h, v = (ops.Lap(x), None) if base in ORDER2 else ops.D(x)
        if base == 'mx':
            pr.update_mixed(h, v, (ops.Lap(x) ** 2).sum())
        elif base == 'mp':
            pr.update_mixed(h, v, ops.Lap(x))
        elif base == 'nq':
            pr.update_q(h, v, ops.Lap(x))
        else:
            pr.update(h, v)
        if it >= n_burn:
            draws.append(x.copy())
        t = pr.trace()
        t['lam'] = lam
        tr.append(t)
    return np.array(draws), np.array(its), tr, pr, x, lam


def weight_spread(wh, wv):
    w = np.concatenate([np.ravel(wh), np.ravel(wh if wv is None else wv)])
    lw = np.log10(w)
    return {'w_log10_range': float(lw.max() - lw.min()),
            'w_log10_p1_p99': float(np.quantile(lw, 0.99) - np.quantile(lw, 0.01))}


def solver_study(ops, y, x, lam, wh, wv, rng, sd_chain, dense=True, g2=0.0):
    """CG iterations per draw for each preconditioner (warm start at x,
    tol 1e-6), the deviation of a tol-1e-6 draw from a tol-1e-12 draw with
    the same noise (in posterior-sd units, sd from the dense inverse), and
    the spectra that set CG's and the auxiliary split's speed."""
    out = weight_spread(wh, wv)
    n, N = ops.n, ops.N
    for pk in ('four', 'fgeo', 'scal'):
        ks = []
        for r in range(3):
            st = np.random.default_rng(seed_of('study', pk, r))
            _, k = po_draw(ops, st, y, x, lam, wh, wv, pk, 1e-6, g2=g2)
            ks.append(k)
        out['it_' + pk] = float(np.mean(ks))
    # looser tolerances: iterations and the draw's deviation from a
    # tol-1e-12 draw with the same noise, in units of the chain's
    # posterior sd (sd_chain) and of the conditional sd (dense, if asked)
    ref, _ = po_draw(ops, np.random.default_rng(7), y, x, lam, wh, wv, 'four', 1e-12, g2=g2)
    for pk in ('four', 'scal'):
        for tol in (1e-2, 1e-3, 1e-4):
            xa, k = po_draw(ops, np.random.default_rng(7), y, x, lam, wh, wv, pk, tol, g2=g2)
            d = np.abs(xa - ref) / sd_chain
            out[f'tol{tol:.0e}_{pk}_it'] = k
            out[f'tol{tol:.0e}_{pk}_errmax_sd'] = float(d.max())
            out[f'tol{tol:.0e}_{pk}_errrms_sd'] = float(np.sqrt(np.mean(d ** 2)))
    if not dense:
        return out
    I = np.eye(N).reshape(N, n, n)
    P = ops.P(I, lam, wh, wv, g2).reshape(N, N)
    P = 0.5 * (P + P.T)
    sdc = np.sqrt(np.diag(linalg.inv(P))).reshape(n, n)
    for tol in (1e-3, 1e-4, 1e-6):
        xa, k = po_draw(ops, np.random.default_rng(7), y, x, lam, wh, wv, 'four', tol, g2=g2)
        out[f'tol{tol:.0e}_four_errmax_condsd'] = float((np.abs(xa - ref) / sdc).max())
    w2 = wh if wv is None else wv
    order = 2 if wv is None else 1
    c_arith = 0.5 * (wh.mean() + w2.mean())
    c_geo = np.exp(0.5 * (np.log(wh).mean() + np.log(w2).mean()))
    c_max = max(wh.max(), w2.max()) * (1 + 1e-9)
    for lab, c in (('four', c_arith), ('fgeo', c_geo), ('aux', c_max)):
        Mh = ops.four(lam, c, -0.5, order, g2)(I).reshape(N, N)     # M^-1/2, dense
        K = Mh @ P @ Mh
        ev = linalg.eigvalsh(0.5 * (K + K.T))
        out['kappa_' + lab] = float(ev[-1] / ev[0])
        if lab == 'aux':
            # x-chain of the (u, x) Gibbs is AR(1) with rates 1 - ev;
            # integrated autocorrelation time of the slowest mode
            rho = 1 - ev[0]
            out['aux_tau_slowest'] = float((1 + rho) / (1 - rho))
            out['aux_tau_median'] = float(np.median((2 - ev) / ev))
    return out


def one_config(name, noise, prior, n, n_burn, n_keep, study, dense=False, prec='four'):
    ops = Ops(n)
    truth = load_truth(name, n)
    rng = np.random.default_rng(seed_of(name, noise))
    y = ops.A(truth) + noise * rng.standard_normal((n, n))
    rng = np.random.default_rng(seed_of(name, noise, prior))
    t0 = time.time()
    draws, its, tr, pr, x, lam = run_chain(ops, y, prior, rng, n_burn, n_keep, prec)
    el = time.time() - t0
    mean, sd = draws.mean(0), draws.std(0, ddof=1)
    out = {'image': name, 'noise': noise, 'prior': prior, 'n': n, 'seconds': el,
           'cg_it_mean': float(its[n_burn:].mean()), 'cg_it_max': int(its[n_burn:].max())}
    out.update(metrics(mean, sd, draws, truth))
    keep = tr[n_burn:]
    for k in keep[0]:
        out['hyp_' + k] = float(np.median([t[k] for t in keep]))
    out['lam_true'] = 1 / noise ** 2
    # crude mixing check: lag-1 autocorrelation of the frame-mean-square of draws
    f = (draws ** 2).mean((1, 2))
    out['ac1_msq'] = float(np.corrcoef(f[:-1], f[1:])[0, 1])
    if study:
        wh, wv = pr.weights()
        wh = np.broadcast_to(wh, (n, n)).astype(float)
        wv = None if wv is None else np.broadcast_to(wv, (n, n)).astype(float)
        out.update(solver_study(ops, y, x, lam, wh, wv, rng, sd, dense=dense, g2=getattr(pr, 'g2', 0.0)))
    return out


# ---------------------------------------------------------------- 8x8 check
def validate(ndraw=20000, seed=1):
    """x | W, lam by PO-PCG against the dense Gaussian posterior on 8x8,
    with weights spread over 6 orders of magnitude. Returns the worst
    standardised mean error and variance ratio, and the same for the
    auxiliary-variable Gibbs chain."""
    ops = Ops(8, sigma=1.2)
    rng = np.random.default_rng(seed)
    n, N = 8, 64
    truth = rng.random((n, n))
    lam = 1e4
    y = ops.A(truth) + 0.01 * rng.standard_normal((n, n))
    wh = 10 ** rng.uniform(-1, 5, (n, n))
    wv = 10 ** rng.uniform(-1, 5, (n, n))
    I = np.eye(N).reshape(N, n, n)
    P = ops.P(I, lam, wh, wv).reshape(N, N)
    P = 0.5 * (P + P.T)
    C = linalg.inv(P)
    mu = C @ (lam * ops.A(y)).ravel()   # A' = A (symmetric PSF)
    res = {}
    for pk in ('four', 'scal'):
        xs, k = po_draw(ops, rng, y, np.zeros((ndraw, n, n)), lam, wh, wv, pk, 1e-10, batch=(ndraw,))
        xs = xs.reshape(ndraw, N)
        m, v = xs.mean(0), xs.var(0, ddof=1)
        zm = (m - mu) / np.sqrt(np.diag(C) / ndraw)
        vr = v / np.diag(C)
        res[pk] = {'cg_iters': k, 'max_abs_z_mean': float(np.abs(zm).max()),
                   'var_ratio_min': float(vr.min()), 'var_ratio_max': float(vr.max()),
                   'var_ratio_tol': float(4 * np.sqrt(2 / ndraw))}
    # the Laplacian (second-order) operator L'WL, one weight per pixel
    PL = ops.P(I, lam, wh, None).reshape(N, N)
    PL = 0.5 * (PL + PL.T)
    CL = linalg.inv(PL)
    muL = CL @ (lam * ops.A(y)).ravel()
    for pk in ('four', 'scal'):
        xs, k = po_draw(ops, rng, y, np.zeros((ndraw, n, n)), lam, wh, None, pk, 1e-10, batch=(ndraw,))
        xs = xs.reshape(ndraw, N)
        zm = (xs.mean(0) - muL) / np.sqrt(np.diag(CL) / ndraw)
        vr = xs.var(0, ddof=1) / np.diag(CL)
        res[pk + '_laplacian'] = {'cg_iters': k, 'max_abs_z_mean': float(np.abs(zm).max()),
                                  'var_ratio_min': float(vr.min()), 'var_ratio_max': float(vr.max()),
                                  'var_ratio_tol': float(4 * np.sqrt(2 / ndraw))}
    # auxiliary-variable Gibbs, many parallel chains from the dense draw
    c = max(wh.max(), wv.max()) * 1.01
    p0 = lam * ops.otf2 + c * ops.q
    nch, nst = 2000, 400
    x = (mu[:, None] + linalg.cholesky(C, lower=True) @ rng.standard_normal((N, nch))).T.reshape(nch, n, n)
    for _ in range(nst):
        h, v = ops.D(x)
        uh = h + rng.standard_normal(x.shape) / np.sqrt(c - wh)
        uv = v + rng.standard_normal(x.shape) / np.sqrt(c - wv)
        b = lam * ops.A(y) + ops.Dt((c - wh) * uh, (c - wv) * uv)
        x = irfft2((rfft2(b) + rfft2(rng.standard_normal(x.shape)) * np.sqrt(p0)) / p0, s=(n, n))
    xs = x.reshape(nch, N)
    zm = (xs.mean(0) - mu) / np.sqrt(np.diag(C) / nch)
    vr = xs.var(0, ddof=1) / np.diag(C)
    res['aux'] = {'steps': nst, 'chains': nch, 'max_abs_z_mean': float(np.abs(zm).max()),
                  'var_ratio_min': float(vr.min()), 'var_ratio_max': float(vr.max()),
                  'var_ratio_tol': float(4 * np.sqrt(2 / nch))}
    # tolerance bound: ||x_tol - x*||_P <= ||r|| / sqrt(lambda_min(P)); in sd units per pixel
    ev = linalg.eigvalsh(P)
    res['lambda_min_P'] = float(ev[0])
    return res


# ---------------------------------------------------------------- main
def main():
    ap = argparse.ArgumentParser(description=__doc__.split('\n')[0])
    ap.add_argument('--quick', action='store_true', help='2 images, 1 noise, short chains')
    ap.add_argument('--set', choices=['dev', 'held', 'all'], default='dev')
    ap.add_argument('--priors', default=','.join(PRIORS))
    ap.add_argument('--noise', default='0.01,0.05')
    ap.add_argument('--n', type=int, default=48)
    ap.add_argument('--burn', type=int, default=150)
    ap.add_argument('--keep', type=int, default=250)
    ap.add_argument('--study', action='store_true', help='solver study per run (dense spectra)')
    ap.add_argument('--dense', action='store_true', help='with --study: dense spectra (n <= 64)')
    ap.add_argument('--prec', default='four', choices=['four', 'fgeo', 'scal'],
                    help='preconditioner of the chain\'s x-draws')
    ap.add_argument('--base-from', default=None,
                    help='comma list of earlier JSON outputs to take the RL/Wiener baselines from')
    ap.add_argument('--images', default=None, help='comma list overriding --set')
    ap.add_argument('--validate', action='store_true', help='only the dense 8x8 check')
    ap.add_argument('--out', default=None)
    a = ap.parse_args()
    if a.validate:
        r = validate(4000 if a.quick else 20000)
        print(json.dumps(r, indent=1))
        if a.out:
            json.dump(r, open(a.out, 'w'), indent=1)
        return
    imgs = {'dev': DEV, 'held': HELD, 'all': DEV + HELD}[a.set]
    if a.images:
        imgs = a.images.split(',')
    noises = [float(s) for s in a.noise.split(',')]
    priors = a.priors.split(',')
    if a.quick:
        imgs, noises, a.burn, a.keep = imgs[:2], noises[-1:], 60, 100
    rows = []
    cache = {}
    for p in (a.base_from.split(',') if a.base_from else []):
        for r in json.load(open(p)):
            cache[(r['image'], r['noise'])] = {k: r[k] for k in ('rl_rmse', 'rl_iter', 'wiener_rmse')}
    for name in imgs:
        for nz in noises:
            ops = Ops(a.n)
            truth = load_truth(name, a.n)
            y = ops.A(truth) + nz * np.random.default_rng(seed_of(name, nz)).standard_normal((a.n, a.n))
            base = cache.get((name, nz)) or baselines(ops, y, truth, seed_of(name, nz, 'wiener'))
            for pr in priors:
                r = one_config(name, nz, pr, a.n, a.burn, a.keep, a.study, a.dense and a.n <= 64, a.prec)
                r.update(base)
                r['rmse_ratio'] = r['rmse'] / min(base['rl_rmse'], base['wiener_rmse'])
                rows.append(r)
                print(json.dumps({k: (round(v, 4) if isinstance(v, float) else v)
                                  for k, v in r.items()}), flush=True)
                if a.out:
                    json.dump(rows, open(a.out, 'w'), indent=0)


if __name__ == '__main__':
    sys.exit(main())
