"""Hostile outputs through the real binary (`pixpost sample`, `simulate`),
issue 9: an output folder that cannot be created or written, a file where a
folder is expected, and a full disk.

The full disk is simulated with a file-size limit: the child runs with
RLIMIT_FSIZE set and SIGXFSZ ignored, so a write past the limit fails with
EFBIG (POSIX setrlimit) exactly as a full disk fails with ENOSPC. No output
is ever aimed at a device node. An uncreatable/unwritable folder is one
under /proc/self (procfs refuses new entries even for root, which CI is, so
chmod 0555 would not stop it).

For every case: exit 1, one stderr line naming the path and the problem,
no temporary file (".NAME.tmp.*") left anywhere, every file that exists
under a final name is complete (reads back with tifffile / Pillow / json at
the frame's size), and the inputs are unchanged (sha256 before and after).
Sweeping the limit across the sizes of the outputs hits a failure inside
every writer (TIFF data, TIFF directory, PNG, trace.csv, summary.json).
"""
import hashlib
import json
import os
import resource
import signal
import subprocess

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
H, W = 32, 32
rng = np.random.default_rng(4)
frame = P("frame.tif")
tifffile.imwrite(frame, (100 + 5 * rng.standard_normal((H, W))).astype(np.float32))
truth = P("truth.tif")
tifffile.imwrite(truth, np.full((H, W), 20, np.float32))
ARGS = ["--psf", "gaussian:sigma=1", "--iters", "60", "--burn", "5", "--chains", "2",
        "--threads", "1", "--quiet", "--seed", "3"]


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def fsize_limit(n):
    def pre():
        signal.signal(signal.SIGXFSZ, signal.SIG_IGN)
        resource.setrlimit(resource.RLIMIT_FSIZE, (n, n))
    return pre


def run(args, limit=None):
    hashes = {f: digest(f) for f in (frame, truth)}
    p = subprocess.run([pptest.BIN] + [str(a) for a in args], capture_output=True, text=True,
                       preexec_fn=fsize_limit(limit) if limit else None)
    pptest.check(all(digest(f) == h for f, h in hashes.items()),
                 "%s: inputs unchanged (sha256)" % " ".join(map(str, args[:1] + args[2:4])))
    return p


def temp_files(root):
    return [os.path.join(d, f) for d, _, fs in os.walk(root) for f in fs if ".tmp." in f]


def complete(path):
    """1 if the file reads back whole at the frame's size."""
    try:
        if path.endswith(".tif"):
            return tifffile.imread(path).shape == (H, W)
        if path.endswith(".png"):
            return np.asarray(Image.open(path)).shape == (H, W)
        if path.endswith(".json"):
            with open(path) as f:
                json.load(f)
            return True
        if path.endswith(".csv"):
            with open(path) as f:
                lines = f.read().splitlines()
            return len(lines) > 1 and all(len(l.split(",")) == len(lines[0].split(","))
                                          for l in lines)
        return True
    except Exception:
        return False


def expect_fail(p, words, what):
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s: exit 1 (got %d: %r)" % (what, p.returncode, p.stderr))
    pptest.check(len(lines) == 1, "%s: one stderr line (got %r)" % (what, p.stderr))
    for w in words:
        pptest.check(w in p.stderr, "%s: message has %r (%r)" % (what, w, p.stderr.strip()))


# ---- folders that cannot be made or written -----------------------------------
expect_fail(run(["sample", frame, "-o", "/proc/self/pp_out"] + ARGS),
            ["/proc/self/pp_out", "cannot create the output folder"],
            "sample -o a folder procfs will not create")
expect_fail(run(["sample", frame, "-o", "/proc/self"] + ARGS),
            ["/proc/self", "--overwrite"],
            "sample -o an existing folder holding files pixpost did not write")
expect_fail(run(["sample", frame, "-o", "/proc/self", "--overwrite"] + ARGS),
            ["/proc/self/.pixpost-output", "cannot create a file"],
            "sample --overwrite into an existing folder that takes no new files")
expect_fail(run(["simulate", truth, "--psf", "gaussian:sigma=1", "--noise", "none",
                 "-o", "/proc/self/sim.tif"]),
            ["/proc/self/sim.tif"], "simulate -o into a folder that takes no new files")
with open(P("a_file"), "w") as f:
    f.write("keep me\n")
h = digest(P("a_file"))
expect_fail(run(["sample", frame, "-o", P("a_file")] + ARGS), ["a_file", "not a folder"],
            "sample -o an existing regular file")
expect_fail(run(["sample", frame, "-o", P("a_file", "sub")] + ARGS),
            ["a_file/sub", "Not a directory"], "sample -o a folder below a regular file")
expect_fail(run(["simulate", truth, "--psf", "gaussian:sigma=1", "--noise", "none",
                 "-o", P("a_file", "sim.tif")]),
            ["a_file/sim.tif"], "simulate -o a file below a regular file")
pptest.check(digest(P("a_file")) == h, "the regular file in the way is unchanged")
os.makedirs(P("is_dir.tif"))
expect_fail(run(["simulate", truth, "--psf", "gaussian:sigma=1", "--noise", "none",
                 "-o", P("is_dir.tif")]),
            ["is_dir.tif"], "simulate -o a name that is a folder")
pptest.check(os.path.isdir(P("is_dir.tif")) and not os.listdir(P("is_dir.tif")),
             "the folder in the way is untouched")
pptest.check(temp_files(tmp) == [], "no temporary files left by the folder cases (%r)"
             % temp_files(tmp))

# ---- full disk: a sweep of file-size limits ---------------------------------------
good = P("good")
p = run(["sample", frame, "-o", good] + ARGS)
pptest.check(p.returncode == 0, "unlimited run succeeds (control): %r" % p.stderr)
sizes = sorted(os.path.getsize(os.path.join(good, f)) for f in os.listdir(good))
limits = sorted({s - d for s in sizes for d in (1, 9, 200) if s - d > 0} | {1, 100})
failures = 0
for lim in limits:
    out = P("full_%d" % lim)
    p = run(["sample", frame, "-o", out] + ARGS, limit=lim)
    if p.returncode == 0:  # every file fitted (limits between sizes can)
        pptest.check(all(os.path.getsize(os.path.join(out, f)) <= lim for f in os.listdir(out)),
                     "limit %d: exit 0 only when every output fits" % lim)
        continue
    failures += 1
    expect_fail(p, [out + "/"], "limit %d bytes per file" % lim)
    pptest.check("write" in p.stderr.lower() and ("File too large" in p.stderr or
                                                  "Write Error" in p.stderr),
                 "limit %d: the message says the write failed and why (%r)"
                 % (lim, p.stderr.strip()))
    names = os.listdir(out) if os.path.isdir(out) else []
    pptest.check(all(complete(os.path.join(out, f)) for f in names),
                 "limit %d: every file under a final name is complete (%r)" % (lim, names))
    pptest.check(temp_files(out) == [], "limit %d: no temporary file left" % lim)
pptest.check(failures >= 5, "the sweep failed inside at least 5 writers (%d failures over %d "
             "limits)" % (failures, len(limits)))

# simulate under a full disk: nothing under the final name, no temp file
sim = P("sim_full.tif")
p = run(["simulate", truth, "--psf", "gaussian:sigma=1", "--noise", "none", "-o", sim], limit=600)
expect_fail(p, ["sim_full.tif", "File too large"], "simulate under a 600-byte file-size limit")
pptest.check(not os.path.exists(sim) and temp_files(tmp) == [],
             "simulate under the limit: no output and no temp file")

pptest.done()
