"""Calibration of the regions' credible intervals on frames drawn from the
model (numpy only; the frame generator of tests/ref_coverage.py).

Frames: periodic 32x32, truth x = M + ifft2(fft2(z) / sqrt(delta q_m)), z
white (x ~ the proper matern prior exactly), data y = ifft2(A fft2(x)) +
sigma e, A the transfer function of the PSF that `pixpost psf` writes.
Hyperparameters fixed at their true values, so the posterior is exactly
Gaussian and the 95 % interval of a region's total covers the true total
with probability 0.95 exactly (for x drawn from the prior). Each frame gets
8 rectangles of random size and place (one per cell of a 4 x 2 grid, so
they never overlap) with random labels; samplers alternate gibbs / mtc
(both give exact independent draws with the hyperparameters fixed).

Tolerance: the brief's 95 % +/- 2 %. With F = 100 frames x 8 regions = 800
intervals, a binomial sd of sqrt(0.95 x 0.05 / 800) = 0.77 %, so +/- 2 %
is 2.6 sd if the intervals were independent (regions of one frame are
weakly correlated: they never overlap, but neighbours may touch, and the
posterior correlation length is ~ the prior's range, 3 pixels); the interval's own Monte Carlo
error (2 x 300 independent draws; the 2.5 % quantile's sd ~0.13 posterior
sd) makes single intervals slightly noisier, not biased to first order.
Also reported: coverage at the 50 % level (--level 0.5 on the same frames)
must be 50 % +/- 4 % (binomial sd 1.8 %).
"""
import csv
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
H = W = 32
RANGE, NU, M, DELTA, SIGMA = 3.0, 1.0, 20.0, 0.01, 0.5
PSF = "gaussian:sigma=1.5"
PRIOR = "matern:range=%g,nu=%g,mean=%g,delta=%g" % (RANGE, NU, M, DELTA)
FRAMES = 100

psf_path = os.path.join(tmp, "psf.tif")
pptest.run(["psf", PSF, "-o", psf_path])
psf = tifffile.imread(psf_path).astype(np.float64)
A = pptest.transfer(psf, (H, W))
qm = pptest.matern_q(H, W, RANGE, NU)


def make_frame(seed):
    rng = np.random.default_rng(seed)
    x = M + np.real(np.fft.ifft2(np.fft.fft2(rng.standard_normal((H, W))) / np.sqrt(DELTA * qm)))
    x = x.astype(np.float32).astype(np.float64)
    y = np.real(np.fft.ifft2(A * np.fft.fft2(x))) + SIGMA * rng.standard_normal((H, W))
    path = os.path.join(tmp, "y.tif")
    tifffile.imwrite(path, y.astype(np.float32))
    lab = np.zeros((H, W), np.uint16)
    labels = rng.choice(np.arange(1, 60000), size=8, replace=False)
    k = 0
    for gy in range(4):
        for gx in range(2):
            h, w = rng.integers(1, 7), rng.integers(1, 14)
            r0 = gy * 8 + rng.integers(0, 8 - h + 1)
            c0 = gx * 16 + rng.integers(0, 16 - w + 1)
            lab[r0:r0 + h, c0:c0 + w] = labels[k]
            k += 1
    lpath = os.path.join(tmp, "lab.tif")
    tifffile.imwrite(lpath, lab)
    return x, lab, path, lpath


hits = {0.95: [], 0.5: []}
for f in range(FRAMES):
    x, lab, path, lpath = make_frame(5000 + f)
    for level in (0.95, 0.5):
        out = os.path.join(tmp, "out")
        pptest.run(["sample", path, "--psf", PSF, "--boundary", "periodic", "--noise",
                    "gaussian:sigma=%g" % SIGMA, "--prior", PRIOR, "--sampler",
                    ("gibbs", "mtc")[f % 2], "--chains", "2", "--burn", "0", "--iters", "300",
                    "--level", level, "--seed", 100 + f, "--quiet", "--overwrite",
                    "--no-plan-cache", "-o", out, "--regions", lpath])
        with open(os.path.join(out, "regions.csv")) as fh:
            for r in csv.DictReader(fh):
                if r["quantity"] != "total":
                    continue
                t = x[lab == int(r["label"])].sum()
                hits[level].append(float(r["lo"]) <= t <= float(r["hi"]))
for level, tol in ((0.95, 0.02), (0.5, 0.04)):
    c = np.mean(hits[level])
    pptest.check(len(hits[level]) == 8 * FRAMES and abs(c - level) <= tol,
                 "coverage of the regions' %g intervals: %.4f over %d intervals (%g +/- %g)"
                 % (level, c, len(hits[level]), level, tol))
pptest.done()
