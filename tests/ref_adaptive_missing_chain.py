"""The adaptive-prior Gibbs sampler with masked pixels (--mask) and
--boundary pad against a long independent numpy reference chain: the
missing-data mechanism (masked pixels latent like the padding, redrawn from
N(Ax, 1/lambda) each iteration, and moved with the field by the level and
block field-scale moves) must leave the posterior of the model with those
pixels unobserved invariant. A copy of tests/ref_adaptive_pad_chain.py's
check (read its docstring for the z statistics and the Bonferroni bound)
with a mask.

Outside sources: numpy / scipy.linalg (tests/adaptref.py's reference chain,
written from src/adaptive.h's joint density: x | W, lambda, y by a dense
Cholesky factor of lambda A'S'SA + D'WD with S the selection of the OBSERVED
pixels, the frame's pixels but the masked ones, so padding and masked
pixels are integrated out exactly instead of imputed; lambda | x, y ~
Gamma(1 + n_obs / 2, 1e-4 + ||SAx - y||^2 / 2)), tifffile (I/O), Geyer's
ESS (pptest.geyer_ess).

Frame: 10 x 10 as there; masked: a 2 x 2 block inside the bright square,
a pixel on the frame's left edge (next to the padding) and one in the flat
background (7 pixels). Compared: lambda, delta, kappa and all 100 frame
pixels' means and sds, the 7 masked ones included (|z| < 4.2). Shorter
than ref_adaptive_pad_chain (half its draws) to keep within a minute of
CPU; the z statistics carry their own standard errors, so the test is as
exact, only less powerful.
Measured (seeds 5/78, 15/79, 25/80): worst |z| 2.68, 2.29, 3.03 (pixel
means) and 3.11, 2.99, 1.97 (pixel sds); mean z^2 of the pixel sds 2.77,
1.63, 0.50 (the 100 pixels' z are strongly correlated, so that spread is
chance; 1.44 with an all-zero mask at seed 5).
Fails before: a binary that takes the masked pixels as data at the fill
value (the frame's mean): |z| 61 on a masked pixel's mean, 80 on lambda.
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
NP_BURN, NP_ITERS = 2000, 12000 * SCALE
PP_CHAINS, PP_BURN, PP_ITERS = 8, 1000, 3000 * SCALE
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
y_all = tifffile.imread(frame).astype(np.float64).ravel()
mask = np.zeros((H, W), np.uint8)
mask[3:5, 4:6] = 1
mask[5, 0] = 1
mask[8, 8] = 1
mask[1, 1] = 1
mask_path = os.path.join(tmp, "mask.tif")
tifffile.imwrite(mask_path, mask)
keep = mask.ravel() == 0
y = y_all[keep]

out = os.path.join(tmp, "post")
pptest.run(["sample", frame, "--psf", PSF, "--boundary", "pad", "--prior",
            "adaptive:block=%d" % BLOCK, "--hyper-delta", "1,1", "--chains", PP_CHAINS, "--threads", 2, "--burn", PP_BURN,
            "--iters", PP_ITERS, "--seed", 5, "--quiet", "--mask", mask_path, "-o", out], check=True)
summary = json.load(open(os.path.join(out, "summary.json")))
GH, GW = summary["grid"]["height"], summary["grid"]["width"]
pptest.check(GH >= BLOCK + 2 * (psf.shape[0] // 2 + 1) and GW >= BLOCK + 2 * (psf.shape[0] // 2 + 1),
             "the grid (%d x %d) is large enough for the field-scale move" % (GW, GH))
head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
ch = tr[:, 0].astype(int)

A = adaptref.dense_blur(psf, GH, GW, pptest.transfer)
frame_px = np.array([r * GW + c for r in range(H) for c in range(W)])
obs = frame_px[keep]
SA = A[obs]
pptest.check(summary["missing_data"]["masked"] == int(mask.sum()), "summary.json: %d masked" % mask.sum())


hyp, xs = adaptref.gibbs_chain((GH, GW), BLOCK, (H, W), SA, y, frame_px, 78, NP_BURN, NP_ITERS)
for k, name in enumerate(("lambda", "delta", "kappa")):
    col = tr[:, head.index(name)]
    pm, psd, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
    pptest.check(abs(zm) < ZMAX and abs(zsd) < ZMAX,
                 "mask %s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS %.0f): "
                 "z mean %.2f, z sd %.2f (|z| < %g)" % (name, pm, psd, pess, nm, nsd, ness, zm, zsd,
                                                         ZMAX))

pz = adaptref.pixel_z(out, xs, tr, head, ch)
z_mean, z_sd, ess, ratio = (pz["z_mean"], pz["z_sd"], pz["ess"], pz["ratio"])
print("pixel means: mean z^2 %.2f (worst %.2f); pixel sds: mean z^2 %.2f (worst %.2f)"
      % ((z_mean ** 2).mean(), np.abs(z_mean).max(), (z_sd ** 2).mean(), np.abs(z_sd).max()))
mk = mask.ravel() > 0
print("masked pixels: worst |z| mean %.2f, sd %.2f" % (np.abs(z_mean[mk]).max(), np.abs(z_sd[mk]).max()))
pptest.check(np.abs(z_mean).max() < ZMAX, "mask: all %d frame pixel means within %g se of the "
             "numpy chain (worst |z| %.2f)" % (H * W, ZMAX, np.abs(z_mean).max()))
pptest.check(np.abs(z_sd).max() < ZMAX, "mask: all %d frame pixel sds within %g se of the numpy "
             "chain (worst |z| %.2f)" % (H * W, ZMAX, np.abs(z_sd).max()))
pptest.check(ess.min() > 500 and ratio > 0.2,
             "Monte Carlo errors rest on enough effective draws (numpy pixel ESS min %.0f; "
             "probe ratio %.2f)" % (ess.min(), ratio))
pptest.done()
