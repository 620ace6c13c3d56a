"""Check: what `pixpost batch` tells the user about each frame (issue 14,
items 1, 6 and 8), asserted by text and exit status.

* The manifest's rhat_max and ess_bulk_min are the run's own figures: equal
  to the worst R-hat and lowest bulk-ESS over summary.json's
  diagnostics.scalars (computed here from the JSON, not read from one key),
  on a well-converged frame, where the worst R-hat is below 1.01 and so
  differs from the 1.01 threshold that summary.json also holds; equal to
  what `sample` prints for the same frame and seed; kept by --resume.
* warnings and converged columns: the count of summary.json's "warnings"
  and whether it is zero; "done, N warnings" per frame.
* The verdict (issue 16, item 3): each frame's line says "converged", or
  "not converged (<part>): run about K iterations: --iters K"; the
  manifest's failed and iters_suggested columns (index.csv, index.json)
  are summary.json's "convergence" "failed" and "iters_suggested" (empty /
  null when converged); --resume and --merge keep them.
* --strict: a frame with convergence warnings is failed-strict and the batch
  exits 3; with a frame that failed outright it exits 2. --merge of such
  shards exits 3 too.
* Entries skipped because of their type (.txt, .jpg, a subfolder without
  --recursive) are named once at the start.
* Each frame's progress: a line per 10 % naming the frame.
* The per-frame line names the checks' warnings (issue 17): "data checks:
  <names>" as summary.json's data_checks warnings, "predictive check: N
  warnings" as its predictive warnings; on a frame with the gain inverted
  the gain check is among them, with the right gain it is not.
* Frames finished with other settings are replaced only with --overwrite;
  without it one line names the folder, the count and --overwrite, exit 1,
  and nothing in OUTDIR changes.

Frames: 32 x 32, Pillow-written 16-bit PNGs of a smooth spot plus noise,
gaussian:sigma=1.0 PSF (its transfer function has no zeros on these grids,
so every warning here is a convergence warning). "Well converged": 2 chains
x 4000 iterations give a worst R-hat about 1.004 and a lowest bulk-ESS about
460 on these frames (measured; fixed seeds), against the warning thresholds
1.01 and 200 (100 per chain), margins wide enough for plans that round
differently; "unconverged": 30 iterations give R-hat about 1.3-1.4 and a
dozen warnings. Exact comparisons only (values are the same doubles printed with
10 significant digits, so a relative 1e-9).
"""
import csv
import json
import os
import re
import subprocess

import numpy as np
import tifffile  # Debian python3-tifffile
from PIL import Image  # Debian python3-pil
from skimage import data as skdata  # Debian python3-skimage: its "camera" scene

import pptest

tmp = pptest.tmpdir()
indir = os.path.join(tmp, "in")
os.makedirs(os.path.join(indir, "sub"))
rng = np.random.default_rng(5)
for name in ["a.png", "b.png", "sub/c.png"]:
    y, x = np.mgrid[0:32, 0:32]
    scene = 400 + 300 * np.exp(-((x - rng.uniform(10, 22)) ** 2 + (y - rng.uniform(10, 22)) ** 2) / 30)
    Image.fromarray((scene + rng.normal(0, 10, (32, 32))).astype(np.uint16)).save(os.path.join(indir, name))
open(os.path.join(indir, "notes.txt"), "w").write("exposure 100 ms\n")
open(os.path.join(indir, "photo.jpg"), "wb").write(b"\xff\xd8\xff\xe0 not really a JPEG")
open(os.path.join(indir, "z_bad.png"), "w").write("this is not an image\n")  # fails outright

# Estimated FFT plans (--no-plan-cache): outputs are byte-identical for the
# same seed and the same plans (README, "What is reproducible"); measured
# plans made by two first runs at once can differ and round differently,
# which tests/ref_plan_cache.py checks on its own.
# gmrf1: this test checks batch's bookkeeping, and needs frames that do
# converge in 4000 iterations (the stationary prior's exact Gibbs does).
BASE = ["--no-plan-cache", "--psf", "gaussian:sigma=1.0", "--chains", "2", "--burn", "50", "--seed", "3",
        "--prior", "gmrf1"]
GOOD = ["--iters", "4000", "--pattern", "[ab].png"]
POOR = ["--iters", "30"]


def batch(out, *extra):
    return subprocess.run([pptest.BIN, "batch", indir, "-o", os.path.join(tmp, out)] + BASE + list(extra),
                          capture_output=True, text=True)


def rows_of(out, base="index"):
    with open(os.path.join(tmp, out, base + ".csv"), newline="") as f:
        return {r["output"]: r for r in csv.DictReader(f)}


def summary(out, o):
    return json.load(open(os.path.join(tmp, out, o, "summary.json")))


def close(a, b):
    return abs(a - b) <= 1e-9 * abs(b)


# ---- item 1: a well-converged batch; its manifest against each summary --------
p = batch("good", *GOOD, "--jobs", "2")
pptest.check(p.returncode == 0, "converged batch exits 0 (got %d%s)" % (p.returncode, p.returncode and ": " + p.stderr[-300:] or ""))
rows = rows_of("good")
js = {f["output"]: f for f in json.load(open(os.path.join(tmp, "good", "index.json")))["frames"]}
pptest.check(sorted(rows) == ["a", "b"], "the pattern selects a and b (%s)" % sorted(rows))
for o in ["a", "b"]:
    r, s = rows.get(o, {}), summary("good", o)
    sc = s["diagnostics"]["scalars"].values()
    worst = max(v["rhat"] for v in sc if v["rhat"] is not None)
    lowest = min(v["ess_bulk"] for v in sc if v["ess_bulk"] is not None)
    pptest.check(worst < 1.01 and not s["warnings"],
                 "%s: the frame is well converged (worst R-hat %.4f, %d warnings)" % (o, worst, len(s["warnings"])))
    got = float(r.get("rhat_max") or "nan")
    pptest.check(close(got, worst) and got != 1.01,
                 "%s: manifest rhat_max %s is the worst R-hat over summary.json's scalars (%.10g), not "
                 "the 1.01 threshold" % (o, r.get("rhat_max"), worst))
    pptest.check(close(float(r.get("ess_bulk_min") or "nan"), lowest),
                 "%s: manifest ess_bulk_min %s is the lowest bulk-ESS over summary.json's scalars (%.10g)"
                 % (o, r.get("ess_bulk_min"), lowest))
    pptest.check(r.get("warnings") == "0" and r.get("converged") == "true" and r.get("status") == "done",
                 "%s: warnings 0, converged true, status done (%s, %s, %s)"
                 % (o, r.get("warnings"), r.get("converged"), r.get("status")))
    j = js.get(o, {})
    pptest.check(j.get("rhat_max") == worst and j.get("warnings") == 0 and j.get("converged") is True,
                 "%s: index.json agrees (%s, %s, %s)" % (o, j.get("rhat_max"), j.get("warnings"), j.get("converged")))
    c = s.get("convergence", {})
    pptest.check(c.get("rhat_max") == worst and c.get("ess_bulk_min") == lowest and c.get("warnings") == 0
                 and c.get("converged") is True,
                 "%s: summary.json's \"convergence\" holds the same figures (%s)" % (o, c))
    pptest.check(r.get("failed") == "" and r.get("iters_suggested") == "" and j.get("failed", 0) is None
                 and j.get("iters_suggested", 0) is None,
                 "%s: converged: failed and iters_suggested empty in index.csv, null in index.json" % o)

# `sample` on the same frame with the frame's seed prints the same figure
sa = summary("good", "a")
p = pptest.run(["sample", os.path.join(indir, "a.png"), "-o", os.path.join(tmp, "sample_a"), "--psf",
                "gaussian:sigma=1.0", "--chains", "2", "--burn", "50", "--iters", "4000", "--seed",
                str(sa["seed"]), "--prior", "gmrf1"], check=False)
m = re.search(r"worst R-hat ([0-9.]+), lowest bulk-ESS ([0-9]+)", p.stderr)
pptest.check(p.returncode == 0 and m and m.group(1) == "%.3f" % float(rows["a"]["rhat_max"])
             and m.group(2) == "%.0f" % float(rows["a"]["ess_bulk_min"]),
             "sample prints the manifest's worst R-hat and lowest bulk-ESS for the same frame and seed (%r)"
             % (m.group(0) if m else p.stderr[-200:]))

# ---- item 8: what the converged run said --------------------------------------
err = batch("good2", *GOOD).stderr
skip = [ln for ln in err.splitlines() if "skipping" in ln]
pptest.check(len(skip) == 1 and "3 entries" in skip[0] and "notes.txt" in skip[0] and "photo.jpg" in skip[0]
             and "sub/" in skip[0] and "--recursive" in skip[0] and "z_bad.png" not in skip[0],
             "the entries skipped by type are named once at the start (%r)" % skip)
pptest.check(err.find("skipping") < err.find("sampling:") if "sampling:" in err else False,
             "the skipped list comes before the first frame's progress")
for o in ["a", "b"]:
    steps = [int(x) for x in re.findall(r"^pixpost: %s: sampling: (\d+)%%" % o, err, re.M)]
    pptest.check(steps == list(range(10, 101, 10)),
                 "%s: its own progress is a line per 10 %% naming it (%s)" % (o, steps))
    pptest.check(re.search(r"\] %s: done, no warnings, converged \(" % o, err) is not None,
                 "%s: per-frame line says 'done, no warnings, converged'" % o)
p = batch("quiet", *GOOD, "--quiet")
pptest.check(p.returncode == 0 and p.stderr == "", "--quiet prints nothing (%r)" % p.stderr[:200])

# --resume keeps the figures (read from summary.json's "convergence")
before = rows_of("good")
p = batch("good", *GOOD, "--resume")
after = rows_of("good")
pptest.check(p.returncode == 0 and all(after[o]["status"] == "skipped" for o in after) and
             all(after[o].get(k) and after[o].get(k) == before[o].get(k) for o in after
                 for k in ("rhat_max", "ess_bulk_min", "warnings", "converged", "lambda_mean")),
             "--resume: skipped rows keep rhat_max, ess_bulk_min, warnings, converged")

# ---- settings changed: --overwrite required -----------------------------------
tree = pptest.tree_digest(os.path.join(tmp, "good"))
p = batch("good", "--iters", "4001", "--pattern", "[ab].png", "--resume")
lines = p.stderr.strip().splitlines()
pptest.check(p.returncode == 1 and len(lines) == 1 and os.path.join(tmp, "good") in lines[0]
             and "2 finished frames" in lines[0] and "--overwrite" in lines[0],
             "--resume with other settings: refused in one line naming the folder, the count and "
             "--overwrite, exit 1 (got %d: %r)" % (p.returncode, p.stderr))
pptest.check(pptest.tree_digest(os.path.join(tmp, "good")) == tree, "refused: nothing in OUTDIR changed")
p = batch("good", "--iters", "4001", "--pattern", "a.png")
pptest.check(p.returncode == 1 and "1 finished frame was made with other settings" in p.stderr
             and "--overwrite" in p.stderr,
             "without --resume too: a frame made with other settings is not replaced (%r)" % p.stderr.strip())
p = batch("good", "--iters", "4001", "--pattern", "[ab].png", "--resume", "--overwrite")
pptest.check(p.returncode == 0 and "redoing 2 finished frames made with other settings" in p.stderr
             and all(r["status"] == "done" for r in rows_of("good").values())
             and summary("good", "a")["iters"] == 4001,
             "--resume --overwrite: says so at the start with the count and redoes them (%r)"
             % p.stderr.splitlines()[:3])

# ---- unconverged: warnings counted; item 6 --strict ---------------------------
p = batch("poor", *POOR, "--pattern", "[ab].png")
rows = rows_of("poor")
pptest.check(p.returncode == 0, "unconverged without --strict exits 0 (got %d)" % p.returncode)
for o in ["a", "b"]:
    n = len(summary("poor", o)["warnings"])
    pptest.check(n > 0 and rows[o].get("warnings") == str(n) and rows[o].get("converged") == "false"
                 and rows[o]["status"] == "done",
                 "%s: warnings column = summary.json's %d warnings, converged false" % (o, n))
    c = summary("poor", o)["convergence"]
    k = c.get("iters_suggested")
    pptest.check(c.get("failed") in ("hyperparameters", "pixels", "hyperparameters and pixels")
                 and isinstance(k, int) and k > 30,
                 "%s: summary.json names the part that failed (%r) and the iterations to ask for (%r)"
                 % (o, c.get("failed"), k))
    pptest.check(re.search(r"\] %s: done, %d warnings, not converged \(%s\): run about %s iterations: "
                           r"--iters %s \(" % (o, n, c.get("failed"), k, k), p.stderr) is not None,
                 "%s: per-frame line says 'done, %d warnings, not converged (%s): run about %s "
                 "iterations: --iters %s'" % (o, n, c.get("failed"), k, k))
    j = {f["output"]: f for f in json.load(open(os.path.join(tmp, "poor", "index.json")))["frames"]}[o]
    pptest.check(rows[o].get("failed") == c.get("failed") and rows[o].get("iters_suggested") == str(k)
                 and j.get("failed") == c.get("failed") and j.get("iters_suggested") == k,
                 "%s: index.csv and index.json carry failed %r and iters_suggested %r (%s, %s; %s, %s)"
                 % (o, c.get("failed"), k, rows[o].get("failed"), rows[o].get("iters_suggested"),
                    j.get("failed"), j.get("iters_suggested")))
poor_rows = rows
p = batch("poor", *POOR, "--pattern", "[ab].png", "--resume")
pptest.check(p.returncode == 0 and all(r["status"] == "skipped" and
                                       r["failed"] == poor_rows[o]["failed"] and
                                       r["iters_suggested"] == poor_rows[o]["iters_suggested"]
                                       for o, r in rows_of("poor").items()),
             "--resume: skipped rows keep failed and iters_suggested (read back from summary.json)")

p = batch("strict", *POOR, "--pattern", "[ab].png", "--strict")
rows = rows_of("strict")
counts = json.load(open(os.path.join(tmp, "strict", "index.json")))["counts"]
pptest.check(p.returncode == 3, "--strict with unconverged frames exits 3 (got %d)" % p.returncode)
pptest.check(all(r["status"] == "failed-strict" and "--strict" in r["message"] for r in rows.values())
             and counts.get("failed_strict") == 2,
             "--strict: unconverged frames are failed-strict in index.csv and counted in index.json (%s)"
             % [(r["status"], r["message"]) for r in rows.values()])
pptest.check("FAILED under --strict" in p.stderr and "2 failed under --strict" in p.stderr,
             "--strict: the per-frame lines and the verdict say so")
p = batch("strict", *POOR, "--pattern", "[ab].png", "--strict", "--resume")
pptest.check(p.returncode == 3 and all(r["status"] == "failed-strict" for r in rows_of("strict").values()),
             "--strict --resume: complete but unconverged frames stay failed-strict, exit 3 (got %d)" % p.returncode)
p = batch("strict", *POOR, "--pattern", "[ab].png", "--resume")
pptest.check(p.returncode == 0 and all(r["status"] == "skipped" for r in rows_of("strict").values()),
             "without --strict the same frames are skipped, exit 0 (got %d)" % p.returncode)
p = batch("strict_bad", *POOR, "--pattern", "*.png", "--strict")
rows = rows_of("strict_bad")
pptest.check(p.returncode == 2 and rows["z_bad"]["status"] == "failed" and rows["a"]["status"] == "failed-strict",
             "--strict with a frame that failed outright exits 2 (got %d; %s)"
             % (p.returncode, {o: r["status"] for o, r in rows.items()}))
p = batch("converged_strict", *GOOD, "--strict")
pptest.check(p.returncode == 0 and all(r["status"] == "done" for r in rows_of("converged_strict").values()),
             "--strict with converged frames exits 0 (got %d)" % p.returncode)

# shards under --strict, merged
codes = [batch("shards", *POOR, "--pattern", "[ab].png", "--strict", "--shard", k).returncode for k in ("1/2", "2/2")]
p = pptest.run(["batch", "--merge", os.path.join(tmp, "shards")], check=False)
merged = rows_of("shards")
pptest.check(codes == [3, 3] and p.returncode == 3 and
             all(r["status"] == "failed-strict" and int(r.get("warnings") or 0) > 0 and r.get("converged") == "false"
                 and r.get("failed") and int(r.get("iters_suggested") or 0) > 30
                 for r in merged.values()) and len(merged) == 2,
             "--merge keeps failed-strict rows, their warnings, failed part and iters_suggested, and "
             "exits 3 (shards %s, merge %d)"
             % (codes, p.returncode))
# ---- item 2 for batch: OUTDIR holding a user's own files -----------------------
# A folder with files pixpost did not write (here the user's own index.csv)
# is refused before anything is written, the folder unchanged; --overwrite
# writes into it; a folder batch wrote before is pixpost's (its marker).
mine = os.path.join(tmp, "mine")
os.makedirs(mine)
with open(os.path.join(mine, "index.csv"), "w") as f:
    f.write("my own table\n")
before = pptest.tree_digest(mine)
p = batch("mine", *POOR, "--pattern", "a.png")
pptest.check(p.returncode == 1 and len(p.stderr.splitlines()) == 1 and mine in p.stderr
             and "--overwrite" in p.stderr and pptest.tree_digest(mine) == before,
             "batch refuses an OUTDIR with the user's files, naming it and --overwrite, touching "
             "nothing (%d, %r)" % (p.returncode, p.stderr))
p = batch("mine", *POOR, "--pattern", "a.png", "--overwrite")
pptest.check(p.returncode == 0 and os.path.exists(os.path.join(mine, ".pixpost-output")),
             "with --overwrite batch writes into it and marks it (%d)" % p.returncode)
p = batch("mine", *POOR, "--pattern", "a.png", "--resume")
pptest.check(p.returncode == 0, "a folder batch wrote is resumed without --overwrite (%d, %r)"
             % (p.returncode, p.stderr[-200:]))
# ---- issue 17: the per-frame line names the checks' warnings -------------------
# A 64 x 64 crop of scikit-image's "camera" scene (skimage.data), scaled to
# 1-301 photons and simulated by `pixpost simulate` under camera noise of
# gain 2 ADU/e-, given to batch with the gain inverted (0.5): the gain check
# (src/pixpost/datacheck.h) fires before sampling, and the line names it;
# a folder of the right gain names no gain warning.
cin = os.path.join(tmp, "cam_in")
os.makedirs(cin)
tifffile.imwrite(os.path.join(tmp, "cam_truth.tif"),
                 (skdata.camera()[100:164, 200:264] / 255.0 * 300 + 1).astype(np.float32))
pptest.run(["simulate", os.path.join(tmp, "cam_truth.tif"), "--psf", "gaussian:sigma=1.5", "--noise",
            "camera:gain=2,offset=100,read=1.5", "--seed", "1", "--quiet", "-o",
            os.path.join(cin, "cam.png")])
for gain, tag in [("0.5", "inv"), ("2", "right")]:
    p = subprocess.run([pptest.BIN, "batch", cin, "-o", os.path.join(tmp, "cam_" + tag), "--psf",
                        "gaussian:sigma=1.5", "--noise", "camera:gain=%s,offset=100,read=1.5" % gain,
                        "--chains", "2", "--burn", "20", "--iters", "30", "--seed", "1",
                        "--progress", "none"], capture_output=True, text=True)
    line = [ln for ln in p.stderr.splitlines() if "] cam: done" in ln]
    summ = summary("cam_" + tag, "cam") if p.returncode == 0 else {}
    names = [f["check"] for f in summ.get("data_checks", {}).get("findings", [])
             if f["severity"] == "warning"]
    npred = len((summ.get("predictive") or {}).get("warnings", []))
    want = ("data checks: " + ", ".join(names)) if names else ""
    pptest.check(p.returncode == 0 and len(line) == 1 and (not want or want in line[0])
                 and (("gain" in names) == (tag == "inv"))
                 and (npred == 0 or "predictive check: %d warning" % npred in line[0])
                 and (names or npred or "; " not in line[0]),
                 "gain %s: the frame's line names summary.json's data-check warnings %s and %d "
                 "predictive warnings (%r)" % (gain, names, npred, line))
pptest.done()
