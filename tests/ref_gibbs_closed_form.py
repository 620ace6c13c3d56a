"""Gibbs sampler vs closed forms computed independently with numpy.

1. Fixed lambda and delta, periodic boundary: the posterior of x is Gaussian
   with mean  mu = F^-1[ lam conj(A) Y / (lam |A|^2 + del q) ]  and the same
   marginal variance  v = mean_k 1 / (lam |A_k|^2 + del q_k)  at every pixel
   (numpy.fft on the full spectrum, not pixpost's half-spectrum code).
   mean.tif must equal mu and sd.tif sqrt(v) to float32 precision (with fixed
   hyperparameters the Rao-Blackwellised estimates are exact), and the probe
   pixel draws in trace.csv must have mean mu and variance v within Monte
   Carlo error (independent exact draws: se(mean) = sqrt(v/n),
   se(var) ~ v sqrt(2/(n-1)); tolerance 4.5 se over 9 probes x 2 moments).

2. Sampled lambda and delta: their posterior means and sds match the exact
   marginal posterior p(lambda, delta | y), integrated numerically on a grid.
   The marginal is  log p(y|lam,del) = -1/2 sum_{k != 0} [log c_k + |Y_k|^2/(N c_k)]
   with c_k = 1/lam + |A_k|^2/(del q_k) (the zero frequency carries no
   information under the intrinsic prior), times the Gamma(1, 1e-4)
   hyperpriors. Tolerance: 4 Monte Carlo standard errors from batch means
   of the chains (plus 1 % for the grid).
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261201)
H, W = 40, 36  # non-square, not a power of two
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
pptest.run(["psf", "gaussian:sigma=1.3", "-o", os.path.join(tmp, "psf.tif")])
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", "5",
            "-o", os.path.join(tmp, "y.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)

# Transfer function: PSF zero-padded, centre moved to (0, 0).
A = pptest.transfer(psf, (H, W))
q = pptest.gmrf1_q(H, W)
Y = np.fft.fft2(y)

# ---- 1. fixed hyperparameters -------------------------------------------
lam, dlt = 4.0, 0.8
out1 = os.path.join(tmp, "fixed")
pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--prior", "gmrf1:delta=%g" % dlt,
            "--boundary", "periodic", "--chains", "4", "--burn", "10", "--iters", "1500",
            "--seed", "11", "--quiet", "-o", out1])
p = lam * np.abs(A) ** 2 + dlt * q
mu = np.real(np.fft.ifft2(lam * np.conj(A) * Y / p))
v = np.mean(1.0 / p)
mean = tifffile.imread(os.path.join(out1, "mean.tif")).astype(np.float64)
sd = tifffile.imread(os.path.join(out1, "sd.tif")).astype(np.float64)
err_mean = np.max(np.abs(mean - mu)) / np.max(np.abs(mu))
err_sd = np.max(np.abs(sd - np.sqrt(v))) / np.sqrt(v)
pptest.check(err_mean < 1e-6, "fixed hyper: mean.tif = numpy closed-form mean (rel err %.2e)" % err_mean)
pptest.check(err_sd < 1e-6, "fixed hyper: sd.tif = numpy closed-form sd (rel err %.2e)" % err_sd)
s = json.load(open(os.path.join(out1, "summary.json")))
pptest.check(s["hyper"]["lambda"]["fixed"] and abs(s["hyper"]["lambda"]["mean"] - lam) < 1e-12,
             "lambda fixed at 1/sigma^2 = 4")
head, tr = pptest.read_trace(os.path.join(out1, "trace.csv"))
n = tr.shape[0]
worst = 0.0
for j, name in enumerate(head):
    if not name.startswith("p_"):
        continue
    rr, cc = map(int, name.split("_")[1:])
    d = tr[:, j]
    z_mean = (d.mean() - mu[rr, cc]) / np.sqrt(v / n)
    z_var = (d.var(ddof=1) - v) / (v * np.sqrt(2.0 / (n - 1)))
    worst = max(worst, abs(z_mean), abs(z_var))
    pptest.check(abs(z_mean) < 4.5 and abs(z_var) < 4.5,
                 "probe %s: draw mean z=%.2f, variance z=%.2f vs closed form" % (name, z_mean, z_var))

# ---- 2. sampled hyperparameters vs the exact marginal posterior ------------
out2 = os.path.join(tmp, "hyper")
pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
            "--boundary", "periodic", "--chains", "4", "--burn", "300", "--iters", "3000",
            "--seed", "12", "--quiet", "-o", out2, "--prior", "gmrf1"])
head, tr = pptest.read_trace(os.path.join(out2, "trace.csv"))
nz = q != 0
a2 = np.abs(A[nz]) ** 2
qq = q[nz]
yy = np.abs(Y[nz]) ** 2 / (H * W)


def log_post(ll, ld):
    lam_, del_ = np.exp(ll), np.exp(ld)
    c = 1.0 / lam_ + a2 / (del_ * qq)
    lp = -0.5 * np.sum(np.log(c)) - 0.5 * np.sum(yy / c)
    # Gamma(1, 1e-4) hyperpriors, with the Jacobian of the log scale.
    lp += (1 - 1) * ll - 1e-4 * lam_ + (1 - 1) * ld - 1e-4 * del_ + ll + ld
    return lp


lam_s = tr[:, head.index("lambda")]
del_s = tr[:, head.index("delta")]
gl = np.linspace(np.log(lam_s.mean()) - 0.6, np.log(lam_s.mean()) + 0.6, 161)
gd = np.linspace(np.log(del_s.mean()) - 1.5, np.log(del_s.mean()) + 1.5, 161)
LP = np.array([[log_post(a, b) for b in gd] for a in gl])
P = np.exp(LP - LP.max())
P /= P.sum()
L = np.exp(gl)[:, None] * np.ones_like(P)
D = np.exp(gd)[None, :] * np.ones_like(P)
exact = {"lambda": (np.sum(P * L), np.sqrt(np.sum(P * L ** 2) - np.sum(P * L) ** 2)),
         "delta": (np.sum(P * D), np.sqrt(np.sum(P * D ** 2) - np.sum(P * D) ** 2))}
pptest.check(P[0, :].max() < 1e-6 and P[-1, :].max() < 1e-6 and P[:, 0].max() < 1e-6
             and P[:, -1].max() < 1e-6, "the integration grid holds the whole posterior")

for name, d in (("lambda", lam_s), ("delta", del_s)):
    m_ex, s_ex = exact[name]
    se = pptest.batch_se(d, 4)
    tol = 4 * se + 0.01 * m_ex
    pptest.check(abs(d.mean() - m_ex) < tol,
                 "%s posterior mean %.6g vs exact marginal %.6g (tol %.2g)" % (name, d.mean(), m_ex, tol))
    pptest.check(abs(d.std() - s_ex) < 0.1 * s_ex,
                 "%s posterior sd %.4g vs exact marginal %.4g (within 10%%: sd error ~ 1/sqrt(2 ESS))"
                 % (name, d.std(), s_ex))
pptest.done()
