"""Calibration of pixpost's error bars on real structure (issue 15, "Checks:
calibration on real structure").

Real images that Debian packages ship (scikit-image's bundled data files,
python3-skimage 0.19, and SciPy 1.10's scipy.misc.ascent()/face(); nothing is
downloaded) are the ground truths. Each is cropped, scaled, blurred with
pixpost's own PSFs (written by `pixpost psf`), made noisy, and handed to
`pixpost sample` with DEFAULT settings; the posterior mean, sd and credible
bounds are then compared with the truth.

Usage (from the repository root):
    /usr/bin/python3 bench/calib/suite.py [--quick] [--bin build/pixpost]
        [--prior SPEC] [--boundary pad|periodic|both] [--size 96]
        [--sets dev,check] [--scenes a,b] [--jobs 1] [--out DIR]

Scenes (class; set). The designers of a prior may tune on "dev" only; the
issue's acceptance uses other, held-out images, so every table reports the
two sets separately.
    smooth       cell.png (dev), retina.jpg green channel (dev), moon.png (check)
    point-like   hubble_deep_field.jpg luma (dev), ihc.png inverted luma
                 (stained nuclei bright on dark; check), microaneurysms.png
                 (check; 102 x 102, so only used when --size + 2*margin <= 102)
    sharp-edged  coins.png, camera.png, text.png (dev); page.png, horse.png
                 luma, scipy.misc.ascent() (check)
    textured     gravel.png, brick.png (dev); grass.png, scipy.misc.face()
                 luma (check)
Colour images are reduced with skimage.color.rgb2gray (luma) unless stated.

Crop. A window of (S + 2M)^2 pixels, S = --size, M = the largest PSF radius
+ 1 (16 px for the two PSFs below), is chosen among 8 candidate positions
drawn by numpy's default_rng(crc32(scene name)): the candidate whose 8-bit
values have the largest standard deviation (so a crop is never blank). The
frame is its central S x S part. The window is mapped linearly to u in
[0, 1] by its own min and max.

Truth and data ("noise" column):
    gauss1, gauss5   truth x = 100 u (camera units, range [0, 100]); y = A x +
                     N(0, s^2), s = 1 or 5 (1 % / 5 % of the range). pixpost
                     runs with no --noise (its default: gaussian, precision
                     sampled).
    phot5, phot200   truth in photons x = P (f + (1-f) u) / mean_frame(f +
                     (1-f) u), f = 0.05 (a background of 5 % of the range), so
                     the frame's mean is P = 5 or 200 photons/pixel; counts
                     n ~ Poisson(A x); written as camera ADU y = OFFSET + GAIN n
                     (GAIN = 2 ADU/photon, OFFSET = 100 ADU: stated choices)
                     and run with --noise poisson:gain=2,offset=100. pixpost
                     reports these estimates in photons per pixel, which is
                     the truth's unit.
Blur (A). PSFs: gaussian:sigma=1.8 (pixels) and
airy:na=1.2,wavelength=0.52,pixel=0.08 (micrometres), each written by
`pixpost psf SPEC -o psf.tif` at its default size (the size `sample` uses).
--boundary pad: the whole window is blurred (scipy.signal.fftconvolve, mode
'valid') and the central S x S part kept, so the frame edges hold real
structure blurred in from outside. --boundary periodic: the frame alone is
blurred circularly (FFT with the PSF centre moved to pixel (0, 0)).

Runs. `pixpost sample FRAME --psf SPEC [--noise ...] [--prior P]
[--boundary B] --seed 1 --threads 1 --quiet -o DIR` (all other settings are
pixpost's defaults; --threads does not change the result, pixpost
guarantees byte-identical output for any thread count, and only keeps the
shared machine's load at one core per job), then the same command with
--level 0.5 for the 50 % bounds. --level does not change the chains (same
seed, same draws): the suite checks that mean.tif is identical in both runs
and marks the row otherwise. This doubles the cost, but it measures the
bounds pixpost actually writes (streaming quantiles for the photon
samplers), which a Gaussian mean +/- 0.674 sd would not. When summary.json
says the bounds ARE mean +/- z x sd ("bounds": {"method": "gaussian: ..."},
the gibbs samplers) the 50 % bounds are computed that way from the first
run's mean and sd instead of a second run (identical by construction).

Pixel classes (all on the S x S truth frame x, in the truth's units):
    gradient g = |grad x| by central differences (numpy.gradient, spacing 1
        px, units of intensity per pixel) computed on the whole scaled window
        for pad (so border pixels see their real neighbours) and with
        circular differences for periodic, then cropped to the frame;
    edges   g >= the 90th percentile of g over the frame (numpy.quantile,
            linear interpolation); ties at the threshold are included, so the
            class may hold more than 10 % (its size is in the CSV);
    flat    g <= the median of g (ties included: on text/page, whose
            background is exactly flat, more than half the frame);
    bright  x >= the 98th percentile of x (ties included: a saturated or
            two-level image, e.g. horse, puts every top-level pixel here);
    dark    x <= the 10th percentile of x (ties included);
    border  pixels within 8 px of the frame edge (row or column index < 8
            or >= S - 8).
Metrics per row:
    cov95, cov50   fraction of frame pixels with lo <= truth <= hi for the
                   95 % run and the --level 0.5 run;
    cov95 per class (edges, bright, dark, flat, border);
    z = (mean - truth) / sd; z_sd = numpy.std(z) (about its own mean; z_mean
                   is reported too) over the frame and per class;
    spearman       scipy.stats.spearmanr(sd, |mean - truth|) over the frame
                   (nan when sd is constant: counted as a miss);
    rmse           of mean vs truth over the frame; rmse_rl = the best of
                   skimage.restoration.richardson_lucy(y', psf, num_iter=K,
                   clip=False) over K in RL_ITERS (tuned on the truth);
                   rmse_wiener = skimage.restoration.unsupervised_wiener(y',
                   psf, clip=False, is_real=True, random_state=1) with its
                   default parameters. Both get the frame extended by the
                   PSF radius (numpy.pad, mode "reflect" for pad rows,
                   "wrap" for periodic rows; common practice for their
                   boundaries) and are cropped back. y' = the same blurred
                   data: for the
                   Gaussian rows y clipped below at 0 for richardson_lucy
                   (it needs non-negative data) and y as is for Wiener; for
                   the photon rows the counts (y - OFFSET)/GAIN, in photons
                   like the truth. rmse_ratio = rmse / min(rmse_rl,
                   rmse_wiener).
    warnings, converged, pixels_converged, kept_per_chain   from the 95 %
                   run's summary.json: its warning count,
                   convergence.converged (every check passed),
                   convergence.pixels.converged (the pixel estimates' checks
                   passed) and run_length.kept_per_chain (what --iters, a
                   number or auto, came to).
Targets (issue 15): cov95 in [0.93, 0.97]; cov50 in [0.45, 0.55]; cov95 >=
0.90 in each class; z_sd in [0.85, 1.2] (over the frame; per-class z_sd is
reported, not judged); spearman >= 0.3; rmse_ratio <= 1.0.

Outputs in --out (default bench/calib/out): results.csv and results.json
(every number), table.md (the markdown table, misses marked with "!"), and
per-configuration folders under runs/ (data, truth, pixpost outputs); a run
whose folder already holds a finished result for the same command and
binary is reused, so an interrupted suite resumes.

Determinism: crops by crc32(scene) seeds, noise by crc32(row key) seeds,
pixpost --seed 1, Wiener random_state=1; the same binary gives the same
table.
"""
import argparse
import concurrent.futures as cf
import csv
import hashlib
import json
import math
import os
import subprocess
import sys
import time
import zlib

import numpy as np
import tifffile
from scipy import stats
from scipy.signal import fftconvolve

import warnings

warnings.filterwarnings("ignore", category=DeprecationWarning)
from skimage import color, io, restoration  # noqa: E402

DATA = "/usr/lib/python3/dist-packages/skimage/data/"
HERE = os.path.dirname(os.path.abspath(__file__))

# name: (class, set, loader key)
SCENES = {
    "cell": ("smooth", "dev"),
    "retina": ("smooth", "dev"),
    "moon": ("smooth", "check"),
    "hubble": ("point", "dev"),
    "ihc": ("point", "check"),
    "microaneurysms": ("point", "check"),
    "coins": ("edges", "dev"),
    "camera": ("edges", "dev"),
    "text": ("edges", "dev"),
    "page": ("edges", "check"),
    "horse": ("edges", "check"),
    "ascent": ("edges", "check"),
    "gravel": ("texture", "dev"),
    "brick": ("texture", "dev"),
    "grass": ("texture", "check"),
    "face": ("texture", "check"),
}
QUICK_SCENES = ["cell", "hubble", "coins", "gravel"]

PSFS = {"gauss": "gaussian:sigma=1.8", "airy": "airy:na=1.2,wavelength=0.52,pixel=0.08"}
NOISES = ["gauss1", "gauss5", "phot5", "phot200"]
GAIN, OFFSET = 2.0, 100.0
# The photon noise spec handed to pixpost; the one place to change if the
# CLI's syntax changes.
POISSON_SPEC = "poisson:gain=%g,offset=%g" % (GAIN, OFFSET)
RANGE = 100.0          # Gaussian rows: truth in [0, RANGE]
PHOT_FLOOR = 0.05      # photon rows: background as a fraction of the range
CANDIDATES = 8         # crop candidates per scene
BORDER = 8
RL_ITERS = [1, 2, 3, 5, 10, 15, 20, 30, 50, 75, 100, 150, 200, 300, 500]
CLASSES = ["edges", "bright", "dark", "flat", "border"]

TARGETS = {
    "cov95": (0.93, 0.97),
    "cov50": (0.45, 0.55),
    "z_sd": (0.85, 1.2),
    "spearman": (0.3, math.inf),
    "rmse_ratio": (-math.inf, 1.0),
}
for _c in CLASSES:
    TARGETS["cov95_" + _c] = (0.90, math.inf)


def load_gray(name):
    """8-bit-scaled grayscale image (float64 in [0, 255]) of a scene."""
    if name in ("ascent", "face"):
        import scipy.misc
        a = scipy.misc.ascent() if name == "ascent" else scipy.misc.face()
    else:
        fname = {"hubble": "hubble_deep_field.jpg", "retina": "retina.jpg"}.get(name, name + ".png")
        a = io.imread(DATA + fname)
    a = np.asarray(a)
    if name == "retina":
        return a[..., 1].astype(np.float64)  # green channel (common practice for fundus images)
    if a.ndim == 3:
        g = color.rgb2gray(a[..., :3]) * 255.0
        return 255.0 - g if name == "ihc" else g
    return a.astype(np.float64)


def choose_window(name, img, side):
    """Top-left corner of the side x side window with the largest sd among
    CANDIDATES positions drawn from default_rng(crc32(name)); None when the
    image is too small."""
    h, w = img.shape
    if h < side or w < side:
        return None
    rng = np.random.default_rng(zlib.crc32(name.encode()))
    best, best_sd = None, -1.0
    for _ in range(CANDIDATES):
        r, c = int(rng.integers(0, h - side + 1)), int(rng.integers(0, w - side + 1))
        sd = float(img[r:r + side, c:c + side].std())
        if sd > best_sd:
            best, best_sd = (r, c), sd
    return best


def circ_blur(x, psf):
    """Circular convolution of x with an odd-sized, centred PSF."""
    k = np.zeros_like(x)
    ph, pw = psf.shape
    k[:ph, :pw] = psf
    k = np.roll(k, (-(ph // 2), -(pw // 2)), axis=(0, 1))
    return np.real(np.fft.ifft2(np.fft.fft2(x) * np.fft.fft2(k)))


def grad_mag(a, periodic):
    if periodic:
        gy = (np.roll(a, -1, 0) - np.roll(a, 1, 0)) / 2.0
        gx = (np.roll(a, -1, 1) - np.roll(a, 1, 1)) / 2.0
    else:
        gy, gx = np.gradient(a)
    return np.hypot(gy, gx)


def class_masks(truth, grad, s):
    g_q90, g_med = np.quantile(grad, 0.9), np.quantile(grad, 0.5)
    border = np.zeros((s, s), bool)
    border[:BORDER, :] = border[-BORDER:, :] = True
    border[:, :BORDER] = border[:, -BORDER:] = True
    return {
        "edges": grad >= g_q90,
        "bright": truth >= np.quantile(truth, 0.98),
        "dark": truth <= np.quantile(truth, 0.10),
        "flat": grad <= g_med,
        "border": border,
    }


def run_pixpost(cmd, outdir, stamp):
    """Run cmd unless outdir holds a finished run with the same stamp."""
    done = os.path.join(outdir, "suite_done.json")
    if os.path.exists(done):
        try:
            if json.load(open(done)) == stamp:
                return 0.0
        except (ValueError, OSError):
            pass
    t0 = time.time()
    r = subprocess.run(cmd + ["--overwrite"], capture_output=True, text=True)
    if r.returncode != 0:
        raise RuntimeError("%s failed (%d): %s" % (" ".join(cmd), r.returncode, r.stderr.strip()))
    with open(done, "w") as f:
        json.dump(stamp, f)
    return time.time() - t0


def baselines(y_rl, y_wn, psf, truth, periodic):
    """Best RMSE of richardson_lucy over RL_ITERS (and its iteration count),
    and the RMSE of unsupervised_wiener. Both see the frame extended by the
    PSF radius (reflect for pad rows, wrap for periodic rows) and are
    cropped back: without it richardson_lucy's zero-padded convolution
    darkens the frame edges (on a 64^2 smooth crop, RMSE 3.07 over the frame
    against 0.34 inside the 8-px band, measured once)."""
    r = psf.shape[0] // 2
    mode = "wrap" if periodic else "reflect"

    def crop(a):
        return a[r:-r, r:-r]

    def rmse(a):
        return float(np.sqrt(np.mean((a - truth) ** 2)))

    best = (math.inf, None)
    yr = np.pad(y_rl, r, mode=mode)
    for k in RL_ITERS:
        e = rmse(crop(restoration.richardson_lucy(yr, psf, num_iter=k, clip=False)))
        if e < best[0]:
            best = (e, k)
    wn, _ = restoration.unsupervised_wiener(np.pad(y_wn, r, mode=mode), psf, clip=False,
                                           is_real=True, random_state=1)
    return best[0], best[1], rmse(crop(wn))


def do_row(job):
    """One configuration: make data, run pixpost twice, measure."""
    a = job["args"]
    s, m = a.size, job["margin"]
    key = "%s_%s_%s_%s" % (job["scene"], job["psf"], job["noise"], job["boundary"])
    d = os.path.join(a.out, "runs", a.prior_tag, key)
    os.makedirs(d, exist_ok=True)
    win = job["window"]
    u = (win - win.min()) / (win.max() - win.min())
    periodic = job["boundary"] == "periodic"
    psf = job["psf_array"]
    r = psf.shape[0] // 2
    noise = job["noise"]
    if noise.startswith("gauss"):
        xw = RANGE * u
    else:
        p = float(noise[4:])
        v = PHOT_FLOOR + (1 - PHOT_FLOOR) * u
        xw = p * v / v[m:m + s, m:m + s].mean()
    truth = xw[m:m + s, m:m + s]
    if periodic:
        blur = circ_blur(truth, psf)
        grad = grad_mag(truth, True)
    else:
        blur = fftconvolve(xw[m - r:m + s + r, m - r:m + s + r], psf, mode="valid")
        grad = grad_mag(xw, False)[m:m + s, m:m + s]
    rng = np.random.default_rng(zlib.crc32(key.encode()))
    if noise.startswith("gauss"):
        sig = RANGE * float(noise[5:]) / 100.0
        y = blur + rng.normal(0.0, sig, blur.shape)
        noise_args = []
        y_rl, y_wn = np.clip(y, 0.0, None), y
    else:
        n = rng.poisson(np.clip(blur, 0.0, None)).astype(np.float64)
        y = OFFSET + GAIN * n
        noise_args = ["--noise", POISSON_SPEC]
        y_rl = y_wn = (y - OFFSET) / GAIN
    frame = os.path.join(d, "frame.tif")
    tifffile.imwrite(frame, y.astype(np.float32))
    tifffile.imwrite(os.path.join(d, "truth.tif"), truth.astype(np.float32))
    base = [a.bin, "sample", frame, "--psf", PSFS[job["psf"]]] + noise_args
    if a.prior:
        base += ["--prior", a.prior]
    base += ["--iters", a.iters]
    base += ["--boundary", job["boundary"], "--seed", "1", "--threads", "1", "--quiet"]
    res = {}
    secs = 0.0
    for lvl, sub in ((None, "p95"), ("0.5", "p50")):
        if sub == "p50" and gaussian_bounds(os.path.join(d, "p95")):
            # Gaussian bounds are mean +/- z sd (summary.json "bounds"): the
            # 50 % bounds follow from the same mean and sd without a rerun.
            m, sdv = res["p95"]["mean"], res["p95"]["sd"]
            z50 = stats.norm.ppf(0.75)
            res[sub] = {"mean": m, "sd": sdv, "lo": m - z50 * sdv, "hi": m + z50 * sdv}
            continue
        od = os.path.join(d, sub)
        cmd = base + (["--level", lvl] if lvl else []) + ["-o", od]
        stamp = {"cmd": cmd[1:], "bin": job["bin_hash"], "frame": hashlib.sha1(y.astype(np.float32).tobytes()).hexdigest()}
        os.makedirs(od, exist_ok=True)
        secs += run_pixpost(cmd, od, stamp)
        res[sub] = {f: tifffile.imread(os.path.join(od, f + ".tif")).astype(np.float64)
                    for f in ("mean", "sd", "lo", "hi")}
    summ = json.load(open(os.path.join(d, "p95", "summary.json")))
    mean, sd = res["p95"]["mean"], res["p95"]["sd"]
    cov95 = (res["p95"]["lo"] <= truth) & (truth <= res["p95"]["hi"])
    cov50 = (res["p50"]["lo"] <= truth) & (truth <= res["p50"]["hi"])
    err = mean - truth
    with np.errstate(divide="ignore", invalid="ignore"):
        z = err / sd
    masks = class_masks(truth, grad, s)
    row = {
        "scene": job["scene"], "class": SCENES[job["scene"]][0], "set": SCENES[job["scene"]][1],
        "psf": job["psf"], "noise": noise, "boundary": job["boundary"],
        "prior": summ.get("prior"), "sampler": summ.get("sampler"),
        "crop_rc": "%d,%d" % job["corner"],
        "cov95": float(cov95.mean()), "cov50": float(cov50.mean()),
        "z_sd": float(np.std(z)), "z_mean": float(np.mean(z)),
    }
    for c, mk in masks.items():
        row["frac_" + c] = float(mk.mean())
        row["cov95_" + c] = float(cov95[mk].mean())
        row["cov50_" + c] = float(cov50[mk].mean())
        row["z_sd_" + c] = float(np.std(z[mk]))
    if np.ptp(sd) > 0:
        row["spearman"] = float(stats.spearmanr(sd.ravel(), np.abs(err).ravel()).correlation)
    else:
        row["spearman"] = float("nan")
    row["rmse"] = float(np.sqrt(np.mean(err ** 2)))
    row["rmse_rl"], row["rl_iters"], row["rmse_wiener"] = baselines(y_rl, y_wn, psf, truth, periodic)
    row["rmse_ratio"] = row["rmse"] / min(row["rmse_rl"], row["rmse_wiener"])
    row["sd_median"] = float(np.median(sd))
    row["level_same_chain"] = bool(np.array_equal(res["p95"]["mean"], res["p50"]["mean"]))
    row["warnings"] = len(summ.get("warnings", []))
    conv = summ.get("convergence", {})
    row["converged"] = bool(conv.get("converged", False))
    row["pixels_converged"] = bool(conv.get("pixels", {}).get("converged", False))
    row["kept_per_chain"] = summ.get("run_length", {}).get("kept_per_chain", summ.get("iters"))
    row["seconds"] = round(secs, 2)
    row["misses"] = ";".join(k for k in TARGETS if miss(k, row[k]))
    return row


def gaussian_bounds(od):
    """True when the run's bounds are mean +/- z x sd (summary.json says so)."""
    s = json.load(open(os.path.join(od, "summary.json")))
    return s.get("bounds", {}).get("method", "").startswith("gaussian: mean +/-")


def miss(key, v):
    lo, hi = TARGETS[key]
    return not (isinstance(v, float) and not math.isnan(v) and lo <= v <= hi)


def fmt(row, key, digits=3):
    v = row[key]
    t = "nan" if (isinstance(v, float) and math.isnan(v)) else ("%.*f" % (digits, v))
    return t + ("!" if key in TARGETS and miss(key, v) else "")


COLS = [("cov95", "cov95"), ("cov50", "cov50"), ("cov95_edges", "edges"),
        ("cov95_bright", "bright"), ("cov95_dark", "dark"), ("cov95_flat", "flat"),
        ("cov95_border", "border"), ("z_sd", "z sd"), ("z_sd_flat", "z sd flat"),
        ("z_sd_edges", "z sd edges"), ("spearman", "Spearman"), ("rmse_ratio", "RMSE/best")]


def markdown(rows):
    head = ["scene", "class", "set", "psf", "noise", "bnd", "sampler"] + [c[1] for c in COLS] + ["best ref", "misses"]
    out = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    for r in rows:
        ref = "RL(%d)" % r["rl_iters"] if r["rmse_rl"] <= r["rmse_wiener"] else "Wiener"
        cells = [r["scene"], r["class"], r["set"], r["psf"], r["noise"], r["boundary"], r["sampler"]]
        cells += [fmt(r, k, 2 if k == "rmse_ratio" else 3) for k, _ in COLS]
        cells += [ref, str(len(r["misses"].split(";")) if r["misses"] else 0)]
        if not r["level_same_chain"]:
            cells[-1] += " (level changed the chain)"
        out.append("| " + " | ".join(cells) + " |")
    return "\n".join(out)


def summary(rows):
    """Per set and noise family: how many rows meet each target, and medians."""
    keys = ["cov95", "cov50"] + ["cov95_" + c for c in CLASSES] + ["z_sd", "z_sd_flat", "spearman", "rmse_ratio"]
    head = ["set", "noise", "rows"] + keys
    out = ["| " + " | ".join(head) + " |", "|" + "---|" * len(head)]
    groups = {}
    for r in rows:
        groups.setdefault((r["set"], "gaussian" if r["noise"].startswith("gauss") else "photons"), []).append(r)
        groups.setdefault((r["set"], "all"), []).append(r)
    for (st, nz) in sorted(groups):
        g = groups[(st, nz)]
        cells = [st, nz, str(len(g))]
        for k in keys:
            vals = np.array([r[k] for r in g], float)
            med = np.nanmedian(vals) if np.any(~np.isnan(vals)) else float("nan")
            if k in TARGETS:
                ok = sum(1 for r in g if not miss(k, r[k]))
                cells.append("%.3f (%d/%d)" % (med, ok, len(g)))
            else:
                cells.append("%.3f" % med)
        out.append("| " + " | ".join(cells) + " |")
    return "\n".join(out)


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--quick", action="store_true", help="4 dev scenes (one per class), gaussian PSF, gauss1 and phot200, size 64")
    ap.add_argument("--bin", default=os.path.join(HERE, "..", "..", "build", "pixpost"))
    ap.add_argument("--prior", default="", help="--prior SPEC for pixpost (default: pixpost's own default)")
    ap.add_argument("--iters", default="1000",
                    help="--iters for pixpost (default 1000, the fixed length the tables in "
                         "ADAPTIVE.md were measured with; 'auto' for pixpost's own default)")
    ap.add_argument("--boundary", default="pad", choices=["pad", "periodic", "both"])
    ap.add_argument("--size", type=int, default=None, help="frame side S (default 96; 64 with --quick)")
    ap.add_argument("--sets", default="dev,check")
    ap.add_argument("--scenes", default="", help="comma-separated subset of scene names")
    ap.add_argument("--psfs", default="", help="comma-separated subset of gauss,airy")
    ap.add_argument("--noises", default="", help="comma-separated subset of " + ",".join(NOISES))
    ap.add_argument("--jobs", type=int, default=1)
    ap.add_argument("--out", default=os.path.join(HERE, "out"))
    a = ap.parse_args()
    a.bin = os.path.abspath(a.bin)
    a.out = os.path.abspath(a.out)
    a.prior_tag = "default" if not a.prior else a.prior.replace(":", "_").replace(",", "_").replace("=", "")
    if a.size is None:
        a.size = 64 if a.quick else 96
    sets = a.sets.split(",")
    names = [n for n in SCENES if SCENES[n][1] in sets]
    psfs, noises = list(PSFS), list(NOISES)
    if a.quick:
        names, psfs, noises = QUICK_SCENES, ["gauss"], ["gauss1", "phot200"]
    if a.scenes:
        names = a.scenes.split(",")
    if a.psfs:
        psfs = a.psfs.split(",")
    if a.noises:
        noises = a.noises.split(",")
    for what, given, known in (("--scenes", names, SCENES), ("--psfs", psfs, PSFS), ("--noises", noises, NOISES)):
        bad = [g for g in given if g not in known]
        if bad:
            ap.error("%s: unknown %s; choose from %s" % (what, ",".join(bad), ",".join(known)))
    bounds = ["pad", "periodic"] if a.boundary == "both" else [a.boundary]
    os.makedirs(a.out, exist_ok=True)
    bin_hash = hashlib.sha1(open(a.bin, "rb").read()).hexdigest()
    psf_arr = {}
    for p in psfs:
        f = os.path.join(a.out, "psf_%s.tif" % p)
        subprocess.run([a.bin, "psf", PSFS[p], "--quiet", "--overwrite", "-o", f], check=True)
        psf_arr[p] = tifffile.imread(f).astype(np.float64)
    margin = max(k.shape[0] // 2 for k in psf_arr.values()) + 1
    jobs, skipped = [], []
    for n in names:
        img = load_gray(n)
        corner = choose_window(n, img, a.size + 2 * margin)
        if corner is None:
            skipped.append("%s (%dx%d is smaller than the %d px window)" % ((n,) + img.shape + (a.size + 2 * margin,)))
            continue
        win = img[corner[0]:corner[0] + a.size + 2 * margin, corner[1]:corner[1] + a.size + 2 * margin]
        for p in psfs:
            for nz in noises:
                for b in bounds:
                    jobs.append({"args": a, "scene": n, "psf": p, "noise": nz, "boundary": b,
                                 "window": win, "corner": corner, "margin": margin,
                                 "psf_array": psf_arr[p], "bin_hash": bin_hash})
    print("%d configurations, size %d, margin %d, jobs %d; skipped: %s"
          % (len(jobs), a.size, margin, a.jobs, ", ".join(skipped) or "none"), file=sys.stderr, flush=True)
    rows, t0 = [], time.time()
    with cf.ThreadPoolExecutor(max_workers=a.jobs) as ex:
        futs = {ex.submit(do_row, j): j for j in jobs}
        for i, fu in enumerate(cf.as_completed(futs)):
            j = futs[fu]
            try:
                rows.append(fu.result())
                r = rows[-1]
                print("[%d/%d %.0fs] %s %s %s %s: cov95 %.3f cov50 %.3f z_sd %.2f misses %s"
                      % (i + 1, len(jobs), time.time() - t0, j["scene"], j["psf"], j["noise"], j["boundary"],
                         r["cov95"], r["cov50"], r["z_sd"], r["misses"] or "-"), file=sys.stderr, flush=True)
            except Exception as e:  # one failed configuration must not lose the others
                print("FAILED %s %s %s %s: %s" % (j["scene"], j["psf"], j["noise"], j["boundary"], e),
                      file=sys.stderr, flush=True)
    order = {n: i for i, n in enumerate(SCENES)}
    rows.sort(key=lambda r: (r["set"] != "dev", order[r["scene"]], r["psf"], NOISES.index(r["noise"]), r["boundary"]))
    with open(os.path.join(a.out, "results.json"), "w") as f:
        json.dump({"size": a.size, "prior": a.prior or "default", "bin": a.bin, "bin_sha1": bin_hash,
                   "skipped": skipped, "targets": {k: list(v) for k, v in TARGETS.items()}, "rows": rows},
                  f, indent=1, default=str)
    if rows:
        with open(os.path.join(a.out, "results.csv"), "w", newline="") as f:
            w = csv.DictWriter(f, fieldnames=list(rows[0].keys()))
            w.writeheader()
            w.writerows(rows)
    md = "## Rows (\"!\" marks a miss of the issue-15 target)\n\n" + markdown(rows) + \
         "\n\n## By set and noise: median (rows meeting the target / rows)\n\n" + summary(rows) + "\n"
    with open(os.path.join(a.out, "table.md"), "w") as f:
        f.write(md)
    print(md)
    print("total %.0f s; outputs in %s" % (time.time() - t0, a.out), file=sys.stderr)
    return 0 if len(rows) == len(jobs) else 1


if __name__ == "__main__":
    sys.exit(main())
