"""Memory check of a small `pixpost sample` and `pixpost batch` (issue 9).

Under valgrind memcheck (Debian's valgrind; --trace-children=yes so batch's
worker processes are checked too): no invalid reads/writes, no use of
uninitialised values, no definitely lost blocks (--errors-for-leak-kinds=
definite, --error-exitcode=99, so any of them changes the exit status).
"Possibly lost" blocks are not errors here: libgomp keeps its thread pool's
thread-local storage until exit (one 336-byte block per pool was measured),
which memcheck can only call possibly lost; no suppression file is needed.

In a sanitizer build (PIXPOST_SANITIZE=ON) valgrind cannot run the binary
(ASan and memcheck both replace malloc), so the same commands run as they
are: AddressSanitizer then reports the same error classes and its
LeakSanitizer the definite leaks, and any report aborts the run.

The batch includes one frame that must fail (2x2, smaller than the PSF) so
the error path is checked as well: batch exits 2, the others are written.
"""
import os
import shutil
import subprocess

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
with open(pptest.BIN, "rb") as f:
    SANITIZED = b"__asan_init" in f.read()
VALGRIND = shutil.which("valgrind")
pptest.check(SANITIZED or VALGRIND is not None,
             "valgrind is installed (.ci/run installs it) or the build is sanitized")

rng = np.random.default_rng(21)
frames = P("frames")
os.makedirs(frames)
for i in range(2):
    tifffile.imwrite(os.path.join(frames, "f%d.tif" % i),
                     (80 + 4 * rng.standard_normal((24, 20))).astype(np.float32))
tifffile.imwrite(os.path.join(frames, "tiny.tif"), np.ones((2, 2), np.float32))
SMALL = ["--psf", "gaussian:sigma=1", "--iters", "12", "--burn", "3", "--chains", "2",
         "--threads", "2", "--quiet"]


def checked(args):
    cmd = [pptest.BIN] + args
    if not SANITIZED and VALGRIND:
        cmd = [VALGRIND, "--quiet", "--trace-children=yes", "--error-exitcode=99",
               "--leak-check=full", "--errors-for-leak-kinds=definite",
               "--show-leak-kinds=definite"] + cmd
    return subprocess.run(cmd, capture_output=True, text=True)


tool = "ASan/LSan" if SANITIZED else "valgrind memcheck"
p = checked(["sample", os.path.join(frames, "f0.tif"), "-o", P("one")] + SMALL)
pptest.check(p.returncode == 0, "%s: sample exits 0 with no memory error or definite leak "
             "(got %d: %s)" % (tool, p.returncode, p.stderr[-2000:]))
pptest.check(os.path.exists(P("one", "mean.tif")), "sample wrote mean.tif")

p = checked(["sample", os.path.join(frames, "tiny.tif"), "-o", P("bad")] + SMALL)
pptest.check(p.returncode == 1, "%s: a refused frame exits 1, no memory error or leak on the "
             "error path (got %d: %s)" % (tool, p.returncode, p.stderr[-2000:]))

p = checked(["batch", frames, "-o", P("batch"), "--jobs", "1"] + SMALL)
pptest.check(p.returncode == 2, "%s: batch exits 2 (one frame refused), no memory error or "
             "definite leak in the parent or its workers (got %d: %s)"
             % (tool, p.returncode, p.stderr[-2000:]))
pptest.check(all(os.path.exists(P("batch", "f%d" % i, "mean.tif")) for i in range(2)),
             "batch wrote both good frames")

pptest.done()
