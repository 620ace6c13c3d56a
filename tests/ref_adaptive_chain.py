"""The whole adaptive-prior Gibbs sampler (`--prior adaptive`, Gaussian noise,
periodic boundary) against a long independent numpy reference chain on a
small frame. Issue 15: "Whole sampler against a long independent numpy
reference chain on a small frame (hyperparameter posteriors and pixel
means/sds within Monte Carlo error)".

Outside sources: numpy / scipy.linalg (the reference chain of
tests/adaptref.py: the model written from src/adaptive.h's joint density;
x | W, lambda by a dense Cholesky factor of lambda A'A + D'WD, s by
random-walk Metropolis with tau integrated out, tau, kappa, lambda exact),
tifffile (frame I/O), Geyer's initial monotone sequence ESS (Geyer,
Statist. Sci. 7, 1992; pptest.geyer_ess).

Frame: 12 x 12, periodic, a bright square and a bright spot blurred by
gaussian:sigma=1 (the PSF written by `pixpost psf`), Gaussian noise sd 1,
rounded to float32 as written. Prior adaptive:block=4 (3 x 3 blocks),
nu = 2; lambda ~ Gamma(1, rate 1e-4).

Compared (posterior means and sds): lambda, kappa, delta = exp(mean s over
the blocks; all 9 hold frame pixels), and every pixel's mean and sd (mean.tif,
sd.tif). Each comparison is z = (pixpost - numpy) / sqrt(se_pp^2 + se_np^2):
  numpy chain: se of a mean = sd / sqrt(ESS), ESS by Geyer's estimator of
    the draws; se of an sd = sd((x - m)^2) / sqrt(ESS2) / (2 sd), ESS2 of
    the squared deviations (delta method);
  pixpost, hyperparameters: the same from trace.csv, ESS summed over chains;
  pixpost, pixel means: mcse.tif (src/diag.c pp_diag_pixel: batch means over
    the 2 x chains half-chains, floored at the iid value; with 8 chains, 16
    batches, so the se itself is known to about 1/sqrt(2 x 15) = 18 %);
  pixpost, pixel sds: no draws are stored, so se = sd sqrt((k4 - 1)/(4 ESS2))
    with k4 the pixel's kurtosis from the numpy chain and ESS2 = (sd/mcse)^2
    times r, r = min over the 9 probe pixels of ESS(squared deviations) /
    ESS(draws) from trace.csv (capped at 1): an approximation, stated; the
    pixpost run is long, so its se is a small part of the total.
Threshold: 6 + 2 x 144 = 294 comparisons, each must have |z| < 4.2:
two-sided P(|Z| > 4.2) = 2.7e-5, so a correct sampler fails any of them with
probability below 294 x 2.7e-5 = 0.8 % (Bonferroni; holds for correlated
tests too), with ~10 % slack for the error of the ESS estimates. Fixed
seeds, so the outcome is reproducible.

Measured (fixed seeds): worst |z| 2.59 of the hyperparameters (lambda),
2.74 of the pixel means, 3.10 of the pixel sds (with the level's Gamma
hyperprior in both; before it existed, 0.77 / 2.26 / 2.68 against the
flat-level model, and the reference without the hyperprior fails against
today's pixpost with |z| 12 on delta). Can fail: pixpost rebuilt with n_B for n_B/2 in the block
normaliser, with KAPPA_RATE 5, or with the global scale move's Gamma shape
N nu for N (nu + 1/2) fails with |z| up to 145, 69 and 44
(bench/adaptive/REF_LONG.md). Not detected: CG tolerance 1e-2 for 1e-6
(tests/ref_po_dense.py checks the solver).

Runtime: ~20 s for the numpy chain (40000 iterations), ~6 s for pixpost (8
chains x 12500 on 2 threads), ~35 s in all on a loaded 2-core machine.
PP_REF_SCALE=K multiplies both lengths (bench/adaptive/ref_long.sh; numbers
in bench/adaptive/REF_LONG.md).
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # tiny matrices: one thread is faster
import json

import numpy as np
import tifffile

import adaptref
import pptest

SCALE = int(os.environ.get("PP_REF_SCALE", "1"))
H = W = 12
BLOCK = 4
PSF = "gaussian:sigma=1"
NP_BURN, NP_ITERS = 2000, 40000 * SCALE
PP_CHAINS, PP_BURN, PP_ITERS = 8, 2000, 12500 * SCALE
ZMAX = 4.2

tmp = pptest.tmpdir()
psf_path = os.path.join(tmp, "psf.tif")
pptest.run(["psf", PSF, "-o", psf_path])
psf = tifffile.imread(psf_path).astype(np.float64)
A = adaptref.dense_blur(psf, H, W, pptest.transfer)
rng = np.random.default_rng(20261203)
truth = np.zeros((H, W))
truth[3:8, 4:9] = 10.0
truth[9, 2] = 20.0
y = (A @ truth.ravel() + rng.standard_normal(H * W)).astype(np.float32)
frame = os.path.join(tmp, "y.tif")
tifffile.imwrite(frame, y.reshape(H, W))
y = y.astype(np.float64)


def numpy_chain(seed):
    """Returns (hyper draws: n x 3 lambda, delta, kappa; pixel draws n x N)."""
    m = adaptref.Model(H, W, BLOCK)
    r = np.random.default_rng(seed)
    AtA, Aty = A.T @ A, A.T @ y
    lam, kappa, s = 1.0, 2.0, np.full(m.nb, np.log(0.1))
    x = np.linalg.solve(AtA + 0.1 * m.laplacian(np.ones(2 * m.N), np.zeros((m.N, m.N))), Aty)
    hyp, xs, acc = np.zeros((NP_ITERS, 3)), np.zeros((NP_ITERS, m.N)), 0
    for t in range(NP_BURN + NP_ITERS):
        d2 = m.incr(x) ** 2
        acc += m.s_sweep(s, d2, kappa, r, 0.5, True, 0.4)
        tau = m.draw_tau(s, d2, r)
        kappa = m.draw_kappa(s, r)
        x = adaptref.draw_gaussian(m.laplacian(np.exp(s[m.be]) * tau, lam * AtA), lam * Aty, r)
        res = A @ x - y
        lam = r.gamma(1.0 + 0.5 * m.N, 1.0 / (1e-4 + 0.5 * res @ res))
        if t >= NP_BURN:
            hyp[t - NP_BURN] = lam, np.exp(s.mean()), kappa
            xs[t - NP_BURN] = x
    print("numpy chain: %d iterations, block acceptance %.2f"
          % (NP_BURN + NP_ITERS, acc / ((NP_BURN + NP_ITERS) * m.nb)))
    return hyp, xs


hyp, xs = numpy_chain(77)
out = os.path.join(tmp, "post")
pptest.run(["sample", frame, "--psf", PSF, "--boundary", "periodic", "--prior",
            "adaptive:block=%d" % BLOCK, "--chains", PP_CHAINS, "--threads", 2, "--burn", PP_BURN,
            "--iters", PP_ITERS, "--seed", 5, "--quiet", "-o", out], check=True)
head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
summary = json.load(open(os.path.join(out, "summary.json")))
ch = tr[:, 0].astype(int)
pptest.check(summary["prior"] == "adaptive:nu=2,block=%d" % BLOCK,
             "summary.json names the adaptive prior (%s)" % summary["prior"])

zs = []
for k, name in enumerate(("lambda", "delta", "kappa")):
    col = tr[:, head.index(name)]
    pm, psd, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
    zs += [zm, zsd]
    pptest.check(abs(zm) < ZMAX and abs(zsd) < ZMAX,
                 "%s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS %.0f): "
                 "z mean %.2f, z sd %.2f (|z| < %g)" % (name, pm, psd, pess, nm, nsd, ness, zm, zsd,
                                                         ZMAX))

# pixels
pz = adaptref.pixel_z(out, xs, tr, head, ch)
z_mean, z_sd, psd, nsd, pmcse, ess, ess2, ratio = (
    pz[k] for k in ("z_mean", "z_sd", "psd", "nsd", "pmcse", "ess", "ess2", "ratio"))
worst = lambda z: (np.abs(z).max(), int(np.abs(z).argmax()))
print("numpy pixel ESS min %.0f median %.0f (squared deviations: min %.0f); pixpost pixel ESS "
      "(sd/mcse)^2 min %.0f median %.0f; probe ESS ratio r = %.2f"
      % (ess.min(), np.median(ess), ess2.min(), ((psd / pmcse) ** 2).min(),
         np.median((psd / pmcse) ** 2), ratio))
print("pixel means: mean z^2 %.2f; pixel sds: mean z^2 %.2f; sd ratio pixpost/numpy %.3f..%.3f"
      % ((z_mean ** 2).mean(), (z_sd ** 2).mean(), (psd / nsd).min(), (psd / nsd).max()))
zm, im = worst(z_mean)
zd, idd = worst(z_sd)
pptest.check(zm < ZMAX, "all %d pixel means within %g se of the numpy chain (worst |z| %.2f at "
             "pixel %s)" % (H * W, ZMAX, zm, divmod(im, W)))
pptest.check(zd < ZMAX, "all %d pixel sds within %g se of the numpy chain (worst |z| %.2f at "
             "pixel %s)" % (H * W, ZMAX, zd, divmod(idd, W)))
pptest.check(ess.min() > 1000 and ess2.min() > 500 and ratio > 0.2,
             "Monte Carlo errors rest on enough effective draws (numpy pixel ESS min %.0f, "
             "squared deviations %.0f; probe ratio %.2f)" % (ess.min(), ess2.min(), ratio))
pptest.done()
