"""Volumes with --boundary pad (padding in z as well) and missing voxels
against the exact posterior computed densely with numpy.linalg on a tiny
volume (library calls through tests/probe_volume).

The padded model, as for frames (tests/ref_gibbs_pad_exact.py): the volume
(4 x 5 x 6) sits at the origin of a periodic grid, read from the probe's
"grid" line (the PSF's radius added on every axis, z by the kernel's own z
radius, then rounded to fast FFT sizes: src/grid.h); x on the grid has the
gmrf1 prior with anisotropic voxel weights, Q = sum_a w_a (2 I - S_a - S_a'),
S_a the periodic shift along axis a, w_a = (voxel_x / voxel_a)^2
(include/pixpost/prior.h), built entry by entry (no FFT); y_obs = S A x + e,
A the periodic convolution by an asymmetric 3 x 3 x 3 PSF on the grid
(dense, entry by entry: (A x)_m = sum_d k[d] x[m - d + 1], a convolution
as scipy.ndimage.convolve(mode='wrap') defines it) and S the selection of the observed voxels: the
frame box minus 3 voxels set to NaN (missing data). With lambda and delta
fixed (gaussian:sigma=S, gmrf1:delta=D) the posterior of x is Gaussian with
precision P = lambda A'S'SA + delta Q and mean P^-1 lambda A'S'y.

The sampler (gibbs: data augmentation of the padding and the missing voxels)
estimates the mean by Rao-Blackwellisation over augmented draws, so it is
exact only up to Monte Carlo error: every voxel's mean must lie within 5
of its MCSE (the sampler's own per-voxel MCSE map; 5 sigma over 120
voxels, fixed seed) and, as a check of that map, the MCSE must be below
5 % of the posterior sd. sd: the law of total variance over kept draws;
each voxel's sd within 5 % of sqrt(diag P^-1) (its relative error from
~4 x 1500 correlated draws is ~1-2 %: sd error ~ 1/sqrt(2 ESS)). mtc with
pad runs the same gibbs chain (it says so) and is checked the same way.
The 9 probe voxels' draws (trace columns p_z_r_c, middle slice): mean
within 5 batch-means standard errors of the dense mean, sd within 10 %
(4 x 1500 draws).
Power, measured: with the dense A built as a correlation (the PSF flipped on
every axis) the mean is off by up to 1650 MCSE and the sd by 6 %.
"""
import os
import subprocess

import numpy as np

import pptest
import volref

tmp = pptest.tmpdir()
rng = np.random.default_rng(4)
D, H, W = 4, 5, 6
VOX = (1.2, 0.5, 0.5)
SIGMA, DEL = 0.3, 0.5
LAM = 1 / SIGMA ** 2

psf = rng.uniform(0.2, 1.0, (3, 3, 3))
psf[0] *= 0.4
psf /= psf.sum()
truth = 10 + rng.standard_normal((D, H, W)).cumsum(2)
y = truth + SIGMA * rng.standard_normal((D, H, W))  # any data will do: the check is exactness
y[1, 2, 3] = y[0, 0, 0] = y[3, 4, 5] = np.nan

fp, pp = os.path.join(tmp, "y.raw"), os.path.join(tmp, "psf.raw")
y.astype("<f8").tofile(fp)
psf.astype("<f8").tofile(pp)


def run(kind):
    out = os.path.join(tmp, kind)
    p = subprocess.run([os.path.join(pptest.PROBES, "probe_volume"), "run", fp, str(D), str(H),
                        str(W), pp, "3", "3", "3", out, "sampler=" + kind,
                        "prior=gmrf1:delta=%g" % DEL, "noise=gaussian:sigma=%g" % SIGMA,
                        "boundary=pad", "voxel=%g,%g,%g" % VOX, "chains=4", "burn=100",
                        "iters=1500", "seed=9"], capture_output=True, text=True)
    if p.returncode != 0:
        raise AssertionError("probe_volume failed: " + p.stderr)
    res = {k: np.fromfile(out + "." + k, "<f8").reshape(D, H, W) for k in ("mean", "sd", "mcse")}
    res["grid"] = [int(v) for v in next(l for l in p.stdout.splitlines()
                                       if l.startswith("grid")).split()[1:]]
    res["stdout"] = p.stdout
    with open(out + ".trace") as f:
        res["head"] = f.readline().split()
        res["trace"] = np.loadtxt(f, ndmin=2)
    return res


r = run("gibbs")
gd, gh, gw = r["grid"]
pptest.check(gd >= D + 2 and gh >= H + 2 and gw >= W + 2,
             "pad grid %s covers the volume plus the PSF radius 1 on every axis" % r["grid"])
n = gd * gh * gw
A, Q, idx = volref.dense_model((gd, gh, gw), psf, VOX)
obs = [(idx(z, a, b), y[z, a, b]) for z in range(D) for a in range(H) for b in range(W)
       if not np.isnan(y[z, a, b])]
S = np.zeros((len(obs), n))
for k, (i, _) in enumerate(obs):
    S[k, i] = 1
yo = np.array([v for _, v in obs])
SA = S @ A
P = LAM * SA.T @ SA + DEL * Q
C = np.linalg.inv(P)
mu_g = C @ (LAM * SA.T @ yo)
box = [idx(z, a, b) for z in range(D) for a in range(H) for b in range(W)]
mu = mu_g[box].reshape(D, H, W)
sd = np.sqrt(np.diag(C)[box]).reshape(D, H, W)

for kind in ("gibbs", "mtc"):
    if kind == "mtc":
        r = run("mtc")
        pptest.check("warning" in r["stdout"] and r["grid"] == [gd, gh, gw],
                     "mtc with pad: the same grid, and it warns that it runs the gibbs chain")
    zt = np.abs(r["mean"] - mu) / r["mcse"]
    pptest.check(np.max(zt) < 5, "%s pad + 3 NaN voxels: mean within 5 MCSE of the dense "
                 "posterior mean at every voxel (worst %.2f MCSE, max |err| %.2e, "
                 "max MCSE/sd %.3f)" % (kind, np.max(zt), np.max(np.abs(r["mean"] - mu)),
                                         np.max(r["mcse"] / sd)))
    pptest.check(np.max(r["mcse"] / sd) < 0.05, "%s: MCSE below 5 %% of the posterior sd" % kind)
    # the probe voxels' draws (summed from x-hat by the half-spectrum
    # twiddles of rank 3): mean within 5 batch-means se, sd within 10 %
    worst = 0
    for j, h in enumerate(r["head"]):
        if h.startswith("p_"):
            zz, rr, cc = map(int, h.split("_")[1:])
            d = r["trace"][:, j]
            worst = max(worst, abs(d.mean() - mu[zz, rr, cc]) / pptest.batch_se(d, 4))
            pptest.check(abs(d.std() / sd[zz, rr, cc] - 1) < 0.1,
                         "%s probe %s: draw sd %.4f vs dense %.4f" % (kind, h, d.std(), sd[zz, rr, cc]))
    pptest.check(worst < 5, "%s: probe draw means within 5 se of the dense mean (worst %.2f)"
                 % (kind, worst))
    es = np.max(np.abs(r["sd"] / sd - 1))
    pptest.check(es < 0.05, "%s: sd within 5 %% of sqrt(diag P^-1) at every voxel (worst %.2f %%)"
                 % (kind, 100 * es))
pptest.done()
