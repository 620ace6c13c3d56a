"""The single-frame noise fit (pixpost calibrate --frame) on simulated camera
frames: gain error and coverage of its 95 % interval, by scene kind, frame
size and blur. Usage: PP_BIN=build/pixpost /usr/bin/python3 bench/calib_frame.py
[trials] [size...]. Frames from tests/calibref.py; results in the README
("Calibrating the camera"), 2026-12-04."""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import tifffile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
import calibref  # noqa: E402

BIN = os.environ.get("PP_BIN", "build/pixpost")
trials = int(sys.argv[1]) if len(sys.argv) > 1 else 48
sizes = [int(s) for s in sys.argv[2:]] or [128, 256, 512]
tmp = tempfile.mkdtemp()
for blur in [1.5, 1.0, 0.0]:
    for n in sizes:
        rng = np.random.default_rng(1234)
        rows = []
        for t in range(trials):
            kind = calibref.KINDS[t % len(calibref.KINDS)]
            K, O, R, lo, hi = calibref.draw_camera(rng)
            y = calibref.camera(calibref.scene(kind, n, rng, lo, hi, blur), K, O, R, rng)
            f = os.path.join(tmp, "f.tif")
            tifffile.imwrite(f, y)
            j = os.path.join(tmp, "f.json")
            p = subprocess.run([BIN, "calibrate", "--frame", f, "-o", j, "--overwrite", "--quiet"],
                               capture_output=True, text=True)
            if p.returncode:
                rows.append((kind, np.nan, False, np.nan))
                continue
            s = json.load(open(j))["single_frame"]
            lo95, hi95 = s["a_ci95"]
            rows.append((kind, s["a"] / K - 1, lo95 <= K <= hi95, s["a_se"] / K))
        rel = np.array([r[1] for r in rows])
        cov = np.array([r[2] for r in rows])
        se = np.array([r[3] for r in rows])
        print("blur %.1f, %d^2, %d frames: 95%% interval covers %.0f %%, within 10 %%: %.0f %%, "
              "median |error| %.1f %%, worst %.1f %%, median relative se %.1f %%, failed %d"
              % (blur, n, trials, 100 * cov.mean(), 100 * np.mean(np.abs(rel) < 0.1),
                 100 * np.nanmedian(np.abs(rel)), 100 * np.nanmax(np.abs(rel)),
                 100 * np.nanmedian(se), int(np.isnan(rel).sum())))
        for k in calibref.KINDS:
            sel = [r for r in rows if r[0] == k]
            print("    %-10s covers %d of %d, median |error| %.1f %%, worst %.1f %%"
                  % (k, sum(r[2] for r in sel), len(sel), 100 * np.nanmedian([abs(r[1]) for r in sel]),
                     100 * np.nanmax([abs(r[1]) for r in sel])))
