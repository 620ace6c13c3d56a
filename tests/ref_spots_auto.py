"""--spots auto: the ring's radius from the PSF (src/cli/spots_cli.c).

The rule: R = 3 sigma of the PSF in pixels, and on a volume with a 3-D
PSF RZ = 3 sigma_z in slices, each clamped to 1..50 (our rule: a Gaussian
spot is down to exp(-4.5) = 1.1 % of its peak at 3 sigma). sigma per kind:
gaussian its sigma (sigma_z); airy 0.21 lambda / NA (the Gaussian
approximation of the Airy pattern, common practice; Zhang, Zerubia and
Olivo-Marin, Appl. Opt. 46 (2007), from memory); widefield the same
laterally and 0.66 lambda n / NA^2 along z (same source, from memory); a
measured bead (file:) from its half maximum: area a of the peak slice's
pixels >= half the peak gives sigma = sqrt(a / (2 pi ln 2)), the number
of slices >= half the peak along the peak's column gives sigma_z =
count / (2 sqrt(2 ln 2)). Checked: the radius the report states, and the
ring's pixel count in spots.csv equal to the count of offsets numpy finds
for that radius (the annulus R - 1/2 <= d < R + 1/2, or the shell with
dz scaled by R/RZ), for each kind; the file rule recomputed with numpy on
the PSF written by `pixpost psf`, and within 20 % of the true sigma of a
Gaussian bead (sigma 2: whole-pixel counting). Short runs: only the plan
is checked, not the posterior (ref_spots.py and ref_profiles_volume.py
check that).
"""
import csv
import math
import os
import re

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(8)


def ring_count(r, rz=None):
    e = int(math.ceil(r + 0.5))
    ez = int(math.ceil(rz * (r + 0.5) / r)) if rz else 0
    return sum(1 for c in range(-ez, ez + 1) for a in range(-e, e + 1) for b in range(-e, e + 1)
               if r - 0.5 <= math.sqrt((c * r / rz if rz else 0) ** 2 + a * a + b * b) < r + 0.5)


def run(name, img, psf, want_r, want_rz=None, extra=()):
    path = os.path.join(tmp, name + ".tif")
    tifffile.imwrite(path, img.astype(np.float32))
    out = os.path.join(tmp, name)
    pptest.run(["sample", path, "--psf", psf, "--noise", "gaussian:sigma=1", "--chains", "2",
                "--burn", "5", "--iters", "20", "--seed", "1", "--quiet", "--spots", "auto",
                "-o", out] + list(extra))
    with open(os.path.join(out, "report.html")) as fh:
        page = fh.read()
    with open(os.path.join(out, "spots.csv")) as fh:
        rows = list(csv.DictReader(fh))
    if want_rz is None:
        m = re.search(r"above the ring of pixels ([0-9.e+-]+) from them", page)
        got = (float(m.group(1)),) if m else None
        want = (float("%g" % want_r),)
        e = int(math.ceil(want_r + 0.5))  # rings wholly inside the frame
        full = [int(x["ring_pixels"]) for x in rows if e <= int(x["row"]) < img.shape[0] - e
                and e <= int(x["col"]) < img.shape[1] - e]
        count = ring_count(want_r)
    else:
        m = re.search(r"shell of voxels ([0-9.e+-]+) pixels from them in the plane and "
                      r"([0-9.e+-]+) slices", page)
        got = (float(m.group(1)), float(m.group(2))) if m else None
        want = (float("%g" % want_r), float("%g" % want_rz))
        ez = int(math.ceil(want_rz * (want_r + 0.5) / want_r))
        e = int(math.ceil(want_r + 0.5))
        full = [int(x["ring_voxels"]) for x in rows if ez <= int(x["z"]) < img.shape[0] - ez
                and e <= int(x["row"]) < img.shape[1] - e and e <= int(x["col"]) < img.shape[2] - e]
        count = ring_count(want_r, want_rz)
    pptest.check(got == want and rows and full and all(n == count for n in full),
                 "%s (--psf %s): --spots auto uses R %s (want %s); %d spots with whole rings "
                 "have %s pixels each (numpy: %d)" % (name, psf, got, want, len(full),
                                                      sorted(set(full)), count))


H = W = 32
frame = 20 + rng.standard_normal((H, W))
run("gauss", frame, "gaussian:sigma=1.3", 3 * 1.3)
run("airy", frame, "airy:na=1.4,wavelength=0.52,pixel=0.065", 3 * 0.21 * 0.52 / 1.4 / 0.065)
run("auto_sigma", frame, "gaussian:sigma=auto,lo=0.8,hi=1.5", 3 * 1.5,  # the widest allowed
    extra=["--prior", "gmrf1"])

# a measured bead: the half-maximum rule, recomputed with numpy on the PSF pixpost writes
bead = os.path.join(tmp, "bead.tif")
pptest.run(["psf", "gaussian:sigma=2", "-o", bead])
k = tifffile.imread(bead).astype(np.float64)
area = int((k >= 0.5 * k.max()).sum())
s_file = math.sqrt(area / (2 * math.pi * math.log(2)))
pptest.check(abs(s_file / 2 - 1) < 0.2, "half-maximum sigma of a sigma=2 bead: %.3f (%d pixels "
             "at half max; within 20 %% of 2)" % (s_file, area))
run("file", frame, "file:" + bead, 3 * s_file)

vol = 20 + rng.standard_normal((12, 24, 24))
vox = ["--pages", "z", "--voxel", "0.1,0.3"]
run("vol_gauss", vol, "gaussian:sigma=1.2,sigma_z=1", 3 * 1.2, 3.0, vox)
run("vol_widefield", 20 + rng.standard_normal((14, 40, 40)),
    "widefield:na=1.0,wavelength=0.5,pixel=0.25,step=0.5,n=1.33", 3 * 0.21 * 0.5 / 1.0 / 0.25,
    3 * 0.66 * 0.5 * 1.33 / 1.0 ** 2 / 0.5,
    ["--pages", "z", "--voxel", "0.25,0.5", "--boundary", "periodic", "--prior", "gmrf1"])
# a 2-D PSF on a volume: no axial sd, so RZ = R x pixel / z-step (a sphere in um), at least 1
run("vol_gauss2d", vol, "gaussian:sigma=1.3", 3 * 1.3, 3 * 1.3 * 0.1 / 0.3, vox)
pptest.done()
