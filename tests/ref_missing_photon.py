"""Masked pixels (--mask) under the photon likelihood: pcn, gpcn and hmc
against an independent numpy MALA chain (Metropolis-adjusted Langevin,
Roberts & Tweedie, Bernoulli 2, 1996) whose likelihood and gradient sum over
the OBSERVED pixels only. The check of tests/ref_pcn_poisson.py (tests/photonref.py) (read
its docstring for the model, the reference and the 5-se tolerances) with a
mask of 12 pixels: a 3 x 3 block, and 3 single pixels inside rows, so that
the Poisson sum of src/sampler_pcn.c (phi_of) runs over several runs of
observed pixels in a row. The masked pixels are compared too: their
posterior comes from the prior and the data around them.
Frames: "dim" (about 8 photons/pixel; hmc, gpcn, pcn) and "bright" (160-1200
photons/pixel; hmc and gpcn), 12 x 12 periodic.
Fails before: a binary that takes the masked pixels as data at the fill
value (the mean of the frame): worst 13.6-89.7 se on mean.tif (measured).
Measured here: worst 1.6-3.1 se (mean), masked pixels 1.2-2.3 se; sd ratios
at the masked pixels 0.96-1.01.
"""
import numpy as np

import pptest
from photonref import scenario

root = pptest.tmpdir()

# About 8 photons/pixel (the prior of z spans e^+-1 around log 8): all three.
scenario(root, "dim", np.log(8.0), 1.0, 1.0, 64, 1000, 4000,
         (("hmc", 4000, 1), ("gpcn", 4000, 2), ("pcn", 20000, 10)), 20261203, masked=True)
# 160-1200 photons/pixel: informative data on a varying scene, where the
# Fourier-diagonal reference is off by several-fold and hmc's kicks carry
# the correction (pcn would need ~100x the iterations and is left out).
scenario(root, "bright", np.log(400.0), 0.5, 5.0, 64, 2000, 8000, (("hmc", 4000, 1), ("gpcn", 4000, 2)),
         20261203, masked=True)
pptest.done()
