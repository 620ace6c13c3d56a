"""Reference check: `pixpost batch` over a folder with good and bad frames.

Frames are written by Pillow (PNG) and tifffile (TIFF, including a 3-page
stack), the bad ones by hand: a truncated PNG, a text file named .png and a
zero-byte .tif. Checks:
* the good frames complete, the bad ones are listed failed with a message
  naming the file, exit status 2; index.json agrees with index.csv and with
  each frame's summary.json (lambda/delta means);
* SIGTERM mid-batch stops cleanly (exit 128+15, prints how to resume, no
  temporary files); kill -9 of the process group mid-batch, then --resume:
  every frame complete and every output file byte-identical to an
  uninterrupted run (summary.json compared with its "timing" entry
  and per-second rates removed), and no stray temporary files;
* the manifest's worst R-hat, lowest bulk-ESS, warnings and converged
  columns agree with each frame's summary.json (tests/ref_batch_verdicts.py
  checks them on well-converged and unconverged frames, and --strict);
* --jobs 1 (the killed-and-resumed run) vs --jobs 2 (the reference run),
  and --shard 1/2 + 2/2 then --merge: byte-identical mean.tif per frame;
* --resume skips a complete frame only when the settings are unchanged, and
  replaces one made with other settings only with --overwrite;
* an OUTDIR inside INDIR is refused (exit 1) and INDIR is never modified.
Byte identity needs no tolerance: a frame's seed is a hash of --seed and its
relative path, and the sampler's results do not depend on thread counts.
"""
import json
import os
import signal
import subprocess
import time

import numpy as np
import tifffile  # Debian python3-tifffile
from PIL import Image  # Debian python3-pil

import pptest

tmp = pptest.tmpdir()
indir = os.path.join(tmp, "in")
os.makedirs(os.path.join(indir, "sub"))
rng = np.random.default_rng(7)


def frame():
    # a smooth positive scene plus noise, 32 x 32 (kept tiny so the test is fast)
    y, x = np.mgrid[0:32, 0:32]
    scene = 400 + 300 * np.exp(-((x - rng.uniform(8, 24)) ** 2 + (y - rng.uniform(8, 24)) ** 2) / 30)
    return scene + rng.normal(0, 10, (32, 32))


GOOD = ["a01.png", "a02.tif", "b03.png", "c04.tif", "sub/d05.png"]
for name in GOOD:
    p = os.path.join(indir, name)
    if name.endswith(".png"):
        Image.fromarray(frame().astype(np.uint16)).save(p)  # Pillow: 16-bit grayscale PNG
    else:
        tifffile.imwrite(p, frame().astype(np.float32))
with tifffile.TiffWriter(os.path.join(indir, "stack.tif")) as w:  # tifffile: 3 pages
    for _ in range(3):
        w.write(frame().astype(np.float32), photometric="minisblack")
good_png = open(os.path.join(indir, "a01.png"), "rb").read()
open(os.path.join(indir, "b02_trunc.png"), "wb").write(good_png[: len(good_png) // 2])
open(os.path.join(indir, "b05_text.png"), "w").write("this is not an image\n")
open(os.path.join(indir, "c00_empty.tif"), "wb").close()
BAD = {"b02_trunc.png", "b05_text.png", "c00_empty.tif"}
OUTPUTS = ["a01", "a02", "b03", "c04", "sub/d05", "stack_p1", "stack_p2", "stack_p3"]


indir_before = pptest.tree_digest(indir)
# Estimated FFT plans (--no-plan-cache): outputs are byte-identical for the
# same seed and the same plans (README, "What is reproducible"); measured
# plans made by two first runs at once can differ and round differently,
# which tests/ref_plan_cache.py checks on its own.
OPTS = ["--no-plan-cache", "--psf", "gaussian:sigma=1.5", "--chains", "2", "--burn", "50", "--iters", "400",
        "--seed", "11", "--recursive", "--quiet", "--pages", "t"]  # stack.tif: pages are time points


def batch(cwd, *extra, check=False):
    return subprocess.run([pptest.BIN, "batch", indir, "-o", "out"] + OPTS + list(extra),
                          cwd=cwd, capture_output=True, text=True, check=check)


def read_csv(path):
    import csv
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def temps(root):
    return [os.path.join(d, f) for d, _, fs in os.walk(root) for f in fs if ".tmp." in f]


def strip_timing(node):
    """summary.json without what depends on the clock: the "timing" entry and
    every rate per second (e.g. ess_bulk_per_second)."""
    if isinstance(node, dict):
        return {k: strip_timing(v) for k, v in node.items()
                if k != "timing" and not k.endswith("per_second")}
    if isinstance(node, list):
        return [strip_timing(v) for v in node]
    return node


# ---- reference run: --jobs 2, uninterrupted ---------------------------------
A = os.path.join(tmp, "A")
os.makedirs(A)
p = batch(A, "--jobs", "2")
pptest.check(p.returncode == 2, "a batch with bad frames exits 2 (got %d: %s)" % (p.returncode, p.stderr))
rows = read_csv(os.path.join(A, "out", "index.csv"))
by_out = {r["output"]: r for r in rows}
pptest.check(len(rows) == len(OUTPUTS) + len(BAD), "one manifest row per frame, pages counted (%d)" % len(rows))
pptest.check(all(by_out.get(o, {}).get("status") == "done" for o in OUTPUTS),
             "every good frame (and each page of the 3-page TIFF) is done")
for bad in BAD:
    r = [r for r in rows if r["path"] == bad]
    pptest.check(len(r) == 1 and r[0]["status"] == "failed" and bad in r[0]["message"],
                 "%s is failed with a message naming it (%r)" % (bad, r[0]["message"] if r else None))
pptest.check([r["page"] for r in rows if r["path"] == "stack.tif"] == ["1", "2", "3"],
             "the 3-page TIFF gives pages 1, 2, 3 named stack_p1..p3")
for o in OUTPUTS:
    d = os.path.join(A, "out", o)
    names = set(os.listdir(d))
    want = {"mean.tif", "sd.tif", "lo.tif", "hi.tif", "mean.png", "sd.png", "summary.json",
            "trace.csv", ".done"}
    pptest.check(want <= names, "%s/ holds the sample outputs and the .done marker" % o)
    s = json.load(open(os.path.join(d, "summary.json")))
    pptest.check(abs(float(by_out[o]["lambda_mean"]) - s["hyper"]["lambda"]["mean"]) <=
                 1e-9 * abs(s["hyper"]["lambda"]["mean"]),
                 "%s: manifest lambda mean equals summary.json's" % o)
    # the worst R-hat and lowest bulk-ESS over the trace columns, from the JSON
    sc = s["diagnostics"]["scalars"].values()
    rh = [v["rhat"] for v in sc if v["rhat"] is not None]
    es = [v["ess_bulk"] for v in sc if v["ess_bulk"] is not None]
    pptest.check((not rh and by_out[o]["rhat_max"] == "") or
                 (rh and abs(float(by_out[o]["rhat_max"]) - max(rh)) <= 1e-9 * max(rh)),
                 "%s: manifest worst R-hat is the largest R-hat of summary.json's scalars (%s)" % (o, by_out[o]["rhat_max"]))
    pptest.check((not es and by_out[o]["ess_bulk_min"] == "") or
                 (es and abs(float(by_out[o]["ess_bulk_min"]) - min(es)) <= 1e-9 * min(es)),
                 "%s: manifest lowest bulk-ESS is the smallest of summary.json's scalars (%s)" % (o, by_out[o]["ess_bulk_min"]))
    pptest.check(by_out[o]["warnings"] == str(len(s["warnings"])) and
                 by_out[o]["converged"] == ("false" if s["warnings"] else "true"),
                 "%s: manifest warnings and converged agree with summary.json's warnings" % o)
js = json.load(open(os.path.join(A, "out", "index.json")))
pptest.check([f["output"] for f in js["frames"]] == [r["output"] for r in rows] and
             js["counts"]["done"] == len(OUTPUTS) and js["counts"]["failed"] == len(BAD),
             "index.json lists the same frames as index.csv, with counts")
pptest.check(not temps(os.path.join(A, "out")), "no temporary files after a batch")
seeds = {json.load(open(os.path.join(A, "out", o, "summary.json")))["seed"] for o in OUTPUTS}
pptest.check(len(seeds) == len(OUTPUTS), "each frame gets its own seed derived from --seed and its path")


def wait_done(cwd, at_least, proc):
    """Polls the manifest until >= at_least rows are done (or the run ended)."""
    path = os.path.join(cwd, "out", "index.csv")
    while proc.poll() is None:
        try:
            n = sum(r["status"] == "done" for r in read_csv(path))
        except (OSError, KeyError):
            n = 0
        if n >= at_least:
            return n
        time.sleep(0.005)
    return -1


# ---- SIGTERM, then kill -9, then --resume, all with --jobs 1 -----------------
B = os.path.join(tmp, "B")
os.makedirs(B)
cmd = [pptest.BIN, "batch", indir, "-o", "out"] + OPTS + ["--jobs", "1"]
proc = subprocess.Popen(cmd, cwd=B, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True,
                        start_new_session=True)
n = wait_done(B, 1, proc)
proc.send_signal(signal.SIGTERM)
_, err = proc.communicate()
pptest.check(n >= 1 and proc.returncode == 128 + signal.SIGTERM,
             "SIGTERM mid-batch: exit 143 (got %d after %d done)" % (proc.returncode, n))
pptest.check("--resume" in err, "SIGTERM: says how to resume (%r)" % err[-200:])
pptest.check(not temps(os.path.join(B, "out")), "SIGTERM: no half-written (temporary) file left")
rows = read_csv(os.path.join(B, "out", "index.csv"))
pptest.check(any(r["status"] == "pending" for r in rows), "SIGTERM: unfinished frames are listed pending")

proc = subprocess.Popen(cmd + ["--resume"], cwd=B, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                        text=True, start_new_session=True)
n = wait_done(B, 2, proc)
os.killpg(proc.pid, signal.SIGKILL)
proc.communicate()
rows = read_csv(os.path.join(B, "out", "index.csv"))
unfinished = [r["output"] for r in rows if r["status"] == "pending"]
pptest.check(n >= 2 and unfinished, "kill -9 landed mid-batch (%d done, %d pending)" % (n, len(unfinished)))
# What a kill during a write leaves: a temporary file, and a frame folder with
# a stale output but no marker. Planted so the cleanup is tested every time.
stale = os.path.join(B, "out", unfinished[-1])
os.makedirs(stale, exist_ok=True)
open(os.path.join(stale, ".mean.tif.tmp.AbC123"), "wb").write(b"partial")
open(os.path.join(stale, "mean.tif"), "wb").write(b"stale")
open(os.path.join(B, "out", ".index.csv.tmp.XyZ789"), "wb").write(b"partial")
p = batch(B, "--resume", "--jobs", "1")
pptest.check(p.returncode == 2, "--resume finishes the batch (exit 2 for the bad frames; got %d)" % p.returncode)
rows = read_csv(os.path.join(B, "out", "index.csv"))
st = {r["output"]: r["status"] for r in rows}
pptest.check(all(st[o] in ("done", "skipped") for o in OUTPUTS) and
             sum(st[o] == "skipped" for o in OUTPUTS) >= 2,
             "after --resume every good frame is complete, the earlier ones skipped (%s)" % st)
pptest.check(not temps(os.path.join(B, "out")), "after --resume: no stray temporary files")
identical = True
for o in OUTPUTS:
    da, db = os.path.join(A, "out", o), os.path.join(B, "out", o)
    names = sorted(os.listdir(da))
    if names != sorted(os.listdir(db)):
        identical = False
        print("  file lists differ in", o)
    for f in names:
        fa, fb = os.path.join(da, f), os.path.join(db, f)
        same = (strip_timing(json.load(open(fa))) == strip_timing(json.load(open(fb)))) if f == "summary.json" else \
            open(fa, "rb").read() == open(fb, "rb").read()
        if not same:
            identical = False
            print("  differs:", o, f)
pptest.check(identical, "killed + resumed --jobs 1 run is byte-identical to the --jobs 2 run "
             "(every file; summary.json without timing)")

# ---- --resume redoes a frame whose settings changed ---------------------------
p = batch(B, "--resume", "--pattern", "a01.png")
r = read_csv(os.path.join(B, "out", "index.csv"))
pptest.check(p.returncode == 0 and [x["status"] for x in r] == ["skipped"],
             "--resume with the same settings skips a complete frame")
opts12 = ["12" if v == "11" else v for v in OPTS]
p = subprocess.run([pptest.BIN, "batch", indir, "-o", "out"] + opts12 + ["--resume", "--pattern", "a01.png"],
                   cwd=B, capture_output=True, text=True)
pptest.check(p.returncode == 1 and "1 finished frame was made with other settings" in p.stderr and
             "--overwrite" in p.stderr,
             "--resume after --seed changed: refused without --overwrite (%r)" % p.stderr.strip())
p = subprocess.run([pptest.BIN, "batch", indir, "-o", "out"] + opts12 +
                   ["--resume", "--overwrite", "--pattern", "a01.png"], cwd=B, capture_output=True, text=True)
r = read_csv(os.path.join(B, "out", "index.csv"))
pptest.check(p.returncode == 0 and [x["status"] for x in r] == ["done"],
             "--resume --overwrite redoes a frame when --seed changed (%s)" % [x["status"] for x in r])

# ---- shards 1/2 + 2/2, merged -------------------------------------------------
S = os.path.join(tmp, "S")
os.makedirs(S)
codes = [batch(S, "--shard", k).returncode for k in ("1/2", "2/2")]
pptest.check(codes.count(2) >= 1 and set(codes) <= {0, 2}, "shards run (exit codes %s)" % codes)
s1 = read_csv(os.path.join(S, "out", "index.shard-1-of-2.csv"))
s2 = read_csv(os.path.join(S, "out", "index.shard-2-of-2.csv"))
pptest.check(not ({r["output"] for r in s1} & {r["output"] for r in s2}) and
             len(s1) + len(s2) == len(OUTPUTS) + len(BAD), "the two shards are disjoint and cover every frame")
p = pptest.run(["batch", "--merge", os.path.join(S, "out")], check=False)
merged = read_csv(os.path.join(S, "out", "index.csv"))
ref = read_csv(os.path.join(A, "out", "index.csv"))
pptest.check(p.returncode == 2 and [(r["path"], r["page"], r["status"]) for r in merged] ==
             [(r["path"], r["page"], r["status"]) for r in ref],
             "--merge joins the shard manifests into the same rows as the one-shot run")
same = all(open(os.path.join(A, "out", o, "mean.tif"), "rb").read() ==
           open(os.path.join(S, "out", o, "mean.tif"), "rb").read() for o in OUTPUTS)
pptest.check(same, "sharded mean.tif byte-identical to the one-shot run, every frame")

# ---- refusals and INDIR untouched ---------------------------------------------
p = subprocess.run([pptest.BIN, "batch", indir, "-o", os.path.join(indir, "sub", "out")] + OPTS,
                   capture_output=True, text=True)
pptest.check(p.returncode == 1 and "inside the input folder" in p.stderr,
             "OUTDIR inside INDIR is refused with exit 1 (%r)" % p.stderr.strip())
pptest.check(pptest.tree_digest(indir) == indir_before, "INDIR is unchanged by every run above")
pptest.done()
