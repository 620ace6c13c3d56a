"""Hostile options and PSFs through the real binary (`pixpost sample`),
issue 9. Each bad option must give exit 1, one stderr line that names the
option (or spec key) and the accepted form, and write nothing.

Decision on "burn >= total": in pixpost --burn is separate from --iters
(total = burn + iters per chain, and --iters >= 1 is enforced), so a burn-in
can never swallow every draw; --burn 100 --iters 5 is accepted and keeps
exactly floor(iters/thin) draws per chain (checked from
trace.csv and summary.json below). What would make no draw kept is
--thin > --iters, and that is refused.

PSF files (bead images, file:PATH): larger than the frame, all zero, all
negative, pure noise, NaN, missing -> exit 1 naming the problem; even-sized
and off-centre beads -> accepted, and `pixpost psf` shows the kernel is an
odd square, sums to 1 and is centred on the bead (centroid within 0.05 px
of the middle pixel; the bead is a sampled Gaussian, numpy below).
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(12)
frame = P("frame.tif")
tifffile.imwrite(frame, (100 + 5 * rng.standard_normal((32, 32))).astype(np.float32))
BASE = ["sample", frame, "-o", P("out")]  # every case fails before sampling


def expect_fail(extra, words, what, base=None):
    p = pptest.run((base or BASE) + extra, check=False)
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s: exit 1 (got %d: %r)" % (what, p.returncode, p.stderr))
    pptest.check(len(lines) == 1, "%s: one stderr line (got %r)" % (what, p.stderr))
    for w in words:
        pptest.check(w in p.stderr, "%s: message has %r (%r)" % (what, w, p.stderr.strip()))
    pptest.check(not os.path.exists(P("out")), "%s: nothing written" % what)


G = ["--psf", "gaussian:sigma=1"]
cases = [
    # counts: negative, zero, malformed, overflow, missing values
    (["--iters", "-3"], ["--iters", "negative", "whole number >= 1"]),
    (["--iters", "0"], ["--iters", "zero", ">= 1"]),
    (["--iters", "1e3"], ["--iters", "'1e3'", "whole number"]),
    (["--iters", "5x"], ["--iters", "'5x'", "whole number"]),
    (["--iters", ""], ["--iters", "whole number"]),
    (["--iters"], ["--iters", "needs a value", "--iters auto|N"]),
    (["--iters", "autox"], ["--iters", "'autox'", "auto|N", "whole number >= 1"]),
    # run-length caps (issue 16): --max-time T[s|m|h] > 0, --max-iters N, auto only
    (["--max-time", "0"], ["--max-time", "'0'", "a time > 0", "s, m or h"]),
    (["--max-time", "-5"], ["--max-time", "'-5'", "a time > 0"]),
    (["--max-time", "5x"], ["--max-time", "'5x'", "a time > 0"]),
    (["--max-time", "m"], ["--max-time", "'m'", "a time > 0"]),
    (["--max-time", "1e400"], ["--max-time", "'1e400'", "a time > 0"]),
    (["--max-time", ""], ["--max-time", "a time > 0"]),
    (["--max-iters", "0"], ["--max-iters", "zero"]),
    (["--max-iters", "1.5e4"], ["--max-iters", "whole number"]),
    (["--max-iters", "500"], ["--max-iters", "500 is below --burn + the first round",
                              ">= 1200"]),
    (["--iters", "100", "--max-time", "5m"], ["--max-time", "applies to --iters auto only"]),
    (["--iters", "100", "--max-iters", "5000"], ["--max-iters", "applies to --iters auto"]),
    (["--chains", "0"], ["--chains", "from 1 to 4096"]),
    (["--chains", "-2"], ["--chains", "negative"]),
    (["--chains", "99999"], ["--chains", "too large", "from 1 to 4096"]),
    (["--thin", "0"], ["--thin", "zero"]),
    (["--thin", "-1"], ["--thin", "negative"]),
    (["--iters", "6", "--thin", "7"], ["--thin", "larger than --iters", "1 <= N <= --iters"]),
    (["--burn", "-1"], ["--burn", "negative", ">= 0"]),
    (["--seed", "18446744073709551616"], ["--seed", "too large"]),
    (["--threads", "-1"], ["--threads", "negative"]),
    (["--max-pixels", "0"], ["--max-pixels", "zero"]),
    # reals
    (["--level", "1"], ["--level", "> 0 and < 1"]),
    (["--level", "nan"], ["--level", "> 0 and < 1"]),
    (["--level", "0.9.5"], ["--level", "'0.9.5'"]),
    (["--hyper-lambda", "1"], ["--hyper-lambda", "A,B"]),
    (["--hyper-delta", "1,-2"], ["--hyper-delta", "A,B", ">= 0"]),
    (["--hyper-delta", "1,inf"], ["--hyper-delta", "A,B"]),
    # specs: unknown keys, duplicate keys, malformed numbers, missing values
    (["--noise", "gaussian:sgima=2"], ["--noise", "unknown key 'sgima'", "accepted"]),
    (["--noise", "gaussian:sigma=1,sigma=2"], ["--noise", "'sigma' is given twice"]),
    (["--noise", "gaussian:sigma=1..5"], ["--noise", "'sigma=1..5' is not a number"]),
    (["--noise", "gaussian:sigma"], ["--noise", "key=value"]),
    (["--noise", "gaussian:sigma="], ["--noise", "key=value"]),
    (["--noise", "gaussian:sigma=-1"], ["--noise", "sigma", "> 0"]),
    (["--noise", "poisson:gain=0"], ["--noise", "gain", "> 0"]),
    (["--noise", "none"], ["--noise", "simulate only"]),
    (["--prior", "gmrf3"], ["--prior", "unknown prior", "accepted: gmrf1, gmrf2"]),
    (["--prior", "gmrf1:delta=abc"], ["--prior", "'delta=abc' is not a number"]),
    (["--prior", "matern:range=0,nu=1"], ["--prior", "range", "> 0"]),
    (["--prior", "matern:range=3,nu=1,"], ["--prior", "trailing ','"]),
    (["--psf", "gaussian:sigma=1,sigma=1"], ["--psf", "'sigma' is given twice"]),
    (["--psf", "gaussian:sigma=1e999"], ["--psf", "not a number"]),
    (["--psf", "gaussian"], ["--psf", "missing sigma=", "gaussian:sigma=S"]),
    # a key typed instead of sigma is named as itself, not as a missing sigma=
    (["--psf", "gaussian:width=1"], ["--psf", "unknown key 'width'", "accepted: sigma"]),
    (["--psf", "gaussian:sigma=1,width=1"], ["--psf", "unknown key 'width'", "accepted"]),
    (["--psf", "airy:na=1.4"], ["--psf", "airy"]),
    (["--psf", "file:"], ["--psf", "missing the path"]),
    (["--psf", ""], ["--psf", "empty"]),
    (["--psf"], ["--psf", "needs a value"]),
    # enumerations, unknown options, conflicting flags, repeats
    (["--sampler", "foo"], ["--sampler", "'foo'", "accepted"]),
    (["--boundary", "x"], ["--boundary", "pad or periodic"]),
    (["--channel", "q"], ["--channel", "r, g, b or luma"]),
    (["--progress", "fancy"], ["--progress", "bar|plain|none"]),
    (["--bogus", "1"], ["--bogus", "unknown option"]),
    (["--progress", "plain", "--quiet"], ["--quiet", "--progress", "together"]),
    (["--sampler", "gibbs", "--noise", "poisson:gain=1,offset=0"], ["--sampler gibbs",
                                                                     "gaussian noise"]),
    (["--iters", "5", "--iters", "6"], ["--iters", "given twice"]),
    # the adaptive prior runs with gibbs and hmc only (src/sampler.c check_config)
    (["--prior", "adaptive", "--sampler", "pcn", "--noise", "poisson:gain=1,offset=0"],
     ["--sampler pcn", "adaptive prior", "hmc", "--prior gmrf1"]),
    (["--prior", "adaptive", "--sampler", "gpcn", "--noise", "poisson:gain=1,offset=0"],
     ["--sampler gpcn", "adaptive prior", "hmc", "--prior gmrf1"]),
]
for extra, words in cases:
    has_psf = "--psf" in extra
    expect_fail((extra if has_psf else G + extra), words, "sample %s" % " ".join(extra))
expect_fail([], ["--psf", "required"], "sample without --psf")
expect_fail(G, ["-o OUTDIR", "required"], "sample without -o",
            base=["sample", frame, "--quiet"])
expect_fail(G, ["FRAME"], "sample without FRAME", base=["sample", "-o", P("out"), "--quiet"])
expect_fail(G + ["-o", ""], ["empty folder name"], "sample -o ''", base=["sample", frame])

# ---- burn >= iters is accepted: burn-in is on top of the kept iterations --
out = P("burn")
p = pptest.run(["sample", frame, "-o", out, "--psf", "gaussian:sigma=1", "--iters", "5",
                "--burn", "100", "--thin", "2", "--chains", "3", "--threads", "1", "--quiet"],
               check=False)
pptest.check(p.returncode == 0, "--burn 100 --iters 5: accepted (burn is separate) %r" % p.stderr)
if p.returncode == 0:
    with open(os.path.join(out, "summary.json")) as f:
        s = json.load(f)
    with open(os.path.join(out, "trace.csv")) as f:
        rows = f.read().splitlines()[1:]
    pptest.check(s["burn"] == 100 and s["iters"] == 5 and s["kept_per_chain"] == 2,
                 "summary.json: burn 100, iters 5, 2 kept per chain (5 // 2)")
    pptest.check(len(rows) == 3 * 2, "trace.csv: 3 chains x 2 kept rows (got %d)" % len(rows))

# ---- PSF files ----------------------------------------------------------------


def bead(cy, cx, s=1.2, shape=(15, 15)):
    yy, xx = np.mgrid[0:shape[0], 0:shape[1]]
    return np.exp(-((yy - cy) ** 2 + (xx - cx) ** 2) / (2 * s * s))


def psf_file(name, a):
    tifffile.imwrite(P(name), np.asarray(a, np.float64))
    return ["--psf", "file:" + P(name)]


nan_bead = bead(7, 7)
nan_bead[7, 7] = np.nan
psf_cases = [
    ("big.tif", np.pad(bead(7, 7), 20), ["55x55", "larger", "32x32"]),
    ("zero.tif", np.zeros((9, 9)), ["zero.tif", "border median"]),
    ("negative.tif", -bead(7, 7), ["negative.tif", "bead image"]),
    ("noise.tif", rng.standard_normal((15, 15)), ["noise.tif", "bead image"]),
    ("nan.tif", nan_bead, ["nan.tif", "NaN/Inf"]),
]
for name, a, words in psf_cases:
    expect_fail(psf_file(name, a), words, "PSF file %s" % name)
expect_fail(["--psf", "file:" + P("missing.tif")], ["missing.tif", "cannot open"],
            "PSF file that does not exist")
expect_fail(["--psf", "file:" + frame], ["frame.tif"], "the frame itself as a PSF (noise, no bead)")

accepted = {
    "even.tif": bead(6.5, 6.5, shape=(14, 14)),     # even-sized, bead between pixels
    "offcentre.tif": bead(4, 10, shape=(15, 15)) + 0.01,  # bead off the middle, background
    "spike.tif": np.where(bead(7, 7) > 0.99, -5, bead(7, 7)),  # a negative pixel is clipped
}
for name, a in accepted.items():
    spec = psf_file(name, a)
    p = pptest.run(["sample", frame, "-o", P("ok_" + name), "--iters", "6", "--chains", "2",
                    "--quiet"] + spec, check=False)
    pptest.check(p.returncode == 0, "PSF file %s accepted by sample (%r)" % (name, p.stderr))
    k = P("k_" + name)
    p = pptest.run(["psf", spec[1], "-o", k, "--quiet"], check=False)
    pptest.check(p.returncode == 0, "pixpost psf %s (%r)" % (name, p.stderr))
    if p.returncode != 0:
        continue
    kern = tifffile.imread(k).astype(np.float64)
    r = kern.shape[0] // 2
    yy, xx = np.mgrid[0:kern.shape[0], 0:kern.shape[1]] - r
    cy, cx = (kern * yy).sum() / kern.sum(), (kern * xx).sum() / kern.sum()
    pptest.check(kern.shape[0] == kern.shape[1] and kern.shape[0] % 2 == 1,
                 "%s: kernel is an odd square %r" % (name, kern.shape))
    pptest.check(abs(kern.sum() - 1) < 1e-5 and kern.min() >= 0,
                 "%s: kernel sums to 1 (float32 file) and is non-negative" % name)
    # even-sized: the true centre is 0.5 px off any pixel, the kernel is
    # centred on the nearest pixel, so |offset| <= 0.5 there
    tol = 0.5 + 1e-6 if name == "even.tif" else 0.05
    pptest.check(abs(cy) <= tol and abs(cx) <= tol,
                 "%s: kernel centred on the bead (centroid %.3f, %.3f; tol %.2f)"
                 % (name, cy, cx, tol))

pptest.done()
