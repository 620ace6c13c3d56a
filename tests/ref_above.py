"""The probability maps --above T against the closed form, and --rsd.

With lambda and delta fixed and periodic boundaries the posterior of each
pixel is Gaussian, N(mu_i, v) with mu = F^-1[lam conj(A) Y / p] and the
same v = mean_k 1/p(k) everywhere (numpy.fft; as
tests/ref_gibbs_closed_form.py), so P(x_i > T) = Phi((mu_i - T) / sqrt(v))
(Phi by math.erf). above_<T>.tif is the share of the S kept draws above T;
for gibbs and mtc (exact independent draws with both hyperparameters fixed)
its error at a pixel is binomial, sd sqrt(P (1 - P) / S). Tolerance: every
pixel within 5 such sds (floored at 0.5 / S, one draw's worth, where P is
near 0 or 1); over ~800 pixels x 3 thresholds x 2 samplers a chance failure
has probability ~1e-3. The mean |error| over the pixels must also be below
1.5 x the mean binomial sd (it is ~0.8 x for independent errors).
rsd.tif must be sd.tif / mean.tif where the mean is positive (to float32
precision) and NaN where it is not (a frame shifted to have negative means).
"""
import math
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(4)
H, W = 30, 26
truth = 5 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
lam, dlt = 4.0, 0.8
y, A, p, mu = pptest.gmrf1_frame_posterior(tmp, truth, 5, lam, dlt)
sv = math.sqrt(np.mean(1.0 / p))
Phi = np.vectorize(lambda z: 0.5 * (1 + math.erf(z / math.sqrt(2))))
Ts = [float(np.quantile(mu, 0.3)), float(np.median(mu)), float(np.quantile(mu, 0.8))]
Ts = [float("%g" % t) for t in Ts]
for sampler in ("gibbs", "mtc"):
    out = os.path.join(tmp, sampler)
    chains, iters = 4, 1000
    args = ["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--prior", "gmrf1:delta=%g" % dlt,
            "--boundary", "periodic", "--sampler", sampler, "--chains", chains, "--burn", "10",
            "--iters", iters, "--seed", "21", "--quiet", "-o", out, "--rsd"]
    for t in Ts:
        args += ["--above", "%g" % t]
    pptest.run(args)
    S = chains * iters
    for t in Ts:
        got = tifffile.imread(os.path.join(out, "above_%g.tif" % t)).astype(np.float64)
        want = Phi((mu - t) / sv)
        se = np.maximum(np.sqrt(want * (1 - want) / S), 0.5 / S)
        z = np.abs(got - want) / se
        pptest.check(got.shape == (H, W) and z.max() <= 5,
                     "%s above_%g.tif vs Phi((mu - T)/sigma): worst %.2f binomial sds "
                     "(tolerance 5)" % (sampler, t, z.max()))
        ratio = np.mean(np.abs(got - want)) / np.mean(np.sqrt(want * (1 - want) / S))
        pptest.check(ratio < 1.5, "%s above_%g.tif: mean |error| %.2f x the mean binomial sd "
                     "(< 1.5)" % (sampler, t, ratio))
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    rsd = tifffile.imread(os.path.join(out, "rsd.tif")).astype(np.float64)
    pos = mean > 0
    pptest.check(pos.any() and (~pos).any(), "%s: the frame has positive and non-positive "
                 "means (%d of %d positive)" % (sampler, pos.sum(), pos.size))
    err = np.max(np.abs(rsd[pos] - sd[pos] / mean[pos]) / np.abs(sd[pos] / mean[pos]))
    pptest.check(err < 1e-5 and np.all(np.isnan(rsd[~pos])),
                 "%s rsd.tif = sd/mean where mean > 0 (max rel err %.1e), NaN elsewhere"
                 % (sampler, err))
p = pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "-o", os.path.join(tmp, "bad"), "--above", "1e400"], check=False)
pptest.check(p.returncode == 1 and "--above" in p.stderr and len(p.stderr.splitlines()) == 1
             and not os.path.exists(os.path.join(tmp, "bad")),
             "--above 1e400: exit 1, one line naming --above, nothing written (%r)"
             % p.stderr.strip())
p = pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "-o", os.path.join(tmp, "bad"), "--above", "2", "--above", "2.0"], check=False)
pptest.check(p.returncode == 1 and "same file" in p.stderr and
             not os.path.exists(os.path.join(tmp, "bad")),
             "--above 2 --above 2.0: refused, same file (%r)" % p.stderr.strip())
pptest.done()
