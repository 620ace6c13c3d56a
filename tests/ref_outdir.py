"""Where pixpost may write (issue 14 item 2): users' files are never replaced
unless --overwrite says so.

sample -o DIR writes only into a folder that is missing, empty, or marked as
pixpost's (.pixpost-output, first line "pixpost output folder", written with
every run's outputs); a folder holding other files is refused with one line
naming it and --overwrite, before anything is read, created or sampled (the
folder's listing and every file's sha256 are the same afterwards, no
temporary file). A path that is a regular file is refused even with
--overwrite. With --overwrite pixpost's names are replaced and other files
kept. demo -o applies the same rule to its folder and to its frames'
folders. simulate and psf write one file: an existing one is replaced only
with --overwrite.

Frames are written with tifffile (an outside writer); outputs are read back
with tifffile and json.
"""
import hashlib
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(14)
frame = P("frame.tif")
tifffile.imwrite(frame, (100 + 5 * rng.standard_normal((24, 24))).astype(np.float32))
ARGS = ["--psf", "gaussian:sigma=1", "--iters", "30", "--burn", "5", "--chains", "2",
        "--threads", "1", "--quiet", "--seed", "3"]
MARKER = ".pixpost-output"


def snapshot(root):
    """Every path under root with the sha256 of each file (None for folders)."""
    out = {}
    for d, dirs, files in os.walk(root):
        for n in dirs:
            out[os.path.relpath(os.path.join(d, n), root)] = None
        for n in files:
            with open(os.path.join(d, n), "rb") as f:
                out[os.path.relpath(os.path.join(d, n), root)] = hashlib.sha256(f.read()).hexdigest()
    return out


def refused(args, names, what, root=tmp):
    """Exit 1, one stderr line with every string of names, nothing under root changed."""
    before = snapshot(root)
    p = pptest.run(args, check=False)
    pptest.check(p.returncode == 1, "%s: exit 1 (got %d: %r)" % (what, p.returncode, p.stderr))
    pptest.check(len(p.stderr.splitlines()) == 1, "%s: one stderr line (%r)" % (what, p.stderr))
    for n in names:
        pptest.check(n in p.stderr, "%s: the message names %r (%r)" % (what, n, p.stderr.strip()))
    after = snapshot(root)
    pptest.check(after == before, "%s: nothing created, changed or removed (%r)"
                 % (what, sorted(set(after.items()) ^ set(before.items()))))
    return p


def ok(args, what):
    p = pptest.run(args, check=False)
    pptest.check(p.returncode == 0, "%s: exit 0 (%r)" % (what, p.stderr.strip()))
    return p


def marked(d):
    try:
        with open(os.path.join(d, MARKER)) as f:
            return f.readline() == "pixpost output folder\n"
    except OSError:
        return False


# ---- sample ----------------------------------------------------------------
# the reported case: a user's folder with their own mean.tif
user = P("mydata")
os.makedirs(user)
with open(os.path.join(user, "mean.tif"), "wb") as f:
    f.write(b"the user's own mean.tif\n")
with open(os.path.join(user, "notes.txt"), "w") as f:
    f.write("keep me\n")
refused(["sample", frame, "-o", user] + ARGS, [user, "--overwrite"],
        "sample -o a folder holding the user's files")
refused(["sample", frame, "-o", user + "/"] + ARGS, [user, "--overwrite"],
        "sample -o the same folder with a trailing slash")
# a file of the marker's name that pixpost did not write does not count
with open(os.path.join(user, MARKER), "w") as f:
    f.write("something else\n")
refused(["sample", frame, "-o", user] + ARGS, [user, "--overwrite"],
        "sample -o a folder whose .pixpost-output is not pixpost's")
os.remove(os.path.join(user, MARKER))
# a hidden file alone makes the folder not empty
hidden = P("hidden")
os.makedirs(hidden)
with open(os.path.join(hidden, ".keep"), "w") as f:
    f.write("x\n")
refused(["sample", frame, "-o", hidden] + ARGS, [hidden, "--overwrite"],
        "sample -o a folder holding only a hidden file")

# a regular file, with or without --overwrite
with open(P("a_file"), "w") as f:
    f.write("keep me\n")
refused(["sample", frame, "-o", P("a_file")] + ARGS, ["a_file", "not a folder"],
        "sample -o a regular file")
refused(["sample", frame, "-o", P("a_file"), "--overwrite"] + ARGS, ["a_file", "not a folder"],
        "sample -o a regular file with --overwrite")

# missing, then again into the folder it made (marked), then an empty one
new = P("new", "sub")
ok(["sample", frame, "-o", new] + ARGS, "sample -o a missing folder")
pptest.check(marked(new), "the folder sample made carries the marker")
pptest.check(os.path.isfile(os.path.join(new, "mean.tif")), "sample wrote mean.tif")
ok(["sample", frame, "-o", new, "--seed", "9"] + ARGS[:-2], "sample again into its own folder")
with open(os.path.join(new, "summary.json")) as f:
    pptest.check(json.load(f)["seed"] == 9, "the re-run replaced summary.json (seed 9)")
os.makedirs(P("empty"))
ok(["sample", frame, "-o", P("empty")] + ARGS, "sample -o an empty folder")
pptest.check(marked(P("empty")), "the empty folder now carries the marker")

# --overwrite: pixpost's names replaced, the user's other files kept
ok(["sample", frame, "-o", user, "--overwrite"] + ARGS, "sample --overwrite into the user's folder")
with open(os.path.join(user, "notes.txt")) as f:
    pptest.check(f.read() == "keep me\n", "--overwrite keeps the user's other files")
m = tifffile.imread(os.path.join(user, "mean.tif"))
pptest.check(m.shape == (24, 24), "--overwrite replaced mean.tif with the posterior mean")
pptest.check(marked(user), "--overwrite leaves the folder marked as pixpost's")
ok(["sample", frame, "-o", user] + ARGS, "then sample into it again without --overwrite")

# ---- simulate and psf: one file ---------------------------------------------
truth = P("truth.tif")
tifffile.imwrite(truth, np.full((16, 16), 20, np.float32))
sim = ["simulate", truth, "--psf", "gaussian:sigma=1", "--noise", "none", "--quiet", "-o"]
with open(P("y.tif"), "wb") as f:
    f.write(b"the user's own y.tif\n")
refused(sim + [P("y.tif")], ["y.tif", "--overwrite"], "simulate -o an existing file")
ok(sim + [P("y.tif"), "--overwrite"], "simulate --overwrite replaces it")
pptest.check(tifffile.imread(P("y.tif")).shape == (16, 16), "simulate --overwrite wrote the frame")
ok(sim + [P("y2.tif")], "simulate -o a new file")
refused(sim + [P("y2.tif")], ["y2.tif", "--overwrite"], "simulate -o its own earlier output")
psf = ["psf", "gaussian:sigma=1", "--quiet", "-o"]
with open(P("k.tif"), "wb") as f:
    f.write(b"the user's measured bead\n")
refused(psf + [P("k.tif")], ["k.tif", "--overwrite"], "psf -o an existing file")
ok(psf + [P("k.tif"), "--overwrite"], "psf --overwrite replaces it")
pptest.check(tifffile.imread(P("k.tif")).ndim == 2, "psf --overwrite wrote the kernel")

# ---- demo: its folder and its frames' folders --------------------------------
# demo looks for its frames with --images; refusal happens before it reads them
refused(["demo", "-o", P("hidden")], ["hidden", "--overwrite"],
        "demo -o a folder holding the user's files")
os.makedirs(P("demo_out", "demo_gaussian"))
with open(P("demo_out", "demo_gaussian", "mine.txt"), "w") as f:
    f.write("keep\n")
refused(["demo", "-o", P("demo_out")], ["demo_gaussian", "--overwrite"],
        "demo -o a folder whose demo_gaussian/ holds the user's files")

# a whole demo on small stand-in frames (made here with pixpost simulate and
# the demo's own settings, so the re-simulation matches), twice into the
# same folder: the second run replaces the demo's own files without asking
img = P("images")
os.makedirs(img)
yy, xx = np.mgrid[:48, :48]
scene = 20 + sum(200 * np.exp(-((yy - r) ** 2 + (xx - c) ** 2) / 8)
                 for r, c in rng.uniform(4, 44, (8, 2)))
tifffile.imwrite(os.path.join(img, "scene_truth.tif"), scene.astype(np.float32))
DEMO_PSF = "airy:na=1.4,wavelength=0.52,pixel=0.065"  # as in src/cli/cmd_demo.c
for name, noise, seed in [("demo_gaussian.tif", "gaussian:sigma=2.5", "101"),
                          ("demo_photons.tif", "camera:gain=0.5,offset=100,read=1.6", "102")]:
    ok(["simulate", os.path.join(img, "scene_truth.tif"), "--psf", DEMO_PSF, "--noise", noise,
        "--seed", seed, "--boundary", "pad", "--quiet", "-o", os.path.join(img, name)],
       "stand-in demo frame " + name)
# the z-stack: a small OME z-stack truth and its volume, as tools/make_demo_stack.py
# makes them (settings as in src/cli/cmd_demo.c)
zz, yy, xx = np.mgrid[:14, :20, :20]
stack = 2 + sum(100 * np.exp(-((zz - z) ** 2 / 2 + (yy - r) ** 2 + (xx - c) ** 2) / 3)
                for z, r, c in rng.uniform(1, 18, (4, 3)) * [0.7, 1, 1])
tifffile.imwrite(os.path.join(img, "stack_truth.tif"), stack.astype(np.float32), ome=True,
                 metadata={"axes": "ZYX", "PhysicalSizeX": 0.065, "PhysicalSizeY": 0.065,
                           "PhysicalSizeZ": 0.2})
ok(["simulate", os.path.join(img, "stack_truth.tif"), "--psf", "gaussian:sigma=1.2,sigma_z=1.5",
    "--noise", "gaussian:sigma=1.5", "--seed", "103", "--boundary", "periodic", "--quiet", "-o",
    os.path.join(img, "demo_stack_gaussian.tif")], "stand-in demo z-stack")
dout = P("demo_new")
ok(["demo", "--images", img, "-o", dout], "demo -o a missing folder")
pptest.check(os.path.isfile(os.path.join(dout, "demo_stack_gaussian", "mean_mip.png")),
             "the demo samples the z-stack as a volume (mean_mip.png)")
pptest.check(marked(dout) and marked(os.path.join(dout, "demo_gaussian")),
             "demo marks its folder and its frames' folders")
ok(["demo", "--images", img, "-o", dout], "demo again into its own folder")
ok(["demo", "--images", img, "-o", P("demo_out"), "--overwrite"],
   "demo --overwrite into the folder with the user's file")
pptest.check(os.path.isfile(P("demo_out", "demo_gaussian", "mine.txt")),
             "demo --overwrite keeps the user's file")

pptest.done()
