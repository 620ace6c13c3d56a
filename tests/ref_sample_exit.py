"""The exit statuses of `pixpost sample` that scripts rely on (issue 14
items 6 and 7; DESIGN.md section 6).

--strict exits 3 on convergence warnings only. The note that the PSF's
transfer function is zero at some frequencies (every Gaussian PSF of sigma
>= ~1.5 px) is information: it goes to summary.json "notes", not
"warnings", and a converged run with gaussian:sigma=2 exits 0 under
--strict. A run too short to converge (--iters 20) still exits 3.

SIGINT and SIGTERM while sampling: exit 128 + the signal number (130, 143,
as a shell reports a process killed by the signal, and as batch does), one
line naming the frame and the signal, and no result file in the output
folder. The signal is sent once the progress display has started (the
sampler is running); the run would take minutes otherwise.

Frames are made with numpy and written with tifffile (outside writers).
"""
import json
import os
import signal
import subprocess

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(6)

# ---- --strict and notes ---------------------------------------------------------
# Beads on a flat background, blurred by pixpost's own gaussian:sigma=2 with
# periodic boundaries: mtc (the default for gaussian noise, periodic
# boundaries with a stationary prior) draws nearly independent samples, so 1000 iterations give an
# ESS far above the 100-per-chain threshold (measured: worst R-hat 1.001,
# lowest bulk-ESS ~3200 on such a frame, seed 1).
truth = pptest.beads_truth(rng)
tifffile.imwrite(P("truth.tif"), truth.astype(np.float32))
pptest.run(["simulate", P("truth.tif"), "--psf", "gaussian:sigma=2", "--noise",
            "gaussian:sigma=2", "--boundary", "periodic", "--seed", "5", "--quiet",
            "-o", P("beads.tif")])
# (--prior gmrf1: mtc needs a stationary prior; the adaptive default's
# convergence is measured in the README's calibration table.)
RUN = ["sample", P("beads.tif"), "--psf", "gaussian:sigma=2", "--boundary", "periodic",
       "--burn", "200", "--seed", "1", "--threads", "1", "--prior", "gmrf1", "--strict"]
p = pptest.run(RUN + ["--iters", "1000", "-o", P("conv")], check=False)
with open(P("conv", "summary.json")) as f:
    summary = json.load(f)
notes, warns = summary.get("notes"), summary.get("warnings")
pptest.check(p.returncode == 0, "converged run, sigma 2 PSF, --strict: exit 0 (got %d; "
             "warnings %r)" % (p.returncode, warns))
pptest.check(isinstance(notes, list) and any("transfer function" in n for n in notes),
             "summary.json has the transfer-function note under \"notes\" (%r)" % notes)
pptest.check(isinstance(warns, list) and not any("transfer function" in w for w in warns),
             "and not under \"warnings\" (%r)" % warns)
pptest.check("note: the PSF's transfer function" in p.stderr and "no convergence warnings"
             in p.stderr, "the verdict says no convergence warnings and prints the note "
             "(%r)" % p.stderr)
with open(P("conv", "report.html")) as f:
    html = f.read()
pptest.check('id="notes-list"' in html and 'id="warnings-none"' in html,
             "report.html: the note in its own list, no warnings")

p = pptest.run(RUN + ["--iters", "20", "-o", P("short")], check=False)
with open(P("short", "summary.json")) as f:
    warns = json.load(f)["warnings"]
pptest.check(p.returncode == 3 and warns, "20 iterations, --strict: exit 3 with warnings (got "
             "%d, %d warnings)" % (p.returncode, len(warns)))
p = pptest.run(RUN[:-1] + ["--iters", "20", "-o", P("short")], check=False)
pptest.check(p.returncode == 0, "the same without --strict: exit 0 (got %d)" % p.returncode)

# ---- interrupted by a signal -------------------------------------------------------
# 256x256, 2 chains of 200000 iterations: minutes of work, so the signal always
# lands while sampling. --progress bar draws from the first 0.5 %.
tifffile.imwrite(P("big.tif"), (100 + 5 * rng.standard_normal((256, 256))).astype(np.float32))
RESULTS = {"mean.tif", "sd.tif", "lo.tif", "hi.tif", "rhat.tif", "mcse.tif", "mean.png",
           "sd.png", "summary.json", "trace.csv", "report.html"}
for sig, name in [(signal.SIGINT, "SIGINT"), (signal.SIGTERM, "SIGTERM")]:
    out = P("stopped_" + name)
    proc = subprocess.Popen([pptest.BIN, "sample", P("big.tif"), "--psf", "gaussian:sigma=1.5",
                             "--chains", "2", "--threads", "1", "--iters", "200000", "--burn", "10",
                             "--progress", "bar", "-o", out],
                            stderr=subprocess.PIPE)
    seen = b""
    while b"sampling" not in seen:  # the progress display has started
        c = proc.stderr.read(1)
        if not c:
            break
        seen += c
    proc.send_signal(sig)
    rest = proc.stderr.read()
    rc = proc.wait()
    lines = [l for l in (seen + rest).decode().replace("\r", "\n").splitlines()
             if l.startswith("pixpost:")]
    pptest.check(rc == 128 + sig, "%s while sampling: exit %d (got %d)" % (name, 128 + sig, rc))
    pptest.check(len(lines) == 1 and "big.tif" in lines[0] and name in lines[0] and
                 "interrupted" in lines[0],
                 "%s: one line naming the frame and the signal (%r)" % (name, lines))
    left = set(os.listdir(out)) if os.path.isdir(out) else set()
    pptest.check(not (left & RESULTS) and not [f for f in left if ".tmp." in f or ".part" in f],
                 "%s: no result or temporary file in the output folder (%r)" % (name, left))

pptest.done()
