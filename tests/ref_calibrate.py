"""pixpost calibrate --dark/--flat: EMVA 1288 photon transfer on simulated series.

Outside sources: the camera is simulated in numpy (Poisson photo-electrons
plus Gaussian read noise, times the gain, plus the offset, rounded to
integers: EMVA 1288's linear camera model, release 3.1); the reference
numbers are EMVA 1288's formulas computed here in numpy, independently of
pixpost: the temporal variance of a level from pairs of frames,
sigma^2 = 1/2 mean((yA - yB)^2) - 1/2 (muA - muB)^2 (averaged over pairs),
and the gain as the slope through the origin of (sigma^2 - sigma^2_dark)
against (mu - mu_dark). Files are written with tifffile.

Tolerances (the issue's): offset within 0.5 ADU, gain within 3 %, read noise
within 5 %, with 16 darks and 16 flats at each of 6 levels, 64x64 pixels
(standard errors there: gain ~0.3 %, read ~0.4 %, offset ~0.01 ADU). The
coverage check runs 30 smaller calibrations (8 frames, 32x32): the 95 %
interval of the gain must cover the truth in >= 25 of 30 (at a true 95 %
rate, 24 or fewer happen with probability 1.6 %; fixed seed, so the outcome
is fixed).
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261204)


def series(n, L, photons, K, O, R, sat=65535, dsnu=0.0, prnu=0.0):
    """L frames n x n of the linear camera model; fixed patterns optional."""
    fpn_o = rng.normal(0, dsnu, (n, n)) if dsnu else 0.0
    fpn_g = 1 + (rng.normal(0, prnu, (n, n)) if prnu else 0.0)
    out = []
    for _ in range(L):
        e = rng.poisson(photons * fpn_g, (n, n)) + rng.normal(0, R, (n, n))
        out.append(np.clip(np.round(O + fpn_o + K * e), 0, sat).astype(np.uint16))
    return np.stack(out)


def write(name, frames):
    p = os.path.join(tmp, name)
    tifffile.imwrite(p, frames, photometric="minisblack")
    return p


def emva_pairs(frames):
    """EMVA 1288 temporal variance from consecutive pairs of frames."""
    v = []
    for a, b in zip(frames[0::2], frames[1::2]):
        a = a.astype(float)
        b = b.astype(float)
        v.append(0.5 * np.mean((a - b) ** 2) - 0.5 * (a.mean() - b.mean()) ** 2)
    return float(np.mean(v)), float(frames.astype(float).mean())


def per_pixel_var(frames):
    """The estimator pixpost states: each frame's mean removed, per-pixel
    variance over time, averaged, divided by (1 - 1/pixels)."""
    f = frames.astype(float)
    r = f - f.mean(axis=(1, 2), keepdims=True)
    n = r[0].size
    return float(r.var(axis=0, ddof=1).mean() * n / (n - 1))


def calibrate(dark, flats, extra=()):
    args = ["calibrate", "--dark", dark]
    for f in flats:
        args += ["--flat", f]
    out = os.path.join(tmp, "c%d.json" % rng.integers(1 << 30))
    p = pptest.run(args + ["-o", out] + list(extra))
    with open(out) as fh:
        return json.load(fh), p.stdout


# ---- one realistic calibration, against the truth and EMVA in numpy -------
K, O, R = 2.0, 100.0, 1.5  # ADU/e-, ADU, e- (the camera)
levels = [40, 150, 400, 900, 1800, 3500]  # photons per pixel
dark_frames = series(64, 16, 0.0, K, O, R, dsnu=2.0)
dark = write("dark.tif", dark_frames)
flat_frames = [series(64, 16, p, K, O, R, dsnu=0.0, prnu=0.01) for p in levels]
flats = [write("flat%d.tif" % i, f) for i, f in enumerate(flat_frames)]
res, out = calibrate(dark, flats, ["--exposure", ",".join(str(p) for p in levels)])
pt = res["photon_transfer"]
print(out)
pptest.check(abs(pt["offset"] - O) < 0.5, "offset %.3f within 0.5 ADU of %g" % (pt["offset"], O))
pptest.check(abs(pt["gain"] / K - 1) < 0.03, "gain %.4f within 3 %% of %g" % (pt["gain"], K))
pptest.check(abs(pt["read_noise_e"] / R - 1) < 0.05,
             "read noise %.4f within 5 %% of %g e-" % (pt["read_noise_e"], R))
pptest.check(abs(pt["read_noise_e_emva"] / R - 1) < 0.05,
             "EMVA sigma_d %.4f within 5 %% of %g e-" % (pt["read_noise_e_emva"], R))
pptest.check(res["noise"].startswith("camera:gain=") and "offset=" in res["noise"],
             "JSON gives the --noise spec: %s" % res["noise"])
pptest.check("--noise camera:gain=" in out, "the spec is printed")
pptest.check(pt["linearity_basis"].startswith("mean signal against exposure")
             and pt["linearity_error_percent"] < 1.0,
             "linearity error %.3f %% < 1 %% for a linear camera (against --exposure)"
             % pt["linearity_error_percent"])
# the dark fixed pattern (2 ADU = 1 e-) is measured and kept out of the read noise
pptest.check(abs(pt["dark_fixed_pattern_e"] - 1.0) < 0.1,
             "dark fixed pattern %.3f e- near the simulated 1 e-" % pt["dark_fixed_pattern_e"])

# EMVA 1288 in numpy: pair differences, slope through the origin
vd, md = emva_pairs(dark_frames)
xs, ys = [], []
for f in flat_frames:
    v, m = emva_pairs(f)
    xs.append(m - md)
    ys.append(v - vd)
xs, ys = np.array(xs), np.array(ys)
K_emva = float(np.sum(xs * ys) / np.sum(xs * xs))
R_emva = np.sqrt(vd) / K_emva
pptest.check(abs(pt["offset"] - md) < 1e-6, "offset = numpy mean of the darks (%.6f)" % md)
pptest.check(abs(pt["gain"] / K_emva - 1) < 0.015,
             "gain %.4f within 1.5 %% of EMVA's pair formula in numpy %.4f" % (pt["gain"], K_emva))
pptest.check(abs(pt["read_noise_e"] / R_emva - 1) < 0.015,
             "read noise %.4f within 1.5 %% of numpy's sqrt(var_dark)/K %.4f"
             % (pt["read_noise_e"], R_emva))
# the stated estimator, exactly
pv = per_pixel_var(dark_frames)
pptest.check(abs(pt["dark_temporal_var"] / pv - 1) < 1e-9,
             "dark temporal variance %.6f = numpy per-pixel variance %.6f"
             % (pt["dark_temporal_var"], pv))
for i, f in enumerate(flat_frames):
    pv = per_pixel_var(f)
    got = pt["levels"][i]["temporal_var"]
    pptest.check(abs(got / pv - 1) < 1e-9, "level %d temporal variance = numpy (%.3f)" % (i + 1, pv))

# ---- coverage of the gain's 95 % interval over 30 small calibrations ------
cover = 0
errs = []
for t in range(30):
    Kt = rng.uniform(0.5, 4)
    Rt = rng.uniform(1, 3)
    Ot = rng.uniform(50, 500)
    d = write("cd.tif", series(32, 8, 0.0, Kt, Ot, Rt))
    fl = [write("cf%d.tif" % i, series(32, 8, p, Kt, Ot, Rt))
          for i, p in enumerate(np.geomspace(20, 2000, 5))]
    r, _ = calibrate(d, fl)
    lo, hi = r["photon_transfer"]["gain_ci95"]
    cover += lo <= Kt <= hi
    errs.append(r["photon_transfer"]["gain"] / Kt - 1)
print("gain errors over 30 small calibrations: median |rel| %.4f, max %.4f"
      % (np.median(np.abs(errs)), np.max(np.abs(errs))))
pptest.check(cover >= 25, "gain 95 %% interval covers the truth in %d of 30 (>= 25)" % cover)

# ---- hostile inputs: one line naming the file or option, exit 1, no JSON ----
small = write("small.tif", series(32, 4, 0.0, K, O, R))
one_dark = write("one.tif", series(64, 1, 0.0, K, O, R))
sat = write("sat.tif", series(64, 4, 32500, K, O, R))  # 100 + 2 x 32500 ADU: ~1/3 clip
allsat = write("allsat.tif", series(64, 4, 40000, K, O, R))  # all clipped
dim = write("dim.tif", series(64, 4, 100, K, O, R))
dim2 = write("dim2.tif", series(64, 4, 103, K, O, R))
dark_pair = [write("d1.tif", series(64, 1, 0.0, K, O, R)), small]
out_json = os.path.join(tmp, "hostile.json")
cases = [
    (["--dark"] + dark_pair + ["--flat", flats[0], "--flat", flats[1]],
     ["--dark", "small.tif", "32x32", "first dark is 64x64"]),
    (["--dark", one_dark, "--flat", flats[0], "--flat", flats[1]],
     ["--dark", "1 frame", "at least 2"]),
    (["--dark", dark, "--flat", dim, "--flat", dim2],
     ["flat levels", "within 20 %", "several light levels"]),
    (["--dark", dark, "--flat", flats[0], "--flat", sat],
     ["flat level 2", "saturated", "lower the exposure"]),
    (["--dark", dark, "--flat", flats[0], "--flat", allsat],
     ["--flat (level 2)", "allsat.tif", "every pixel is saturated", "lower the exposure"]),
    (["--dark", dark, "--flat", dark, "--flat", flats[1]],
     ["flat level 1", "not above the darks"]),
    (["--dark", dark, "--flat", flats[0]], ["2 or more light levels", "1 given"]),
    (["--dark", dark, "--flat", flats[0], "--flat", flats[1], "--exposure", "1,2,3"],
     ["--exposure", "3 values for 2 --flat levels"]),
    (["--dark", dark], ["--flat", "is required"]),
    (["--flat", flats[0]], ["--dark", "is required"]),
    (["--dark", "--flat", flats[0]], ["--dark", "needs at least one file"]),
    (["--frame", flats[0], "--dark", dark], ["--frame", "cannot be used with --dark"]),
    ([], ["give --dark FILE... and --flat FILE...", "--frame FILE"]),
    (["--frame", os.path.join(tmp, "missing.tif")], ["missing.tif"]),
    (["--frame", small], ["small.tif", "blocks"]),
]
for args, words in cases:
    if os.path.exists(out_json):
        os.remove(out_json)
    p = pptest.run(["calibrate"] + args + ["-o", out_json], check=False)
    msg = p.stderr.strip()
    ok = p.returncode == 1 and len(msg.splitlines()) == 1 and all(w in msg for w in words)
    pptest.check(ok and not os.path.exists(out_json),
                 "calibrate %s -> exit %d, %r" % (" ".join(os.path.basename(a) for a in args),
                                                  p.returncode, msg))
# a colour file: refused without --channel (the reader's message names it),
# read with it
rgb = os.path.join(tmp, "rgb.tif")
tifffile.imwrite(rgb, np.round(rng.normal(500, 10, (64, 64, 3))).astype(np.uint16),
                 photometric="rgb")
p = pptest.run(["calibrate", "--frame", rgb], check=False)
pptest.check(p.returncode == 1 and "rgb.tif" in p.stderr and "--channel" in p.stderr,
             "colour frame without --channel: %r" % p.stderr.strip())
p = pptest.run(["calibrate", "--frame", rgb, "--channel", "g"], check=False)
pptest.check(p.returncode == 0 and "--noise gaussian" in p.stdout,
             "colour frame with --channel g: exit %d" % p.returncode)

# an existing output is not replaced without --overwrite
with open(out_json, "w") as fh:
    fh.write("mine")
p = pptest.run(["calibrate", "--dark", dark, "--flat", flats[0], "--flat", flats[1],
                "-o", out_json], check=False)
pptest.check(p.returncode == 1 and "exists" in p.stderr and open(out_json).read() == "mine",
             "an existing -o file is kept: %r" % p.stderr.strip())
pptest.done()
