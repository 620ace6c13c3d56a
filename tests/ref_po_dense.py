"""x | W, lambda, delta by perturbation-optimisation with PCG (src/po_solve.c,
through tests/probe_po) against the dense Gaussian posterior computed with
numpy.linalg (outside source: numpy's inverse of the dense precision
P = lambda A'A + delta D'WD, with A and D built here as dense matrices from
their definitions, not from the C code). Issue 15: "With w fixed:
x | w, lambda, delta against the dense numpy Gaussian posterior (mean and
covariance diagonal) on frames small enough to invert".

Checks (fixed seeds):
1. 8x8 frame, Gaussian PSF (sigma 1.2 px, centre off by (0.3, -0.4) px), weights log-uniform over six
   decades (1e-1..1e5, as bench/adaptive/proto.py --validate), tol 1e-10,
   20000 independent draws: the 64 pixel means within 4.5 standard errors
   of the dense mean (max |z|; for 64 independent normals
   P(max |z| > 4.5) ~ 64 x 6.8e-6 = 4e-4), and each pixel's sample
   variance / dense variance within 4 sqrt(2/n) of 1 (the sample variance
   of n normal draws has relative sd sqrt(2/(n-1)); a 4-sd band gives
   P(any of 64 outside) ~ 4e-3). Every draw converged (status 0,
   relative residual <= tol).
2. The cap fires: cap 1 -> every draw returns PP_ERR_LIMIT with 1
   iteration and a residual above tol (never a silent stop).
3. Inexact solves, 32x32 frame, weights log-uniform over 3 decades
   (1..1e3, the p1-p99 spread NOTES.md section 4 measured at the chains'
   final weights) and over 6 (1e-1..1e5): 4 draws at tol t against the
   draws at tol 1e-12 with the same noise, per pixel in conditional sd
   (dense inverse). NOTES.md section 4 measured 4-8e-4 at tol 1e-6 in the
   prototype on real-image weights and proposed a bound of 1e-3; on these
   iid weights the C solver measured 1.2-1.6e-3 at tol 1e-6 (rms 2-3e-4)
   and 1.0-1.4e-4 at tol 1e-7, so the bounds asserted are 2e-3 at 1e-6 (the
   measured value plus a quarter, a regression guard) and the 1e-3 of
   NOTES.md at 1e-7 (ten times the measured value).
4. Reversible-jump PO (pp_po_draw_rj, what the adaptive sampler runs): the
   8x8 problem of check 1, chains of 20000 moves from x0 = 0 (the first
   1000 dropped), at the sampler's eps 0.1 with alpha 1 and at a loose eps
   (3.0) with alpha 1.5 and 1.0, where a third to a half of the moves are
   rejected, so a wrong acceptance ratio would show (a numpy prototype of
   the same move with the ratio's sign flipped was off by 16-60 standard
   errors). Pixel means and variances (about the dense mean) against the
   dense posterior, standard errors from 50 batch means (the chain is
   autocorrelated: rejected moves repeat x): max |z| < 4.5 over the 64
   means and over the 64 variances (with the batch-means t of 49 degrees
   of freedom, P(|t| > 4.5) ~ 4e-5, times 128 ~ 5e-3). The acceptance at
   eps 0.1 must be >= 0.85 (the header of po_solve.h: about 0.94 when the
   energy estimate is right; a regression guard, measured here), and at
   the loose eps below 0.8 (otherwise those chains would not test the
   correction).
"""
import os

import numpy as np

import pptest

PP_OK, PP_ERR_LIMIT = 0, 5  # include/pixpost/status.h


def gaussian_psf(sigma, half=3, shift=(0.3, -0.4)):
    """A Gaussian PSF whose centre is off the centre pixel by `shift`, so
    that A is not symmetric and the transfer function is complex (a solver
    that used A for A' would fail the checks)."""
    r = np.arange(-half, half + 1)
    g = np.exp(-((r[:, None] - shift[0]) ** 2 + (r[None, :] - shift[1]) ** 2) / (2 * sigma ** 2))
    return g / g.sum()


def dense_ops(h, w, psf):
    """Dense A (periodic convolution by psf, pixpost's centring) and the
    2N x N increment matrix D (horizontal block first), row-major pixels."""
    n = h * w
    T = pptest.transfer(psf, (h, w))
    eye = np.eye(n).reshape(n, h, w)
    A = np.real(np.fft.ifft2(T[None] * np.fft.fft2(eye))).reshape(n, n).T
    D = np.zeros((2 * n, n))
    for i in range(h):
        for j in range(w):
            p = i * w + j
            D[p, i * w + (j + 1) % w] += 1
            D[p, p] -= 1
            D[n + p, ((i + 1) % h) * w + j] += 1
            D[n + p, p] -= 1
    return A, D, T[:, : w // 2 + 1]


def run_probe(tag, h, w, lam, delta, tol, cap, ndraw, seed, keep, y, otf, wh, wv, x0, rj=None):
    d = pptest.tmpdir() if tag == "first" else os.environ.get("PP_TMP", "/tmp/pp_ref")
    fin, fout = os.path.join(d, tag + ".in"), os.path.join(d, tag + ".out")
    hd = np.array([h, w, lam, delta, tol, cap, ndraw, seed, keep], float)
    oz = np.stack([otf.real, otf.imag], -1).ravel()
    np.concatenate([hd, y.ravel(), oz, wh.ravel(), wv.ravel(), x0.ravel()]).tofile(fin)
    pptest.probe("po", (["rj", repr(rj)] if rj else []) + [fin, fout])
    out = np.fromfile(fout)
    n, ni = h * w, 4 if rj else 3
    info = out[: ni * ndraw].reshape(ndraw, ni)
    mean, var = out[ni * ndraw: ni * ndraw + n], out[ni * ndraw + n: ni * ndraw + 2 * n]
    draws = out[ni * ndraw + 2 * n:].reshape(-1, n) if keep else None
    return info, mean, var, draws


def problem(h, w, seed, lo=-1, hi=5, lam=1e4):
    rng = np.random.default_rng(seed)
    psf = gaussian_psf(1.2)
    A, D, otf = dense_ops(h, w, psf)
    truth = rng.random(h * w)
    y = A @ truth + rng.standard_normal(h * w) / np.sqrt(lam)
    wh = 10 ** rng.uniform(lo, hi, h * w)
    wv = 10 ** rng.uniform(lo, hi, h * w)
    return A, D, otf, y, wh, wv


def dense_posterior(A, D, lam, delta, wh, wv, y):
    P = lam * A.T @ A + delta * D.T @ (np.concatenate([wh, wv])[:, None] * D)
    C = np.linalg.inv(0.5 * (P + P.T))
    return C @ (lam * A.T @ y), C


def main():
    # 1. dense 8x8 check
    h = w = 8
    lam, delta, tol, ndraw = 1e4, 0.5, 1e-10, 20000
    A, D, otf, y, wh, wv = problem(h, w, seed=15)
    mu, C = dense_posterior(A, D, lam, delta, wh, wv, y)
    x0 = np.zeros(h * w)
    info, mean, var, _ = run_probe("first", h, w, lam, delta, tol, 1000, ndraw, 1, 0, y, otf, wh, wv, x0)
    it = info[:, 0]
    print("8x8 tol 1e-10: CG iterations per draw min %d median %d max %d"
          % (it.min(), np.median(it), it.max()))
    pptest.check(np.all(info[:, 2] == PP_OK) and np.all(info[:, 1] <= tol),
                 "8x8: all %d draws converged to tol %g (max relres %.2e)"
                 % (ndraw, tol, info[:, 1].max()))
    z = (mean - mu) / np.sqrt(np.diag(C) / ndraw)
    pptest.check(np.abs(z).max() < 4.5, "8x8: max |z| of the 64 pixel means %.2f < 4.5"
                 % np.abs(z).max())
    vr = var / np.diag(C)
    vt = 4 * np.sqrt(2 / ndraw)
    pptest.check(np.abs(vr - 1).max() <= vt, "8x8: variance ratios %.4f..%.4f within 1 +- %.4f"
                 % (vr.min(), vr.max(), vt))

    # 2. the cap fires
    info, _, _, _ = run_probe("cap", h, w, lam, delta, tol, 1, 4, 2, 0, y, otf, wh, wv, x0)
    pptest.check(np.all(info[:, 2] == PP_ERR_LIMIT) and np.all(info[:, 0] == 1)
                 and np.all(info[:, 1] > tol),
                 "cap 1: every draw returns PP_ERR_LIMIT after 1 iteration (relres %.2e..%.2e)"
                 % (info[:, 1].min(), info[:, 1].max()))

    # 3. tol 1e-6 against tol 1e-12 with the same noise, 32x32
    h = w = 32
    x0 = np.zeros(h * w)
    for lo, hi in ((0, 3), (-1, 5)):
        A, D, otf, y, wh, wv = problem(h, w, seed=16, lo=lo, hi=hi)
        _, C = dense_posterior(A, D, lam, delta, wh, wv, y)
        sd = np.sqrt(np.diag(C))
        runs = {}
        for t in (1e-6, 1e-7, 1e-12):
            info, _, _, dr = run_probe("tol%g" % t, h, w, lam, delta, t, 5000, 4, 3, 1, y, otf, wh, wv, x0)
            pptest.check(np.all(info[:, 2] == PP_OK), "32x32 w 1e%d..1e%d tol %g: converged" % (lo, hi, t))
            print("32x32 w 1e%d..1e%d tol %g: CG iterations %s" % (lo, hi, t, info[:, 0].astype(int).tolist()))
            runs[t] = dr
        for t, bound in ((1e-6, 2e-3), (1e-7, 1e-3)):
            dev = np.abs(runs[t] - runs[1e-12]) / sd
            pptest.check(dev.max() <= bound, "32x32 w 1e%d..1e%d: tol %g draws within %.2e "
                         "conditional sd of the tol 1e-12 draws (rms %.2e; bound %g)"
                         % (lo, hi, t, dev.max(), np.sqrt((dev ** 2).mean()), bound))
    check_rj()
    pptest.done()


def batch_z(x, target, nb=50):
    """z of the chain's average of x (rows: draws) against target, per
    column, standard error from nb batch means."""
    m = x[: len(x) // nb * nb].reshape(nb, -1, x.shape[1]).mean(1)
    return (m.mean(0) - target) / (m.std(0, ddof=1) / np.sqrt(nb))


def check_rj():
    h = w = 8
    lam, delta, ndraw, burn = 1e4, 0.5, 20000, 1000
    A, D, otf, y, wh, wv = problem(h, w, seed=15)
    mu, C = dense_posterior(A, D, lam, delta, wh, wv, y)
    x0 = np.zeros(h * w)
    for eps, alpha, seed in ((0.1, 1.0, 21), (3.0, 1.5, 22), (3.0, 1.0, 23)):
        info, _, _, dr = run_probe("rj", h, w, lam, delta, eps, 1000, ndraw, seed, 1, y, otf, wh,
                                   wv, x0, rj=alpha)
        it, acc = info[burn:, 0], info[burn:, 3].mean()
        tag = "rj eps %g alpha %g" % (eps, alpha)
        print("8x8 %s: CG iterations min %d median %d max %d, acceptance %.3f"
              % (tag, it.min(), np.median(it), it.max(), acc))
        pptest.check(np.all(info[:, 2] == PP_OK), "8x8 %s: every move returned PP_OK" % tag)
        x = dr[burn:]
        zm = batch_z(x, mu)
        zv = batch_z((x - mu) ** 2, np.diag(C))
        vr = ((x - mu) ** 2).mean(0) / np.diag(C)
        pptest.check(np.abs(zm).max() < 4.5 and np.abs(zv).max() < 4.5,
                     "8x8 %s: max |z| of the 64 means %.2f, of the 64 variances %.2f (< 4.5; "
                     "variance ratios %.3f..%.3f)" % (tag, np.abs(zm).max(), np.abs(zv).max(),
                                                      vr.min(), vr.max()))
        if eps == 0.1:
            pptest.check(acc >= 0.85, "8x8 %s: acceptance %.3f >= 0.85" % (tag, acc))
        else:
            pptest.check(acc < 0.8, "8x8 %s: acceptance %.3f < 0.8 (the ratio is doing work)"
                         % (tag, acc))


if __name__ == "__main__":
    main()
