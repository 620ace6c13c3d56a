"""Censored (saturated) pixels under the photon likelihood (issue 17,
item 3): hmc and gpcn against an independent numpy MALA chain (tests/
photonref.py: Roberts & Tweedie, Bernoulli 2, 1996; its docstring and
ref_pcn_poisson.py's give the model, the reference and the 5-se
tolerances) whose likelihood at a censored pixel is log P(Y >= s | mu) =
log scipy.special.gammainc(s, mu) with the slope
scipy.stats.gamma(s).pdf(mu) / gammainc(s, mu) (independent of pixpost's
src/poisson_tail.c). The "bright" frame of ref_missing_photon (160-1200
photons/pixel, 12 x 12 periodic) with its 8 brightest counts clipped to the
8th largest (a float frame with a flat top: censored by default).
That the check can fail: an hmc run with --saturated-missing (the clipped
pixels as missing) must land far from the censored reference at the
clipped pixels (more than 5 se at the worst one), and the censored
reference's mean there must lie above the missing run's.
"""
import os

import numpy as np
import tifffile

import pptest
from photonref import scenario

root = pptest.tmpdir()
M, DLT, B = np.log(400.0), 0.5, 5.0
ref_mean, ref_sd, ref_se, cens = scenario(root, "bright", M, DLT, B, 64, 2000, 8000,
                                          (("hmc", 4000, 1), ("gpcn", 4000, 2)), 20261203, censored=True)
out = os.path.join(root, "missing")
pptest.run(["sample", os.path.join(root, "bright", "y.tif"), "--psf", "gaussian:sigma=1.0",
            "--noise", "poisson:gain=1,offset=0", "--background", str(B),
            "--prior", "matern:range=3,nu=1,mean=%.17g,delta=%g" % (M, DLT),
            "--sampler", "hmc", "--boundary", "periodic", "--chains", "4", "--burn", "1000", "--iters", "4000",
            "--seed", "31", "--quiet", "--saturated-missing", "-o", out])
mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
mcse = tifffile.imread(os.path.join(out, "mcse.tif")).astype(np.float64)
z = (ref_mean - mean)[cens] / np.sqrt(ref_se ** 2 + mcse ** 2)[cens]
pptest.check(z.max() > 5 and (ref_mean - mean)[cens].mean() > 0,
             "--saturated-missing differs from the censored reference at the clipped pixels: worst %.1f se, "
             "mean shift of the reference over it %+.1f photons" % (z.max(), (ref_mean - mean)[cens].mean()))
pptest.done()
