"""pixpost sample/batch --noise auto: the camera model estimated from the frame.

Outside sources: camera frames simulated in numpy from EMVA 1288's linear
camera model (release 3.1) on a blob scene blurred with scipy.ndimage
(tests/calibref.py); a frame of pure Gaussian noise from numpy; tifffile
writes them. The estimate is Foi et al.'s single-frame fit (IEEE TIP 2008).

Checks: on a 128^2 camera frame (gain 2 ADU/e-, offset 100 ADU, read noise
1.5 e-, 5 to 800 photons) the run uses a camera spec with the gain within 10 %
(its standard error there is ~5 %), an offset between the truth - 10 ADU and
the darkest part of the scene (one frame cannot place it better: the choice
puts it at the darkest smooth level), and a variance curve within 15 % of the
truth at the scene's darkest and brightest levels; the estimate, its interval
and the note are in summary.json and the report. On pure Gaussian noise the
run falls back to gaussian and says so. A frame too small for the fit is
refused (exit 1, one line naming the frame and --noise auto).
"""
import json
import os

import numpy as np
import tifffile

import calibref
import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(4242)
K, O, R, LO, HI = 2.0, 100.0, 1.5, 5.0, 800.0
x = calibref.scene("blobs", 128, rng, LO, HI)
cam = os.path.join(tmp, "camera.tif")
tifffile.imwrite(cam, calibref.camera(x, K, O, R, rng))
run_opts = ["--psf", "gaussian:sigma=1.5", "--noise", "auto", "--iters", "30", "--burn", "30",
            "--chains", "2", "--no-plan-cache"]

out = os.path.join(tmp, "cam_out")
p = pptest.run(["sample", cam, "-o", out] + run_opts)
summ = json.load(open(os.path.join(out, "summary.json")))
spec = summ["noise"]
pptest.check(spec.startswith("camera:"), "camera frame: the run used %s" % spec)
vals = dict(kv.split("=") for kv in spec.split(":", 1)[1].split(","))
g, o, r = float(vals["gain"]), float(vals["offset"]), float(vals["read"])
pptest.check(abs(g / K - 1) < 0.10, "gain %.4g within 10 %% of %g" % (g, K))
dark_adu = O + K * x.min()
pptest.check(O - 10 <= o <= dark_adu + 10,
             "offset %.5g between %g and the scene's darkest level %.5g (+10 ADU)"
             % (o, O - 10, dark_adu))
for level in (x.min(), x.max()):
    y = O + K * level
    v_true = K * (y - O) + K * K * R * R
    v_used = g * (y - o) + g * g * r * r
    pptest.check(abs(v_used / v_true - 1) < 0.15,
                 "variance at %.0f photons: %.4g used, %.4g true (within 15 %%)"
                 % (level, v_used, v_true))
est = summ.get("noise_estimate", {})
pptest.check(all(k in est for k in ("a", "a_se", "a_ci95", "b", "zero_level", "chosen")),
             "summary.json has noise_estimate with a, a_se, a_ci95, b, zero_level, chosen")
pptest.check(est.get("chosen") == spec and est.get("gain_determined") is True,
             "noise_estimate.chosen is the spec used")
pptest.check("--noise auto: camera:" in summ.get("noise_estimate_note", ""),
             "the note is recorded: %r" % summ.get("noise_estimate_note", "")[:60])
pptest.check("--noise auto: camera:" in p.stderr and "cannot separate" in p.stderr,
             "the note is printed on stderr")
pptest.check(summ["prior"].startswith("matern"), "photon default prior: %s" % summ["prior"])
report = open(os.path.join(out, "report.html")).read()
pptest.check("noise estimate" in report and "--noise auto: camera:" in report,
             "the report's settings show the estimate")

# pure Gaussian noise: falls back to gaussian, with the note
gauss = os.path.join(tmp, "gauss.tif")
tifffile.imwrite(gauss, np.round(rng.normal(500, 10, (64, 64))).astype(np.uint16))
out2 = os.path.join(tmp, "gauss_out")
p = pptest.run(["sample", gauss, "-o", out2] + run_opts)
summ = json.load(open(os.path.join(out2, "summary.json")))
note = summ.get("noise_estimate_note", "")
pptest.check(summ["noise"] == "gaussian", "Gaussian frame: the run used %s" % summ["noise"])
pptest.check("no significant signal-dependent noise" in note and "using gaussian" in note,
             "the fallback is recorded: %r" % note)
pptest.check("using gaussian" in p.stderr, "the fallback is printed")
pptest.check(summ["noise_estimate"]["gain_determined"] is False, "gain_determined false")

# --quiet: no note printed, still recorded
out3 = os.path.join(tmp, "quiet_out")
p = pptest.run(["sample", gauss, "-o", out3, "--quiet"] + run_opts)
pptest.check(p.stderr == "" and "noise_estimate" in json.load(open(os.path.join(out3, "summary.json"))),
             "--quiet prints nothing; the estimate is still recorded")

# batch shares the option: each frame estimated on its own
indir = os.path.join(tmp, "in")
os.makedirs(indir)
tifffile.imwrite(os.path.join(indir, "a.tif"), tifffile.imread(cam))
tifffile.imwrite(os.path.join(indir, "b.tif"), tifffile.imread(gauss))
bout = os.path.join(tmp, "batch_out")
p = pptest.run(["batch", indir, "-o", bout, "--quiet"] + run_opts)
sa = json.load(open(os.path.join(bout, "a", "summary.json")))
sb = json.load(open(os.path.join(bout, "b", "summary.json")))
pptest.check(sa["noise"].startswith("camera:") and sb["noise"] == "gaussian",
             "batch: a.tif %s, b.tif %s" % (sa["noise"], sb["noise"]))

# a frame too small for the fit
small = os.path.join(tmp, "small.tif")
tifffile.imwrite(small, np.round(rng.normal(500, 10, (24, 24))).astype(np.uint16))
p = pptest.run(["sample", small, "-o", os.path.join(tmp, "small_out")] + run_opts, check=False)
msg = p.stderr.strip()
pptest.check(p.returncode == 1 and len(msg.splitlines()) == 1 and "small.tif" in msg
             and "--noise auto" in msg and "larger frame" in msg,
             "too small: exit %d, %r" % (p.returncode, msg))
pptest.done()
