"""The memory check before sampling (--memory-limit; src/cli/memcheck.c).

1. A run above the limit is refused before anything is written: exit 1,
   one line on stderr naming the file, what the run needs and the ways out
   (--threads 1 only when it runs on more than one thread), no output
   folder; a limit it fits runs. Malformed limits are refused naming the
   option (the README's exit codes: 1 = input or usage error). In batch
   with --jobs 2 the limit holds both frames at once: a limit of 1.5x one
   frame's need passes --jobs 1 and refuses --jobs 2.
2. The estimate against the truth: the peak resident memory of the same
   run, measured by the kernel (tests/probe_peak_rss.c: getrusage's
   ru_maxrss of the child, KiB on Linux, getrusage(2)). For frames and a volume, gibbs (gmrf1 and the adaptive
   prior, pad and periodic), mtc, hmc and gpcn, fixed and --iters auto
   lengths: the estimate must be at least 0.97 of the peak (a run the
   check lets through must not need more; 3 % for the C library's arenas,
   which the estimate does not see) and at most 2 times it (a run the
   machine could hold should not be refused). This band is skipped in
   the sanitizer build only: there the check reads AddressSanitizer's own
   count of allocated bytes (it replaces malloc), so part 1 holds, but its
   shadow memory and redzones multiply the resident size; the plain
   build, which users run, checks the band.
"""
import csv
import os
import re
import subprocess

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(4242)


def frame(name, shape, noise, psf, extra=()):
    truth = 20.0 + 60.0 * rng.random(shape).astype(np.float32)
    tp = os.path.join(tmp, name + "_truth.tif")
    yp = os.path.join(tmp, name + ".tif")
    tifffile.imwrite(tp, truth, metadata={"axes": "ZYX"} if len(shape) == 3 else None)
    pptest.run(["simulate", tp, "--psf", psf, "--noise", noise, "--seed", 5, "--quiet", "-o",
                yp] + list(extra))
    return yp


GAUSS = "gaussian:sigma=2"
CAMERA = "camera:gain=2,offset=100,read=1.5"
f2 = frame("f2", (160, 192), GAUSS, "gaussian:sigma=1.5")
fc = frame("fc", (160, 192), CAMERA, "gaussian:sigma=1.5")
fv = frame("fv", (10, 64, 80), GAUSS, "gaussian:sigma=1.5,sigma_z=1", ["--pages", "z"])

# 1. refusal and parsing
out = os.path.join(tmp, "refused")
p = pptest.run(["sample", f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS, "--iters", 5,
                "--burn", 5, "--threads", 2, "--memory-limit", "1M", "-o", out], check=False)
lines = p.stderr.strip().splitlines()
pptest.check(p.returncode == 1, "a run above --memory-limit 1M exits 1 (got %d)" % p.returncode)
pptest.check(len(lines) == 1 and f2 in lines[0] and "needs about" in lines[0] and
             "--memory-limit" in lines[0] and "--threads 1" in lines[0] and
             "--chains" in lines[0],
             "one line naming the file, the need, --threads 1, --chains and the limit: %r"
             % p.stderr.strip())
pptest.check(not os.path.exists(out), "nothing written (no output folder)")
p = pptest.run(["sample", f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS, "--iters", 5,
                "--burn", 5, "--threads", 1, "--memory-limit", "1M", "-o", out], check=False)
pptest.check(p.returncode == 1 and "--threads 1" not in p.stderr,
             "on one thread the refusal does not offer --threads 1: %r" % p.stderr.strip())
p = pptest.run(["sample", f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS, "--iters", 5,
                "--burn", 5, "--memory-limit", "4G", "-o", out], check=False)
pptest.check(p.returncode == 0 and os.path.exists(os.path.join(out, "mean.tif")),
             "a run within --memory-limit 4G runs and writes its outputs (exit %d)"
             % p.returncode)
for bad in ("12Q", "-5", "0.5", "G", "1.5GB", ""):
    p = pptest.run(["sample", f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS,
                    "--memory-limit", bad, "-o", os.path.join(tmp, "bad")], check=False)
    pptest.check(p.returncode == 1 and "--memory-limit" in p.stderr and
                 len(p.stderr.strip().splitlines()) == 1,
                 "--memory-limit %r refused naming the option: %r" % (bad, p.stderr.strip()))

# batch --jobs N: N frames at once, the room is theirs together
bin_ = os.path.join(tmp, "bin")
os.makedirs(bin_)
for k in (1, 2):
    os.link(f2, os.path.join(bin_, "f%d.tif" % k))
p = pptest.run(["sample", f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS, "--iters", 5,
                "--burn", 5, "--threads", 1, "--memory-limit", "1K", "-o", out], check=False)
m = re.search(r"needs about ([0-9.]+) MiB", p.stderr)
pptest.check(m is not None, "the need is printed in MiB: %r" % p.stderr.strip())
one = float(m.group(1))
lim = "%dM" % int(one * 1.5)  # one frame fits, two at once do not
for jobs, ok in ((1, True), (2, False)):
    bo = os.path.join(tmp, "bout%d" % jobs)
    p = pptest.run(["batch", bin_, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS, "--iters", 5,
                    "--burn", 5, "--threads", jobs, "--jobs", jobs, "--memory-limit", lim, "-o",
                    bo], check=False)
    with open(os.path.join(bo, "index.csv"), newline="") as fh:
        rows = list(csv.DictReader(fh))
    status = [r["status"] for r in rows]
    text = " ".join(r["message"] for r in rows)
    if ok:
        pptest.check(p.returncode == 0 and status == ["done", "done"],
                     "batch --jobs 1 under --memory-limit %s (1.5x one frame's %.1f MiB): both "
                     "frames done (exit %d)" % (lim, one, p.returncode))
    else:
        pptest.check(p.returncode == 2 and status == ["failed", "failed"] and
                     text.count("for the 2 frames --jobs runs at once") == 2 and
                     "fewer --jobs" in text,
                     "batch --jobs 2 under the same limit: both frames refused, the message "
                     "counting the 2 frames and offering fewer --jobs (exit %d)" % p.returncode)

# 2. the estimate against the measured peak
def sanitized():
    p = subprocess.run(["ldd", pptest.BIN], capture_output=True, text=True)
    return "libasan" in p.stdout or "libubsan" in p.stdout


def estimate(args):
    p = pptest.run(["sample"] + args + ["--memory-limit", "1K", "-o",
                                        os.path.join(tmp, "est")], check=False)
    m = re.search(r"needs about ([0-9.]+) (MiB|GiB)", p.stderr)
    assert m, "no estimate in %r" % p.stderr
    return float(m.group(1)) * (1024.0 if m.group(2) == "GiB" else 1.0)


def peak(args):
    """The run's peak resident memory in MiB (tests/probe_peak_rss.c)."""
    out = os.path.join(tmp, "peak")
    r = pptest.probe("peak_rss", [pptest.BIN, "sample"] + args +
                     ["--memory-limit", "off", "--overwrite", "--quiet", "-o", out])
    status, kib = r.split()[-2:]
    assert status in ("0", "3"), "the run failed: exit %s" % status
    return int(kib) / 1024.0


if sanitized():
    print("NOTE sanitizer build: the estimate's band against the peak is checked in the plain "
          "build only (ASan's shadow memory and redzones)")
else:
    G2 = [f2, "--psf", "gaussian:sigma=1.5", "--noise", GAUSS]
    C2 = [fc, "--psf", "gaussian:sigma=1.5", "--noise", CAMERA]
    V = [fv, "--pages", "z", "--psf", "gaussian:sigma=1.5,sigma_z=1", "--noise", GAUSS]
    cases = [
        ("gibbs adaptive pad", G2 + ["--iters", 10, "--burn", 10]),
        ("mtc gmrf1 periodic", G2 + ["--prior", "gmrf1", "--boundary", "periodic", "--iters", 20,
                                     "--burn", 10]),
        ("gibbs gmrf1 pad, 1 thread", G2 + ["--prior", "gmrf1", "--threads", 1, "--iters", 20,
                                            "--burn", 10]),
        ("hmc matern pad", C2 + ["--iters", 10, "--burn", 40]),
        ("hmc adaptive pad", C2 + ["--prior", "adaptive", "--iters", 10, "--burn", 40]),
        ("gpcn matern periodic", C2 + ["--sampler", "gpcn", "--boundary", "periodic", "--iters",
                                       10, "--burn", 40]),
        ("volume gibbs gmrf1 pad", V + ["--prior", "gmrf1", "--iters", 10, "--burn", 10]),
        ("gibbs gmrf1 pad, --iters auto, 4 chains on 2 threads (park stores)",
         G2 + ["--prior", "gmrf1", "--threads", 2, "--burn", 20, "--max-time", 1]),
    ]
    for label, args in cases:
        e, m = estimate(args), peak(args)
        pptest.check(0.97 * m <= e <= 2.0 * m,
                     "%s: estimate %.1f MiB, measured peak %.1f MiB (ratio %.2f; "
                     "band 0.97-2)" % (label, e, m, e / m))
pptest.done()
