"""Uncertain PSF width (gaussian:sigma=auto): 95 % intervals cover the truth.

20 frames of 32 x 32, each simulated with numpy from the model itself: a
first-order intrinsic GMRF field (Rue & Held 2005; drawn in Fourier space
with numpy.fft: X_k = W_k / sqrt(delta q_k), mean 100), blurred by a
sampled Gaussian PSF of the true sigma = 1.6 on the sampler's kernel support
(radius ceil(4 hi)), periodic, plus N(0, 0.1^2) noise. mtc samples sigma
with a uniform prior on [0.8, 3] (probe_mtc run passes the PSF model to the
sampler). Each frame's central 95 % interval (2.5 / 97.5 % quantiles of the
pooled psf_width trace) should cover 1.6 with probability ~0.95; frames are
independent, so the count is Binomial(20, 0.95): P(count <= 14) = 3e-4
(scipy.stats.binom), and the check asks for >= 15 of 20. The hyperpriors
are vague and N = 1024, so the frequentist coverage of the Bayesian
interval is close to nominal (not exact: a stated approximation).
Also: trace.csv has psf_width right after loglik, summary.json has
hyper.psf_width, and gibbs's width posterior mean (Metropolis on the
conditional given x) is near mtc's on one frame.
"""
import json
import os

import numpy as np
import tifffile
from scipy import stats

import pptest

tmp = pptest.tmpdir()
H = W = 32
SIG, LO, HI = 1.6, 0.8, 3.0
SPEC = "gaussian:sigma=auto,lo=%g,hi=%g" % (LO, HI)
R = int(np.ceil(4 * HI))
a = np.arange(-R, R + 1)
kern = np.exp(-(a[:, None] ** 2 + a[None, :] ** 2) / (2 * SIG ** 2))
kern /= kern.sum()
OTF = pptest.transfer(kern, (H, W))
q = pptest.gmrf1_q(H, W)
rng = np.random.default_rng(61)


def simulate():
    Wk = np.fft.fft2(rng.standard_normal((H, W)))
    Xk = np.where(q > 0, Wk / np.sqrt(1.0 * np.where(q > 0, q, 1)), 0)
    x = 100 + np.real(np.fft.ifft2(Xk))
    return np.real(np.fft.ifft2(np.fft.fft2(x) * OTF)) + 0.1 * rng.standard_normal((H, W))


pptest.check(stats.binom.cdf(14, 20, 0.95) < 1e-3, "P(count <= 14 | 20, 0.95) = %.1e"
             % stats.binom.cdf(14, 20, 0.95))
covered, means = 0, []
for f in range(20):
    y = os.path.join(tmp, "y%02d.tif" % f)
    tifffile.imwrite(y, simulate().astype(np.float32))
    out = os.path.join(tmp, "out%02d" % f)
    os.makedirs(out)
    pptest.probe("mtc", ["run", y, SPEC, out, "sampler=mtc", "boundary=periodic", "chains=2",
                         "burn=150", "iters=400", "seed=%d" % (f + 1)])
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    if f == 0:
        pptest.check(head[:6] == ["chain", "iter", "lambda", "delta", "loglik", "psf_width"],
                     "trace.csv columns: psf_width follows loglik (%s)" % ",".join(head[:6]))
        s = json.load(open(os.path.join(out, "summary.json")))
        pw = s["hyper"].get("psf_width", {})
        pptest.check(LO < pw.get("mean", -1) < HI and pw.get("fixed") is False,
                     "summary.json hyper.psf_width present (mean %s)" % pw.get("mean"))
    w = tr[:, head.index("psf_width")]
    lo, hi = np.quantile(w, [0.025, 0.975])
    covered += lo <= SIG <= hi
    means.append(w.mean())
    print("frame %d: sigma 95%% interval [%.4f, %.4f], mean %.4f" % (f, lo, hi, w.mean()))
pptest.check(covered >= 15, "95%% intervals cover the true sigma in %d of 20 frames (>= 15)"
             % covered)

# gibbs (width given x) on frame 0 vs mtc on frame 0: means within 3 sds of
# the difference of two Monte Carlo estimates with batch-means errors.
y0 = os.path.join(tmp, "y00.tif")
outs = {}
for kind in ("mtc", "gibbs"):
    out = os.path.join(tmp, "cmp_" + kind)
    os.makedirs(out)
    pptest.probe("mtc", ["run", y0, SPEC, out, "sampler=" + kind, "boundary=periodic",
                         "chains=4", "burn=300", "iters=1500", "seed=9"])
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    w = tr[:, head.index("psf_width")]
    outs[kind] = (w.mean(), pptest.batch_se(w, 4, batches=10), w.std())
(mm, sem, sdm), (mg, seg, sdg) = outs["mtc"], outs["gibbs"]
z = (mm - mg) / np.hypot(sem, seg)
pptest.check(abs(z) < 4, "frame 0 sigma posterior mean: mtc %.4f vs gibbs %.4f (z = %.2f; "
             "sd %.4f vs %.4f)" % (mm, mg, z, sdm, sdg))

# Through the command line: --psf ...sigma=auto reaches the sampler, and the
# width appears in summary.json, trace.csv and the report's histograms.
cli = os.path.join(tmp, "cli")
pptest.run(["sample", y0, "--psf", SPEC, "--sampler", "mtc", "--boundary", "periodic",
            "--chains", "2", "--burn", "100", "--iters", "200", "--quiet", "-o", cli,
            "--prior", "gmrf1"])
summ = json.load(open(os.path.join(cli, "summary.json")))
pw = summ["hyper"].get("psf_width", {})
head, _ = pptest.read_trace(os.path.join(cli, "trace.csv"))
page = open(os.path.join(cli, "report.html")).read()
pptest.check(not pw.get("fixed", True) and 0.5 < pw.get("mean", 0) < 4 and "psf_width" in head
             and 'id="hist-psf_width"' in page,
             "pixpost sample with sigma=auto: hyper.psf_width (mean %s), a trace column and a "
             "histogram in report.html" % pw.get("mean"))
pptest.done()
