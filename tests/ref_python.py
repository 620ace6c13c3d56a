#!/usr/bin/env python3
"""The pixpost Python module (python/pixpost, ctypes over libpixpost.so).

Checks: (1) every ctypes mirror of a C struct has the C compiler's sizeof
and field offsets (a small C program compiled here against include/), and
pp_result fits the module's opaque buffer; (2) the module's mean, sd, lo,
hi, rhat and mcse equal the CLI's mean.tif ... byte for byte (the library's
doubles rounded to float32 as pp_tiff_write_f32 stores them; tifffile reads
the CLI's files) for the same seed and settings, with --threads 1: a 2-D
float frame with gaussian noise and the default prior, a 16-bit camera frame
(photon noise, default prior) and a 3-slice z-stack (--pages z); its trace
equals trace.csv's columns; pixpost.psf and pixpost.simulate equal
`pixpost psf` and `pixpost simulate` byte for byte; a float64 frame is not
copied and the caller's array is never written; (3) a bad PSF spec raises PixpostError carrying
the library's message; (4) the progress callback sees increasing counts
ending at the total, and returning False stops the run (status
"interrupted"); (5) another Python thread runs while the library samples
(ctypes.CDLL releases the GIL); (6) `pip install --no-build-isolation
--no-index ./python` works offline in a venv made by Debian's python3 -m
venv --system-site-packages, and the installed module imports and runs.
"""
import csv
import ctypes
import json
import os
import shutil
import subprocess
import sys
import threading

import numpy as np
import tifffile

import pptest

LIB = os.environ.get("PIXPOST_LIBRARY")
pptest.check(LIB and os.path.exists(LIB), "PIXPOST_LIBRARY names the built libpixpost.so")

# A library built with PIXPOST_SANITIZE (CI's sanitizer job) needs the ASan
# runtime loaded before anything else, which a Python interpreter is not
# linked with: run this script again with the runtime preloaded (leak
# checking off: the interpreter keeps its own objects to the end by design).
if (LIB and "libasan" in subprocess.run(["readelf", "-d", LIB], capture_output=True,
                                         text=True).stdout
        and "libasan" not in os.environ.get("LD_PRELOAD", "")):
    rt = subprocess.run(["cc", "-print-file-name=libasan.so"], capture_output=True,
                        text=True).stdout.strip()
    env = dict(os.environ, LD_PRELOAD=rt,
               ASAN_OPTIONS=os.environ.get("ASAN_OPTIONS", "") + ":detect_leaks=0")  # last wins
    sys.stdout.flush()
    os.execve(sys.executable, [sys.executable] + sys.argv, env)
# Once loaded, the runtime must not reach the programs this script starts (the
# C compiler, the CLI): they are not ASan programs, or are linked with it.
# Python children that load the library (the venv check below) get it back
# through PY_ENV.
PY_ENV = {}
if "libasan" in os.environ.get("LD_PRELOAD", ""):
    PY_ENV = {"LD_PRELOAD": os.environ.pop("LD_PRELOAD"),
              "ASAN_OPTIONS": os.environ["ASAN_OPTIONS"]}
    os.environ["ASAN_OPTIONS"] = os.environ["ASAN_OPTIONS"][:-len(":detect_leaks=0")]
PYDIR = os.path.join(pptest.SOURCE, "python")
sys.path.insert(0, PYDIR)
import pixpost  # noqa: E402
from pixpost import _lib  # noqa: E402

TMP = pptest.tmpdir()

# (1) struct mirrors against the C compiler
prog = ["#include <pixpost/pixpost.h>", "#include <stdio.h>", "#include <stddef.h>",
        "int main(void) {"]
for cname, cls in _lib.MIRRORED.items():
    prog.append('printf("%s %%zu\\n", sizeof(%s));' % (cname, cname))
    for fname, _ in cls._fields_:
        prog.append('printf("%s.%s %%zu\\n", offsetof(%s, %s));' % (cname, fname, cname, fname))
prog.append('printf("pp_result %zu\\n", sizeof(pp_result));')
prog.append("return 0; }")
src = os.path.join(TMP, "sizes.c")
exe = os.path.join(TMP, "sizes")
with open(src, "w") as f:
    f.write("\n".join(prog) + "\n")
subprocess.run(["cc", "-std=c11", "-I", os.path.join(pptest.SOURCE, "include"), "-o", exe, src],
               check=True)
c_layout = dict(line.split() for line in subprocess.run([exe], check=True, capture_output=True,
                                                        text=True).stdout.splitlines())
bad = []
for cname, cls in _lib.MIRRORED.items():
    if int(c_layout[cname]) != ctypes.sizeof(cls):
        bad.append("sizeof(%s) C %s, ctypes %d" % (cname, c_layout[cname], ctypes.sizeof(cls)))
    for fname, _ in cls._fields_:
        off = getattr(cls, fname).offset
        if int(c_layout[cname + "." + fname]) != off:
            bad.append("%s.%s C %s, ctypes %d" % (cname, fname, c_layout[cname + "." + fname], off))
pptest.check(not bad, "ctypes mirrors match the C layout of %d structs (%s)"
             % (len(_lib.MIRRORED), "; ".join(bad) or "sizes and offsets equal"))
pptest.check(int(c_layout["pp_result"]) <= _lib.RESULT_BUFFER,
             "sizeof(pp_result) %s fits the module's %d-byte buffer"
             % (c_layout["pp_result"], _lib.RESULT_BUFFER))
pptest.check(pixpost.version() == subprocess.run([pptest.BIN, "--version"], capture_output=True,
                                                 text=True).stdout.split()[1],
             "pixpost.version() %s is the CLI's version" % pixpost.version())


# (2) byte-identity with the CLI
def cli_vs_module(label, path, arr, psf, noise, extra_cli, **kw):
    out = os.path.join(TMP, "cli_" + label)
    args = ["sample", path, "--psf", psf, "--noise", noise, "-o", out, "--seed", "11",
            "--iters", "60", "--burn", "40", "--chains", "2", "--threads", "1", "--quiet",
            "--overwrite", "--no-plan-cache"] + extra_cli
    pptest.run(args)
    r = pixpost.sample(arr, psf=psf, noise=noise, seed=11, iters=60, burn=40, chains=2,
                       threads=1, **kw)
    for name, attr in (("mean", "mean"), ("sd", "sd"), ("lo", "lo"), ("hi", "hi"),
                       ("rhat", "rhat"), ("mcse", "mcse")):
        cli = tifffile.imread(os.path.join(out, name + ".tif"))
        mod = getattr(r, attr)
        pptest.check(mod is not None and mod.shape == arr.shape and cli.shape == arr.shape
                     and mod.astype(np.float32).tobytes() == cli.astype(np.float32).tobytes(),
                     "%s: module %s equals the CLI's %s.tif byte for byte (shape %s)"
                     % (label, attr, name, arr.shape))
    with open(os.path.join(out, "trace.csv")) as f:
        rows = list(csv.reader(f))
    head, body = rows[0], np.array(rows[1:], dtype=float)
    same = len(body) == len(r.trace)
    worst = 0.0
    if same:  # chain and iter count from 1 in the CSV, from 0 in the module
        same = (np.array_equal(body[:, 0] - 1, r.trace["chain"])
                and np.array_equal(body[:, 1] - 1, r.trace["draw"])
                and list(head[2:]) == list(r.trace.dtype.names[2:]))
    for j, col in enumerate(head[2:], start=2):
        if not same:
            break
        a, b = body[:, j], r.trace[col].astype(float)
        if not np.array_equal(np.isnan(a), np.isnan(b)):
            same = False
            break
        ok = ~np.isnan(a)
        if ok.any():
            d = np.max(np.abs(a[ok] - b[ok]) / np.maximum(np.abs(b[ok]), 1e-300))
            worst = max(worst, d)
    # trace.csv prints 10+ significant digits (relative rounding <= 5e-10)
    pptest.check(same and worst <= 1e-9,
                 "%s: trace equals trace.csv (%d rows, worst relative difference %.1e <= 1e-9)"
                 % (label, len(body), worst))
    with open(os.path.join(out, "summary.json")) as f:
        cs = json.load(f)
    pptest.check(r.summary["chains"] == cs["chains"] and r.summary["seed"] == cs["seed"]
                 and r.summary["sampler"] == cs["sampler"] and r.summary["prior"] == cs["prior"],
                 "%s: summary dict has the CLI's sampler %s, prior %s, seed, chains"
                 % (label, cs["sampler"], cs["prior"]))
    return r


rng = np.random.default_rng(20)
truth = np.full((28, 30), 20.0)
truth[8:18, 6:14] += 80
truth[20:24, 18:26] += 50
blur = pixpost.simulate(truth, psf="gaussian:sigma=1.4", noise="gaussian:sigma=3", seed=5)
frame = blur.astype(np.float32)
fpath = os.path.join(TMP, "frame.tif")
tifffile.imwrite(fpath, frame)
cli_vs_module("2-D gaussian, default prior", fpath, frame, "gaussian:sigma=1.4", "gaussian", [])
r_path = pixpost.sample(fpath, psf="gaussian:sigma=1.4", noise="gaussian", seed=11, iters=60,
                        burn=40, chains=2, threads=1)
pptest.check(r_path.mean.astype(np.float32).tobytes()
             == tifffile.imread(os.path.join(TMP, "cli_2-D gaussian, default prior",
                                             "mean.tif")).tobytes(),
             "2-D frame given as a path: mean equals the CLI's mean.tif byte for byte")

# a float64 C-contiguous array is lent to the library without a copy; it is
# never written to, also when saturated pixels are marked (a flat top of
# 3 % of the pixels at the maximum: the "flat top" rule of saturation.h)
f64 = frame.astype(np.float64)
before = f64.copy()
r64 = pixpost.sample(f64, psf="gaussian:sigma=1.4", noise="gaussian", seed=11, iters=60,
                     burn=40, chains=2, threads=1)
pptest.check(r64.mean.astype(np.float32).tobytes()
             == tifffile.imread(os.path.join(TMP, "cli_2-D gaussian, default prior",
                                             "mean.tif")).tobytes()
             and np.array_equal(f64, before),
             "2-D frame as float64 (no copy): mean equals the CLI's, the array is unchanged")
flat = f64.copy()
top = np.argsort(flat, axis=None)[-int(0.03 * flat.size):]
flat.flat[top] = flat.max()
flat_before = flat.copy()
rs = pixpost.sample(flat, psf="gaussian:sigma=1.4", noise="gaussian", seed=11, iters=60,
                    burn=40, chains=2, threads=1)
nsat = rs.summary["missing_data"]["saturated"]
pptest.check(np.array_equal(flat, flat_before, equal_nan=False) and nsat == len(top)
             and rs.summary["missing_data"]["unobserved"] == len(top)
             and rs.summary["psf"] == "gaussian:sigma=1.4",
             "saturated pixels marked on a copy: the caller's array is unchanged, summary "
             "counts %d saturated of %d set, psf %r" % (nsat, len(top), rs.summary["psf"]))
# censored by default, as the CLI (the same frame written as a float TIFF
# gives the same bytes); saturation="missing" is the CLI's --saturated-missing
flat_tif = os.path.join(TMP, "flat.tif")
tifffile.imwrite(flat_tif, flat)
for tag, kw, extra in (("censored", {}, []), ("missing", {"saturation": "missing"}, ["--saturated-missing"])):
    rp = pixpost.sample(flat, psf="gaussian:sigma=1.4", noise="gaussian", seed=11, iters=60,
                        burn=40, chains=2, threads=1, **kw)
    out = os.path.join(TMP, "cli_flat_" + tag)
    pptest.run(["sample", flat_tif, "-o", out, "--psf", "gaussian:sigma=1.4", "--noise", "gaussian", "--seed",
                "11", "--iters", "60", "--burn", "40", "--chains", "2", "--threads", "1", "--quiet",
                "--no-plan-cache"] + extra)
    pptest.check(rp.summary["missing_data"].get("saturated_as") == tag and
                 rp.mean.astype(np.float32).tobytes() ==
                 tifffile.imread(os.path.join(out, "mean.tif")).tobytes(),
                 "saturated pixels %s (saturation=%r): summary says so, mean equals the CLI's" % (tag, kw))

# regions: each kept draw's total over each label, against the CLI's
# regions.csv (mean of the totals, printed with 10 significant digits)
labels = np.zeros(frame.shape, np.uint16)
labels[8:18, 6:14] = 1
labels[20:24, 18:26] = 3
tifffile.imwrite(os.path.join(TMP, "labels.tif"), labels)
rout = os.path.join(TMP, "cli_regions")
pptest.run(["sample", fpath, "--psf", "gaussian:sigma=1.4", "--noise", "gaussian", "-o", rout,
            "--seed", "11", "--iters", "60", "--burn", "40", "--chains", "2", "--threads", "1",
            "--quiet", "--no-plan-cache", "--regions", os.path.join(TMP, "labels.tif")])
with open(os.path.join(rout, "regions.csv")) as f:
    rcsv = [row for row in csv.DictReader(f) if row["quantity"] == "total"]
rr = pixpost.sample(frame, psf="gaussian:sigma=1.4", noise="gaussian", seed=11, iters=60,
                    burn=40, chains=2, threads=1, regions=labels)
reg = rr.regions
worst = max(abs(float(row["mean"]) - reg["totals"][:, :, j].mean()) / abs(float(row["mean"]))
            for j, row in enumerate(rcsv))
pptest.check(reg["totals"].shape == (2, 60, 2) and list(reg["labels"]) == [1, 3]
             and list(reg["pixels"]) == [80, 32]
             and [int(row["label"]) for row in rcsv] == [1, 3]
             and [int(row["pixels"]) for row in rcsv] == [80, 32] and worst < 1e-9,
             "regions: totals (2 chains x 60 draws x 2 labels), labels and pixel counts as the "
             "CLI's regions.csv, mean total relative difference %.1e < 1e-9" % worst)
pptest.check(rr.mean.astype(np.float32).tobytes()
             == tifffile.imread(os.path.join(rout, "mean.tif")).tobytes(),
             "with regions: mean equals the CLI's mean.tif byte for byte")

# camera frame: photons = truth / 10, ADU = 0.5 e- + 100 offset, 16-bit
photons = rng.poisson(truth / 4.0)
adu = np.clip(np.round(photons * 2.0 + 100 + rng.normal(0, 1.6 * 2.0, truth.shape)), 0, 65535)
cam = adu.astype(np.uint16)
cpath = os.path.join(TMP, "camera.tif")
tifffile.imwrite(cpath, cam)
cli_vs_module("2-D camera", cpath, cam, "gaussian:sigma=1.4",
              "camera:gain=2,offset=100,read=1.6", [])

# z-stack: 3 slices, 3-D gaussian PSF, sampled as one volume
vol_truth = np.stack([truth * s for s in (0.6, 1.0, 0.7)])
vol = pixpost.simulate(vol_truth, psf="gaussian:sigma=1.3,sigma_z=0.8",
                       noise="gaussian:sigma=3", seed=9).astype(np.float32)
vpath = os.path.join(TMP, "stack.tif")
tifffile.imwrite(vpath, vol, photometric="minisblack")
cli_vs_module("z-stack", vpath, vol, "gaussian:sigma=1.3,sigma_z=0.8", "gaussian",
              ["--pages", "z"])

# pixpost.psf and pixpost.simulate against `pixpost psf` and `pixpost simulate`
for i, (spec, shape) in enumerate((("gaussian:sigma=1.7", None), ("airy:na=1.2,wavelength=0.5,pixel=0.1", 15),
                    ("gaussian:sigma=1.3,sigma_z=0.8", None))):
    kp = os.path.join(TMP, "k%d.tif" % i)
    pptest.run(["psf", spec, "-o", kp] + (["--size", str(shape)] if shape else []))
    cli = tifffile.imread(kp)
    mod = pixpost.psf(spec, shape)
    pptest.check(mod.shape == cli.shape and mod.astype(np.float32).tobytes() == cli.tobytes(),
                 "pixpost.psf(%r, %s) equals `pixpost psf`'s kernel byte for byte (%s)"
                 % (spec, shape, mod.shape))
t32 = truth.astype(np.float32)
tifffile.imwrite(os.path.join(TMP, "truth.tif"), t32)
sp = os.path.join(TMP, "sim.tif")
pptest.run(["simulate", os.path.join(TMP, "truth.tif"), "--psf", "gaussian:sigma=1.4", "--noise",
            "camera:gain=2,offset=100,read=1.6", "--seed", "4", "-o", sp])
ms = pixpost.simulate(t32, psf="gaussian:sigma=1.4", noise="camera:gain=2,offset=100,read=1.6",
                      seed=4)
pptest.check(ms.astype(np.float32).tobytes() == tifffile.imread(sp).tobytes(),
             "pixpost.simulate equals `pixpost simulate`'s frame byte for byte (camera noise)")

# (3) errors carry the library's message
try:
    pixpost.sample(frame, psf="gaussian:sigma=-2")
    pptest.check(False, "a bad PSF spec raises PixpostError")
except pixpost.PixpostError as e:
    cli = subprocess.run([pptest.BIN, "sample", fpath, "--psf", "gaussian:sigma=-2", "-o",
                          os.path.join(TMP, "bad")], capture_output=True, text=True)
    # the same sentence as the CLI's, which names the setting by its flag
    pptest.check(e.status == 1 and e.status_name == "bad argument" and cli.returncode != 0
                 and e.message == cli.stderr.strip().replace("pixpost: --psf", "PSF", 1),
                 "bad PSF spec: PixpostError status %d (%s): %r (CLI said %r)"
                 % (e.status, e.status_name, e.message, cli.stderr.strip()))
    pptest.check(str(e).startswith("psf: "), "the exception's text names the psf argument")

try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=-5)
    pptest.check(False, "iters=-5 is refused")
except ValueError as e:
    pptest.check("iters=-5" in str(e), "iters=-5 is refused before the library: %s" % e)
try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=60, burn=40, chains=0)
    pptest.check(False, "chains=0 is refused")
except pixpost.PixpostError as e:
    pptest.check(e.status == 1 and "chain" in e.message,
                 "chains=0: the library's refusal: %s" % e.message)

# (4) progress and stop
seen = []
pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=60, burn=40, chains=2, threads=1,
               progress=lambda d, t: seen.append((d, t)))
dones = [d for d, _ in seen]
pptest.check(len(seen) >= 3 and all(a <= b for a, b in zip(dones, dones[1:]))
             and dones[-1] == seen[-1][1] == 200,
             "progress: %d calls, counts non-decreasing, last %s of %s (2 chains x 100)"
             % (len(seen), dones[-1] if dones else None, seen[-1][1] if seen else None))
calls = []
try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=2000, burn=100, chains=2, threads=1,
                   progress=lambda d, t: calls.append(d) or len(calls) < 2)
    pptest.check(False, "returning False from progress stops the run")
except pixpost.PixpostError as e:
    pptest.check(e.status == 8 and calls[-1] < 4200,
                 "progress returning False stops the run: %s after %d of 4200 iterations"
                 % (e.status_name, calls[-1]))
def boom(d, t):
    raise RuntimeError("callback failed at %d" % d)


try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=2000, burn=100, chains=2, threads=1,
                   progress=boom)
    pptest.check(False, "an exception in progress reaches the caller")
except RuntimeError as e:
    pptest.check(str(e).startswith("callback failed at"),
                 "an exception raised in progress stops the run and reaches the caller: %s" % e)
ev = threading.Event()
ev.set()
try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=2000, burn=100, chains=2, threads=1,
                   stop=ev)
    pptest.check(False, "a set stop event stops the run")
except pixpost.PixpostError as e:
    pptest.check(e.status == 8, "a set stop event stops the run (%s)" % e.status_name)

# (5) the GIL is released while sampling: a counting thread's rate during
# the pp_sampler_run call (timed by a thin wrapper around the module's
# handle; no progress callback, so no Python runs on the main thread then)
# against its rate alone. Were the GIL held for the call (a ctypes.PyDLL
# handle), the thread could not count at all during it: measured with such
# a handle, the ratio was 0.002, against 0.49 with the module's CDLL (both on this
# 2-core machine while other tests ran). The 0.05 floor leaves
# room for a loaded machine (2 cores shared by several runs).
import time  # noqa: E402
count = [0]
halt = threading.Event()


def spin():
    while not halt.is_set():
        count[0] += 1


th = threading.Thread(target=spin)
th.start()
c0, t0 = count[0], time.perf_counter()
time.sleep(0.3)
alone = (count[0] - c0) / (time.perf_counter() - t0)
run_c = pixpost._L.pp_sampler_run
window = []


def timed_run(s):
    a, ta = count[0], time.perf_counter()
    st = run_c(s)
    window.append((count[0] - a, time.perf_counter() - ta))
    return st


pixpost._L.pp_sampler_run = timed_run
try:
    pixpost.sample(frame, psf="gaussian:sigma=1.4", iters=600, burn=100, chains=2, threads=1)
finally:
    pixpost._L.pp_sampler_run = run_c
halt.set()
th.join()
during = window[0][0] / window[0][1]
pptest.check(not isinstance(pixpost._L, ctypes.PyDLL) and during > 0.05 * alone,
             "another Python thread runs while the library samples: %.3g increments/s during "
             "pp_sampler_run (%.2f s) vs %.3g alone (ratio %.2f > 0.05)"
             % (during, window[0][1], alone, during / alone))

# (6) offline pip install into a venv
venv = os.path.join(TMP, "venv")
subprocess.run(["/usr/bin/python3", "-m", "venv", "--system-site-packages", "--clear", venv],
               check=True)
vpy = os.path.join(venv, "bin", "python")
pysrc = os.path.join(TMP, "python_src")
shutil.copytree(PYDIR, pysrc, ignore=shutil.ignore_patterns("build", "*.egg-info",
                                                             "__pycache__"))
pip = subprocess.run([vpy, "-m", "pip", "install", "--no-build-isolation", "--no-index",
                      pysrc], capture_output=True, text=True,
                     env=dict(os.environ, PIP_NO_INDEX="1", PIP_DISABLE_PIP_VERSION_CHECK="1"),
                     cwd=TMP)
pptest.check(pip.returncode == 0, "pip install --no-index ./python in a venv: %s"
             % (pip.stdout.strip().splitlines()[-1:] if pip.returncode == 0 else pip.stderr))
code = ("import pixpost, numpy as np; "
        "assert pixpost.__file__.startswith(%r), pixpost.__file__; "
        "r = pixpost.sample(np.load(%r), psf='gaussian:sigma=1.4', iters=60, burn=40, "
        "chains=2, threads=1, seed=11); print(pixpost.version(), "
        "r.mean.astype(np.float32).tobytes().hex())") % (venv, os.path.join(TMP, "frame.npy"))
np.save(os.path.join(TMP, "frame.npy"), frame)
run = subprocess.run([vpy, "-c", code], capture_output=True, text=True, cwd=TMP,
                     env=dict(os.environ, PYTHONPATH="", **PY_ENV))
ref = tifffile.imread(os.path.join(TMP, "cli_2-D gaussian, default prior", "mean.tif"))
pptest.check(run.returncode == 0 and run.stdout.split()[-1] == ref.tobytes().hex(),
             "the installed module (in the venv) imports from the venv and its mean equals "
             "the CLI's mean.tif: %s" % (run.stderr.strip()[-300:] or "yes"))
nolib = subprocess.run([vpy, "-c", "import pixpost"], capture_output=True, text=True, cwd=TMP,
                       env=dict(os.environ, PYTHONPATH="", PIXPOST_LIBRARY="/nonexistent/lib.so",
                                **PY_ENV))
pptest.check(nolib.returncode != 0 and "PIXPOST_LIBRARY" in nolib.stderr,
             "a wrong PIXPOST_LIBRARY fails with a message naming it")
pptest.done()
