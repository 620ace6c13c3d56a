"""Frames for the pad-mixing measurements (issue 16, item 2).

Real images shipped by Debian's python3-skimage 0.19 (bundled files, nothing
downloaded): camera.png, coins.png, moon.png, cell.png. Each scene is
cropped to a window of (S + 2M)^2 pixels around a fixed centre, mapped to
[0, 100] by the window's own min and max, blurred with a PSF written by
`pixpost psf` (scipy.signal.fftconvolve, mode "valid") and the central S x S
part kept: the frame's edges hold structure blurred in from outside, which
is what --boundary pad must impute. Gaussian noise of sd 1 or 5 (1 % / 5 %
of the range), numpy default_rng(crc32(name)).

"dark" variants: the window outside the frame is set to 0 before blurring
(a scene dark outside the frame: the frame's edges darken towards the
outside, the case where delta did not mix under gmrf1 pad).

Usage: /usr/bin/python3 bench/padmix/frames.py PIXPOST OUTDIR
Writes OUTDIR/<scene>_<S>_<psf>_<noise>.tif (float32) and OUTDIR/frames.txt
(one line per frame: name, path, psf spec).
"""
import os
import subprocess
import sys
import zlib

import numpy as np
import tifffile
from scipy.signal import fftconvolve
from skimage import io

DATA = "/usr/lib/python3/dist-packages/skimage/data/"
PSFS = {"gauss": "gaussian:sigma=1.8", "airy": "airy:na=1.2,wavelength=0.52,pixel=0.08"}
M = 16  # margin: larger than both PSFs' radius
# scene: (file, centre row, centre col) — centres chosen by eye to hold
# structure (stated choice)
SCENES = {"camera": ("camera.png", 200, 260), "coins": ("coins.png", 180, 190),
          "moon": ("moon.png", 256, 256), "cell": ("cell.png", 330, 330)}
# (scene, size, psf, noise, dark)
ROWS = [("camera", 128, "gauss", 1, False), ("camera", 128, "gauss", 5, False),
        ("coins", 128, "airy", 1, False), ("moon", 128, "gauss", 5, False),
        ("cell", 128, "airy", 1, False), ("cell", 128, "gauss", 1, True),
        ("coins", 128, "gauss", 5, True),
        ("camera", 256, "gauss", 1, False), ("moon", 256, "airy", 5, False),
        ("cell", 256, "gauss", 1, True)]


def main():
    pixpost, out = sys.argv[1], sys.argv[2]
    os.makedirs(out, exist_ok=True)
    psfs = {}
    for k, spec in PSFS.items():
        p = os.path.join(out, "psf_%s.tif" % k)
        subprocess.run([pixpost, "psf", spec, "-o", p], check=True, capture_output=True)
        psfs[k] = tifffile.imread(p).astype(np.float64)
    lines = []
    for scene, s, psf, noise, dark in ROWS:
        f, cr, cc = SCENES[scene]
        img = np.asarray(io.imread(DATA + f), dtype=np.float64)
        h = (s + 2 * M) // 2
        win = img[max(cr - h, 0):max(cr - h, 0) + s + 2 * M, max(cc - h, 0):max(cc - h, 0) + s + 2 * M]
        assert win.shape == (s + 2 * M, s + 2 * M), (scene, win.shape)
        u = 100.0 * (win - win.min()) / (win.max() - win.min())
        if dark:
            frame = u[M:M + s, M:M + s].copy()
            u[:] = 0.0
            u[M:M + s, M:M + s] = frame
        k = psfs[psf]
        r = k.shape[0] // 2
        blur = fftconvolve(u[M - r:M + s + r, M - r:M + s + r], k, mode="valid")
        name = "%s%s_%d_%s_n%d" % (scene, "dark" if dark else "", s, psf, noise)
        rng = np.random.default_rng(zlib.crc32(name.encode()))
        y = blur + noise * rng.standard_normal(blur.shape)
        path = os.path.join(out, name + ".tif")
        tifffile.imwrite(path, y.astype(np.float32))
        lines.append("%s %s %s" % (name, path, PSFS[psf]))
    with open(os.path.join(out, "frames.txt"), "w") as fh:
        fh.write("\n".join(lines) + "\n")


if __name__ == "__main__":
    main()
