"""The checks of the data before sampling (src/pixpost/datacheck.h),
through `pixpost sample`: every wrong setting of issue 17's list that they
cover is caught, with its message asserted by text and exit code, and
nothing is written. (8-bit saturation is the missing-data helper's.)

Frames are drawn with `pixpost simulate` from a scene of our own (a dark
background of 1-3 photons with a few bright beads, 48 x 48) under the
issue's camera: offset 100 ADU, gain 2 ADU/e-, read noise 1.5 e-, written
as a 16-bit PNG (whole numbers, as a camera gives). Outside sources: the
rules are the normal law's (at most half of a symmetric read noise lies
below its mean; P(Z < -5) = 2.9e-7, scipy.stats.norm), checked here
against the figures in summary.json and numpy's percentiles of the frame.

1. Offset given as 120 (the truth is 100): most pixels are below it (the
   issue saw 82 %) -> exit 1, one line naming the file, the offset and the
   offset the data point to (the frame's 1st percentile + 2.33 read-noise
   sd, recomputed here with numpy: within 1 ADU), no output folder.
2. A float frame with negative values (Gaussian noise of sd 5 around a dim
   scene) under camera:gain=1,offset=0,read=1 -> exit 1, "impossible under
   --noise camera", and the advice to use --noise gaussian.
3. A 10 x 10 frame with a PSF whose kernel is 13 x 13 -> exit 1, "smaller
   than the PSF kernel"; a 20 x 20 frame (less than twice the kernel) ->
   a warning on stderr and in summary.json's data_checks, exit 0.
4. The right settings on the frame of 1 -> no finding (exit 0).
Fixed seeds: deterministic.
"""
import json
import os

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda name: os.path.join(tmp, name)
CAMERA = "camera:gain=2,offset=100,read=1.5"


def scene(side, seed):
    rng = np.random.default_rng(seed)
    t = np.full((side, side), 2.0)
    yy, xx = np.mgrid[:side, :side]
    for _ in range(4):
        cy, cx = rng.uniform(3, side - 3, 2)
        t += 150 * np.exp(-((yy - cy) ** 2 + (xx - cx) ** 2) / 2.0)
    return t


def simulate(truth, out, noise, seed=5):
    tp = P("truth_%s.tif" % os.path.basename(out))
    tifffile.imwrite(tp, truth.astype(np.float32))
    pptest.run(["simulate", tp, "--psf", "gaussian:sigma=1.5", "--noise", noise, "--seed", seed,
                "--quiet", "--overwrite", "-o", out])


def sample(frame, out, noise, extra=()):
    return pptest.run(["sample", frame, "--psf", "gaussian:sigma=1.5", "--noise", noise,
                       "--burn", 50, "--iters", 100, "--chains", 2, "--progress", "none",
                       "-o", out] + list(extra), check=False)


# 1. offset 120 instead of 100
frame = P("camera16.png")
simulate(scene(48, 1), frame, CAMERA)
y = np.asarray(Image.open(frame)).astype(np.float64)  # Pillow reads the 16-bit PNG
share = float((y < 120).mean())
pptest.check(share > 0.6, "the frame has %.1f %% of its pixels below 120 (the issue: 82 %%)" % (100 * share))
p = sample(frame, P("out_offset"), "camera:gain=2,offset=120,read=1.5")
err = p.stderr.strip()
suggest = np.percentile(y, 1) + 2.33 * np.sqrt(4 * 1.5 ** 2 + 1 / 12.0)  # numpy: the stated rule
pptest.check(p.returncode == 1, "offset 120: exit 1 (got %d)" % p.returncode)
pptest.check(len(err.splitlines()) == 1, "offset 120: one line on stderr: %r" % err)
pptest.check(frame in err and "below the offset 120 ADU" in err and "%.1f %%" % (100 * share) in err,
             "offset 120: names the file, the offset and the share")
pptest.check("offset is too high" in err and "give offset=%.0f in --noise" % suggest in err,
             "offset 120: suggests offset=%.0f (numpy: 1st percentile %.1f + 2.33 sd)"
             % (suggest, np.percentile(y, 1)))
pptest.check(abs(suggest - 100) < 8, "the suggested offset %.1f is near the true 100 (+ the dark "
             "background of 2 photons = 4 ADU)" % suggest)
pptest.check(not os.path.exists(P("out_offset")), "offset 120: nothing written")

# 4. the right offset: no finding
p = sample(frame, P("out_right"), CAMERA)
pptest.check(p.returncode == 0 and "data check" not in p.stderr, "offset 100: runs, no data check fires")
with open(P("out_right/summary.json")) as f:
    summ = json.load(f)
dc = summ["data_checks"]
pptest.check(summ["predictive"]["quantised"] is True, "a 16-bit camera frame: the predictive "
             "check adds the rounding term")
pptest.check(dc["findings"] == [] and dc["errors"] == 0, "offset 100: summary.json data_checks empty")
pptest.check(abs(dc["share_below_offset"] - float((y < 100).mean())) < 1e-9 and
             abs(dc["q01"] - np.percentile(y, 1)) < 1e-9,
             "summary.json share below offset and q01 equal numpy's to its 10 digits (%.4f, %.3f)"
             % (dc["share_below_offset"], dc["q01"]))

# 2. float frame with negatives under camera:gain=1
ffloat = P("float_neg.tif")
simulate(scene(48, 2) * 0.2, ffloat, "gaussian:sigma=5")
yf = tifffile.imread(ffloat)
pptest.check(yf.dtype == np.float32 and (yf < 0).mean() > 0.2,
             "the float frame has %.0f %% negative values" % (100 * (yf < 0).mean()))
p = sample(ffloat, P("out_float"), "camera:gain=1,offset=0,read=1")
err = p.stderr.strip()
pptest.check(p.returncode == 1 and len(err.splitlines()) == 1, "negatives under camera: exit 1, one line")
pptest.check(ffloat in err and "impossible under --noise camera" in err and "--noise gaussian" in err,
             "negatives under camera: names the file, says impossible, suggests --noise gaussian: %s"
             % err[:160])
pptest.check(not os.path.exists(P("out_float")), "negatives: nothing written")

# 3. frame too small for the PSF (kernel 13 x 13 for sigma 1.5: radius ceil(4 sigma))
small = P("small10.tif")
tifffile.imwrite(small, (100 + 2 * np.random.default_rng(3).poisson(5, (10, 10))).astype(np.float32))
p = sample(small, P("out_small"), CAMERA)
err = p.stderr.strip()
pptest.check(p.returncode == 1 and small in err and "smaller than the PSF kernel (13x13)" in err,
             "10 x 10 frame: exit 1, 'smaller than the PSF kernel': %s" % err[:160])
pptest.check(not os.path.exists(P("out_small")), "10 x 10: nothing written")
mid = P("mid20.tif")
tifffile.imwrite(mid, (100 + 2 * np.random.default_rng(4).poisson(20, (20, 20))).astype(np.float32))
p = sample(mid, P("out_mid"), CAMERA, ["--sampler", "pcn"])
pptest.check(p.returncode == 0 and "warning: data check: the frame (20x20 pixels) is less than "
             "twice the PSF kernel (13x13)" in p.stderr, "20 x 20 frame: a warning, exit 0")
with open(P("out_mid/summary.json")) as f:
    dc = json.load(f)["data_checks"]
pptest.check(dc["warnings"] == 1 and dc["findings"][0]["check"] == "psf_size" and
             dc["findings"][0]["severity"] == "warning", "20 x 20: summary.json keeps the warning")
pptest.done()
