#!/usr/bin/python3
"""Makes pixpost's bundled demonstration z-stack (images/).

A synthetic fluorescence volume of our own, 16 slices of 64 x 64 voxels
(65 nm pixels, 200 nm z-steps: 4.2 x 4.2 x 3.2 um), intensities in photons
per voxel:

  * a tubular filament: a hollow tube 300 nm across (wall drawn as points on
    a cylinder of radius 150 nm, so its hollow core is 4.6 px wide in the
    plane) along a smooth 3-D curve that climbs through ~10 slices;
  * 6 sub-resolution beads (100 nm), 1500-4000 photons each, at random
    depths;
  * a dim background of 2 photons per voxel.

Points are deposited into the voxel that contains them (exact voxel
integration up to the point spacing). The truth is written as
images/stack_truth.tif, an OME-TIFF (tifffile) with PhysicalSizeX/Y 0.065 and
PhysicalSizeZ 0.2 um, then blurred and made noisy by `pixpost simulate`
itself:

  demo_stack_gaussian.tif  --psf gaussian:sigma=1.2,sigma_z=1.5
                           --noise gaussian:sigma=1.5 --seed 103 --boundary periodic

The PSF is a 3-D gaussian whose central lobe has the widths of a 1.4 NA oil
objective at 520 nm (n 1.515): in the plane sigma = 0.21 lambda/NA = 78 nm
= 1.2 px (Zhang, Zerubia & Olivo-Marin, Appl. Opt. 46, 2007; the value is
quoted from memory, as in images/README.md for the 2-D scene); along z the
paraxial on-axis intensity (sin(u/4)/(u/4))^2, u = 2 pi NA^2 z / (n lambda)
(Born & Wolf, Principles of Optics 8.8) falls to half at
z = 0.886 n lambda / NA^2 = 0.356 um, a FWHM of 0.71 um, i.e. sigma_z =
0.30 um = 1.5 slices. A gaussian has none of the widefield cone of
out-of-focus light; it keeps the kernel small (11 x 11 x 13) for a demo.

Usage: /usr/bin/python3 tools/make_demo_stack.py PATH/TO/pixpost [OUTDIR]
Deterministic: numpy.random.default_rng(SEED) with a fixed SEED.
"""
import os
import subprocess
import sys

import numpy as np
import tifffile

SEED = 20261204
DEPTH, HEIGHT, WIDTH = 16, 64, 64
PIXEL_UM, STEP_UM = 0.065, 0.2
TUBE_RADIUS_UM = 0.15
TUBE_PHOTONS_PER_UM = 6000.0
BEAD_UM = 0.1
NBEADS = 6
BACKGROUND = 2.0
PSF = "gaussian:sigma=1.2,sigma_z=1.5"
STACKS = [("demo_stack_gaussian.tif", "gaussian:sigma=1.5", "103")]


def deposit(vol, z, y, x, w):
    """Adds weight w at each continuous position (z, y, x), in voxels."""
    iz, iy, ix = (np.floor(v).astype(int) for v in (z, y, x))
    ok = (iz >= 0) & (iz < DEPTH) & (iy >= 0) & (iy < HEIGHT) & (ix >= 0) & (ix < WIDTH)
    np.add.at(vol, (iz[ok], iy[ok], ix[ok]), w)


def tube(vol, rng):
    """A hollow tube along a smooth 3-D curve: the centre line in um, then
    points on the wall (random angle around the local tangent)."""
    n = 4000
    s = np.linspace(0, 1, n)
    cx = 0.5 + 3.2 * s + 0.25 * np.sin(2 * np.pi * 1.3 * s)  # um
    cy = 0.9 + 2.4 * s + 0.45 * np.sin(2 * np.pi * 0.8 * s + 0.7)
    cz = 0.6 + 2.0 * s * s  # climbs ~10 slices, steeper at the end
    c = np.stack([cz, cy, cx], axis=1)
    t = np.gradient(c, axis=0)
    length = np.linalg.norm(t, axis=1).sum()
    t /= np.linalg.norm(t, axis=1, keepdims=True)
    # two unit vectors normal to the tangent
    a = np.cross(t, [0.0, 0.0, 1.0])
    a /= np.linalg.norm(a, axis=1, keepdims=True)
    b = np.cross(t, a)
    m = 40  # wall points per centre-line point
    phi = rng.uniform(0, 2 * np.pi, (n, m))
    wall = (c[:, None, :] + TUBE_RADIUS_UM * (np.cos(phi)[..., None] * a[:, None, :]
                                              + np.sin(phi)[..., None] * b[:, None, :]))
    wall = wall.reshape(-1, 3)
    w = TUBE_PHOTONS_PER_UM * length / len(wall)
    deposit(vol, wall[:, 0] / STEP_UM, wall[:, 1] / PIXEL_UM, wall[:, 2] / PIXEL_UM, w)
    return length


def bead(vol, rng, photons):
    """A 100 nm bead: 400 points spread as a Gaussian of sd BEAD_UM/4."""
    cz = rng.uniform(2, DEPTH - 2) * STEP_UM
    cy, cx = (rng.uniform(4, n - 4) * PIXEL_UM for n in (HEIGHT, WIDTH))
    m, sd = 400, BEAD_UM / 4
    p = rng.normal(0, sd, (m, 3)) + [cz, cy, cx]
    deposit(vol, p[:, 0] / STEP_UM, p[:, 1] / PIXEL_UM, p[:, 2] / PIXEL_UM, photons / m)


def scene():
    rng = np.random.default_rng(SEED)
    vol = np.full((DEPTH, HEIGHT, WIDTH), BACKGROUND)
    length = tube(vol, rng)
    for _ in range(NBEADS):
        bead(vol, rng, rng.uniform(1500, 4000))
    return vol.astype(np.float32), length


def main():
    if len(sys.argv) < 2:
        sys.exit("usage: make_demo_stack.py PATH/TO/pixpost [OUTDIR]")
    pixpost = sys.argv[1]
    here = os.path.dirname(os.path.abspath(__file__))
    outdir = sys.argv[2] if len(sys.argv) > 2 else os.path.join(here, "..", "images")
    os.makedirs(outdir, exist_ok=True)
    truth = os.path.join(outdir, "stack_truth.tif")
    vol, length = scene()
    tifffile.imwrite(truth, vol, ome=True,
                     metadata={"axes": "ZYX", "PhysicalSizeX": PIXEL_UM, "PhysicalSizeY": PIXEL_UM,
                               "PhysicalSizeZ": STEP_UM})
    print("wrote %s (%d slices of %dx%d, %.1f..%.1f photons/voxel, total %.4g photons, tube "
          "%.2f um long)" % (truth, DEPTH, WIDTH, HEIGHT, vol.min(), vol.max(), vol.sum(), length))
    for name, noise, seed in STACKS:
        cmd = [pixpost, "simulate", truth, "--psf", PSF, "--noise", noise, "--seed", seed,
               "--boundary", "periodic", "--overwrite", "-o", os.path.join(outdir, name)]
        print("$ " + " ".join(cmd[1:]).replace(outdir + "/", "images/"))
        subprocess.run(cmd, check=True)


if __name__ == "__main__":
    main()
