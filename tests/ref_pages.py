"""Multi-page and multi-channel input on the command line (src/cli/units.c).

Inputs are written by tifffile 2023.2.3 (Debian python3-tifffile; OME-TIFF
with axes ZYX, CYX, TYX) and Pillow (RGB PNG). Checks: --pages t and c and
--channel all give the per-unit folders and the index; each channel's
mean.tif equals a plain run on the same plane with the same seed and PSF
(the unit path adds nothing); the hostile cases fail with exit 1 and one
line naming the file or option, and leave no output and unchanged inputs.
Tiny frames, --iters 40: a few seconds of CPU.
"""
import json
import os

import numpy as np
import tifffile
from PIL import Image

import pptest

T = pptest.tmpdir()
rng = np.random.default_rng(20261204)
Q = ["--iters", "40", "--burn", "40", "--chains", "2", "--seed", "3", "--quiet", "--no-plan-cache",
     "--noise", "gaussian:sigma=5"]
G1, G2 = "gaussian:sigma=1", "gaussian:sigma=1.5"


def path(*n):
    return os.path.join(T, *n)


planes = (100 + 20 * rng.standard_normal((3, 20, 22))).astype(np.float32)
tifffile.imwrite(path("plain3.tif"), planes, photometric="minisblack")          # no OME
tifffile.imwrite(path("z.ome.tif"), planes, metadata={"axes": "ZYX", "PhysicalSizeX": 0.1,
                                                      "PhysicalSizeY": 0.1, "PhysicalSizeZ": 0.4})
tifffile.imwrite(path("c.ome.tif"), planes[:2], metadata={"axes": "CYX"})
tifffile.imwrite(path("t.ome.tif"), planes, metadata={"axes": "TYX"})
tifffile.imwrite(path("one.tif"), planes[1])
Image.fromarray((rng.random((20, 22, 3)) * 200).astype(np.uint8), "RGB").save(path("rgb.png"))
inputs = {f: open(path(f), "rb").read() for f in os.listdir(T)}


def refused(args, out, words, what):
    p = pptest.run(["sample"] + args + ["-o", path(out)] + Q, check=False)
    err = p.stderr.strip()
    pptest.check(p.returncode == 1 and err.count("\n") == 0 and all(w in err for w in words),
                 "%s: exit 1, one line with %s (%d: %s)" % (what, words, p.returncode, err))
    pptest.check(not os.path.exists(path(out)), "%s: no output folder" % what)


# ---- hostile --------------------------------------------------------------
refused([path("plain3.tif"), "--psf", G1], "h1", ["plain3.tif", "3 pages", "--pages z", "--pages t", "--pages c"],
        "multi-page without OME or --pages")
refused([path("z.ome.tif"), "--psf", G1, "--pages", "t"], "h2", ["z.ome.tif", "--pages t", "OME metadata", "z-slices"],
        "--pages t against OME SizeZ")
# (z-stacks sampled as volumes: ref_pages_volume.py)
refused([path("c.ome.tif"), "--psf", G1, "--psf", G2, "--psf", G1], "h5", ["--psf", "3 times", "2 channels", "c.ome.tif"],
        "three --psf for two channels")
refused([path("one.tif"), "--psf", G1, "--psf", G2], "h6", ["--psf", "2 times", "1 channel"],
        "two --psf for a single frame")
refused([path("plain3.tif"), "--psf", G1, "--plane", "3"], "h7", ["--plane 3", "3 page(s)"], "--plane past the pages")
refused([path("one.tif"), "--psf", G1, "--channel", "all"], "h8", ["one.tif", "grayscale", "--channel all"],
        "--channel all on a grayscale frame")
refused([path("one.tif"), "--psf", G1, "--pages", "x"], "h9", ["--pages", "'x'", "z, t or c"], "--pages x")
refused([path("one.tif"), "--psf", G1, "--voxel", "0.1"], "h10", ["--voxel"], "--voxel with one number")
bad = tifffile.TiffFile(path("z.ome.tif")).pages[0].description.replace("</Pixels>", "")
tifffile.imwrite(path("badome.tif"), planes, description=bad, metadata=None)
inputs["badome.tif"] = open(path("badome.tif"), "rb").read()
refused([path("badome.tif"), "--psf", G1, "--pages", "t"], "h11", ["badome.tif", "malformed OME-XML"],
        "malformed OME-XML")

tifffile.imwrite(path("tc.ome.tif"), np.stack([planes[:2], planes[1:]]), metadata={"axes": "TCYX"})
inputs["tc.ome.tif"] = open(path("tc.ome.tif"), "rb").read()
refused([path("tc.ome.tif"), "--psf", G1, "--psf", G2], "h12", ["tc.ome.tif", "2 channels", "2 time points", "split"],
        "OME file with channels and time points")

# ---- a single page: --pages accepted and ignored --------------------------
pptest.run(["sample", path("one.tif"), "--psf", G1, "-o", path("one_c"), "--pages", "c"] + Q)
pptest.run(["sample", path("one.tif"), "--psf", G1, "-o", path("one_plain")] + Q)
same = open(path("one_c", "mean.tif"), "rb").read() == open(path("one_plain", "mean.tif"), "rb").read()
pptest.check(same and not os.path.exists(path("one_c", "c0")),
             "single page with --pages c: one frame in OUTDIR, mean.tif identical to a plain run")

# ---- channels from OME, one --psf each ------------------------------------
pptest.run(["sample", path("c.ome.tif"), "--psf", G1, "--psf", G2, "-o", path("ch")] + Q)
idx = json.load(open(path("ch", "channels.json")))
pptest.check([c["folder"] for c in idx["channels"]] == ["c0", "c1"] and
             [c["psf"] for c in idx["channels"]] == [G1, G2] and idx["decided_by"] == "OME metadata",
             "channels.json: c0, c1 with their PSFs, decided by the OME metadata")
pptest.check(all(os.path.exists(path("ch", c, f)) for c in ("c0", "c1")
                 for f in ("mean.tif", "sd.tif", "summary.json", "report.html")),
             "each channel folder is a complete output folder")
pptest.check(all("verdict" in c and c["worst_rhat"] > 0 for c in idx["channels"]), "channels.json has verdicts")
# channel 1 alone (page 1, PSF 2) through the ordinary path: the same mean
pptest.run(["sample", path("c.ome.tif"), "--psf", G2, "--plane", "1", "-o", path("ch1")] + Q)
m1 = tifffile.imread(path("ch", "c1", "mean.tif"))
pptest.check(np.array_equal(m1, tifffile.imread(path("ch1", "mean.tif"))),
             "c1/mean.tif equals --plane 1 with the second PSF (same seed)")
s1 = json.load(open(path("ch", "c1", "summary.json")))
pptest.check(s1.get("input_part") == "page 1" and s1.get("psf", G2) == G2, "c1/summary.json: input_part page 1")

# ---- time points: --pages t (no OME), TYX (OME) ---------------------------
pptest.run(["sample", path("plain3.tif"), "--psf", G1, "--pages", "t", "--voxel", "0.2,0.5", "-o", path("tp")] + Q)
fr = json.load(open(path("tp", "frames.json")))
pptest.check([f["folder"] for f in fr["frames"]] == ["t0", "t1", "t2"] and fr["decided_by"] == "--pages",
             "frames.json: t0..t2 by --pages t")
pptest.check(fr["voxel_um"] == {"z": 0.5, "y": 0.2, "x": 0.2} and
             json.load(open(path("tp", "t2", "summary.json")))["voxel_um"]["z"] == 0.5,
             "--voxel 0.2,0.5 recorded as z 0.5, y 0.2, x 0.2 (frames.json and summary.json)")
pptest.run(["sample", path("t.ome.tif"), "--psf", G1, "-o", path("tome")] + Q)
pptest.check(sorted(os.listdir(path("tome"))) == [".pixpost-output", "frames.json", "t0", "t1", "t2"],
             "TYX OME-TIFF: time points without --pages")

# ---- one z-slice of an OME volume, voxel size from the metadata ----------
pptest.run(["sample", path("z.ome.tif"), "--psf", G1, "--plane", "2", "-o", path("zp")] + Q)
s = json.load(open(path("zp", "summary.json")))
pptest.check(s["input_part"] == "page 2" and s["voxel_um"] == {"z": 0.4, "y": 0.1, "x": 0.1},
             "--plane 2 of a ZYX OME-TIFF: page 2, voxel from PhysicalSize (got %s)" % s.get("voxel_um"))

# ---- RGB with --channel all -----------------------------------------------
pptest.run(["sample", path("rgb.png"), "--psf", G1, "--channel", "all", "-o", path("rgb")] + Q)
ci = json.load(open(path("rgb", "channels.json")))
pptest.check([c.get("colour") for c in ci["channels"]] == ["r", "g", "b"], "--channel all: c0 r, c1 g, c2 b")
pptest.run(["sample", path("rgb.png"), "--psf", G1, "--channel", "g", "-o", path("g")] + Q)
pptest.check(np.array_equal(tifffile.imread(path("rgb", "c1", "mean.tif")), tifffile.imread(path("g", "mean.tif"))),
             "--channel all's c1 equals --channel g")

# ---- batch ------------------------------------------------------------------
bdir = path("bin")
os.makedirs(bdir)
tifffile.imwrite(os.path.join(bdir, "s.tif"), planes[:2], photometric="minisblack")
p = pptest.run(["batch", bdir, "--psf", G1, "-o", path("bout")] + Q, check=False)
pptest.check(p.returncode == 1 and "s.tif" in p.stderr and "--pages t" in p.stderr and not os.path.exists(path("bout")),
             "batch: a 2-page TIFF without --pages is refused before running (%s)" % p.stderr.strip())
p = pptest.run(["batch", bdir, "--psf", G1, "-o", path("bout"), "--pages", "t"] + Q, check=False)
pptest.check(p.returncode == 0 and os.path.exists(path("bout", "s_p1", "mean.tif")) and
             os.path.exists(path("bout", "s_p2", "mean.tif")), "batch --pages t: one frame per page, s_p1, s_p2")

zdir, tdir = path("bz"), path("bt")
os.makedirs(zdir)
os.makedirs(tdir)
tifffile.imwrite(os.path.join(zdir, "v.ome.tif"), planes[:2], metadata={"axes": "ZYX"})
tifffile.imwrite(os.path.join(tdir, "m.ome.tif"), planes[:2], metadata={"axes": "TYX"})
p = pptest.run(["batch", zdir, "--psf", G1, "-o", path("bzout"), "--pages", "t"] + Q, check=False)
pptest.check(p.returncode == 1 and "v.ome.tif" in p.stderr and "conflicts" in p.stderr and not os.path.exists(path("bzout")),
             "batch --pages t on an OME z-stack: refused naming both (%s)" % p.stderr.strip())
p = pptest.run(["batch", tdir, "--psf", G1, "-o", path("btout")] + Q, check=False)
pptest.check(p.returncode == 0 and os.path.exists(path("btout", "m.ome_p2", "mean.tif")),
             "batch on an OME time series without --pages: a frame per page")

# batch: channels, one frame per channel with the k-th --psf (or a wavelength list)
cdir = path("bc")
os.makedirs(cdir)
tifffile.imwrite(os.path.join(cdir, "c.ome.tif"), planes[:2], metadata={"axes": "CYX"})
tifffile.imwrite(os.path.join(cdir, "p.tif"), planes[1:], photometric="minisblack")
p = pptest.run(["batch", cdir, "--psf", G1, "--psf", G2, "-o", path("bcout")] + Q, check=False)
pptest.check(p.returncode == 1 and "p.tif" in p.stderr and "--pages c" in p.stderr and not os.path.exists(path("bcout")),
             "batch: a plain 2-page TIFF beside an OME channel file needs --pages c (%s)" % p.stderr.strip())
pptest.run(["batch", cdir, "--psf", G1, "--psf", G2, "--pages", "c", "-o", path("bcout")] + Q)
got = {d: json.load(open(path("bcout", d, "summary.json")))["psf"] for d in ("c.ome_c0", "c.ome_c1", "p_c0", "p_c1")}
pptest.check(got == {"c.ome_c0": G1, "c.ome_c1": G2, "p_c0": G1, "p_c1": G2},
             "batch --pages c: <stem>_c<k> with the k-th --psf (%s)" % got)
AW = "airy:na=1.2,wavelength=0.5/0.6,pixel=0.2"
pptest.run(["batch", cdir, "--psf", AW, "--pages", "c", "-o", path("bcw")] + Q)
pptest.check(json.load(open(path("bcw", "p_c1", "summary.json")))["psf"] == "airy:na=1.2,wavelength=0.6,pixel=0.2",
             "batch: one --psf with wavelength=0.5/0.6 gives channel 1 wavelength 0.6")
tifffile.imwrite(os.path.join(cdir, "one.tif"), planes[0])
p = pptest.run(["batch", cdir, "--psf", G1, "--psf", G2, "--pages", "c", "-o", path("bcone")] + Q, check=False)
pptest.check(p.returncode == 1 and "one.tif" in p.stderr and "2 PSFs" in p.stderr and not os.path.exists(path("bcone")),
             "batch with two --psf refuses a one-page file (%s)" % p.stderr.strip())

pptest.check(all(open(path(f), "rb").read() == b for f, b in inputs.items()), "inputs unchanged")
pptest.done()
