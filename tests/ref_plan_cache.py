"""The per-user FFT plan cache through the real binary (issue 14, item 9).

- Where it lives: $XDG_CACHE_HOME/pixpost/fftw-wisdom, else
  $HOME/.cache/pixpost/fftw-wisdom (XDG Base Directory specification: a
  relative $XDG_CACHE_HOME is ignored).
- First run of a size: plans measured and saved ("fft_plans": "measured,
  saved to cache" in summary.json); second run: "measured, from cache";
  --no-plan-cache: "estimated" and no cache file; --wisdom FILE overrides.
- A cache that cannot be read (its folder is a file) or holds junk: exit 0,
  exactly one stderr line, a note naming the cache; junk is replaced by
  valid wisdom.
- Four processes of four sizes started together on one empty cache: all
  exit 0, the file is valid wisdom holding all four (a fifth round of the
  same four reports "from cache" for each: none lost another's plans).
- batch uses the cache: of two frames of one size, the first measures and
  saves, the second loads.
- Reproducibility, both halves of the README's statement: same seed and
  same plans (one cache) -> byte-identical mean.tif with --threads 1 and 2;
  cache vs --no-plan-cache (different plans: on the 144 x 144 periodic grid
  used here FFTW's ESTIMATE plans are another algorithm, 12x slower than
  the measured ones, bench/fft_sizes.txt) -> equal to rounding. The
  tolerance: mean.tif is float32, so two runs whose doubles differ in the
  last bits can round a pixel to neighbouring floats: |a - b| <= 2 ulp of
  float32 at the image's scale (2^-22 max|a|). The double-precision summary
  figures (posterior means of lambda, delta) agree to 1e-9 relative: the
  FFTs differ by ~1e-16 relative per transform, and gibbs (no
  accept/reject step; the gamma draws are continuous in their rate) carries
  such differences through a run without amplifying them beyond ~1e-12 in
  these runs; 1e-9 leaves a margin.
"""
import json
import os
import subprocess

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(14)
ARGS = ["--psf", "gaussian:sigma=1.2", "--iters", "40", "--burn", "10", "--chains", "2",
        "--seed", "5", "--progress", "none"]


def frame(h, w):
    path = P("frame_%dx%d.tif" % (h, w))
    if not os.path.exists(path):
        y = 100 + 20 * np.sin(np.arange(h)[:, None] / 5.0) + 5 * rng.standard_normal((h, w))
        tifffile.imwrite(path, y.astype(np.float32))
    return path


def env(**kv):
    e = dict(os.environ)
    e.pop("XDG_CACHE_HOME", None)
    e.update(kv)
    return e


def sample(out, e, *extra, h=40, w=44, threads=1):
    p = subprocess.run([pptest.BIN, "sample", frame(h, w), "-o", P(out), "--threads",
                        str(threads)] + ARGS + list(extra), capture_output=True, text=True, env=e)
    s = None
    if p.returncode == 0:
        with open(P(out, "summary.json")) as f:
            s = json.load(f)
    return p, s


def notes(stderr):
    """The note lines (sample also prints its result and warnings on stderr)."""
    return [l for l in stderr.splitlines() if l.startswith("pixpost: note:")]


def plans(s):
    return s.get("fft_plans") if s else None


def valid_wisdom(path):
    with open(path) as f:
        text = f.read()
    return text.startswith("(fftw-3") and text.count("(") == text.count(")")


# ---- first and second run, XDG_CACHE_HOME ---------------------------------
xdg = P("xdg")
wis = os.path.join(xdg, "pixpost", "fftw-wisdom")
e = env(XDG_CACHE_HOME=xdg, HOME=P("home_unused"))
R = ["--boundary", "periodic", "--sampler", "gibbs"]
p1, s1 = sample("run1", e, *R, h=144, w=144)
pptest.check(p1.returncode == 0 and plans(s1) == "measured, saved to cache",
             "first run: plans measured and saved (%s; %s)" % (plans(s1), p1.stderr.strip()))
pptest.check(os.path.isfile(wis) and valid_wisdom(wis),
             "the cache is $XDG_CACHE_HOME/pixpost/fftw-wisdom, valid FFTW wisdom")
pptest.check(not os.path.exists(P("home_unused")), "$HOME is not touched when XDG_CACHE_HOME is set")
p2, s2 = sample("run2", e, *R, h=144, w=144)
pptest.check(p2.returncode == 0 and plans(s2) == "measured, from cache",
             "second run: plans from the cache (%s)" % plans(s2))
pptest.check(notes(p1.stderr) == [] and notes(p2.stderr) == [], "no note when the cache works")
p3, s3 = sample("run3", e, *R, h=144, w=144, threads=2)
m1, m2, m3 = (tifffile.imread(P(r, "mean.tif")) for r in ("run1", "run2", "run3"))
with open(P("run2", "mean.tif"), "rb") as a, open(P("run3", "mean.tif"), "rb") as b:
    same = a.read() == b.read()
pptest.check(same and np.array_equal(m1, m2),
             "same seed, same plans: mean.tif byte-identical with --threads 1 and 2 "
             "(and between the measuring run and the run from the cache)")

# ---- --no-plan-cache: estimated plans, equal to rounding ---------------------
xdg_off = P("xdg_off")
p4, s4 = sample("run4", env(XDG_CACHE_HOME=xdg_off), "--no-plan-cache", *R, h=144, w=144)
pptest.check(p4.returncode == 0 and plans(s4) == "estimated" and not os.path.exists(xdg_off),
             "--no-plan-cache: estimated plans, no cache folder made (%s)" % plans(s4))
m4 = tifffile.imread(P("run4", "mean.tif"))
tol = 2.0 ** -22 * float(np.abs(m1).max())
err = float(np.abs(m4.astype(np.float64) - m1).max())
pptest.check(err <= tol, "cache vs --no-plan-cache: mean.tif equal to 2 float32 ulp "
             "(max |diff| %.3g, tolerance %.3g)" % (err, tol))
for k in ("lambda", "delta"):
    a, b = s1["hyper"][k]["mean"], s4["hyper"][k]["mean"]
    pptest.check(abs(a - b) <= 1e-9 * abs(a), "cache vs --no-plan-cache: posterior mean of %s "
                 "equal to 1e-9 relative (%.17g vs %.17g)" % (k, a, b))

# ---- HOME fallback, relative XDG_CACHE_HOME ignored ---------------------------
home = P("home")
p5, s5 = sample("run5", env(HOME=home, XDG_CACHE_HOME="relative/cache"))
pptest.check(p5.returncode == 0 and os.path.isfile(os.path.join(home, ".cache", "pixpost",
                                                              "fftw-wisdom"))
             and not os.path.exists("relative"),
             "no absolute XDG_CACHE_HOME: the cache is ~/.cache/pixpost/fftw-wisdom")

# ---- --wisdom FILE overrides the cache ----------------------------------------
xdg_w = P("xdg_w")
wfile = P("my.wisdom")
p6, s6 = sample("run6", env(XDG_CACHE_HOME=xdg_w), "--wisdom", wfile)
p7, s7 = sample("run7", env(XDG_CACHE_HOME=xdg_w), "--wisdom", wfile)
pptest.check(plans(s6) == "measured, saved to --wisdom file" and
             plans(s7) == "measured, from --wisdom file" and valid_wisdom(wfile) and
             not os.path.exists(xdg_w),
             "--wisdom FILE: saved then loaded, the cache untouched (%s, %s)" %
             (plans(s6), plans(s7)))

# ---- a cache that cannot be read: one note, exit 0 ------------------------------
bad = P("xdg_bad")
os.makedirs(bad)
with open(os.path.join(bad, "pixpost"), "w") as f:
    f.write("a file where the cache folder should be\n")
p8, s8 = sample("run8", env(XDG_CACHE_HOME=bad))
lines = notes(p8.stderr)
pptest.check(p8.returncode == 0 and len(lines) == 1
             and "plan cache" in lines[0] and os.path.join(bad, "pixpost") in lines[0]
             and plans(s8) == "estimated",
             "unreadable cache: exit 0, one note naming it, estimated plans (%d: %r)" %
             (p8.returncode, lines))
p9, _ = sample("run9", env(XDG_CACHE_HOME=bad), "--quiet")
pptest.check(p9.returncode == 0 and p9.stderr == "", "--quiet silences the note")

# ---- junk in the cache: one note, replaced by valid wisdom ---------------------
junk = P("xdg_junk")
os.makedirs(os.path.join(junk, "pixpost"))
jw = os.path.join(junk, "pixpost", "fftw-wisdom")
with open(jw, "w") as f:
    f.write("not wisdom\n")
p10, s10 = sample("run10", env(XDG_CACHE_HOME=junk))
lines = notes(p10.stderr)
pptest.check(p10.returncode == 0 and len(lines) == 1 and jw in lines[0] and
             "replaced" in lines[0] and valid_wisdom(jw) and
             plans(s10) == "measured, saved to cache",
             "junk cache: exit 0, one note, replaced by valid wisdom (%r)" % lines)

# ---- concurrent writers ----------------------------------------------------------
conc = P("xdg_conc")
sizes = [(36, 36), (44, 50), (52, 56), (60, 66)]
cw = os.path.join(conc, "pixpost", "fftw-wisdom")
for h, w in sizes:
    frame(h, w)
procs = [subprocess.Popen([pptest.BIN, "sample", frame(h, w), "-o", P("conc_%d" % h),
                           "--threads", "1"] + ARGS, stdout=subprocess.PIPE,
                          stderr=subprocess.PIPE, text=True, env=env(XDG_CACHE_HOME=conc))
         for h, w in sizes]
outs = [(p.wait(), p.stderr.read()) for p in procs]
pptest.check(all(rc == 0 and notes(err) == [] for rc, err in outs),
             "four writers at once: all exit 0 without a note (%s)" % [(rc, notes(e)) for rc, e in outs])
pptest.check(os.path.isfile(cw) and valid_wisdom(cw) and
             not [f for f in os.listdir(os.path.dirname(cw)) if ".tmp." in f],
             "four writers at once: the cache is valid wisdom, no temporary file left")
again = [plans(sample("conc2_%d" % h, env(XDG_CACHE_HOME=conc), h=h, w=w)[1])
         for h, w in sizes]
pptest.check(again == ["measured, from cache"] * 4,
             "after four writers at once the cache holds all four sizes' plans (%s)" % again)

# ---- batch uses the cache too ---------------------------------------------------
bdir = P("batch_in")
os.makedirs(bdir)
for name in ("a", "b"):
    y = 100 + 5 * rng.standard_normal((38, 42))
    tifffile.imwrite(os.path.join(bdir, name + ".tif"), y.astype(np.float32))
pb = subprocess.run([pptest.BIN, "batch", bdir, "-o", P("batch_out"), "--jobs", "1",
                     "--threads", "1"] + ARGS, capture_output=True, text=True,
                    env=env(XDG_CACHE_HOME=P("xdg_batch")))
got = []
for name in ("a", "b"):
    try:
        with open(P("batch_out", name, "summary.json")) as f:
            got.append(json.load(f).get("fft_plans"))
    except OSError:
        got.append(None)
pptest.check(pb.returncode == 0 and got == ["measured, saved to cache", "measured, from cache"],
             "batch: the first frame measures and saves, the second loads (%s)" % got)
pptest.done()
