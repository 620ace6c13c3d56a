"""A frame-level test of the PSF's width before sampling, tried for the
dim-bead case where the predictive check has no power (RESULTS.md, "dim
beads"); measured, not adopted (RESULTS.md, "Whittle width test").

Idea: the frame's periodogram I(k) (Hann taper, the frame's mean removed)
has, to second order, the expectation
    S(k) = c |A(k)|^2 exp(-t w(k)^2) q(k)^(-beta) + s2
for a scene whose spectrum is a power law beta >= 0 in the 5-point
Laplacian symbol q(k), times a Gaussian factor exp(-t w^2) (t > 0: the
scene's own size, e.g. a bead of sd 0.7 px has t = 0.49), blurred by the
stated PSF's transfer function A(k), plus white noise s2 (photon and read
noise are white, whatever their level). A scene cannot have t < 0 (a
spectrum that rises with k beyond a power law): t < 0 means the data are
sharper than the stated PSF allows, i.e. the PSF is too wide. The Whittle
likelihood (Whittle 1953; sum over the half plane of log S + I/S) is
profiled over (c, beta, s2) with t >= 0 and with t free (down to -0.99
sigma^2); D = twice the log-likelihood gain of the free fit.

Frames: tests/ppcheckref.py's bead scenes (48 x 48, camera gain 2,
offset 100, read 1.5, Gaussian PSF sigma 1.5 px, pad) drawn by
`pixpost simulate`; the stated PSF is right (sigma 1.5) or 30 % too wide
(sigma 1.95). Seeds 5000+ (shared with dim.py; not used by ctest).

    PP_BIN=build/pixpost /usr/bin/python3 bench/ppcheck/whittle.py LO HI N [SEED0]

LO HI: the beads' photons (30 150 = dim.py's, 300 1500 = the ctest
scenes'); prints each frame's D and the width ratio sqrt(sigma^2 + t)/sigma
for the right and the wide PSF, then the counts above several thresholds.
"""
import os
import sys

import numpy as np
import tifffile
from scipy.optimize import minimize

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "tests"))
os.environ.setdefault("PP_TMP", "/tmp/pp_bench_ppcheck_whittle")
import ppcheckref  # noqa: E402
import pptest  # noqa: E402


def photons(tmp, seed, beads):
    yp = os.path.join(tmp, "frame_%d_%d.tif" % (seed, beads[0]))
    tp = os.path.join(tmp, "truth_%d_%d.tif" % (seed, beads[0]))
    tifffile.imwrite(tp, ppcheckref.scene(seed, 48, beads).astype(np.float32))
    pptest.run(["simulate", tp, "--psf", ppcheckref.PSF, "--noise", ppcheckref.CAMERA,
                "--seed", seed, "--overwrite", "--quiet", "-o", yp])
    return (tifffile.imread(yp).astype(float) - 100.0) / 2.0


def periodogram(n):
    h, w = n.shape
    win = np.outer(np.hanning(h + 2)[1:-1], np.hanning(w + 2)[1:-1])
    d = (n - (n * win).sum() / win.sum()) * win
    i = np.abs(np.fft.fft2(d)) ** 2 / (win ** 2).sum()
    ky = 2 * np.pi * np.fft.fftfreq(h)
    kx = 2 * np.pi * np.fft.fftfreq(w)
    w2 = ky[:, None] ** 2 + kx[None, :] ** 2
    q = 4 - 2 * np.cos(ky)[:, None] - 2 * np.cos(kx)[None, :]
    keep = np.ones_like(i, bool)
    keep[0, 0] = False
    keep &= np.arange(h)[:, None] < h // 2 + 1  # the half plane
    return i[keep], w2[keep], q[keep]


def nll(p, i, a2, w2, q):
    lc, beta, t, ls2 = p
    s = np.exp(lc - t * w2) * a2 * q ** (-beta) + np.exp(ls2)
    return np.sum(np.log(s) + i / s)


def fit(i, a2, w2, q, tlo):
    best = None
    for b0 in (0.0, 1.0, 2.0):
        for t0 in (max(tlo, -1.0), 0.0, 1.0):
            x0 = [np.log(i.mean()), b0, max(t0, tlo), np.log(np.median(i))]
            r = minimize(nll, x0, args=(i, a2, w2, q), method="L-BFGS-B",
                         bounds=[(-40, 40), (0, 4), (tlo, 20), (-40, 40)])
            if best is None or r.fun < best.fun:
                best = r
    return best


def width_test(n, sigma):
    i, w2, q = periodogram(n)
    a2 = np.exp(-sigma * sigma * w2)  # |A|^2 of a Gaussian PSF
    r0 = fit(i, a2, w2, q, 0.0)
    r1 = fit(i, a2, w2, q, -0.99 * sigma * sigma)
    return 2 * (r0.fun - r1.fun), np.sqrt(max(sigma * sigma + r1.x[2], 1e-9)) / sigma


def main():
    beads = (float(sys.argv[1]), float(sys.argv[2]))
    n, s0 = int(sys.argv[3]), int(sys.argv[4]) if len(sys.argv) > 4 else 5000
    tmp = pptest.tmpdir()
    right, wide = [], []
    for seed in range(s0, s0 + n):
        y = photons(tmp, seed, beads)
        d1, f1 = width_test(y, 1.5)
        d2, f2 = width_test(y, 1.95)
        right.append(d1)
        wide.append(d2)
        print("%d right: D %7.2f width %.2f | wide: D %7.2f width %.2f" % (seed, d1, f1, d2, f2))
        sys.stdout.flush()
    for th in (6, 8, 10, 12, 15, 20, 25):
        print("D > %2d: right PSF %d of %d (false alarms), wide PSF %d of %d (detected)"
              % (th, sum(d > th for d in right), n, sum(d > th for d in wide), n))


if __name__ == "__main__":
    main()
