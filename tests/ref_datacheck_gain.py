"""The gain check before sampling (src/pixpost/datacheck.h, "gain"):
the stated gain against the single-frame Poisson-Gaussian fit (Foi,
Trimeche, Katkovnik & Egiazarian, IEEE TIP 17(10), 2008; pp_noise_fit_frame,
the fit `pixpost calibrate --frame` reports), through `pixpost sample` with
one burn-in and one kept iteration (the check runs before sampling; the
draws are not looked at).

Outside sources: the scenes are real images that scikit-image ships
(skimage.data: camera, coins, moon, cell), 128 x 128 crops scaled to peaks of
30 to 1000 photons over a floor of 1; `pixpost simulate` blurs them with a
Gaussian (sigma 1.5, 2.5 px) or an Airy PSF (NA 1.4 at 0.52 um, 65 nm
pixels; NA 0.9 at 0.6 um, 100 nm pixels) and adds camera noise (offset 100
ADU, gains 0.3, 0.5, 1, 2, 4 ADU per electron, read noise 1 or 2 e-),
written as 16-bit PNGs (whole numbers, as a camera gives). Each miss is
explained by `pixpost calibrate --frame` on the same frame (the documented
silences: no gain determined, or the stated gain inside the 99 %
interval a +- 2.576 a_se, 2.576 the normal law's 99.5 % point, scipy.stats).

1. Stated gain correct, 60 frames: false alarms <= 1 (the task's <= 2 %;
   measured 0 of 60).
2. Gain inverted (stated 1/G, for G >= 2 or <= 0.5; 48 frames): each
   warning names the stated gain, the fitted gain (nearer the truth than
   the stated gain) and both fixes; a run stopped earlier by the
   impossible-pixels error must name e_per_adu= there; every silent frame
   is one of the documented silences (checked with calibrate --frame).
   Caught in >= 50 % (measured 28 of 48: 27 gain warnings, 1 impossible
   error; the 20 silent frames are all fits that gave no gain: dim or
   low-contrast 128 x 128 crops of moon and cell, and dim ones of camera).
3. Gain 2x wrong (alternately 2G and G/2): how often caught is printed, no
   target (the rule needs more than 2x; measured 17 of 60, 19 before the
   fit's detail test).
4. Sharp scenes (PSF sigma 0.3 px, next to no blur; the fit's known weakness
   is to overestimate the gain there): the false alarms are printed, no
   target (measured 0 of 20; 2 before the fit's detail test, fits 2.3x and
   3.1x above the truth at a peak of 1000 photons).
Fixed seeds: deterministic.
"""
import json
import os
import shutil

import numpy as np
import tifffile
from skimage import data

import pptest

tmp = pptest.tmpdir()
P = lambda name: os.path.join(tmp, name)
SCENES = [("camera", data.camera()), ("coins", data.coins()), ("moon", data.moon()),
          ("cell", data.cell())]
PSFS = ["gaussian:sigma=1.5", "gaussian:sigma=2.5", "airy:na=1.4,wavelength=0.52,pixel=0.065",
        "airy:na=0.9,wavelength=0.6,pixel=0.1"]
GAINS = [0.3, 0.5, 1.0, 2.0, 4.0]
PEAKS = [30, 100, 300, 1000]
SIDE = 128


def noise(g, read):
    return "camera:gain=%g,offset=100,read=%g" % (g, read)


def make_frame(t, rng, psf):
    name, im = SCENES[t % len(SCENES)]
    y0 = rng.integers(0, im.shape[0] - SIDE + 1)
    x0 = rng.integers(0, im.shape[1] - SIDE + 1)
    peak = PEAKS[(t // 5) % len(PEAKS)]
    truth = im[y0:y0 + SIDE, x0:x0 + SIDE].astype(np.float64) / 255 * peak + 1
    tifffile.imwrite(P("truth.tif"), truth.astype(np.float32))
    G = GAINS[t % len(GAINS)]
    read = [1.0, 2.0][(t // 3) % 2]
    frame = P("f%d.png" % t)
    pptest.run(["simulate", P("truth.tif"), "--psf", psf, "--noise", noise(G, read),
                "--seed", 100 + t, "--quiet", "--overwrite", "-o", frame])
    return frame, name, G, read, peak


def gain_findings(frame, psf, g, read, tag):
    """(the "gain" findings of summary.json's data_checks, stderr, exit
    code); no findings when the run stopped at a data-check error."""
    out = P("out_" + tag)
    shutil.rmtree(out, ignore_errors=True)
    p = pptest.run(["sample", frame, "--psf", psf, "--noise", noise(g, read), "--burn", 1,
                    "--iters", 1, "--chains", 1, "--progress", "none", "-o", out], check=False)
    if p.returncode != 0:
        return [], p.stderr, p.returncode
    with open(os.path.join(out, "summary.json")) as f:
        dc = json.load(f)["data_checks"]
    return [x for x in dc["findings"] if x["check"] == "gain"], p.stderr, 0


def calib(frame):
    j = P("calib.json")
    pptest.run(["calibrate", "--frame", frame, "-o", j, "--overwrite", "--quiet"])
    with open(j) as f:
        return json.load(f)["single_frame"]


def silent_ok(frame, g):
    """A miss is allowed when the fit gives no gain or g lies within 2x of
    it or within its 99 % interval (datacheck.h)."""
    s = calib(frame)
    if not s["gain_determined"]:
        return True, "no gain determined"
    lo, hi = s["a"] - 2.576 * s["a_se"], s["a"] + 2.576 * s["a_se"]
    r = g / s["a"]
    return (0.5 <= r <= 2) or (lo <= g <= hi), "a %.3g, 99 %% %.3g..%.3g" % (s["a"], lo, hi)


rng = np.random.default_rng(17)
N = 60
false_alarm = inv_n = inv_caught = inv_error = inv_silent = two_n = two_caught = 0
for t in range(N):
    psf = PSFS[(t // 2) % len(PSFS)]
    frame, name, G, read, peak = make_frame(t, rng, psf)
    label = "%s G %g peak %d %s" % (name, G, peak, psf)
    # 1. correct gain
    found, err, rc = gain_findings(frame, psf, G, read, "right")
    pptest.check(rc == 0, "%s, correct gain: runs (exit %d)" % (label, rc))
    if found:
        false_alarm += 1
        print("false alarm: %s: %s" % (label, found[0]["text"][:160]))
    # 2. inverted
    if G >= 2 or G <= 0.5:
        inv_n += 1
        found, err, rc = gain_findings(frame, psf, 1 / G, read, "inv")
        if rc:  # stopped earlier by the impossible-pixels error, which names the cause too
            inv_error += 1
            pptest.check(rc == 1 and "impossible under --noise camera" in err and "e_per_adu=" in err,
                         "%s inverted: exit %d, the impossible check names e_per_adu=" % (label, rc))
        elif found:
            inv_caught += 1
            txt = found[0]["text"]
            pptest.check(found[0]["severity"] == "warning", "%s inverted: a warning" % label)
            pptest.check(("the stated gain %g ADU per electron of --noise camera" % (1 / G)) in txt
                         and ("use e_per_adu=%g in --noise" % (1 / G)) in txt
                         and "pixpost calibrate" in txt
                         and "warning: data check: the stated gain" in err,
                         "%s inverted: the message names the stated gain, e_per_adu= and "
                         "pixpost calibrate, on stderr too" % label)
            fitted = float(txt.split("grows with the signal by ")[1].split(" ")[0])
            pptest.check(abs(np.log(fitted / G)) < abs(np.log(fitted * G)),
                         "%s inverted: the fitted gain %.3g is nearer the true %g than the "
                         "stated %g" % (label, fitted, G, 1 / G))
            pptest.check(("too narrow" in txt) == (G > 1), "%s inverted: the bars' direction" % label)
        else:
            inv_silent += 1
            ok, why = silent_ok(frame, 1 / G)
            pptest.check(ok, "%s inverted, not caught: a documented silence (%s)" % (label, why))
    # 3. 2x wrong
    g2 = G * 2 if t % 2 else G / 2
    two_n += 1
    found, err, rc = gain_findings(frame, psf, g2, read, "two")
    two_caught += bool(found)
print("correct gain: %d false alarms in %d frames" % (false_alarm, N))
print("inverted: %d frames: gain warning %d, stopped earlier by the impossible error %d, silent "
      "(fit gave no gain, all checked) %d" % (inv_n, inv_caught, inv_error, inv_silent))
print("2x wrong: gain warning in %d of %d" % (two_caught, two_n))
pptest.check(false_alarm <= 1, "correct gain: %d false alarms in %d frames (<= 2 %%)" % (false_alarm, N))
pptest.check(inv_n >= 30 and inv_caught + inv_error >= 0.5 * inv_n,
             "inverted gain caught in %d of %d frames (>= 50 %%; the rest are silences explained "
             "above)" % (inv_caught + inv_error, inv_n))

# 4. sharp scenes: the fit's known weakness (no target)
sharp_alarm = 0
for t in range(20):
    frame, name, G, read, peak = make_frame(200 + t, rng, "gaussian:sigma=0.3")
    found, err, rc = gain_findings(frame, "gaussian:sigma=0.3", G, read, "sharp")
    sharp_alarm += bool(found)
    if found:
        print("sharp, false alarm: %s G %g peak %d: %s" % (name, G, peak, found[0]["text"][:120]))
print("sharp scenes (sigma 0.3 px), correct gain: %d false alarms in 20 frames" % sharp_alarm)
pptest.done()
