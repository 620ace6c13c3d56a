"""pcn, gpcn and hmc vs the closed-form Gaussian posterior computed with numpy.

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
probe draw means vs mu (se = sqrt(v/ESS)), probe mean squared deviations
from mu vs v (se ~ v sqrt(2/ESS2), for a Gaussian, with ESS2 that of the
squared deviations), every pixel of mean.tif vs mu with the
smallest probe ESS (5 se, ~1000 pixels), sd.tif vs sqrt(v) (5 se of sqrt).

Then hmc with the level free (the same closed form with the prior term at
k = 0 removed) and hmc with delta free against gibbs (the delta means within
4.5 combined Monte Carlo se): the moves that change delta and the level,
after which hmc's cached gradient must be recomputed.
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
q = pptest.matern_q(H, W, rng_, nu)
P = lam * np.abs(A) ** 2 + dlt * q
num = lam * np.conj(A) * np.fft.fft2(y)
num[0, 0] += dlt * q[0, 0] * M * H * W
mu = np.real(np.fft.ifft2(num / P))
v = np.mean(1.0 / P)

for kind, iters, thin in (("pcn", 40000, 10), ("gpcn", 4000, 1), ("hmc", 4000, 1)):
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
    ess_min = pptest.check_probes_gaussian(kind, head, tr, mu, v)
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    zm = np.max(np.abs(mean - mu)) / np.sqrt(v / ess_min)
    zs = np.max(np.abs(sd / np.sqrt(v) - 1)) / np.sqrt(1.0 / (2 * ess_min))
    pptest.check(zm < 5, "%s mean.tif vs numpy closed form: worst %.2f se (ESS %.0f)" % (kind, zm, ess_min))
    pptest.check(zs < 5, "%s sd.tif vs numpy closed form: worst %.2f se" % (kind, zs))
    print("%s: acceptance %s, step %s, min probe ESS %.0f over %d draws"
          % (kind, acc, [c["step"] for c in s["chain_moves"]], ess_min, tr.shape[0]))

# hmc with the level free (matern without mean=M: flat prior on the zero
# frequency, moved by its own random walk, so hmc's cached gradient must be
# refreshed after each level move): the closed form is the same with the
# prior term at k = 0 removed.
Pf = P.copy()
Pf[0, 0] = lam * np.abs(A[0, 0]) ** 2
numf = lam * np.conj(A) * np.fft.fft2(y)
muf = np.real(np.fft.ifft2(numf / Pf))
vf = np.mean(1.0 / Pf)
out = os.path.join(tmp, "hmc_level")
pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--prior", "matern:range=%g,nu=%g,delta=%g" % (rng_, nu, dlt),
            "--sampler", "hmc", "--positivity", "none", "--boundary", "periodic",
            "--chains", "4", "--burn", "1000", "--iters", "4000", "--seed", "22", "--quiet", "-o", out])
head, tr = read_trace(os.path.join(out, "trace.csv"))
pptest.check_probes_gaussian("hmc, level free", head, tr, muf, vf)

# hmc with delta free as well (its own Metropolis move in the non-centred
# parameterisation) vs gibbs on the same posterior: gibbs draws delta from
# its exact conditional and is itself checked against closed forms and
# scikit-image (ref_gibbs_*, ref_skimage). Same hyperprior; z at 4.5 of the
# combined Monte Carlo error of the two delta means.
dmean = {}
for kind in ("hmc", "gibbs"):
    out = os.path.join(tmp, kind + "_delta")
    extra = ["--positivity", "none"] if kind == "hmc" else []
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian:sigma=0.5", "--prior", "matern:range=%g,nu=%g" % (rng_, nu),
                "--sampler", kind, "--boundary", "periodic", "--chains", "4", "--burn", "1000",
                "--iters", "4000", "--seed", "23", "--quiet", "-o", out] + extra)
    head, tr = read_trace(os.path.join(out, "trace.csv"))
    ch = tr[:, 0].astype(int)
    d = tr[:, head.index("delta")]
    ess = sum(geyer_ess(d[ch == c]) for c in np.unique(ch))
    dmean[kind] = (d.mean(), d.std(ddof=1) / np.sqrt(ess), ess)
zd = (dmean["hmc"][0] - dmean["gibbs"][0]) / np.hypot(dmean["hmc"][1], dmean["gibbs"][1])
pptest.check(abs(zd) < 4.5, "delta free: hmc mean %.4g (ESS %.0f) vs gibbs %.4g (ESS %.0f): z=%.2f"
             % (dmean["hmc"][0], dmean["hmc"][2], dmean["gibbs"][0], dmean["gibbs"][2], zd))
pptest.done()
