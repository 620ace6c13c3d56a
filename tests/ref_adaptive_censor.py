"""Censored (saturated) pixels under the adaptive prior (issue 17, item 3,
with the default prior of issue 15): pixpost's gibbs with `--prior
adaptive` on a frame with clipped pixels against an independent numpy
chain.

Outside sources: numpy / scipy (the reference chain of tests/adaptref.py,
written from src/adaptive.h's joint density, with the censored pixels
imputed by scipy.stats.truncnorm each sweep: data augmentation, Tanner &
Wong, JASA 82, 1987); the blur as a dense matrix built entry by entry
(pptest.dense_periodic, no FFT); Geyer's ESS (Statist. Sci. 7, 1992).

Frame: pptest.clipped_frame, the 12 x 12 frame of ref_censor_exact and
ref_censor_gauss_pcn (gaussian:sigma=1 blur, noise sd 1, its 8 brightest
pixels clipped to the 8th largest value s; a flat top in a float TIFF,
which pixpost/saturation.h finds). Periodic, --prior adaptive:block=4
(3 x 3 blocks, nu = 2), lambda and the level sampled under pixpost's
default hyperpriors (Gamma(1, 1e-4) both). The censored pixels' likelihood
is P(y_i >= s | x) = Q((s - (A x)_i) sqrt(lambda)).

Compared as in ref_adaptive_chain (its z-scores, adaptref.mean_sd_se and
adaptref.pixel_z): lambda, delta = exp(level), kappa (means and sds) and
every pixel's mean and sd, 6 + 2 x 144 = 294 comparisons, each |z| < 4.2
(Bonferroni: a correct sampler fails any with probability below 0.8 %).
Fixed seeds. Could fail: the same pixpost run with --saturated-missing
(the clipped pixels dropped instead of censored) must miss the reference
at the censored pixels (checked: worst |z| of their means above 8).

Runtime: ~25 s for the numpy chain (24000 sweeps), a few seconds for
pixpost (8 chains x 8000 on 2 threads).
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")  # tiny matrices: one thread is faster
import json

import numpy as np

import adaptref
import pptest

H = W = 12
BLOCK = 4
PSF = "gaussian:sigma=1.0"
NP_BURN, NP_ITERS = 2000, 24000
PP_CHAINS, PP_BURN, PP_ITERS = 8, 2000, 8000
ZMAX = 4.2

tmp = pptest.tmpdir()
rng = np.random.default_rng(17)
psf, _, y, s, cens, frame = pptest.clipped_frame(tmp, rng, PSF, 1.0)
A, _ = pptest.dense_periodic(psf, H, W)
c = cens.ravel()
px = np.arange(H * W)
hyp, xs = adaptref.gibbs_chain((H, W), BLOCK, (H, W), A, y.ravel(), px, 91, NP_BURN, NP_ITERS,
                               hyper=(1.0, 1e-4), cens=c, level=s)
print("numpy chain: %d sweeps, %d censored pixels at s = %.4f" % (NP_BURN + NP_ITERS, c.sum(), s))


def run(name, extra=()):
    out = os.path.join(tmp, name)
    pptest.run(["sample", frame, "--psf", PSF, "--boundary", "periodic", "--prior",
                "adaptive:block=%d" % BLOCK, "--chains", PP_CHAINS, "--threads", 2, "--burn",
                PP_BURN, "--iters", PP_ITERS, "--seed", 6, "--quiet", "-o", out] + list(extra),
               check=True)
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    return out, head, tr, tr[:, 0].astype(int)


out, head, tr, ch = run("cens")
with open(os.path.join(out, "summary.json")) as f:
    js = json.load(f)
pptest.check("censored" in json.dumps(js.get("missing_data", {})) or
             any("censor" in str(n) for n in js.get("notes", [])),
             "summary.json says pixels were censored (%s)" % json.dumps(js.get("missing_data")))
for k, name in enumerate(("lambda", "delta", "kappa")):
    col = tr[:, head.index(name)]
    pm, psd, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
    pptest.check(abs(zm) < ZMAX and abs(zsd) < ZMAX,
                 "%s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS %.0f): "
                 "z mean %.2f, z sd %.2f (|z| < %g)" % (name, pm, psd, pess, nm, nsd, ness, zm, zsd,
                                                         ZMAX))
pz = adaptref.pixel_z(out, xs, tr, head, ch)
zmean, zsd = np.abs(pz["z_mean"]), np.abs(pz["z_sd"])
print("pixel means: mean z^2 %.2f; sds: mean z^2 %.2f; sd ratio pixpost/numpy %.3f..%.3f"
      % ((zmean ** 2).mean(), (zsd ** 2).mean(), (pz["psd"] / pz["nsd"]).min(),
         (pz["psd"] / pz["nsd"]).max()))
pptest.check(zmean.max() < ZMAX, "all %d pixel means within %g se of the numpy chain (worst |z| "
             "%.2f at pixel %s; censored pixels' worst %.2f)"
             % (H * W, ZMAX, zmean.max(), divmod(int(zmean.argmax()), W), zmean[c].max()))
pptest.check(zsd.max() < ZMAX, "all %d pixel sds within %g se of the numpy chain (worst |z| %.2f "
             "at pixel %s)" % (H * W, ZMAX, zsd.max(), divmod(int(zsd.argmax()), W)))
pptest.check(pz["ess"].min() > 1000 and pz["ess2"].min() > 500,
             "Monte Carlo errors rest on enough effective draws (numpy pixel ESS min %.0f, squared "
             "deviations %.0f)" % (pz["ess"].min(), pz["ess2"].min()))

# the same run with the clipped pixels treated as missing must miss
out_m, head_m, tr_m, ch_m = run("missing", ["--saturated-missing"])
pzm = adaptref.pixel_z(out_m, xs, tr_m, head_m, ch_m)
worst_m = np.abs(pzm["z_mean"])[c].max()
pptest.check(worst_m > 8, "--saturated-missing misses the censored reference at the clipped "
             "pixels (worst |z| of their means %.1f > 8): the check can tell" % worst_m)
pptest.done()
