#!/usr/bin/python3
"""Makes pixpost's bundled demonstration frames (images/).

A synthetic fluorescence scene of our own: curved filaments (microtubule-like,
25 nm wide, so far below the 65 nm pixel) and sub-resolution beads (100 nm) on
a dim, slowly varying background, 192 x 160 pixels, intensities in photons
per pixel. It is written as images/scene_truth.tif (float32, tifffile), then
blurred and made noisy by `pixpost simulate` itself:

  demo_gaussian.tif  --noise gaussian:sigma=2.5 --seed 101  (the truth taken as
                     camera units: gain 1, offset 0)
  demo_photons.tif   --noise camera:gain=0.5,offset=100,read=1.6 --seed 102

both with --psf airy:na=1.4,wavelength=0.52,pixel=0.065 (1.4 NA oil
objective, 520 nm emission, 65 nm pixels at the sample, e.g. a 6.5 um camera
pixel behind 100x) and the default --boundary pad. These settings are also in
src/cli/cmd_demo.c, which re-simulates the frames and checks that the build
reproduces them.

Usage: /usr/bin/python3 tools/make_demo_scene.py PATH/TO/pixpost [OUTDIR]
Deterministic: numpy.random.default_rng(SEED) with a fixed SEED.
"""
import os
import subprocess
import sys

import numpy as np
import tifffile

SEED = 20240611
WIDTH, HEIGHT = 192, 160
PIXEL_NM = 65.0
FILAMENT_FWHM_NM = 25.0
BEAD_NM = 100.0
PSF = "airy:na=1.4,wavelength=0.52,pixel=0.065"
FRAMES = [
    ("demo_gaussian.tif", "gaussian:sigma=2.5", "101"),
    ("demo_photons.tif", "camera:gain=0.5,offset=100,read=1.6", "102"),
]


def deposit(img, x, y, w):
    """Adds weights w at continuous positions (x, y) in pixels (pixel
    integration: each point lands in the pixel that contains it)."""
    ix = np.floor(x).astype(int)
    iy = np.floor(y).astype(int)
    ok = (ix >= 0) & (ix < WIDTH) & (iy >= 0) & (iy < HEIGHT)
    np.add.at(img, (iy[ok], ix[ok]), w[ok] if np.ndim(w) else w)


def filament(img, rng, photons_per_px):
    """A smooth curve with slowly varying curvature, drawn as a dense line of
    points with Gaussian cross-section (FWHM 25 nm), 2 nm apart."""
    step = 2.0 / PIXEL_NM  # pixels
    length = rng.uniform(60, 180)  # pixels, 4-12 um
    n = int(length / step)
    s = np.arange(n) * step
    # curvature (rad/pixel): a few random sinusoids along the arc length
    k = np.zeros(n)
    for _ in range(3):
        k += rng.normal(0, 0.012) * np.sin(2 * np.pi * s / rng.uniform(40, 160) + rng.uniform(0, 2 * np.pi))
    theta = rng.uniform(0, 2 * np.pi) + np.cumsum(k) * step
    x = rng.uniform(0, WIDTH) + np.cumsum(np.cos(theta)) * step
    y = rng.uniform(0, HEIGHT) + np.cumsum(np.sin(theta)) * step
    sd = FILAMENT_FWHM_NM / 2.3548 / PIXEL_NM
    off = rng.normal(0, sd, n)
    x -= np.sin(theta) * off
    y += np.cos(theta) * off
    deposit(img, x, y, photons_per_px * step)


def bead(img, rng, photons):
    """A 100 nm bead: 400 points spread as a Gaussian of sd BEAD_NM/4."""
    cx, cy = rng.uniform(4, WIDTH - 4), rng.uniform(4, HEIGHT - 4)
    m = 400
    sd = BEAD_NM / 4 / PIXEL_NM
    deposit(img, cx + rng.normal(0, sd, m), cy + rng.normal(0, sd, m), photons / m)


def scene():
    rng = np.random.default_rng(SEED)
    yy, xx = np.mgrid[0:HEIGHT, 0:WIDTH]
    # dim background: 2 photons/px plus a broad cell-like glow up to +3
    img = 2.0 + 3.0 * np.exp(-(((xx - 0.55 * WIDTH) / 70.0) ** 2 + ((yy - 0.45 * HEIGHT) / 55.0) ** 2))
    for _ in range(9):
        filament(img, rng, rng.uniform(90, 200))  # photons per pixel of length
    for _ in range(24):
        bead(img, rng, rng.uniform(250, 900))  # photons per bead
    return img.astype(np.float32)


def main():
    if len(sys.argv) < 2:
        sys.exit("usage: make_demo_scene.py PATH/TO/pixpost [OUTDIR]")
    pixpost = sys.argv[1]
    here = os.path.dirname(os.path.abspath(__file__))
    outdir = sys.argv[2] if len(sys.argv) > 2 else os.path.join(here, "..", "images")
    os.makedirs(outdir, exist_ok=True)
    truth = os.path.join(outdir, "scene_truth.tif")
    img = scene()
    tifffile.imwrite(truth, img)
    print("wrote %s (%dx%d, %.1f..%.1f photons/px, total %.3g photons)"
          % (truth, WIDTH, HEIGHT, img.min(), img.max(), img.sum()))
    for name, noise, seed in FRAMES:
        cmd = [pixpost, "simulate", truth, "--psf", PSF, "--noise", noise,
               "--seed", seed, "--boundary", "pad", "--overwrite", "-o", os.path.join(outdir, name)]
        print("$ " + " ".join(cmd[1:]).replace(outdir + "/", "images/"))
        subprocess.run(cmd, check=True)


if __name__ == "__main__":
    main()
