"""Check: warnings that say what they mean (issue 16, item 3), asserted by
text, on small fixed-seed runs.

* Parts: every convergence warning names its part, "hyperparameters:" (the
  global trace columns lambda, delta, loglik, psf_width, kappa) or
  "pixels:" (the probe pixels and the per-pixel R-hat map); summary.json's
  "convergence" counts them per part, names the failing global columns and
  the part that failed; `sample` prints the verdict and the counts.
* A run whose pixel estimates pass every check while delta fails (gibbs,
  --boundary pad, gmrf1, 4000 iterations, seed 1: measured, delta R-hat
  about 1.07, no pixel warning) says plainly that the pixel bounds are
  sound as far as the diagnostics can tell while delta is still moving.
* The iterations to ask for: the same number in every convergence warning
  ("run about N iterations: --iters N"), in summary.json's
  "iters_suggested" and in the verdict, equal to the stated rule recomputed
  here from summary.json's own diagnostics: the largest of 1.25 x iters x
  100 x chains / ESS over the failing bulk- and tail-ESS figures, and 2 x
  iters when an R-hat (a column, or the pixel map) fails; rounded up to two
  significant digits. (The rule is ours, src/sampler_diag.c; the ESS
  figures are the run's own, Vehtari et al. 2021.)
* The number is consistent with the ESS: ESS grows about linearly with the
  draws of a chain past burn-in, so rerunning the same seed with the
  suggested --iters brings every ESS that failed up to the target of 100
  per chain. Tolerance: each rerun figure at least 0.9 x the target. The
  rule aims 25 % above the target; measured on this frame (gibbs,
  periodic, gmrf1, seeds 1-8 at 200 and 400 iterations) the binding figure
  came out 0.99 to 3.5 times the target, so 0.9 leaves room for the ESS
  estimate's own error (~10 % at a few hundred) and for plans that round
  differently. Seeds 1-4 at 200 iterations are checked here.
* report.html: the verdict banner is the first thing after the title, with
  the number of warnings split by part in its text and data attributes and
  the suggested --iters; with warnings, the warnings section comes right
  after it (before the images), grouped by part; a converged run gets one
  quiet line instead of the banner box (issue #19)
  and its warnings section stays near the end.
* A converged run (mtc, periodic, 1000 iterations): failed null,
  iters_suggested null, the verdict starts "converged:".
* A run too short for anything (30 iterations): both parts fail, the
  verdict says "neither", and it never says the bounds are sound.

The frame: beads blurred by pixpost's gaussian:sigma=2 (as
tests/ref_sample_exit.py). Estimated FFT plans (--no-plan-cache), one
thread: the same doubles every time.
"""
import json
import math
import os
import re

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(6)
truth = pptest.beads_truth(rng)
tifffile.imwrite(P("truth.tif"), truth.astype(np.float32))
pptest.run(["simulate", P("truth.tif"), "--psf", "gaussian:sigma=2", "--noise", "gaussian:sigma=2",
            "--seed", "5", "--quiet", "-o", P("beads.tif")])
BASE = ["sample", P("beads.tif"), "--psf", "gaussian:sigma=2", "--prior", "gmrf1", "--burn", "200",
        "--threads", "1", "--no-plan-cache", "--progress", "none"]
ADVICE = re.compile(r"run about (\d+) iterations: --iters (\d+)")


def sample(out, *args):
    p = pptest.run(BASE + list(args) + ["-o", P(out)], check=False)
    pptest.check(p.returncode == 0, "%s: sample exits 0 (got %d%s)"
                 % (out, p.returncode, p.returncode and ": " + p.stderr[-300:] or ""))
    with open(P(out, "summary.json")) as f:
        return json.load(f), p.stderr


def rule(s):
    """The suggested --iters recomputed from summary.json (see the docstring)."""
    chains, now = s["chains"], s["kept_per_chain"] * s["thin"]
    target, need = 100.0 * chains, 0.0
    disagree = any(w.startswith("pixels: ") and "split-R-hat" in w for w in s["warnings"])
    for v in s["diagnostics"]["scalars"].values():
        if v["rhat"] is not None and v["rhat"] > 1.01:
            disagree = True
        for e in ("ess_bulk", "ess_tail"):
            if v[e] is not None and v[e] < target:
                need = max(need, 1.25 * now * target / max(v[e], 1.0))
    if disagree:
        need = max(need, 2.0 * now)
    if need <= 0:
        return None
    p = max(1.0, 10.0 ** (math.floor(math.log10(need)) - 1))
    return int(math.ceil(need / p - 1e-9) * p)


def failing_ess(s):
    t = 100.0 * s["chains"]
    return [(k, e) for k, v in s["diagnostics"]["scalars"].items() for e in ("ess_bulk", "ess_tail")
            if v[e] is not None and v[e] < t]


# ---- hyperparameters fail, pixel estimates pass ---------------------------------
s, err = sample("hyper", "--boundary", "pad", "--iters", "4000", "--seed", "1")
cv, warns = s["convergence"], s["warnings"]
n = cv.get("iters_suggested") or 0
pptest.check(cv.get("failed") == "hyperparameters" and cv.get("hyperparameters") ==
             {"converged": False, "warnings": len(warns), "failing": ["delta"]} and
             cv.get("pixels") == {"converged": True, "warnings": 0},
             "pad, 4000 iterations: the hyperparameters fail (delta), the pixels pass (%r)" % cv)
pptest.check(warns and all(w.startswith("hyperparameters: ") for w in warns) and
             any(w.startswith("hyperparameters: R-hat of delta") for w in warns),
             "every warning names its part, hyperparameters (%r)" % [w[:50] for w in warns])
sound = ("the pixel estimates pass every check, so the pixel bounds are sound as far as the "
         "diagnostics can tell while delta is still moving")
pptest.check(sound in cv.get("verdict", "") and
             cv["verdict"].startswith("not converged: the hyperparameters have not converged (delta)"),
             "the verdict says the pixel bounds are sound while delta is still moving (%r)" % cv.get("verdict"))
pptest.check(isinstance(n, int) and n == rule(s),
             "iters_suggested %r = the stated rule recomputed from the diagnostics (%r)" % (n, rule(s)))
pptest.check(all([(a, b) for a, b in ADVICE.findall(w)] == [(str(n), str(n))] for w in warns),
             "every warning ends with 'run about %s iterations: --iters %s'" % (n, n))
pptest.check(("run about %d iterations: --iters %d" % (n, n)) in cv.get("verdict", ""), "and the verdict too")
pptest.check(("pixpost: verdict: " + cv.get("verdict", "?")) in err and
              ("%d warnings (%d on hyperparameters, 0 on pixels, 0 other) below" % (len(warns), len(warns))) in err,
              "sample prints the verdict and the warnings per part")

with open(P("hyper", "report.html")) as f:
    html = f.read()
m = re.search(r'<div id="verdict" class="verdict bad" data-converged="false" data-warnings="(\d+)" '
              r'data-hyper-warnings="(\d+)" data-pixel-warnings="(\d+)" data-iters-suggested="(\d+)">', html)
pptest.check(m is not None and m.groups() == (str(len(warns)), str(len(warns)), "0", str(n)),
             "report.html: a banner with %d warnings, all on hyperparameters, --iters %s (%r)"
             % (len(warns), n, m and m.groups()))
pos = lambda t: html.find(t) if t in html else 10 ** 9
pptest.check(pos("<h1>") < pos('id="verdict"') < pos('<section id="warnings"') < pos('<section id="images"')
             < pos('<section id="settings"') < 10 ** 9,
             "report.html: title, banner, warnings, then images and the rest")
pptest.check(("%d warnings: %d on hyperparameters, 0 on pixel estimates, 0 other" % (len(warns), len(warns))) in html
             and "<code>--iters %d</code>" % n in html and 'id="warnings-hyper"' in html
             and 'id="warnings-pixels"' not in html,
             "report.html: the banner's text counts and the hyperparameter group")

# ---- the suggested --iters brings the failing ESS up to the target ---------------
ratios = []
for seed in (1, 2, 3, 4):
    a, _ = sample("ess%d_a" % seed, "--boundary", "periodic", "--sampler", "gibbs", "--iters", "200",
                  "--seed", str(seed))
    n = a["convergence"].get("iters_suggested")
    fail = failing_ess(a)
    pptest.check(fail and n == rule(a), "seed %d, 200 iterations: ESS fails (%s), suggested %r = rule %r"
                 % (seed, fail, n, rule(a)))
    if not fail or not n:
        continue
    b, _ = sample("ess%d_b" % seed, "--boundary", "periodic", "--sampler", "gibbs", "--iters", str(n),
                  "--seed", str(seed))
    t = 100.0 * b["chains"]
    r = {"%s %s" % k: b["diagnostics"]["scalars"][k[0]][k[1]] / t for k in fail}
    ratios += list(r.values())
    pptest.check(all(v >= 0.9 for v in r.values()),
                 "seed %d: rerun with --iters %d: every ESS that failed is >= 0.9 x the target "
                 "(ESS / target: %s)" % (seed, n, {k: round(v, 2) for k, v in r.items()}))
pptest.check(ratios and float(np.median(ratios)) >= 1.0,
             "the reruns' failing figures reach the target on the median (%.2f)" % float(np.median(ratios or [0])))

# ---- converged --------------------------------------------------------------------
s, err = sample("conv", "--boundary", "periodic", "--iters", "1000", "--seed", "1")
cv = s["convergence"]
pptest.check(cv["converged"] and cv.get("failed", 0) is None and cv.get("iters_suggested", 0) is None
             and cv.get("hyperparameters", {}).get("converged") and cv.get("pixels", {}).get("converged")
             and cv.get("verdict", "").startswith("converged: "),
             "converged run: failed and iters_suggested null, both parts pass (%r)" % cv)
pptest.check("pixpost: verdict: converged: " in err, "sample prints 'verdict: converged'")
with open(P("conv", "report.html")) as f:
    html = f.read()
pos = lambda t: html.find(t) if t in html else 10 ** 9
pptest.check('<p id="verdict" class="verdict-quiet" data-converged="true" data-warnings="0">'
             in html and 'class="verdict ' not in html and
             pos('id="verdict"') < pos('<section id="images"') < pos('<section id="settings"')
             < pos('<section id="warnings"') < 10 ** 9,
             "converged report: one quiet 'converged' line, no banner box (issue #19), the "
             "warnings section after the settings")

# ---- far too short: both parts ------------------------------------------------------
s, err = sample("short", "--boundary", "periodic", "--sampler", "gibbs", "--iters", "30", "--seed", "1")
cv = s["convergence"]
hyp = sum(w.startswith("hyperparameters: ") for w in s["warnings"])
pix = sum(w.startswith("pixels: ") for w in s["warnings"])
pptest.check(cv.get("failed") == "hyperparameters and pixels"
             and hyp == cv["hyperparameters"]["warnings"] > 0 and pix == cv["pixels"]["warnings"] > 0
             and cv["verdict"].startswith("not converged: neither") and "sound" not in cv["verdict"]
             and cv["iters_suggested"] == rule(s),
             "30 iterations: both parts fail, counted by part (%d, %d), 'neither', no 'sound' (%r)"
             % (hyp, pix, cv.get("verdict")))

pptest.done()
