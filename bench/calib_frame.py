"""The single-frame noise fit (pixpost calibrate --frame) on simulated camera
frames: gain error and coverage of its 95 % interval, by scene kind, frame
size and blur.

Usage: PP_BIN=build/pixpost /usr/bin/python3 bench/calib_frame.py
[--trials N] [--sizes 128,256,512] [--blurs 1.5,1.0,0.0]
[--kinds blurred|dev|held] [--seed S]

--kinds blurred: the 8 kinds of tests/ref_calibrate_frame.py (the default);
dev: those and 6 more of skimage.data's images (calibref.SHARP_DEV), the
kinds the unblurred-scene method was developed on; held: the kinds kept back
(calibref.SHARP_HELD), run once the method was fixed. Frames from
tests/calibref.py; results in the README ("Calibrating the camera").
"""
import argparse
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import tifffile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
import calibref  # noqa: E402

ap = argparse.ArgumentParser()
ap.add_argument("--trials", type=int, default=48)
ap.add_argument("--sizes", default="128,256,512")
ap.add_argument("--blurs", default="1.5,1.0,0.0")
ap.add_argument("--kinds", default="blurred", choices=["blurred", "dev", "held"])
ap.add_argument("--seed", type=int, default=1234)
ap.add_argument("--rows", help="also write every frame's result to this CSV file")
args = ap.parse_args()
KINDS = {"blurred": calibref.KINDS, "dev": calibref.SHARP_DEV, "held": calibref.SHARP_HELD}[args.kinds]
BIN = os.environ.get("PP_BIN", "build/pixpost")
tmp = tempfile.mkdtemp()
csv = open(args.rows, "w") if args.rows else None
if csv:
    csv.write("blur,size,kind,K,read,lo,hi,a,a_lo95,a_hi95,gain_determined,smooth_fraction\n")
for blur in [float(b) for b in args.blurs.split(",")]:
    for n in [int(s) for s in args.sizes.split(",")]:
        rng = np.random.default_rng(args.seed)
        rows = []
        for t in range(args.trials):
            kind = KINDS[t % len(KINDS)]
            K, O, R, lo, hi = calibref.draw_camera(rng)
            y = calibref.camera(calibref.scene(kind, n, rng, lo, hi, blur), K, O, R, rng)
            f = os.path.join(tmp, "f.tif")
            tifffile.imwrite(f, y)
            j = os.path.join(tmp, "f.json")
            p = subprocess.run([BIN, "calibrate", "--frame", f, "-o", j, "--overwrite", "--quiet"],
                               capture_output=True, text=True)
            if p.returncode:
                rows.append((kind, np.nan, False, np.nan))
                if csv:
                    csv.write("%g,%d,%s,%.6g,%.6g,%.6g,%.6g,,,,,\n" % (blur, n, kind, K, R, lo, hi))
                continue
            s = json.load(open(j))["single_frame"]
            lo95, hi95 = s["a_ci95"]
            if csv:
                csv.write("%g,%d,%s,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%.6g,%d,%.4f\n"
                          % (blur, n, kind, K, R, lo, hi, s["a"], lo95, hi95, s["gain_determined"],
                             s["smooth_blocks"] / s["blocks"]))
            rows.append((kind, s["a"] / K - 1, lo95 <= K <= hi95, s["a_se"] / K))
        rel = np.array([r[1] for r in rows])
        cov = np.array([r[2] for r in rows])
        se = np.array([r[3] for r in rows])
        print("blur %.1f, %d^2, %d frames (%s): 95%% interval covers %.0f %%, within 10 %%: %.0f %%, "
              "median |error| %.1f %%, worst %.1f %%, median relative se %.1f %%, failed %d"
              % (blur, n, args.trials, args.kinds, 100 * cov.mean(), 100 * np.mean(np.abs(rel) < 0.1),
                 100 * np.nanmedian(np.abs(rel)), 100 * np.nanmax(np.abs(rel)),
                 100 * np.nanmedian(se), int(np.isnan(rel).sum())), flush=True)
        for k in KINDS:
            sel = [r for r in rows if r[0] == k]
            e = [r[1] for r in sel]
            print("    %-20s covers %d of %d, within 10 %% %d, median error %+.1f %%, worst %+.1f %%"
                  % (k, sum(r[2] for r in sel), len(sel), sum(abs(x) < 0.1 for x in e),
                     100 * np.nanmedian(e), 100 * np.array(e)[np.nanargmax(np.abs(e))]
                     if not np.all(np.isnan(e)) else np.nan), flush=True)
