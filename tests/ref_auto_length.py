"""`--iters auto` (the default) through the real binary, issue 16 item 1.

(b) An easy frame (32 x 32 crop of the demo's Gaussian frame, gibbs with
    gmrf1 and padding, which needs a longer burn-in and several rounds)
    stops by itself: exit 0, no warnings, summary.json's run_length says
    "converged", with the burn-in and draws that trace.csv holds, and
    --strict still exits 0.
(c) A cap that stops first (the demo's photon frame, 32 x 32, whose delta
    mixes slowly under hmc): --max-iters 1200 (burn-in 200 + the first round
    of 1000) stops after one round with exit 0, warnings, stop "max-iters",
    the failing criterion and a predicted length; exit 3 under --strict.
    --max-time 0.001 stops after a first round cut to its least, 100 draws
    per chain (the burn-in always runs; the cap leaves nothing after it), with
    stop "max-time" -- the outcome needs no timing: 200 hmc iterations take
    far more than a millisecond.
(d) Same seed, same outputs whatever --threads for the auto run of (b)
    that stopped by convergence (4 chains on 1 and 2 threads: on 1 thread
    the chains take turns on one set of buffers between rounds).
(e) batch runs each frame with --iters auto; --resume skips finished frames
    with the same settings, and counts other caps as other settings (the
    settings hash holds the run-length mode and caps).
(f) A converged auto run without a longer burn-in is the fixed run it
    reports: --burn B --iters N from its run_length gives the same bytes
    (rounds of doubling length keep every draw; tests/test_rounds.c checks
    the same inside the library for every kernel).
Thresholds (R-hat 1.01, 100 ESS per chain) are those of Vehtari et al.,
Bayesian Analysis 16 (2021), as sampler.h states.
"""
import csv
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
SRC = pptest.SOURCE
crop = (slice(50, 82), slice(50, 82))
g = tifffile.imread(os.path.join(SRC, "images", "demo_gaussian.tif"))[crop]
ph = tifffile.imread(os.path.join(SRC, "images", "demo_photons.tif"))[crop]
tifffile.imwrite(P("g.tif"), g.astype(np.float32))
tifffile.imwrite(P("ph.tif"), ph.astype(np.float32))
PSF = ["--psf", "gaussian:sigma=1.5"]
FILES = ["mean.tif", "sd.tif", "lo.tif", "hi.tif", "rhat.tif", "mcse.tif", "trace.csv"]


def summary(out):
    with open(os.path.join(out, "summary.json")) as f:
        return json.load(f)


def trace_rows(out):
    with open(os.path.join(out, "trace.csv")) as f:
        return [r for r in csv.reader(f) if r and not r[0].startswith("#")][1:]


# ---- (b) and (d): converged by itself, the same on 1 and 2 threads -------
easy = ["sample", P("g.tif")] + PSF + ["--prior", "gmrf1", "--sampler", "gibbs", "--progress",
                                       "none"]
outs = {}
for th in (1, 2):
    out = P("easy%d" % th)
    p = pptest.run(easy + ["--threads", str(th), "-o", out], check=False)
    pptest.check(p.returncode == 0, "easy frame, %d thread(s): exit 0 (%r)" % (th, p.stderr))
    outs[th] = out
s = summary(outs[1])
L = s["run_length"]
pptest.check(L["mode"] == "auto" and L["stop"] == "converged",
             "easy frame: run_length says auto, converged (%r)" % L)
pptest.check(s["warnings"] == [] and s["convergence"]["converged"],
             "easy frame: no warnings (%r)" % s["warnings"])
pptest.check(L["rounds"] >= 2 and L["failed"] == "" and L["iters_needed"] == 0,
             "easy frame: several rounds, no failed criterion (%r)" % L)
pptest.check(L["burn"] >= 200 and L["burn"] == s["burn"] and L["iters"] == s["iters"],
             "summary's burn/iters are the ones used (%r)" % L)
# the kept draws double each round: 1000 * 2^(rounds-1) per chain
pptest.check(L["kept_per_chain"] == 1000 * 2 ** (L["rounds"] - 1) == s["kept_per_chain"],
             "kept draws per chain double per round (%r)" % L)
rows = trace_rows(outs[1])
pptest.check(len(rows) == 4 * L["kept_per_chain"],
             "trace.csv holds 4 chains x kept rows (%d)" % len(rows))
for f in FILES:
    a = open(os.path.join(outs[1], f), "rb").read()
    b = open(os.path.join(outs[2], f), "rb").read()
    pptest.check(a == b, "auto run, same seed: %s identical on 1 and 2 threads" % f)
pptest.check(summary(outs[2])["run_length"] == L, "run_length identical on 1 and 2 threads")
p = pptest.run(easy + ["--threads", "2", "--strict", "-o", P("easy_strict")], check=False)
pptest.check(p.returncode == 0, "converged auto run under --strict: exit 0 (%d)" % p.returncode)
pptest.check("converged" in p.stderr and "run length" in p.stderr,
             "sample prints the run-length line (%r)" % p.stderr)

# ---- (c) a cap that stops first --------------------------------------------
hard = ["sample", P("ph.tif")] + PSF + ["--noise", "camera:gain=0.5,offset=100,read=1.6",
                                        "--progress", "none"]
for cap, reason, kept in ((["--max-iters", "1200"], "max-iters", 1000),
                          (["--max-time", "0.001"], "max-time", 100)):
    out = P("cap_" + reason)
    p = pptest.run(hard + cap + ["-o", out], check=False)
    pptest.check(p.returncode == 0, "%s: exit 0 without --strict (%r)" % (reason, p.stderr))
    s = summary(out)
    L = s["run_length"]
    pptest.check(L["stop"] == reason and L["rounds"] == 1 and L["kept_per_chain"] == kept,
                 "%s: stopped after the first round, reason in summary.json (%r)" % (reason, L))
    pptest.check(L["failed"] != "" and len(s["warnings"]) > 0 and not s["convergence"]["converged"],
                 "%s: a failed criterion and warnings (%r)" % (reason, L["failed"]))
    pptest.check(L["iters_needed"] > L["iters"] or "R-hat" in L["failed"],
                 "%s: predicted length above the run's, or an R-hat failed (%r)" % (reason, L))
    pptest.check(("stopped at --" + reason) in p.stderr and "not converged" in p.stderr,
                 "%s: sample's line names the cap (%r)" % (reason, p.stderr))
    p = pptest.run(hard + cap + ["--strict", "-o", out + "_strict"], check=False)
    pptest.check(p.returncode == 3, "%s under --strict: exit 3 (got %d)" % (reason, p.returncode))

# ---- (f) the fixed run an auto run reports ---------------------------------
per = ["sample", P("g.tif")] + PSF + ["--prior", "gmrf1", "--boundary", "periodic", "--sampler",
                                      "gibbs", "--progress", "none"]
pptest.run(per + ["-o", P("rep_auto")])
L = summary(P("rep_auto"))["run_length"]
pptest.check(L["stop"] == "converged" and L["rounds"] >= 2 and L["burn_extensions"] == 0,
             "periodic gibbs: converged in rounds, no longer burn-in (%r)" % L)
pptest.run(per + ["--burn", str(L["burn"]), "--iters", str(L["iters"]), "-o", P("rep_fixed")])
for f in FILES:
    a = open(P("rep_auto", f), "rb").read()
    b = open(P("rep_fixed", f), "rb").read()
    pptest.check(a == b, "auto run = --burn %d --iters %d: %s identical" % (L["burn"], L["iters"], f))

# ---- (e) batch and --resume -------------------------------------------------
bin_ = P("batch_in")
os.makedirs(bin_)
tifffile.imwrite(os.path.join(bin_, "a.tif"), g.astype(np.float32))
tifffile.imwrite(os.path.join(bin_, "b.tif"), g[::-1].copy().astype(np.float32))
bargs = ["batch", bin_, "-o", P("batch_out")] + PSF + ["--prior", "gmrf1", "--boundary",
                                                        "periodic", "--jobs", "1"]
p = pptest.run(bargs, check=False)
pptest.check(p.returncode == 0, "batch with --iters auto: exit 0 (%r)" % p.stderr[-300:])
for f in ("a", "b"):
    L = summary(P("batch_out", f))["run_length"]
    pptest.check(L["mode"] == "auto" and L["stop"] == "converged",
                 "batch frame %s: auto, converged (%r)" % (f, L))
before = open(P("batch_out", "a", "mean.tif"), "rb").read()
p = pptest.run(bargs + ["--resume"], check=False)
pptest.check(p.returncode == 0 and "2 skipped" in p.stderr,
             "batch --resume with the same settings skips both frames (%r)" % p.stderr[-300:])
pptest.check(open(P("batch_out", "a", "mean.tif"), "rb").read() == before,
             "--resume leaves the finished frame as it was")
p = pptest.run(bargs + ["--resume", "--max-iters", "5000"], check=False)
pptest.check(p.returncode == 1 and "--overwrite" in p.stderr,
             "batch --resume with another cap refuses without --overwrite (%r)" % p.stderr[-300:])

# ---- a number still means exactly that many ----------------------------------
out = P("fixed")
p = pptest.run(easy + ["--iters", "300", "--burn", "50", "-o", out], check=False)
L = summary(out)["run_length"]
pptest.check(p.returncode == 0 and L["mode"] == "fixed" and L["stop"] == "fixed" and
             L["burn"] == 50 and L["iters"] == 300 and L["rounds"] == 1,
             "--iters 300: fixed, exactly 50 + 300 (%r)" % L)
pptest.done()
