"""pcn and gpcn vs the closed-form Gaussian posterior computed with numpy.

Gaussian likelihood (gaussian:sigma=0.5, lambda = 4 fixed), matern prior with
a known mean and fixed delta, positivity none, periodic boundary: the
posterior of x is N(mu, P^-1) with P(k) = lam |A_k|^2 + del q_k and
mu = F^-1[(lam conj(A) Y + del q M N [k = 0]) / P], the same marginal variance
v = mean_k 1/P(k) at every pixel (numpy.fft on the full spectrum, the closed
form of tests/ref_gibbs_closed_form.py with the prior mean added).

Monte Carlo error: pcn/gpcn draws are correlated, so every tolerance uses
the effective sample size of the probe-pixel traces, computed here with
Geyer's initial monotone sequence estimator (Geyer, Statist. Sci. 7, 1992)
on each chain and summed over chains. Checks at 4.5 standard errors:
probe draw means vs mu (se = sqrt(v/ESS)), probe draw variances vs v
(se ~ v sqrt(2/ESS), for a Gaussian), every pixel of mean.tif vs mu with the
smallest probe ESS (5 se, ~1000 pixels), sd.tif vs sqrt(v) (5 se of sqrt).
"""
import json
import os

import numpy as np
import tifffile

import pptest


geyer_ess = pptest.geyer_ess  # Geyer 1992, initial monotone sequence
read_trace = pptest.read_trace


tmp = pptest.tmpdir()
rng = np.random.default_rng(20261202)
H, W = 30, 26
truth = 5 + 2 * np.sin(np.arange(H)[:, None] / 4.0) * np.cos(np.arange(W)[None, :] / 5.0)
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
pptest.run(["psf", "gaussian:sigma=1.3", "-o", os.path.join(tmp, "psf.tif")])
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", "7",
            "-o", os.path.join(tmp, "y.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
A = pptest.transfer(psf, (H, W))
lam, dlt, M, rng_, nu = 4.0, 0.5, 5.0, 4.0, 1.0
kap2 = 8 * nu / rng_ ** 2
k1 = np.arange(H)[:, None]
k2 = np.arange(W)[None, :]
q = (kap2 + 4 - 2 * np.cos(2 * np.pi * k1 / H) - 2 * np.cos(2 * np.pi * k2 / W)) ** (nu + 1)
P = lam * np.abs(A) ** 2 + dlt * q
num = lam * np.conj(A) * np.fft.fft2(y)
num[0, 0] += dlt * q[0, 0] * M * H * W
mu = np.real(np.fft.ifft2(num / P))
v = np.mean(1.0 / P)

for kind, iters, thin in (("pcn", 40000, 10), ("gpcn", 4000, 1)):
    out = os.path.join(tmp, kind)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian:sigma=0.5",
                "--prior", "matern:range=%g,nu=%g,mean=%g,delta=%g" % (rng_, nu, M, dlt),
                "--sampler", kind, "--positivity", "none", "--boundary", "periodic",
                "--chains", "4", "--burn", "1000", "--iters", str(iters), "--thin", str(thin),
                "--seed", "21", "--quiet", "-o", out])
    s = json.load(open(os.path.join(out, "summary.json")))
    acc = [c["acceptance"] for c in s["chain_moves"]]
    head, tr = read_trace(os.path.join(out, "trace.csv"))
    ch = tr[:, 0].astype(int)
    ess_min = np.inf
    for j, name in enumerate(head):
        if not name.startswith("p_"):
            continue
        rr, cc = map(int, name.split("_")[1:])
        d = tr[:, j]
        ess = sum(geyer_ess(d[ch == c]) for c in np.unique(ch))
        ess_min = min(ess_min, ess)
        z_mean = (d.mean() - mu[rr, cc]) / np.sqrt(v / ess)
        z_var = (d.var(ddof=1) - v) / (v * np.sqrt(2.0 / ess))
        pptest.check(abs(z_mean) < 4.5 and abs(z_var) < 4.5,
                     "%s probe %s (ESS %.0f): mean z=%.2f, variance z=%.2f vs numpy closed form"
                     % (kind, name, ess, z_mean, z_var))
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    zm = np.max(np.abs(mean - mu)) / np.sqrt(v / ess_min)
    zs = np.max(np.abs(sd / np.sqrt(v) - 1)) / np.sqrt(1.0 / (2 * ess_min))
    pptest.check(zm < 5, "%s mean.tif vs numpy closed form: worst %.2f se (ESS %.0f)" % (kind, zm, ess_min))
    pptest.check(zs < 5, "%s sd.tif vs numpy closed form: worst %.2f se" % (kind, zs))
    print("%s: acceptance %s, step %s, min probe ESS %.0f over %d draws"
          % (kind, acc, [c["step"] for c in s["chain_moves"]], ess_min, tr.shape[0]))
pptest.done()
