"""Profiles (--profile r0,c0,r1,c1) against the closed form, with numpy and
scipy.

The line is sampled at n = ceil(max(|dr|, |dc|)) + 1 evenly spaced points,
both ends included (the documented rule); the profile at a point is the
bilinear interpolation of x there. With lambda and delta fixed and periodic
boundaries the posterior of x is Gaussian (mean mu, covariance
Sigma = F^-1 diag(1/p) F; tests/ref_gibbs_closed_form.py), so the value at a
point with bilinear weights w is Gaussian with mean w'mu, computed here by
scipy.ndimage.map_coordinates(mu, order=1) (scipy's own interpolation, an
outside reference for the weights), and variance w' Sigma w =
(1/N) sum_k |F w(k)|^2 / p(k) (w built as an image with numpy).
profile_<k>.csv must give, at every point, the row, column and distance of
the rule; the mean within 4.5 of its reported MCSE of w'mu, the sd within
4.5 MCSE of the sd (sd / sqrt(2 ESS), ESS = the sample size of independent
draws here: gibbs with both hyperparameters fixed; common practice for the
sd of a normal sample) and lo/hi (the 95 % band) within 4.5 x (1.96 MCSE of
the sd + MCSE of the mean) of w'mu -/+ 1.96 sd. Lines: diagonal with
fractional ends, one along the last row (the edge rule), a single point,
a vertical line up the last column. A bad line (outside the frame, not four
numbers) gives exit 1 and one line naming --profile, nothing written.
"""
import csv
import math
import os

import numpy as np
from scipy import ndimage

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(77)
H, W = 28, 32
N = H * W
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
lam, dlt = 4.0, 0.8
y, A, p, mu = pptest.gmrf1_frame_posterior(tmp, truth, 8, lam, dlt)

lines = [(2.5, 1.25, 20.0, 27.75), (27, 3, 27, 30), (5, 5, 5, 5), (25, 31, 4, 31)]
out = os.path.join(tmp, "out")
args = ["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
        "--noise", "gaussian:sigma=0.5", "--prior", "gmrf1:delta=%g" % dlt,
        "--boundary", "periodic", "--sampler", "gibbs", "--chains", "4", "--burn", "10",
        "--iters", "1000", "--seed", "13", "--quiet", "-o", out]
for l in lines:
    args += ["--profile", ",".join("%g" % v for v in l)]
pptest.run(args)


def weights(r, c):
    """Bilinear weights of the point (r, c) as an H x W image."""
    w = np.zeros((H, W))
    r0, c0 = min(int(math.floor(r)), H - 1), min(int(math.floor(c)), W - 1)
    fr, fc = r - r0, c - c0
    for dr, wr in ((0, 1 - fr), (1, fr)):
        for dc, wc in ((0, 1 - fc), (1, fc)):
            if wr * wc:
                w[r0 + dr, c0 + dc] += wr * wc
    return w


for k, (r0, c0, r1, c1) in enumerate(lines):
    with open(os.path.join(out, "profile_%d.csv" % (k + 1))) as fh:
        rows = list(csv.DictReader(fh))
    n = int(math.ceil(max(abs(r1 - r0), abs(c1 - c0)))) + 1
    t = np.linspace(0, 1, n) if n > 1 else np.zeros(1)
    rr, cc = r0 + t * (r1 - r0), c0 + t * (c1 - c0)
    dist = t * math.hypot(r1 - r0, c1 - c0)
    pptest.check(len(rows) == n, "profile %d: %d points (got %d)" % (k + 1, n, len(rows)))
    geo = max(max(abs(float(a["row"]) - b), abs(float(a["col"]) - c), abs(float(a["distance"]) - d))
              for a, b, c, d in zip(rows, rr, cc, dist))
    pptest.check(geo < 1e-4, "profile %d: rows, columns and distances as the rule says "
                 "(max err %.1e)" % (k + 1, geo))
    want_m = ndimage.map_coordinates(mu, [rr, cc], order=1, mode="nearest")
    worst = {"mean": 0, "sd": 0, "lo": 0, "hi": 0}
    for i, row in enumerate(rows):
        w = weights(rr[i], cc[i])
        wm = float(np.sum(w * mu))
        s = math.sqrt(float(np.sum(np.abs(np.fft.fft2(w)) ** 2 / p)) / N)
        gm, gs, se = float(row["mean"]), float(row["sd"]), float(row["mcse_mean"])
        se_s = gs / math.sqrt(2 * 4000)
        if i in (0, n - 1):
            pptest.check(abs(wm - want_m[i]) < 1e-9 * abs(wm), "profile %d point %d: numpy's "
                         "bilinear weights agree with scipy's map_coordinates" % (k + 1, i))
        worst["mean"] = max(worst["mean"], abs(gm - want_m[i]) / se)
        worst["sd"] = max(worst["sd"], abs(gs - s) / se_s)
        tol = 1.96 * se_s + se
        worst["lo"] = max(worst["lo"], abs(float(row["lo"]) - (wm - 1.959964 * s)) / tol)
        worst["hi"] = max(worst["hi"], abs(float(row["hi"]) - (wm + 1.959964 * s)) / tol)
    for key, z in worst.items():
        pptest.check(z <= 4.5, "profile %d: %s along the line vs the closed form, worst %.2f "
                     "MCSE (tolerance 4.5)" % (k + 1, key, z))

for bad, words in ((["--profile", "0,0,28,5"], ["--profile", "row 28", "outside"]),
                   (["--profile", "0,0,5"], ["--profile", "'0,0,5'", "r0,c0,r1,c1"]),
                   (["--profile", "0,0,5,x"], ["--profile", "'0,0,5,x'"])):
    pr = pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                     "-o", os.path.join(tmp, "bad")] + bad, check=False)
    pptest.check(pr.returncode == 1 and len(pr.stderr.splitlines()) == 1 and
                 all(w in pr.stderr for w in words) and not os.path.exists(os.path.join(tmp, "bad")),
                 "%s: exit 1, one line naming it, nothing written (%r)" % (" ".join(bad),
                                                                          pr.stderr.strip()))
pptest.done()
