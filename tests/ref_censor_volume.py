"""Censored (saturated) voxels of a z-stack sampled as a volume (issue 17,
item 3, on the volumes of issue 18) against an independent numpy reference.

A 5 x 7 x 8 stack (OME-TIFF written by tifffile, axes ZYX, voxel {z, y,
x} = {0.2, 0.1, 0.1} um), a smooth scene with one bump blurred by pixpost's
3-D PSF gaussian:sigma=0.6,sigma_z=0.5 (the 5 x 7 x 7 kernel written by
`pixpost psf`, a float32 stack, applied here as a dense periodic convolution built
entry by entry: pptest.dense_blur3), Gaussian noise sd 1, rounded to
float32 and clipped at its 6th largest value s (a flat top that
pixpost/saturation.h finds in a volume as in a frame). Noise and prior
precision fixed (--noise gaussian:sigma=1, --prior gmrf1:delta=0.5), so
the posterior is p(x | y) ∝ N(x; m, C) prod_i Q((s - (A x)_i) / sigma)
with the gmrf1 precision of a volume delta sum_a w_a L_a (L_a the periodic
second difference along axis a, w_a = (spacing_x / spacing_a)^2:
include/pixpost/prior.h; w_z = 0.25 here).

Reference: pptest.censored_reference (numpy.linalg and
scipy.stats.truncnorm; data augmentation, Tanner & Wong, JASA 82, 1987;
2000 independent chains of 300 sweeps). Runs: gibbs, mtc and hmc with
--boundary periodic. Tolerances as tests/ref_censor_exact.py: each voxel's
mean within 4.5 sqrt(MCSE^2 + SE_ref^2) + 1 % of its sd, each sd within
10 % and the censored voxels' sds within 4 % on average. Could fail:
censoring moves the clipped voxels' means above the missing-data posterior
by more than 10 MCSE (checked), and --saturated-missing must land on the
missing-data posterior instead.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(23)
D, H, W = 5, 7, 8
SIGMA, DELTA, CLIP = 1.0, 0.5, 6
VOX = (0.2, 0.1, 0.1)
PSF = "gaussian:sigma=0.6,sigma_z=0.5"
psf_path = os.path.join(tmp, "psf.tif")
pptest.run(["psf", PSF, "-o", psf_path])
psf = tifffile.imread(psf_path).astype(np.float64)
A = pptest.dense_blur3(psf, (D, H, W))
zz, yy, xx = np.mgrid[0:D, 0:H, 0:W]
truth = (10 + 3 * np.sin(xx / 2.0) + 2 * np.cos(yy / 2.5) + zz
         + 8 * np.exp(-((zz - 2) ** 2 + (yy - 3) ** 2 + (xx - 2) ** 2) / 3.0))
y = (A @ truth.ravel() + SIGMA * rng.standard_normal(D * H * W)).astype(np.float32)
s = float(np.sort(y)[-CLIP])
y = np.minimum(y, s)
cens = y == s
frame = os.path.join(tmp, "stack.ome.tif")
tifffile.imwrite(frame, y.reshape(D, H, W), metadata={
    "axes": "ZYX", "PhysicalSizeZ": VOX[0], "PhysicalSizeY": VOX[1], "PhysicalSizeX": VOX[2]})
y = y.astype(np.float64)
NC = int(cens.sum())


def lap1(n):
    """The periodic second difference along an axis of n points."""
    L = 2 * np.eye(n) - np.roll(np.eye(n), 1, axis=1) - np.roll(np.eye(n), -1, axis=1)
    return L


w = [(VOX[2] / v) ** 2 for v in VOX]
Q = (w[0] * np.kron(np.kron(lap1(D), np.eye(H)), np.eye(W)) +
     w[1] * np.kron(np.kron(np.eye(D), lap1(H)), np.eye(W)) +
     w[2] * np.kron(np.kron(np.eye(D), np.eye(H)), lap1(W)))
fr = np.arange(D * H * W)
m_mis, s_mis, m_c, s_c, se_c, ndraws = pptest.censored_reference(A, DELTA * Q, fr, cens, y, s,
                                                                 SIGMA)
print("reference: %d clipped voxels at s = %.4f, %d draws; censoring moves their means by "
      "%.3f..%.3f" % (NC, s, ndraws, (m_c - m_mis)[cens].min(), (m_c - m_mis)[cens].max()))

common = ["--psf", PSF, "--noise", "gaussian:sigma=%g" % SIGMA, "--prior",
          "gmrf1:delta=%g" % DELTA, "--boundary", "periodic", "--chains", "4", "--seed", "5",
          "--quiet"]
cases = [("gibbs", ["--sampler", "gibbs", "--burn", "200", "--iters", "3000"]),
         ("mtc", ["--sampler", "mtc", "--burn", "200", "--iters", "3000"]),
         ("hmc", ["--sampler", "hmc", "--burn", "600", "--iters", "3000"]),
         ("gibbs, --saturated-missing", ["--sampler", "gibbs", "--burn", "200", "--iters", "3000",
                                         "--saturated-missing"])]
for name, extra in cases:
    out = os.path.join(tmp, name.split(",")[0] + ("_missing" if "missing" in name else ""))
    pptest.run(["sample", frame, "-o", out] + common + extra)
    with open(os.path.join(out, "summary.json")) as f:
        md = json.load(f)["missing_data"]
    want = "missing" if "missing" in name else "censored"
    pptest.check(md["saturated"] == NC and abs(md["saturation_level"] - s) < 1e-6 * s and
                 md.get("saturated_as") == want,
                 "%s: summary.json missing_data %s (%d clipped at %.9g)" % (name, md, NC, s))
    rd = lambda n: tifffile.imread(os.path.join(out, n + ".tif")).astype(np.float64).ravel()
    mean, sd, mcse = rd("mean"), rd("sd"), rd("mcse")
    pptest.check(mean.size == D * H * W and np.isfinite(mean).all() and np.isfinite(sd).all(),
                 "%s: %d finite voxel estimates" % (name, mean.size))
    rm, rs, rse = (m_mis, s_mis, 0 * s_mis) if want == "missing" else (m_c, s_c, se_c)
    z = np.abs(mean - rm) / (4.5 * np.sqrt(mcse ** 2 + rse ** 2) + 0.01 * rs)
    pptest.check(z.max() < 1, "%s: every voxel's mean within 4.5 sqrt(MCSE^2 + SE_ref^2) + 1 %% sd "
                 "of the %s reference (worst %.2f of the tolerance; clipped voxels' worst %.2f)"
                 % (name, want, z.max(), z[cens].max()))
    ratio = sd / rs
    pptest.check(np.abs(ratio - 1).max() < 0.10 and abs(ratio[cens].mean() - 1) < 0.04,
                 "%s: sd / reference sd in [%.3f, %.3f] (within 10 %%), clipped voxels' mean %.3f "
                 "(within 4 %%)" % (name, ratio.min(), ratio.max(), ratio[cens].mean()))
    if want == "censored" and name == "gibbs":
        shift = (m_c - m_mis)[cens]
        pptest.check(shift.min() > 10 * mcse[cens].max(),
                     "censoring moves the clipped voxels' means up by %.3f-%.3f over the "
                     "missing-data posterior (> 10 MCSE, %.4f): the test tells the two apart"
                     % (shift.min(), shift.max(), 10 * mcse[cens].max()))
pptest.done()
