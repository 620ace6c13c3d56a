"""Missing pixels (--mask) in every sampler, and the byte-identity of a run
with an all-zero mask (no pixel masked) with a run without --mask.

Scene: 5 x pptest.beads_truth (a flat background of 100 and Gaussian
spots, our own), 32 x 32, blurred and noised by `pixpost simulate` (fixed
seeds); a 6 x 6 block on the flat background is masked. No outside
reference is needed for the inequality asserted: removing data never
narrows a posterior on average (the expected posterior variance is at least
the full-data one, by the law of total variance), so the sd over the block
must exceed that at the same pixels in the run without the mask (the dense
numpy reference of tests/ref_missing_exact.py checks the values for the
Gaussian samplers). Asserted per sampler: the estimates are finite, that
ratio is > 1.05 (photon models: of sd / mean, as the sd of x scales with x
under log positivity; the ratio against the observed ring around the block
is printed too, measured 0.88-1.18: under the adaptive prior it is below 1,
its 8 x 8 blocks' precisions differ across the ring), and summary.json
counts the masked pixels. pcn and gpcn on the camera frame do not mix in
any run a test can afford (R-hat 2-3 after 5000 iterations, measured, as
without a mask: the loglik and level): for them only the finite estimates,
the counts and the byte identity are asserted; their likelihood's handling
of masked pixels is checked against the exact posterior in
tests/ref_missing_exact.py (gaussian likelihood, the same loops).
A masked hot pixel no longer pulls the mean (gibbs, adaptive prior): one
pixel raised by 40 noise sd pulls the mean there above the truth by more
than 3 posterior sd; masked, the mean is within 2 posterior sd of the
truth.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(21)
N = 32
truth = 5 * pptest.beads_truth(rng, size=N, beads=4)  # background 100 photons
tpath = os.path.join(tmp, "truth.tif")
tifffile.imwrite(tpath, truth.astype(np.float32))
PSF = "gaussian:sigma=1.5"
CAM = "camera:gain=2,offset=100,read=1.5"
yg = os.path.join(tmp, "yg.tif")
yc = os.path.join(tmp, "yc.tif")
pptest.run(["simulate", tpath, "--psf", PSF, "--noise", "gaussian:sigma=3", "--seed", "4", "-o", yg])
pptest.run(["simulate", tpath, "--psf", PSF, "--noise", CAM, "--seed", "4", "-o", yc])
# the block, 6 x 6: on the flat background (the 10 x 10 window around it at
# most 2 % above the background)
r0, c0 = min(((r, c) for r in range(2, N - 12) for c in range(2, N - 12)),
             key=lambda rc: truth[rc[0]:rc[0] + 10, rc[1]:rc[1] + 10].max())
pptest.check(truth[r0:r0 + 10, c0:c0 + 10].max() < 102, "a flat 10 x 10 window at (%d, %d)" % (r0, c0))
mask = np.zeros((N, N), np.uint8)
blk = (slice(r0 + 2, r0 + 8), slice(c0 + 2, c0 + 8))
mask[blk] = 1
NM = int(mask.sum())
ring = np.zeros((N, N), bool)
ring[r0:r0 + 10, c0:c0 + 10] = True
ring[blk] = False
mpath = os.path.join(tmp, "mask.png")
zpath = os.path.join(tmp, "zero.png")
from PIL import Image
Image.fromarray(mask * 255).save(mpath)
Image.fromarray(np.zeros((N, N), np.uint8)).save(zpath)

fixed = ["--chains", "2", "--seed", "3", "--quiet", "--threads", "1"]
cases = [
    ("gibbs periodic gmrf1", yg, ["--sampler", "gibbs", "--boundary", "periodic", "--prior", "gmrf1",
                                 "--burn", "200", "--iters", "1000"]),
    ("gibbs pad gmrf1", yg, ["--sampler", "gibbs", "--prior", "gmrf1", "--burn", "200", "--iters", "1000"]),
    ("adaptive pad (default)", yg, ["--burn", "200", "--iters", "600"]),
    ("adaptive periodic", yg, ["--boundary", "periodic", "--burn", "200", "--iters", "600"]),
    ("mtc periodic (gibbs fallback)", yg, ["--sampler", "mtc", "--boundary", "periodic", "--prior", "gmrf1",
                                          "--burn", "200", "--iters", "1000"]),
    # hmc with delta and the level fixed: converged in this length (R-hat
    # 1.05 at 4000 draws, measured; the default matern's free delta and level
    # need far more), so the sd compares estimates, not noise
    ("hmc camera", yc, ["--noise", CAM, "--prior", "matern:range=6,nu=1,delta=5,mean=4.6",
                        "--burn", "500", "--iters", "1500"]),
    ("hmc camera adaptive", yc, ["--noise", CAM, "--prior", "adaptive", "--burn", "300", "--iters", "600"]),
    ("pcn camera", yc, ["--noise", CAM, "--sampler", "pcn", "--burn", "500", "--iters", "1500"]),
    ("gpcn camera periodic", yc, ["--noise", CAM, "--sampler", "gpcn", "--boundary", "periodic",
                                  "--burn", "500", "--iters", "1000"]),
]
OUTS = ["mean.tif", "sd.tif", "lo.tif", "hi.tif", "rhat.tif", "mcse.tif", "trace.csv"]
for i, (name, frame, extra) in enumerate(cases):
    base = ["sample", frame, "--psf", PSF] + fixed + extra
    out, plain = os.path.join(tmp, "m%d" % i), os.path.join(tmp, "n%d" % i)
    pptest.run(base + ["--mask", mpath, "-o", out])
    pptest.run(base + ["-o", plain])
    est = {}
    for tag, d in (("masked", out), ("plain", plain)):
        mean = tifffile.imread(os.path.join(d, "mean.tif")).astype(np.float64)
        sd = tifffile.imread(os.path.join(d, "sd.tif")).astype(np.float64)
        pptest.check(np.isfinite(mean).all() and np.isfinite(sd).all(), "%s, %s: estimates finite" % (name, tag))
        # photon models (log positivity): the sd of x scales with x (sd x ~
        # x sd log x), so their spread is compared as sd / mean
        est[tag] = sd / mean if frame == yc else sd
    md = json.load(open(os.path.join(out, "summary.json")))["missing_data"]
    hole = mask > 0
    r_ring = est["masked"][hole].mean() / est["masked"][ring].mean()
    r_same = est["masked"][hole].mean() / est["plain"][hole].mean()
    what = "sd / mean" if frame == yc else "sd"
    if "pcn" in name:  # not mixed in any test-sized run: see the docstring
        print("note %s: %s ratio masked run / plain %.2f (not asserted)" % (name, what, r_same))
    else:
        pptest.check(r_same > 1.05, "%s: %s over the masked block, masked run / run without --mask = "
                     "%.2f (> 1.05; against the observed ring around it: %.2f)"
                     % (name, what, r_same, r_ring))
    pptest.check(md["masked"] == NM and md["observed"] == N * N - NM, "%s: missing_data %s" % (name, md))
    if i in (1, 2, 4, 5, 7):  # byte identity: all-zero mask vs no mask
        a = os.path.join(tmp, "z%d" % i)
        pptest.run(base + ["--mask", zpath, "-o", a])
        same = all(open(os.path.join(a, f), "rb").read() == open(os.path.join(plain, f), "rb").read()
                   for f in OUTS)
        pptest.check(same, "%s: an all-zero --mask gives the same bytes as no --mask (%s)"
                     % (name, ", ".join(OUTS)))

# A hot pixel, masked or not (gibbs, adaptive prior: the default).
y = tifffile.imread(yg).astype(np.float64)
hr, hc = 8, 24
y[hr, hc] += 40 * 3.0
hot = os.path.join(tmp, "hot.tif")
tifffile.imwrite(hot, y.astype(np.float32))
hm = np.zeros((N, N), np.uint8)
hm[hr, hc] = 1
hmp = os.path.join(tmp, "hotmask.tif")
tifffile.imwrite(hmp, hm)
res = {}
for tag, extra in (("unmasked", []), ("masked", ["--mask", hmp])):
    out = os.path.join(tmp, "hot_" + tag)
    pptest.run(["sample", hot, "--psf", PSF, "--burn", "200", "--iters", "600", "-o", out] + fixed + extra)
    m = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    s = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    res[tag] = (m[hr, hc] - truth[hr, hc], s[hr, hc])
(du, _), (dm, sm) = res["unmasked"], res["masked"]
pptest.check(du > 3 * sm, "hot pixel unmasked: mean %.1f above the truth (> 3 posterior sd of the masked run, %.1f)"
             % (du, 3 * sm))
pptest.check(abs(dm) < 2 * sm, "hot pixel masked: mean %.1f from the truth (within 2 posterior sd, %.1f)"
             % (dm, 2 * sm))
pptest.done()
