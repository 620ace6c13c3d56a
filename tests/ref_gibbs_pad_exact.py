"""Gibbs with --boundary pad (data augmentation plus the interweaving
moves for delta) against the exact marginal posterior of (lambda, delta),
computed densely with numpy on a tiny frame.

The padded model: the frame (H x W) sits at the origin of a periodic grid
(read from summary.json "grid"); x on the grid has the gmrf1 prior (periodic
5-point Laplacian Q, a flat prior on the mean level), y_obs = S A x + e with
A the periodic convolution by the PSF on the grid and S the selection of
the frame pixels. Integrating x out (numpy.linalg, dense):
  y_obs ~ N(c 1, 1/lambda I + 1/delta S A Q^+ A' S'),  c flat,
and integrating c projects onto the complement of the constant vector
(A 1 = 1). With K = P' S A Q^+ A' S' P = U diag(k) U' (P an orthonormal
basis of that complement):
  log p(y | lambda, delta) = -1/2 sum_i [log(1/lambda + k_i/delta)
                                         + (U'P'y)_i^2 / (1/lambda + k_i/delta)]
times the hyperpriors, lambda ~ Gamma(1, 1e-4) (the default) and
delta ~ Gamma(1, 1) (--hyper-delta 1,1), on a grid in (log lambda, log delta).
The sampler's posterior means of lambda and delta must match within 4 Monte
Carlo standard errors (batch means over the chains) plus 1 % for the grid;
the sds within 15 %. Power, measured: this catches errors that move the
posterior by a few per cent (e.g. a wrong augmentation), but on a frame this
small it did not tell apart a variant of the interweaving step that leaves
the padding unmoved, whose bias is smaller than the tolerance; that step's
exactness rests on its derivation in src/sampler_gibbs.c. The padding scale
move (src/padscale.h, gmrf1 with pad) runs here too: with its Jacobian
e^{(n_P - 2) rho} written e^{n_P rho} this check fails (delta 0.01738
against 0.01590, tol 0.0011), with it dropped it fails by far (delta 0.94);
with its frame-likelihood term dropped it still passes (0.01695): that
term rests on its derivation (bench/NOTES.md 2026-12-04).
Why delta ~ Gamma(1, 1): with the default Gamma(1, 1e-4), the marginal
posterior of log delta on a frame this small has a second, minute mode at
delta ~ 1e3-1e4 (a flat x, all of y noise: the likelihood levels off while
the prior's Jacobian keeps growing up to 1/rate). Its mass is ~e^-20 of the
total, but 12 of 60 dispersed gibbs chains (15 seeds) fell onto it during
burn-in and stayed for the whole run (R-hat flags such runs); that was seen
for noise sd 1, 2 and 3 alike. A rate of 1 removes that mode and leaves the
main one (delta ~ 0.02) as it was, so the check stays one of exactness.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(7)
H, W = 10, 9
yy, xx = np.mgrid[0:H, 0:W]
truth = 10 + 4 * np.sin(xx / 2.0) + 3 * np.cos(yy / 3.0) + rng.standard_normal((H, W))
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
PSF = "gaussian:sigma=1.0"
pptest.run(["psf", PSF, "-o", os.path.join(tmp, "psf.tif")])
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=3", "--boundary", "pad", "--seed", "3", "-o",
            os.path.join(tmp, "y.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
out = os.path.join(tmp, "run")
pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", PSF, "--boundary", "pad", "--hyper-delta", "1,1",
            "--prior", "gmrf1",
            "--chains", "4", "--burn", "300", "--iters", "4000", "--seed", "9", "--quiet",
            "-o", out])
summ = json.load(open(os.path.join(out, "summary.json")))
gw, gh = summ["grid"]["width"], summ["grid"]["height"]
R = psf.shape[0] // 2
pptest.check(gh >= H + 2 * R and gw >= W + 2 * R, "grid %dx%d holds the frame plus 2 PSF radii" % (gw, gh))

# Dense operators on the grid (row-major index r * gw + c).
A, Q = pptest.dense_periodic(psf, gh, gw)
obs = np.array([r * gw + c for r in range(H) for c in range(W)])
B = A[obs]
nobs = len(obs)
ones = np.ones((nobs, 1)) / np.sqrt(nobs)
P = np.linalg.qr(np.hstack([ones, np.eye(nobs)[:, : nobs - 1]]))[0][:, 1:]
K = P.T @ B @ np.linalg.pinv(Q, hermitian=True) @ B.T @ P
kap, U = np.linalg.eigh((K + K.T) / 2)
z2 = (U.T @ P.T @ y.reshape(-1)) ** 2


def log_post(ll, ld):
    lam, dl = np.exp(ll), np.exp(ld)
    c = 1.0 / lam + kap / dl
    return -0.5 * np.sum(np.log(c)) - 0.5 * np.sum(z2 / c) - 1e-4 * lam - 1.0 * dl + ll + ld


head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
lam_s, del_s = tr[:, head.index("lambda")], tr[:, head.index("delta")]
# The grid: fixed and wide (it must not depend on the sampler being right);
# 241 points per axis, steps of 0.04 (log lambda) and 0.11 (log delta)
# against posterior sds of ~0.2 and ~0.5 there.
gl = np.linspace(np.log(1e-3), np.log(1e1), 241)
gd = np.linspace(np.log(1e-4), np.log(1e7), 241)
pptest.check_hyper_marginal("pad", log_post, gl, gd, lam_s, del_s)
pptest.done()
