"""pcn, gpcn and hmc on small Poisson problems vs an independent reference: a
Metropolis-adjusted Langevin (MALA) chain written here in numpy for the same
model (Roberts & Tweedie, Bernoulli 2, 1996).

Two frames: "dim" (about 8 photons/pixel, b = 1) and "bright" (160-1200
photons/pixel, b = 5, where the data dominate and vary across the frame).
Model: 12 x 12 periodic frame, n ~ Poisson(A exp(z) + b), b photons,
z ~ N(M, (delta Q)^-1) with the Matern Q of pixpost's prior.h, (kappa^2 +
q_lap)^2, kappa^2 = 8/range^2 (nu = 1), mean M and delta fixed. The MALA
reference runs 64 independent chains (vectorised over the chain axis) with
the full-spectrum numpy FFT; its Monte Carlo standard error per pixel is the
spread of the 64 chain means / 8.

Tolerances: pixpost's Monte Carlo error uses the effective sample size of
its probe traces (Geyer's initial monotone sequence, Statist. Sci. 7, 1992),
the smallest over the 9 probes, applied to every pixel. mean.tif and sd.tif
must agree with the reference at every pixel within 5 combined standard
errors (se of an sd estimate ~ sd / sqrt(2 ESS), for near-Gaussian draws);
144 pixels, so 5 se keeps false alarms rare. Power, measured once on the
bright frame: hmc with its kinetic energy scaled by 0.9 (a 10 % error in
the acceptance ratio) reached 4.74 se on sd.tif, so the check catches an
error of that size only just; the closed-form check (tests/ref_pcn.py)
resolves about 1 % in sd.
"""
import numpy as np

import pptest
from photonref import scenario

root = pptest.tmpdir()

# About 8 photons/pixel (the prior of z spans e^+-1 around log 8): all three.
scenario(root, "dim", np.log(8.0), 1.0, 1.0, 64, 1000, 4000,
         (("hmc", 4000, 1), ("gpcn", 4000, 2), ("pcn", 20000, 10)), 20261203)
# 160-1200 photons/pixel: informative data on a varying scene, where the
# Fourier-diagonal reference is off by several-fold and hmc's kicks carry
# the correction (pcn would need ~100x the iterations and is left out).
scenario(root, "bright", np.log(400.0), 0.5, 5.0, 64, 2000, 8000, (("hmc", 4000, 1), ("gpcn", 4000, 2)),
         20261203)
pptest.done()
