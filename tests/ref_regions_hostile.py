"""Hostile --regions and --compare through the real binary: each bad input
gives exit 1, one stderr line naming the option and the fix, and writes
nothing (the labels are checked before the output folder is made). Also:
label images as 8/16/32-bit TIFF, 8/16-bit PNG (Pillow) and a float TIFF
of whole numbers are accepted with the same regions, and a volume takes one
label page per z-slice (tifffile writes the files; Pillow the PNGs).
`batch --resume` sees a second --above and labels edited in place as other
settings."""
import csv
import os

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(7)
H, W = 24, 20
frame = P("frame.tif")
tifffile.imwrite(frame, (100 + 5 * rng.standard_normal((H, W))).astype(np.float32))
RUN = ["--psf", "gaussian:sigma=1", "--noise", "gaussian:sigma=5", "--prior", "gmrf1:delta=1",
       "--boundary", "periodic", "--chains", "2", "--burn", "5", "--iters", "40", "--quiet"]
lab = np.zeros((H, W), np.uint16)
lab[2:6, 3:9] = 5
lab[10:20, 4:8] = 9
lab[15, 15] = 300


def expect_fail(extra, words, what):
    p = pptest.run(["sample", frame, "-o", P("out")] + RUN + extra, check=False)
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s: exit 1 (got %d: %r)" % (what, p.returncode, p.stderr))
    pptest.check(len(lines) == 1, "%s: one stderr line (got %r)" % (what, p.stderr))
    for w in words:
        pptest.check(w in p.stderr, "%s: message has %r (%r)" % (what, w, p.stderr.strip()))
    pptest.check(not os.path.exists(P("out")), "%s: nothing written" % what)


def save(name, a):
    tifffile.imwrite(P(name), a)
    return P(name)


cases = [
    (["--regions", save("small.tif", lab[:20])], ["--regions", "frame's size"], "labels too small"),
    (["--regions", save("frac.tif", lab.astype(np.float32) + 0.5)],
     ["--regions", "whole numbers"], "float labels with fractions"),
    (["--regions", save("neg.tif", lab.astype(np.int16) - 1)],
     ["--regions", "whole numbers", "-1"], "negative labels"),
    (["--regions", save("nan.tif", np.where(lab > 0, np.nan, 0).astype(np.float32))],
     ["--regions", "whole numbers"], "NaN labels"),
    (["--regions", save("big.tif", np.where(lab > 0, 4000000000, 0).astype(np.uint32))],
     ["--regions", "4e+09", "2^31 - 1"], "a 32-bit label above 2^31 - 1"),
    (["--regions", save("zero.tif", np.zeros((H, W), np.uint8))],
     ["--regions", "no labelled pixel"], "all-zero labels"),
    (["--regions", P("missing.tif")], ["--regions", "cannot be read"], "missing label file"),
    (["--regions", save("pages.tif", np.stack([lab, lab]))], ["--regions", "2 pages"],
     "a label stack for a frame"),
    (["--regions", P("small.tif").replace("small", "frac"), "--compare", "5/9"],
     ["--regions"], "bad labels with --compare"),
    (["--regions", save("ok.tif", lab), "--compare", "5/7"],
     ["--compare", "5/7", "label 7", "present"], "compare an absent label"),
    (["--regions", P("ok.tif"), "--compare", "5-9"], ["--compare", "'5-9'", "A/B"],
     "compare malformed"),
    (["--regions", P("ok.tif"), "--compare", "0/9"], ["--compare", "'0/9'", ">= 1"],
     "compare label 0"),
    (["--regions", P("ok.tif"), "--compare", "9/9"], ["--compare", "itself"],
     "compare a region with itself"),
    (["--compare", "5/9"], ["--compare", "needs --regions"], "compare without regions"),
    (["--regions", ""], ["--regions", "empty"], "empty file name"),
]
for extra, words, what in cases:
    expect_fail(extra, words, what)

# Accepted encodings give the same regions (pixel counts and totals).
Image.fromarray(lab.astype(np.uint8)).save(P("l8.png"))  # label 300 -> 44 in 8 bits
lab8 = lab.astype(np.uint8)
Image.fromarray(lab.astype(np.uint16)).save(P("l16.png"))
forms = {"u16.tif": (save("u16.tif", lab), lab), "u8.tif": (save("u8.tif", lab8), lab8),
         "u32.tif": (save("u32.tif", lab.astype(np.uint32)), lab),
         "f32.tif": (save("f32.tif", lab.astype(np.float32)), lab),
         "l8.png": (P("l8.png"), lab8), "l16.png": (P("l16.png"), lab)}
# the largest label accepted: 2^31 - 1 in a 32-bit TIFF
big = np.where(lab == 9, 2147483647, lab).astype(np.uint32)
pptest.run(["sample", frame, "-o", P("ok_big"), "--regions", save("bigok.tif", big), "--compare",
            "2147483647/5", "--seed", "3"] + RUN)
with open(os.path.join(P("ok_big"), "regions.csv")) as fh:
    rows = list(csv.DictReader(fh))
pptest.check([r["label"] for r in rows if r["quantity"] == "total"] == ["5", "300", "2147483647"]
             and rows[-1]["label"] == "2147483647" and rows[-1]["label_b"] == "5",
             "label 2^31 - 1 accepted and compared")
totals = {}
for name, (path, want) in forms.items():
    out = P("ok_" + name)
    pptest.run(["sample", frame, "-o", out, "--regions", path, "--seed", "3"] + RUN)
    with open(os.path.join(out, "regions.csv")) as fh:
        rows = [r for r in csv.DictReader(fh) if r["quantity"] == "total"]
    labels = sorted(int(v) for v in np.unique(want) if v)
    pptest.check([int(r["label"]) for r in rows] == labels and
                 [int(r["pixels"]) for r in rows] == [int((want == v).sum()) for v in labels],
                 "%s: labels %s with their pixel counts" % (name, labels))
    totals[name] = [r["mean"] for r in rows]
pptest.check(totals["u16.tif"] == totals["f32.tif"] == totals["u32.tif"] == totals["l16.png"]
             and totals["u8.tif"] == totals["l8.png"],
             "the same labels in other encodings give the same totals")

# A volume: one label page per z-slice; a single page is refused.
vol = (100 + 5 * rng.standard_normal((3, H, W))).astype(np.float32)
tifffile.imwrite(P("vol.tif"), vol, photometric="minisblack", metadata={"axes": "ZYX"})
vlab = np.zeros((3, H, W), np.uint16)
vlab[0, 2:5, 2:5] = 1
vlab[1:3, 10:14, 10:12] = 2
tifffile.imwrite(P("vlab.tif"), vlab, photometric="minisblack")
VRUN = ["--psf", "gaussian:sigma=1", "--noise", "gaussian:sigma=5", "--prior", "gmrf1:delta=1",
        "--boundary", "periodic", "--chains", "2", "--burn", "5", "--iters", "40", "--quiet",
        "--pages", "z"]
out = P("vol_out")
pptest.run(["sample", P("vol.tif"), "-o", out, "--regions", P("vlab.tif")] + VRUN)
with open(os.path.join(out, "regions.csv")) as fh:
    rows = [r for r in csv.DictReader(fh) if r["quantity"] == "total"]
pptest.check([(r["label"], r["pixels"]) for r in rows] == [("1", "9"), ("2", "16")],
             "volume: labels 1 and 2 with 9 and 16 voxels")
mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
for r in rows:  # gibbs periodic with fixed hyper: the mean of the totals vs mean.tif's sum
    t = mean[vlab == int(r["label"])].sum()
    z = abs(float(r["mean"]) - t) / float(r["mcse_mean"])
    pptest.check(z < 5, "volume label %s: total's mean %.5g vs the sum of mean.tif %.5g "
                 "(%.2f MCSE, tolerance 5)" % (r["label"], float(r["mean"]), t, z))
p = pptest.run(["sample", P("vol.tif"), "-o", P("out"), "--regions", P("ok.tif")] + VRUN,
               check=False)
pptest.check(p.returncode == 1 and "--regions" in p.stderr and "one page per z-slice" in p.stderr
             and not os.path.exists(P("out")), "volume with one label page: refused (%r)"
             % p.stderr.strip())
# batch --resume: a second --above, or labels edited in place, are other settings
os.makedirs(P("bin"))
tifffile.imwrite(P("bin", "a.tif"), tifffile.imread(frame))
tifffile.imwrite(P("bin", "b.tif"), tifffile.imread(frame)[::-1].copy())
BATCH = ["batch", P("bin"), "-o", P("bout"), "--regions", P("ok.tif"), "--above", "100"] + RUN
pptest.run(BATCH)
pptest.check(all(os.path.exists(P("bout", f, "regions.csv")) for f in ("a", "b")),
             "batch with --regions: regions.csv for every frame")
pr = pptest.run(BATCH + ["--resume"], check=False)
pptest.check(pr.returncode == 0 and "other settings" not in pr.stderr,
             "batch --resume with the same options: nothing to redo")
pr = pptest.run(BATCH + ["--above", "101", "--resume"], check=False)
pptest.check(pr.returncode == 1 and "other settings" in pr.stderr,
             "batch --resume with a second --above: other settings (%r)" % pr.stderr.strip())
os.utime(P("ok.tif"), None)
pr = pptest.run(BATCH + ["--resume"], check=False)
pptest.check(pr.returncode == 1 and "other settings" in pr.stderr,
             "batch --resume after the labels were touched: a changed input (%r)"
             % pr.stderr.strip())
pptest.done()
