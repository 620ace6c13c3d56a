"""The adaptive-prior Gibbs sampler with --boundary pad against a long
independent numpy reference chain on a small padded frame (issue 16, item
2: new moves leave the target invariant; this one checks the block
field-scale move of src/fieldscale.h where the padding and the frame's
edge enter its ratio, and every other move of the sampler with pad).

Outside sources: numpy / scipy.linalg (tests/adaptref.py's reference chain,
written from src/adaptive.h's joint density, here with the frame as the
top-left corner of the grid: x | W, lambda, y by a dense Cholesky factor of
lambda A'S'SA + D'WD, S the selection of the frame pixels, so the padding
is integrated out exactly instead of imputed; lambda | x, y ~ Gamma(1 +
n_F / 2, 1e-4 + ||SAx - y||^2 / 2); the level L = mean of s over the
blocks holding frame pixels), tifffile (I/O), Geyer's initial monotone
sequence ESS (Geyer, Statist. Sci. 7, 1992; pptest.geyer_ess).

Frame: 10 x 10, a bright square and a spot blurred by gaussian:sigma=1
(9 x 9 kernel written by `pixpost psf`) with `pixpost simulate --boundary
pad`, Gaussian noise sd 1; delta ~ Gamma(1, rate 1) (--hyper-delta 1,1, as
tests/ref_gibbs_pad_exact.py and for its reason: with the default rate
1e-4 a frame this small has a second, minute mode at delta ~ 1e4 (a flat
x, all of y noise) that 3 of 8 dispersed chains fell into during burn-in,
before and after the field-scale move alike). pixpost pads it to the grid in summary.json
(18 x 18 here); prior adaptive:block=4 (5 x 5 blocks, 3 x 3 of them hold
frame pixels), nu = 2. The grid is large enough for the field-scale move
to run (block + 2 (kernel radius + 1) <= grid side, checked below).

Compared: posterior means and sds of lambda, delta (= exp L), kappa and of
every frame pixel, z = (pixpost - numpy) / sqrt(se_pp^2 + se_np^2) with the
standard errors of tests/ref_adaptive_chain.py (Geyer ESS per chain,
summed; pixel means: mcse.tif; pixel sds: the delta method with the numpy
chain's kurtosis). 6 + 2 x 100 comparisons, each |z| < 4.2: two-sided
P(|Z| > 4.2) = 2.7e-5, so a correct sampler fails one with probability
below 206 x 2.7e-5 = 0.6 % (Bonferroni). Fixed seeds.

Can fail (measured, bench/NOTES.md 2026-12-04, binaries built from
temporary edits of src/fieldscale.c): its Jacobian e^{(n_B - 1) rho}
written e^{n_B rho}: |z| 15.1 on delta, 13.7 on lambda, 21.5 on a pixel
sd; the Jacobian dropped: the run fails (the precisions leave the
floating-point range). Not detected: the padding's imputed data left in
place instead of moved with the field (worst |z| 2.62).
Measured with the correct move: worst |z| 0.90 (hyperparameters), 2.32
(pixel means), 1.97 (pixel sds). Runtime ~2 CPU minutes (numpy ~1.5).
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
import json

import numpy as np
import tifffile

import adaptref
import pptest

SCALE = int(os.environ.get("PP_REF_SCALE", "1"))
H = W = 10
BLOCK = 4
PSF = "gaussian:sigma=1"
NP_BURN, NP_ITERS = 2000, 25000 * SCALE
PP_CHAINS, PP_BURN, PP_ITERS = 8, 1000, 6000 * SCALE
ZMAX = 4.2

tmp = pptest.tmpdir()
psf_path = os.path.join(tmp, "psf.tif")
pptest.run(["psf", PSF, "-o", psf_path])
psf = tifffile.imread(psf_path).astype(np.float64)
truth = np.zeros((H, W))
truth[2:7, 3:8] = 10.0
truth[8, 1] = 20.0
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
frame = os.path.join(tmp, "y.tif")
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=1", "--boundary", "pad", "--seed", "11", "-o", frame])
y = tifffile.imread(frame).astype(np.float64).ravel()

out = os.path.join(tmp, "post")
pptest.run(["sample", frame, "--psf", PSF, "--boundary", "pad", "--prior",
            "adaptive:block=%d" % BLOCK, "--hyper-delta", "1,1", "--chains", PP_CHAINS, "--threads", 2, "--burn", PP_BURN,
            "--iters", PP_ITERS, "--seed", 5, "--quiet", "-o", out], check=True)
summary = json.load(open(os.path.join(out, "summary.json")))
GH, GW = summary["grid"]["height"], summary["grid"]["width"]
pptest.check(GH >= BLOCK + 2 * (psf.shape[0] // 2 + 1) and GW >= BLOCK + 2 * (psf.shape[0] // 2 + 1),
             "the grid (%d x %d) is large enough for the field-scale move" % (GW, GH))
head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
ch = tr[:, 0].astype(int)

A = adaptref.dense_blur(psf, GH, GW, pptest.transfer)
obs = np.array([r * GW + c for r in range(H) for c in range(W)])
SA = A[obs]


hyp, xs = adaptref.gibbs_chain((GH, GW), BLOCK, (H, W), SA, y, obs, 78, NP_BURN, NP_ITERS)
for k, name in enumerate(("lambda", "delta", "kappa")):
    col = tr[:, head.index(name)]
    pm, psd, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
    pptest.check(abs(zm) < ZMAX and abs(zsd) < ZMAX,
                 "pad %s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS %.0f): "
                 "z mean %.2f, z sd %.2f (|z| < %g)" % (name, pm, psd, pess, nm, nsd, ness, zm, zsd,
                                                         ZMAX))

pz = adaptref.pixel_z(out, xs, tr, head, ch)
z_mean, z_sd, ess, ratio = (pz["z_mean"], pz["z_sd"], pz["ess"], pz["ratio"])
print("pixel means: mean z^2 %.2f (worst %.2f); pixel sds: mean z^2 %.2f (worst %.2f)"
      % ((z_mean ** 2).mean(), np.abs(z_mean).max(), (z_sd ** 2).mean(), np.abs(z_sd).max()))
pptest.check(np.abs(z_mean).max() < ZMAX, "pad: all %d frame pixel means within %g se of the "
             "numpy chain (worst |z| %.2f)" % (H * W, ZMAX, np.abs(z_mean).max()))
pptest.check(np.abs(z_sd).max() < ZMAX, "pad: all %d frame pixel sds within %g se of the numpy "
             "chain (worst |z| %.2f)" % (H * W, ZMAX, np.abs(z_sd).max()))
pptest.check(ess.min() > 1000 and ratio > 0.2,
             "Monte Carlo errors rest on enough effective draws (numpy pixel ESS min %.0f; "
             "probe ratio %.2f)" % (ess.min(), ratio))
pptest.done()
