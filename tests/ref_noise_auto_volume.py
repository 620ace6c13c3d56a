"""`--noise auto` on a z-stack (issue 17 item 2 on the volumes of issue
18): the single-frame Poisson-Gaussian fit (Foi et al., IEEE TIP 2008;
src/calib_frame.c) pools the 2x2 blocks of all slices, each block judged
within its own slice (one camera took every slice).

Stack: 6 slices of 64 x 64, each a different smooth scene of
tests/calibref.py (gradients, blobs and skimage's photographs blurred by a
Gaussian PSF of sd 1.5 px, 5-400 photons), through EMVA 1288's linear
camera model (Poisson electrons plus Gaussian read noise, gain 2 ADU/e-,
offset 100 ADU, read noise 1.5 e-, rounded to 16-bit integers;
calibref.camera), written as an OME-TIFF (tifffile).

Checks:
1. `sample --noise auto` runs on the volume (before: refused), chooses a
   camera model, says the slices were pooled, and its gain lies within 10 %
   of the truth with the 99 % interval (a +- 2.576 se) covering it (the
   issue's single-frame targets; one stack, fixed seed).
2. The pooling is exact: the same fit made by `calibrate --frame` on one
   16-bit frame that stacks the six slices with 6 rows at 65535 between
   them (saturated pixels take no part, as unobserved ones would: the same
   blocks and the same gaps as the volume's internal layout) gives the
   same gain and intercept to 1e-9 relative (the same sums in the same
   order: equal in double; 1e-9 is the 10 significant digits the JSON
   files print).
   A slice-crossing mistake (a neighbourhood or detail test reaching into
   the next slice) or a slice dropped would break the equality.
3. The stated-gain data check pools the same way: 0.5 ADU/e- stated for 2
   is named as a gain likely entered upside down; the right gain is not.
"""
import json
import os

import numpy as np
import tifffile

import calibref
import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(20261205)
K, O, R = 2.0, 100.0, 1.5
kinds = ["gradient", "blobs", "camera", "moon", "coins", "cell"]
slices = [calibref.camera(calibref.scene(k, 64, rng, 5.0, 400.0), K, O, R, rng) for k in kinds]
vol = np.stack(slices)
tifffile.imwrite(P("stack.ome.tif"), vol, metadata={"axes": "ZYX", "PhysicalSizeZ": 0.3,
                                                    "PhysicalSizeY": 0.1, "PhysicalSizeX": 0.1})
p = pptest.run(["sample", P("stack.ome.tif"), "--noise", "auto", "--psf",
                "gaussian:sigma=1.5,sigma_z=1", "--burn", 10, "--iters", 20, "--chains", 2,
                "--seed", 3, "--progress", "none", "-o", P("out")])
with open(P("out", "summary.json")) as f:
    js = json.load(f)
est = js["noise_estimate"]
fit = est
a, se = fit["a"], fit["a_se"]
pptest.check("volume (its slices pooled)" in p.stderr and js["noise"].startswith("camera:"),
             "--noise auto on a volume: a camera model, the slices pooled (noise %s; %s)"
             % (js["noise"], p.stderr.strip().splitlines()[1][:120]))
pptest.check(abs(a / K - 1) < 0.10 and abs(a - K) < 2.576 * se,
             "pooled gain %.4f +- %.4f within 10 %% of %g and its 99 %% interval covers it"
             % (a, se, K))

gap = np.full((6, 64), 65535, np.uint16)  # saturated: no part in the fit, as NaN would be
rows = []
for i, s in enumerate(slices):
    rows += ([gap] if i else []) + [s]
tifffile.imwrite(P("mosaic.tif"), np.vstack(rows))
pptest.run(["calibrate", "--frame", P("mosaic.tif"), "-o", P("mosaic.json")])
with open(P("mosaic.json")) as f:
    mj = json.load(f)
mf = mj["single_frame"]
same = all(abs(mf[k] - fit[k]) <= 1e-9 * abs(fit[k]) for k in ("a", "b", "a_se", "b_se"))
pptest.check(same and mf["blocks"] == fit["blocks"] and mf["smooth_blocks"] == fit["smooth_blocks"],
             "the volume's pooled fit equals calibrate --frame on the slices stacked with saturated "
             "gaps (a %.10g vs %.10g, b %.10g vs %.10g, blocks %s vs %s)"
             % (fit["a"], mf["a"], fit["b"], mf["b"], fit["blocks"], mf["blocks"]))

# 3. the data check of the stated gain (src/pixpost/datacheck.h "gain") uses
# the same pooled fit on a volume: the gain entered upside down (0.5 for 2)
# is named before sampling, the right gain is not
def gain_warnings(noise, out):
    pptest.run(["sample", P("stack.ome.tif"), "--noise", noise, "--psf",
                "gaussian:sigma=1.5,sigma_z=1", "--burn", 10, "--iters", 20, "--chains", 2,
                "--seed", 3, "--progress", "none", "-o", P(out)])
    with open(P(out, "summary.json")) as f:
        dc = json.load(f)["data_checks"]
    return [f["text"] for f in dc.get("findings", []) if f["check"] == "gain"]


w_bad = gain_warnings("camera:gain=0.5,offset=100,read=1.5", "out_bad")
w_ok = gain_warnings("camera:gain=2,offset=100,read=1.5", "out_ok")
pptest.check(len(w_bad) == 1 and "upside down" in json.dumps(w_bad) and not w_ok,
             "volume, gain 0.5 stated for 2: the gain data check warns (%s); gain 2: no word (%s)"
             % (json.dumps(w_bad)[:160], w_ok))
pptest.done()
