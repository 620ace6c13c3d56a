"""Reference check: `mpirun --oversubscribe -n 3 pixpost batch` (MPI builds).

Which binary: ctest passes its own build's pixpost as PP_BIN, so in a build
dir configured with -DPIXPOST_MPI=ON this runs the MPI binary and in the
default build dir it runs the plain one. `pixpost --version` says "MPI: yes"
or "MPI: no"; the build dir's CMakeCache.txt says what was configured. The
check is "not applicable" (and passes) only when both say no MPI; an MPI
configuration whose binary lacks MPI, or a missing mpirun, fails.

With MPI: a 3-rank run (rank 0 hands frames out to ranks 1 and 2) over 6
frames written by Pillow/tifffile (one a 2-page TIFF) plus a text file named
.png; checks exit 2, one manifest with every frame, the bad one failed, and
mean.tif of every frame byte-identical to a plain (non-MPI, forked-worker)
run of the same binary: a frame's seed is a hash of --seed and its path, so
which rank ran it must not matter (exact, no tolerance). Also: the rows the
workers send carry each frame's warning count; --strict with 30 iterations
(every frame unconverged) marks them failed-strict through the ranks; a
refusal on rank 0 (frames made with other settings, no --overwrite) exits 1
and lets the worker ranks end.
"""
import csv
import json
import os
import shutil
import subprocess

import numpy as np
import tifffile  # Debian python3-tifffile
from PIL import Image  # Debian python3-pil

import pptest

version = subprocess.run([pptest.BIN, "--version"], capture_output=True, text=True).stdout
binary_mpi = "MPI: yes" in version
cache = os.path.join(os.path.dirname(os.path.abspath(pptest.PROBES)), "CMakeCache.txt")
configured_mpi = os.path.exists(cache) and "PIXPOST_MPI:BOOL=ON" in open(cache).read()

if not binary_mpi:
    print("not applicable: %s was built without MPI (--version: %r)" % (pptest.BIN, version.strip()))
    pptest.check(not configured_mpi, "the build dir was configured without MPI (%s)" % cache)
    pptest.done()

mpirun = shutil.which("mpirun")
pptest.check(mpirun is not None, "mpirun is installed (Debian openmpi-bin)")
if mpirun is None:
    pptest.done()

tmp = pptest.tmpdir()
indir = os.path.join(tmp, "in")
os.makedirs(indir)
rng = np.random.default_rng(3)
for i in range(4):
    Image.fromarray((400 + 50 * rng.random((32, 32))).astype(np.uint16)).save(
        os.path.join(indir, "f%d.png" % i))  # Pillow: 16-bit grayscale PNG
with tifffile.TiffWriter(os.path.join(indir, "stack.tif")) as w:  # tifffile: 2 pages
    for _ in range(2):
        w.write((400 + 50 * rng.random((32, 32))).astype(np.float32), photometric="minisblack")
open(os.path.join(indir, "notes.png"), "w").write("not an image\n")
OUTPUTS = ["f0", "f1", "f2", "f3", "stack_p1", "stack_p2"]
# Estimated FFT plans (--no-plan-cache): outputs are byte-identical for the
# same seed and the same plans (README, "What is reproducible"); measured
# plans made by two first runs at once can differ and round differently,
# which tests/ref_plan_cache.py checks on its own.
BASE = ["--no-plan-cache", "--psf", "gaussian:sigma=1.5", "--chains", "2", "--burn", "30", "--seed", "5", "--quiet", "--pages", "t"]  # stack.tif: pages are time points
OPTS = BASE + ["--iters", "200"]

env = dict(os.environ, OMPI_ALLOW_RUN_AS_ROOT="1", OMPI_ALLOW_RUN_AS_ROOT_CONFIRM="1",
           OMPI_MCA_rmaps_base_oversubscribe="1")
mpi = subprocess.run([mpirun, "--oversubscribe", "-n", "3", pptest.BIN, "batch", indir, "-o",
                      os.path.join(tmp, "mpi")] + OPTS, capture_output=True, text=True, env=env)
pptest.check(mpi.returncode == 2, "3-rank batch with one bad frame exits 2 (got %d: %s)"
             % (mpi.returncode, mpi.stderr[-400:]))
plain = pptest.run(["batch", indir, "-o", os.path.join(tmp, "plain")] + OPTS, check=False)
pptest.check(plain.returncode == 2, "plain batch exits 2 (got %d)" % plain.returncode)

rows = list(csv.DictReader(open(os.path.join(tmp, "mpi", "index.csv"), newline="")))
st = {r["output"]: r["status"] for r in rows}
pptest.check(len(rows) == 7 and all(st.get(o) == "done" for o in OUTPUTS) and st.get("notes") == "failed",
             "one manifest from rank 0 with every frame (%s)" % st)
same = [open(os.path.join(tmp, "mpi", o, "mean.tif"), "rb").read() ==
        open(os.path.join(tmp, "plain", o, "mean.tif"), "rb").read() for o in OUTPUTS]
pptest.check(all(same), "mean.tif byte-identical between the 3-rank and the plain run (%s)" % same)
pptest.check(all(r["warnings"] == str(len(json.load(open(os.path.join(tmp, "mpi", r["output"], "summary.json")))["warnings"]))
                 for r in rows if r["status"] == "done"),
             "the workers' rows carry each frame's warning count (as its summary.json)")

# --strict through the ranks: 30 iterations leave every frame unconverged
strict = subprocess.run([mpirun, "--oversubscribe", "-n", "3", pptest.BIN, "batch", indir, "-o",
                         os.path.join(tmp, "strict")] + BASE + ["--iters", "30", "--strict"],
                        capture_output=True, text=True, env=env)
st = {r["output"]: r["status"] for r in csv.DictReader(open(os.path.join(tmp, "strict", "index.csv"), newline=""))}
pptest.check(strict.returncode == 2 and all(st.get(o) == "failed-strict" for o in OUTPUTS),
             "3-rank --strict: unconverged frames failed-strict, exit 2 for the bad frame (got %d: %s)"
             % (strict.returncode, st))
# a refusal on rank 0 (frames made with other settings) releases the worker ranks
again = subprocess.run([mpirun, "--oversubscribe", "-n", "3", pptest.BIN, "batch", indir, "-o",
                        os.path.join(tmp, "strict")] + BASE + ["--iters", "31"],
                       capture_output=True, text=True, env=env)
pptest.check(again.returncode == 1 and "--overwrite" in again.stderr,
             "3-rank run over frames made with other settings: refused, exit 1, the ranks end (%r)"
             % again.stderr[-300:])
pptest.done()
