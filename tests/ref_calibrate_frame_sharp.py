"""pixpost calibrate --frame (the single-frame Poisson-Gaussian fit after Foi,
Trimeche, Katkovnik & Egiazarian, IEEE TIP 17(10), 2008) on 50 simulated
camera frames of UNBLURRED scenes. The sibling of ref_calibrate_frame.py
(blurred scenes), same camera model and light range (tests/calibref.py).

Outside sources: frames simulated in numpy from EMVA 1288's linear camera
model; scenes from smooth gradients, Gaussian blobs and 12 images that
scikit-image ships (skimage.data: camera, moon, coins, cell, astronaut,
brick, text, grass, gravel, hubble_deep_field, chelsea, coffee), NOT blurred,
scaled to 2-20 .. 300-3000 photons; tifffile writes them.

The issue's target (gain within 10 % in >= 90 %, 95 % interval covering the
truth in >= 90 % of 50 trials) is NOT met on these frames, and this check
does not claim it. Why (bench/NOTES.md, "single-frame gain fit on sharp
scenes"): the photographs carry their own pixel-scale grain (the original's
sensor noise, film grain, JPEG and 8-bit steps), which the scaling to
photons makes as large as 10-50 % of the photon noise even in the 10 % of
blocks with the least scene detail; no selection of blocks can tell it from
camera noise (a fit on the blocks an oracle picks from the noiseless scene
gets 22 of 56 dev frames within 10 %). What is asserted, fixed seed
(deterministic):

1. Scenes with no pixel-scale grain (gradient, blobs, cell: 12 frames),
   unblurred: gain within 10 % and interval covering in all but two
   (measured 10 of 12: a gradient at +3.9 % whose interval ends 0.3 % above
   the truth, a cell at -13.4 % that its interval covers; the fit before the
   detail test: 11 of 12). With each frame at ~95 % (the interval's level;
   within 10 % is near certain on these), 3 or more misses in 12 happen with
   probability ~2 % (binomial).
2. Pure textures (grass, gravel: no flat area at all, 6 frames): the fit
   refuses ("too little flat area", exit 1) or gives no gain or an interval
   that covers the truth; never a determined gain its interval contradicts
   (measured: 5 refused, 1 gain not determined; before the detail
   test: 5 with no gain determined, 1 determined at -17 % and covered).
3. A guard against losing the detail test, not the target: within 10 % in
   >= 20 of 50 and covered in >= 30 of 50 (measured 23 and 33; the fit
   before the detail test gave 17 and 33 on the same frames). The margin of
   3 frames absorbs a change in the fit's arithmetic that moves a frame or
   two across the 10 % line; the old fit fails the first bound.
"""
import json
import os

import numpy as np
import tifffile

import calibref
import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(23)
N = 50
GRAINLESS = ["gradient", "blobs", "cell"]
TEXTURES = ["grass", "gravel"]
within = cover = 0
clean_n = clean_ok = 0
for t in range(N):
    kind = calibref.SHARP_DEV[t % len(calibref.SHARP_DEV)]
    K, O, R, lo, hi = calibref.draw_camera(rng)
    y = calibref.camera(calibref.scene(kind, 256, rng, lo, hi, blur=0), K, O, R, rng)
    f = os.path.join(tmp, "f.tif")
    j = os.path.join(tmp, "f.json")
    tifffile.imwrite(f, y)
    p = pptest.run(["calibrate", "--frame", f, "-o", j, "--overwrite", "--quiet"], check=False)
    if p.returncode:
        print("%-18s K %.3f refused: %s" % (kind, K, p.stderr.strip()[:100]))
        pptest.check(p.returncode == 1 and "too little flat area" in p.stderr,
                     "%s: a refusal is exit 1 naming too little flat area" % kind)
        pptest.check(kind not in GRAINLESS, "%s: a grainless scene is not refused" % kind)
        continue
    s = json.load(open(j))["single_frame"]
    a_lo, a_hi = s["a_ci95"]
    rel = s["a"] / K - 1
    ok_w, ok_c = abs(rel) < 0.10, a_lo <= K <= a_hi
    within += ok_w
    cover += ok_c
    print("%-18s K %.3f a %.3f (%.3f..%.3f) error %+.1f %%%s" % (kind, K, s["a"], a_lo, a_hi, 100 * rel,
          "" if s["gain_determined"] else ", gain not determined"))
    if kind in GRAINLESS:
        clean_n += 1
        clean_ok += ok_w and ok_c
    if kind in TEXTURES:
        pptest.check(not s["gain_determined"] or ok_c,
                     "%s: no determined gain that its interval contradicts" % kind)
print("within 10 %%: %d of %d; covered: %d of %d" % (within, N, cover, N))
pptest.check(clean_ok >= clean_n - 2,
             "grainless unblurred scenes: within 10 %% and covered in %d of %d (>= all but two)"
             % (clean_ok, clean_n))
pptest.check(within >= 20, "gain within 10 %% in %d of %d frames (>= 20; guard, not the target)"
             % (within, N))
pptest.check(cover >= 30, "95 %% interval covers the truth in %d of %d frames (>= 30; guard, not "
             "the target)" % (cover, N))
pptest.done()
