"""Calibration of the hmc credible bounds (the default sampler for photon
counts; gpcn and pcn share its bound code) on frames simulated from the model.

Each of F frames: z drawn from the Matern prior with numpy (known mean M and
delta, as given to the sampler), x = exp(z), counts n ~ Poisson(A x + b) with
numpy's generator (periodic blur on the frame). Under the model the truth is
a draw from the posterior, so the central 95 % bounds (lo.tif, hi.tif) must
cover it at 95 % on average over frames (simulation-based calibration,
Talts et al., arXiv:1804.06788, 2018).

Tolerance: pixels within a frame are correlated, so the error of the mean
coverage is taken from the spread of the F per-frame coverages (se =
sd/sqrt(F)); pass if |coverage - 0.95| < 3 se + 0.01, the 0.01 allowing for
the Monte Carlo error of the streaming quantile estimates (a few percent of
a posterior sd at a few thousand draws, which moves the coverage by < 1 %).
The same check at level 0.5.
"""
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
H = W = 16
F = 20
M, DLT, RANGE, B = np.log(20.0), 1.0, 3.0, 0.5
pptest.run(["psf", "gaussian:sigma=1.2", "--size", "7", "-o", os.path.join(tmp, "psf.tif")])
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
A = pptest.transfer(psf, (H, W))
q = pptest.matern_q(H, W, RANGE)
rng = np.random.default_rng(20261204)
cov = {0.95: [], 0.5: []}
for f in range(F):
    z = M + np.real(np.fft.ifft2(np.fft.fft2(rng.standard_normal((H, W))) / np.sqrt(DLT * q)))
    x = np.exp(z)
    n = rng.poisson(np.real(np.fft.ifft2(A * np.fft.fft2(x))) + B).astype(np.float32)
    path = os.path.join(tmp, "y%d.tif" % f)
    tifffile.imwrite(path, n)
    for level in cov:
        out = os.path.join(tmp, "o%d_%g" % (f, level))
        pptest.run(["sample", path, "--psf", "gaussian:sigma=1.2", "--noise",
                    "poisson:gain=1,offset=0", "--background", str(B),
                    "--prior", "matern:range=%g,nu=1,mean=%.17g,delta=%g" % (RANGE, M, DLT),
                    "--sampler", "hmc", "--boundary", "periodic", "--chains", "2",
                    "--burn", "500", "--iters", "3000", "--level", str(level),
                    "--seed", str(100 + f), "--quiet", "-o", out])
        lo = tifffile.imread(os.path.join(out, "lo.tif"))
        hi = tifffile.imread(os.path.join(out, "hi.tif"))
        cov[level].append(np.mean((lo <= x) & (x <= hi)))
for level, c in cov.items():
    c = np.array(c)
    se = c.std(ddof=1) / np.sqrt(len(c))
    pptest.check(abs(c.mean() - level) < 3 * se + 0.01,
                 "level %g: coverage %.4f over %d frames (se %.4f, per frame %s)"
                 % (level, c.mean(), len(c), se, np.round(c, 3)))
pptest.done()
