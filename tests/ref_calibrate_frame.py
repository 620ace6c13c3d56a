"""pixpost calibrate --frame: the single-frame Poisson-Gaussian fit (after Foi,
Trimeche, Katkovnik & Egiazarian, IEEE TIP 17(10), 2008) on 50 simulated camera
frames of varied scenes.

Outside sources: frames simulated in numpy from EMVA 1288's linear camera
model; scenes from smooth gradients, Gaussian blobs and real images that
scikit-image ships (skimage.data: camera, moon, coins, cell, astronaut,
brick), blurred by a Gaussian PSF of sigma 1.5 px with scipy.ndimage and
scaled to photons (tests/calibref.py); tifffile writes them.

Targets (the issue's): the gain a within 10 % of the truth, and the 95 %
interval a_ci95 covering the truth in >= 90 % of 50 trials. Frames are 256^2
(a 128^2 frame has a median relative standard error of ~5 % and fails the
10 % target more often; bench/calib_frame.py). Tolerances: >= 45 of 50
frames within 10 % (measured 45 with this seed, no margin left: five
low-contrast crops of 'moon', -16 to +19 %, whose intervals are wide and
cover the truth; 46 before the detail test of src/calib_frame.c, which
removes blocks and so widens those intervals) and coverage >= 45 of 50
(measured 49; at a true 95 %, 44 or fewer happen with probability 3.8 %;
fixed seed, so the outcome is fixed). Unblurred scenes:
ref_calibrate_frame_sharp.py. Also
dim frames and the demo's camera frame (below), and on a frame of pure
Gaussian noise (no signal-dependent part) the fit must not claim a gain.
"""
import json
import os

import numpy as np
import tifffile

import calibref
import pptest

tmp = pptest.tmpdir()


def fit_frame(y, name):
    """`pixpost calibrate --frame` on y (written as tmp/name.tif): its
    "single_frame" object."""
    f = os.path.join(tmp, name + ".tif")
    j = os.path.join(tmp, name + ".json")
    tifffile.imwrite(f, y)
    pptest.run(["calibrate", "--frame", f, "-o", j, "--overwrite", "--quiet"])
    return json.load(open(j))["single_frame"]


rng = np.random.default_rng(17)
N = 50
within = cover = 0
errs = []
for t in range(N):
    kind = calibref.KINDS[t % len(calibref.KINDS)]
    K, O, R, lo, hi = calibref.draw_camera(rng)
    y = calibref.camera(calibref.scene(kind, 256, rng, lo, hi), K, O, R, rng)
    s = fit_frame(y, "f")
    a_lo, a_hi = s["a_ci95"]
    rel = s["a"] / K - 1
    errs.append(rel)
    within += abs(rel) < 0.10
    cover += a_lo <= K <= a_hi
    print("%-10s K %.3f a %.3f (%.3f..%.3f) error %+.1f %%" % (kind, K, s["a"], a_lo, a_hi, 100 * rel))
print("median |error| %.2f %%" % (100 * np.median(np.abs(errs))))
pptest.check(within >= 45, "gain within 10 %% of the truth in %d of %d frames (>= 45)" % (within, N))
pptest.check(cover >= 45, "95 %% interval covers the truth in %d of %d frames (>= 45)" % (cover, N))
pptest.check(np.median(np.abs(errs)) < 0.03, "median gain error %.2f %% < 3 %%"
             % (100 * np.median(np.abs(errs))))

# Dim frames (1-3 to 20-60 photons, read noise 1.5-3 e-): there the noise of
# a block's own mean is as large as the spread of the true levels, so level
# sets sorted by that mean would flatten the slope (regression dilution: the
# read-noise part of a block's mean carries no photon variance). The fit
# sorts by the mean of the 8 neighbouring blocks instead. Measured: 29 of 30
# intervals cover, median error +1.2 % (30 and +0.5 % before the detail
# test); sorting by the block's own mean gave 26 of 30 and -2.7 %. Tolerance: >= 27 of 30 (at a true 95 %, 26 or fewer
# happen with probability 6 %; fixed seed) and |median error| < 2 %.
rng_dim = np.random.default_rng(31)
cover = 0
errs = []
for t in range(30):
    kind = calibref.KINDS[t % len(calibref.KINDS)]
    K, O = rng_dim.uniform(0.5, 4), rng_dim.uniform(100, 500)
    R, lo, hi = rng_dim.uniform(1.5, 3), rng_dim.uniform(1, 3), rng_dim.uniform(20, 60)
    y = calibref.camera(calibref.scene(kind, 256, rng_dim, lo, hi), K, O, R, rng_dim)
    s = fit_frame(y, "dim")
    cover += s["a_ci95"][0] <= K <= s["a_ci95"][1]
    errs.append(s["a"] / K - 1)
pptest.check(cover >= 27, "dim frames: 95 %% interval covers the truth in %d of 30 (>= 27)" % cover)
pptest.check(abs(np.median(errs)) < 0.02, "dim frames: median gain error %+.2f %% (|.| < 2 %%)"
             % (100 * np.median(errs)))

# the demo's camera frame (images/README.md: made by pixpost simulate with
# gain 0.5 ADU/e-, offset 100, read 1.6 e-; mostly 2-6 photons): its interval
# must cover 0.5 (measured 0.413..0.687; sorting by the block's own mean
# gave 0.289..0.426)
demo = os.path.join(pptest.SOURCE, "images", "demo_photons.tif")
j = os.path.join(tmp, "demo.json")
pptest.run(["calibrate", "--frame", demo, "-o", j, "--overwrite", "--quiet"])
lo95, hi95 = json.load(open(j))["single_frame"]["a_ci95"]
pptest.check(lo95 <= 0.5 <= hi95, "demo frame: gain interval %.3f..%.3f covers 0.5" % (lo95, hi95))

# pure Gaussian noise: no gain to find
g = np.round(rng.normal(800, 12, (256, 256))).astype(np.uint16)
f = os.path.join(tmp, "gauss.tif")
j = os.path.join(tmp, "gauss.json")
tifffile.imwrite(f, g)
p = pptest.run(["calibrate", "--frame", f, "-o", j, "--overwrite"])
s = json.load(open(j))
pptest.check(s["single_frame"]["gain_determined"] is False and s["noise"] == "gaussian",
             "Gaussian-noise frame: gain not determined, spec gaussian (a = %.3g, se %.3g)"
             % (s["single_frame"]["a"], s["single_frame"]["a_se"]))
pptest.check("cannot be separated" in p.stdout and "--noise gaussian" in p.stdout,
             "the printout says gain and offset cannot be separated")
pptest.done()
