"""Shared pieces of the predictive-check study (tests/ref_ppcheck*.py and
bench/ppcheck/run.py): the random scenes that frames are drawn from, and
one run of `pixpost sample` returning summary.json's "predictive" block.

Scenes (our own): a flat background of 1-5 photons per pixel plus 6-18
sub-resolution beads (Gaussian spots of sd 0.7 px, 300-1500 photons each)
at random places, on a side x side grid; a fixed seed gives a fixed scene.
Frames are drawn from the camera model the run states (offset 100 ADU,
gain 2 ADU/e-, read noise 1.5 e-: the issue's camera) through `pixpost
simulate` with a Gaussian PSF of sigma 1.5 px and --boundary pad.
"""
import json
import os

import numpy as np
import tifffile

import pptest

CAMERA = "camera:gain=2,offset=100,read=1.5"
PSF = "gaussian:sigma=1.5"
# The three misfits: gain inverted (0.5 instead of 2), an offset
# 20 % too low (80 instead of 100; 20 % too high is refused before
# sampling: tests/ref_datacheck.py), a PSF 30 % too wide (sigma 1.95).
MISFITS = {
    "gain inverted": (PSF, "camera:gain=0.5,offset=100,read=1.5"),
    "offset -20 %": (PSF, "camera:gain=2,offset=80,read=1.5"),
    "PSF +30 %": ("gaussian:sigma=1.95", CAMERA),
}


def scene(seed, side=48, beads=(300, 1500)):
    """beads: the range of each bead's photons (uniform)."""
    rng = np.random.default_rng(seed)
    t = np.full((side, side), rng.uniform(1, 5))
    yy, xx = np.mgrid[:side, :side]
    for _ in range(int(rng.integers(6, 19))):
        cy, cx = rng.uniform(3, side - 3, 2)
        a = rng.uniform(*beads) / (2 * np.pi * 0.7 ** 2)
        t += a * np.exp(-((yy - cy) ** 2 + (xx - cx) ** 2) / (2 * 0.7 ** 2))
    return t


def frame(tmp, seed, side=48, noise=CAMERA, beads=(300, 1500)):
    """Writes scene(seed) and a frame drawn from it; returns the frame's path."""
    tp = os.path.join(tmp, "truth_%d.tif" % seed)
    yp = os.path.join(tmp, "frame_%d.tif" % seed)
    tifffile.imwrite(tp, scene(seed, side, beads).astype(np.float32))
    pptest.run(["simulate", tp, "--psf", PSF, "--noise", noise, "--seed", seed,
                "--overwrite", "--quiet", "-o", yp])
    return yp


def sample(yp, out, psf=PSF, noise=CAMERA, extra=()):
    """One fixed-length run (hmc, 200 + 300 iterations, 4 chains); returns
    (summary.json's "predictive" block, stderr)."""
    p = pptest.run(["sample", yp, "--psf", psf, "--noise", noise, "--burn", 200, "--iters", 300,
                    "--seed", 7, "--progress", "none", "--overwrite", "-o", out] + list(extra))
    with open(os.path.join(out, "summary.json")) as f:
        return json.load(f)["predictive"], p.stderr
