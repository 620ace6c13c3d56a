"""Volumes with --boundary pad, gmrf1 and both precisions sampled (so the
padding scale move of src/padscale.h runs on a rank-3 grid, with
anisotropic voxel weights and missing voxels) against the exact marginal
posterior of (lambda, delta), computed densely with numpy on a tiny volume
(library calls through tests/probe_volume). The 3-D counterpart of
tests/ref_gibbs_pad_exact.py; tests/ref_volume_pad.py checks the field
with the precisions fixed (where the move is off).

The padded model: the volume (4 x 5 x 6) sits at the origin of a periodic
grid (the probe's "grid" line); x on the grid has the gmrf1 prior with
anisotropic voxel weights, Q = sum_a w_a (2 I - S_a - S_a'), S_a the
periodic shift along axis a, w_a = (voxel_x / voxel_a)^2
(include/pixpost/prior.h), a flat prior on the mean level; y_obs = S A x + e,
A the periodic convolution by an asymmetric 3 x 3 x 3 PSF (dense, entry by
entry, as scipy.ndimage.convolve(mode='wrap') defines it; no FFT) and S the
selection of the observed voxels (the frame box minus 3 NaN voxels).
Integrating x out (numpy.linalg, dense):
  y_obs ~ N(c 1, 1/lambda I + 1/delta S A Q^+ A' S'),  c flat,
and integrating c projects onto the complement of the constant vector
(A 1 = 1). With K = P' S A Q^+ A' S' P = U diag(k) U' (P an orthonormal
basis of that complement):
  log p(y | lambda, delta) = -1/2 sum_i [log(1/lambda + k_i/delta)
                                         + (U'P'y)_i^2 / (1/lambda + k_i/delta)]
times the hyperpriors lambda ~ Gamma(1, 1e-4) (the default) and delta ~
Gamma(1, 1) (hyper_delta=1,1, as tests/ref_gibbs_pad_exact.py says why: it
removes a minute second mode at a flat x that chains can fall onto during
burn-in), on a grid in (log lambda, log delta). Tolerances as in
tests/ref_gibbs_pad_exact.py: the sampler's posterior means of lambda and
delta within 4 Monte Carlo standard errors (batch means over the 4
chains; 4 sigma, fixed seed) plus 1 % for the integration grid; the sds
within 15 %.
Power, measured (each from a temporary edit of src/padscale.c, not
committed): the move's increments unweighted (w_a = 1): delta 0.0021
against the exact 0.0249, fails; the weights inverted ((voxel_a /
voxel_x)^2): delta 0.00019, fails; the z increments left out: delta 0.0319
(tol 0.0011), fails; n_P counted as a frame's (grid less one slice): delta
0.0014, fails. The carried-out edge c_P may be any function of the
frame's x (the move is exact for each), so its 3-D rule is not a matter
for this check but for the mixing (measured in the commit message).
"""
import os
import subprocess

import numpy as np

import pptest
import volref

tmp = pptest.tmpdir()
rng = np.random.default_rng(11)
D, H, W = 4, 5, 6
VOX = (1.2, 0.5, 0.5)

psf = rng.uniform(0.2, 1.0, (3, 3, 3))
psf[0] *= 0.4
psf /= psf.sum()
zz, yy, xx = np.mgrid[0:D, 0:H, 0:W]
truth = 10 + 4 * np.sin(xx / 2.0) + 3 * np.cos(yy / 3.0) + 2 * np.cos(zz / 1.5)
y = truth + 1.0 * rng.standard_normal((D, H, W))  # any data will do: the check is exactness
y[1, 2, 3] = y[0, 0, 0] = y[3, 4, 5] = np.nan

fp, pp = os.path.join(tmp, "y.raw"), os.path.join(tmp, "psf.raw")
y.astype("<f8").tofile(fp)
psf.astype("<f8").tofile(pp)
out = os.path.join(tmp, "gibbs")
p = subprocess.run([os.path.join(pptest.PROBES, "probe_volume"), "run", fp, str(D), str(H),
                    str(W), pp, "3", "3", "3", out, "sampler=gibbs", "prior=gmrf1",
                    "noise=gaussian", "boundary=pad", "hyper_delta=1,1",
                    "voxel=%g,%g,%g" % VOX, "chains=4", "burn=300", "iters=4000", "seed=9"],
                   capture_output=True, text=True)
if p.returncode != 0:
    raise AssertionError("probe_volume failed: " + p.stderr)
gd, gh, gw = [int(v) for v in next(l for l in p.stdout.splitlines()
                                   if l.startswith("grid")).split()[1:]]
pptest.check(gd >= D + 2 and gh >= H + 2 and gw >= W + 2,
             "pad grid %dx%dx%d covers the volume plus the PSF radius 1 on every axis"
             % (gd, gh, gw))
with open(out + ".trace") as f:
    head = f.readline().split()
    tr = np.loadtxt(f, ndmin=2)

n = gd * gh * gw
A, Q, idx = volref.dense_model((gd, gh, gw), psf, VOX)
obs = [(idx(z, a, b), y[z, a, b]) for z in range(D) for a in range(H) for b in range(W)
       if not np.isnan(y[z, a, b])]
B = A[[i for i, _ in obs]]
yo = np.array([v for _, v in obs])
nobs = len(obs)
ones = np.ones((nobs, 1)) / np.sqrt(nobs)
P = np.linalg.qr(np.hstack([ones, np.eye(nobs)[:, : nobs - 1]]))[0][:, 1:]
K = P.T @ B @ np.linalg.pinv(Q, hermitian=True) @ B.T @ P
kap, U = np.linalg.eigh((K + K.T) / 2)
z2 = (U.T @ P.T @ yo) ** 2


def log_post(ll, ld):
    lam, dl = np.exp(ll), np.exp(ld)
    c = 1.0 / lam + kap / dl
    return -0.5 * np.sum(np.log(c)) - 0.5 * np.sum(z2 / c) - 1e-4 * lam - 1.0 * dl + ll + ld


lam_s, del_s = tr[:, head.index("lambda")], tr[:, head.index("delta")]
# the integration grid: fixed and wide (it must not depend on the sampler
# being right), 241 points per axis
gl = np.linspace(np.log(1e-3), np.log(1e3), 241)
gdl = np.linspace(np.log(1e-5), np.log(1e5), 241)
pptest.check_hyper_marginal("volume pad", log_post, gl, gdl, lam_s, del_s)
pptest.done()
