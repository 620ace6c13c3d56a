"""z-stacks sampled as volumes on the command line (src/cli/units.c,
run_frame.c, unobserved.c, batch_list.c).

Inputs are written by tifffile 2023.2.3 (Debian python3-tifffile): OME-TIFF
with axes ZYX, ZCYX, TZYX, TZCYX and plain multi-page TIFFs; the outputs
are read back with it. Checks:
1. refusals: exit 1 (README "Exit status"), one line naming the file or
   option and the fix, no output folder, inputs unchanged;
2. the voxel size, per axis from the OME metadata, else --voxel, else the
   PSF spec's pixel=/step= (summary.json "voxel_um"); a spec that
   disagrees with the volume's size is refused;
3. what the CLI itself decides, visible in its own records: the
   "sampled as one volume" line, the index (channels.json, frames.json)
   of OME files with several volumes, one --psf with a wavelength list,
   --mask of one page (every slice) or one page per slice (summary.json
   "masked"), batch taking a z-stack as one unit;
4. the volume reaches the sampler whole and in order: mean.tif has the
   stack's shape {4, 20, 22}, and channel 1 of a ZCYX file gives the same
   mean.tif bytes as the plain ZYX stack of channel 1's slices with the
   same seed and PSF (the page gather picks z of channel 1 in order; a
   mix-up of pages would change the data and the mean).
Tiny volumes, --iters 40: a few seconds of CPU.
"""
import csv
import json
import os

import numpy as np
import tifffile

import pptest

T = pptest.tmpdir()
rng = np.random.default_rng(20261204)
Q = ["--iters", "40", "--burn", "40", "--chains", "2", "--seed", "5", "--quiet", "--no-plan-cache",
     "--noise", "gaussian:sigma=5", "--prior", "gmrf1"]
G3 = "gaussian:sigma=1,sigma_z=0.7"   # a 3-D gaussian: 9 x 9 in the plane, 7 slices
AIRY = "airy:na=1.2,wavelength=0.5,pixel=0.2"


def path(*n):
    return os.path.join(T, *n)


vol = (100 + 20 * rng.standard_normal((4, 20, 22))).astype(np.float32)
two = (100 + 20 * rng.standard_normal((3, 2, 20, 22))).astype(np.float32)    # z, c, y, x
tifffile.imwrite(path("z.ome.tif"), vol, metadata={"axes": "ZYX", "PhysicalSizeX": 0.1,
                                                   "PhysicalSizeY": 0.1, "PhysicalSizeZ": 0.4})
tifffile.imwrite(path("plain4.tif"), vol, photometric="minisblack")           # no OME
tifffile.imwrite(path("zc.ome.tif"), two, metadata={"axes": "ZCYX"})
tifffile.imwrite(path("c1.tif"), two[:, 1], photometric="minisblack")        # channel 1's slices
tifffile.imwrite(path("zt.ome.tif"), two.transpose(1, 0, 2, 3), metadata={"axes": "TZYX"})
tifffile.imwrite(path("zct.ome.tif"), np.stack([two, two]), metadata={"axes": "TZCYX"})
tifffile.imwrite(path("one.tif"), vol[0])
m1 = np.zeros((20, 22), np.uint8)
m1[3, 4] = 1
tifffile.imwrite(path("mask1.tif"), m1)                                      # every slice
m4 = np.zeros((4, 20, 22), np.uint8)
m4[2, 5, 6] = m4[2, 5, 7] = 1
tifffile.imwrite(path("mask4.tif"), m4, photometric="minisblack")            # per slice
tifffile.imwrite(path("mask3.tif"), m4[:3], photometric="minisblack")
inputs = {f: open(path(f), "rb").read() for f in os.listdir(T)}


def refused(args, out, words, what, cmd="sample"):
    q = Q if "--noise" not in args else Q[:-4] + Q[-2:]
    p = pptest.run([cmd] + args + ["-o", path(out)] + q, check=False)
    err = p.stderr.strip()
    pptest.check(p.returncode == 1 and err.count("\n") == 0 and all(w in err for w in words),
                 "%s: exit 1, one line with %s (%d: %s)" % (what, words, p.returncode, err))
    pptest.check(not os.path.exists(path(out)), "%s: no output folder" % what)


def summary(*d):
    return json.load(open(path(*d, "summary.json")))


# ---- 1. refusals ------------------------------------------------------------------
refused([path("z.ome.tif"), "--psf", G3, "--noise", "auto"], "r1",
        ["z.ome.tif", "--noise auto", "usable 2x2 blocks", "450 needed"],
        "--noise auto on a volume too small for the pooled fit (4 slices of 22 x 20; "
        "tests/ref_noise_auto_volume.py runs it on a larger one)")
refused([path("z.ome.tif"), "--psf", G3, "--max-pixels", "1000"], "r2",
        ["z.ome.tif", "4 z-slices", "--max-pixels 1000", "voxels"], "--max-pixels counts voxels (1760 > 1000)")
refused([path("z.ome.tif"), "--psf", G3, "--mask", path("mask3.tif")], "r3",
        ["--mask", "mask3.tif", "3 pages", "4 z-slices", "one page per z-slice"], "a mask of 3 pages for 4 slices")
refused([path("one.tif"), "--psf", G3], "r4", ["--psf", "3-D PSF", "one.tif", "z-stack", "--pages z"],
        "a 3-D PSF for a single frame")
refused([path("z.ome.tif"), "--psf", AIRY], "r5",
        ["--psf", "pixel=0.2", "z.ome.tif", "0.1", "OME metadata", "give pixel=0.1"],
        "an airy pixel= that is not the OME pixel size")
refused([path("plain4.tif"), "--pages", "z", "--voxel", "0.1,0.4", "--psf",
         "widefield:na=0.3,wavelength=0.5,pixel=0.1,step=0.3,n=1"], "r6",
        ["--psf", "step=0.3", "plain4.tif", "--voxel", "give step=0.4"], "a widefield step= that is not --voxel's Z")
refused([path("zct.ome.tif"), "--psf", G3], "r7", ["zct.ome.tif", "2 channels", "2 time points", "split"],
        "OME Z x C x T")
refused([path("zc.ome.tif"), "--psf", "airy:na=1.2,wavelength=0.5/0.6/0.7,pixel=0.2"], "r8",
        ["--psf", "wavelength=", "3 wavelengths", "2 channels", "zc.ome.tif"], "three wavelengths for two channels")
refused([path("zc.ome.tif"), "--psf", "airy:na=1.2,wavelength=0.5/,pixel=0.2"], "r9",
        ["--psf", "wavelength=0.5/", "L1/L2"], "an empty wavelength in the list")
bz = path("bzc")
os.makedirs(bz)
tifffile.imwrite(os.path.join(bz, "zc.ome.tif"), two, metadata={"axes": "ZCYX"})
refused([bz, "--psf", G3], "r10", ["batch", "zc.ome.tif", "2 channels", "pixpost sample"],
        "batch on a file of several volumes", cmd="batch")
refused([bz, "--psf", G3, "--pages", "c"], "r11", ["batch", "zc.ome.tif", "--pages c", "conflicts"],
        "batch --pages c on OME z-slices", cmd="batch")

# ---- 2. voxel size: OME > --voxel > the PSF spec, per axis ------------------------
pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "--voxel", "0.2,0.5", "-o", path("v_ome")] + Q)
pptest.check(summary("v_ome")["voxel_um"] == {"z": 0.4, "y": 0.1, "x": 0.1},
             "OME PhysicalSize wins over --voxel (got %s)" % summary("v_ome")["voxel_um"])
pptest.run(["sample", path("plain4.tif"), "--pages", "z", "--psf", G3, "--voxel", "0.2,0.5", "-o", path("v_given")] + Q)
pptest.check(summary("v_given")["voxel_um"] == {"z": 0.5, "y": 0.2, "x": 0.2},
             "--voxel 0.2,0.5 without metadata: z 0.5, y 0.2, x 0.2 (got %s)" % summary("v_given")["voxel_um"])
pptest.run(["sample", path("plain4.tif"), "--pages", "z", "--psf", AIRY, "-o", path("v_spec")] + Q)
pptest.check(summary("v_spec")["voxel_um"] == {"z": None, "y": 0.2, "x": 0.2},
             "airy pixel=0.2 alone: y and x 0.2, z unknown (got %s)" % summary("v_spec")["voxel_um"])
pptest.run(["sample", path("plain4.tif"), "--pages", "z", "--psf", AIRY, "--voxel", "0.2,0.5", "-o", path("v_agree")] + Q)
pptest.check(summary("v_agree")["voxel_um"] == {"z": 0.5, "y": 0.2, "x": 0.2},
             "--voxel and a spec that agree: accepted (got %s)" % summary("v_agree")["voxel_um"])

# ---- 3. the CLI's own records ------------------------------------------------------
p = pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "-o", path("loud")] + [a for a in Q if a != "--quiet"])
pptest.check("z.ome.tif: 4 z-slices of 22x20, sampled as one volume" in p.stderr and "using page" not in p.stderr,
             "the volume is announced as one (%s)" % p.stderr.splitlines()[0])
pptest.check("input_part" not in summary("loud"), "a single volume has no input_part")

pptest.run(["sample", path("zc.ome.tif"), "--psf", "airy:na=1.2,wavelength=0.5/0.6,pixel=0.2", "-o", path("zc")] + Q)
idx = json.load(open(path("zc", "channels.json")))
pptest.check([(c["folder"], c["page"], c["z_slices"], c["psf"]) for c in idx["channels"]] ==
             [("c0", None, 3, "airy:na=1.2,wavelength=0.5,pixel=0.2"),
              ("c1", None, 3, "airy:na=1.2,wavelength=0.6,pixel=0.2")],
             "ZCYX: one volume per channel, 3 slices each, one wavelength each (%s)" % idx["channels"])
pptest.check(summary("zc", "c1")["input_part"] == "channel 1 (its z-slices)" and
             summary("zc", "c1")["psf"] == "airy:na=1.2,wavelength=0.6,pixel=0.2",
             "c1/summary.json: channel 1, wavelength 0.6")
pptest.run(["sample", path("zt.ome.tif"), "--psf", G3, "-o", path("zt")] + Q)
fr = json.load(open(path("zt", "frames.json")))
pptest.check([f["folder"] for f in fr["frames"]] == ["t0", "t1"] and all(f["z_slices"] == 3 for f in fr["frames"]),
             "TZYX: one volume per time point into t0, t1")

pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "--mask", path("mask1.tif"), "-o", path("mk1")] + Q)
pptest.check(summary("mk1")["missing_data"]["masked"] == 4, "a one-page mask marks its pixel in each of 4 slices")
pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "--mask", path("mask4.tif"), "-o", path("mk4")] + Q)
pptest.check(summary("mk4")["missing_data"]["masked"] == 2, "a mask of 4 pages marks its 2 voxels of slice 2")

zdir = path("bz")
os.makedirs(zdir)
tifffile.imwrite(os.path.join(zdir, "v.ome.tif"), vol, metadata={"axes": "ZYX", "PhysicalSizeX": 0.1,
                                                                 "PhysicalSizeY": 0.1, "PhysicalSizeZ": 0.4})
tifffile.imwrite(os.path.join(zdir, "w.tif"), vol[::-1], photometric="minisblack")
p = pptest.run(["batch", zdir, "--psf", G3, "-o", path("bzout")] + Q, check=False)
pptest.check(p.returncode == 1 and "w.tif" in p.stderr and "--pages z" in p.stderr,
             "batch: a plain multi-page TIFF without --pages names --pages z (%s)" % p.stderr.strip())
pptest.run(["batch", zdir, "--psf", G3, "--pages", "z", "-o", path("bzout")] + Q)
rows = list(csv.DictReader(open(path("bzout", "index.csv"))))
pptest.check(sorted((r["path"], r["output"], r["page"], r["status"]) for r in rows) ==
             [("v.ome.tif", "v.ome", "", "done"), ("w.tif", "w", "", "done")],
             "batch --pages z: each stack one unit, folder without _p<k> (%s)" %
             [(r["path"], r["output"], r["page"], r["status"]) for r in rows])
pptest.check(summary("bzout", "v.ome")["voxel_um"] == {"z": 0.4, "y": 0.1, "x": 0.1},
             "batch records the OME voxel size")

# ---- 4. the whole volume, in order ------------------------------------------------
mean = tifffile.imread(path("loud", "mean.tif"))
pptest.check(mean.shape == (4, 20, 22), "mean.tif of a 4 x 20 x 22 stack has that shape (got %s)" % (mean.shape,))
pptest.run(["sample", path("c1.tif"), "--pages", "z", "--psf", "airy:na=1.2,wavelength=0.6,pixel=0.2",
            "-o", path("c1")] + Q)
pptest.check(np.array_equal(tifffile.imread(path("zc", "c1", "mean.tif")), tifffile.imread(path("c1", "mean.tif"))),
             "channel 1 of the ZCYX file = its slices as a plain ZYX stack (same seed and PSF)")
# no --prior: a Gaussian-noise volume takes the adaptive prior, as a frame
# does (src/sampler_adaptive.c on the rank-3 grid), without a note, and
# gives the same mean as --prior adaptive (same seed)
p = pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "-o", path("dflt")]
               + [a for a in Q[:-2] if a != "--quiet"])
with open(path("dflt", "summary.json")) as f:
    prior_used = json.load(f)["prior"]
pptest.check(prior_used.startswith("adaptive") and "prior" not in p.stderr,
             "a volume without --prior runs the adaptive prior, as a frame (summary %s; stderr %r)"
             % (prior_used, p.stderr.strip()))
pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "-o", path("expl")] + Q[:-2]
           + ["--prior", "adaptive"])
pptest.check(np.array_equal(tifffile.imread(path("dflt", "mean.tif")),
                            tifffile.imread(path("expl", "mean.tif"))),
             "the volume's default equals --prior adaptive (same seed)")
# with photon counts an explicit --prior adaptive runs hmc on the volume
# (src/sampler_pcn.c on the rank-3 grid); pcn with it is the library's
# refusal, one line naming the file
pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "-o", path("phot")] + Q[:-4]
           + ["--noise", "poisson:gain=1,offset=0", "--prior", "adaptive"])
ph = summary("phot")
pptest.check(ph["sampler"] == "hmc" and ph["prior"].startswith("adaptive") and
             tifffile.imread(path("phot", "mean.tif")).shape == (4, 20, 22),
             "a photon-count volume with --prior adaptive runs hmc (summary %s, %s)"
             % (ph["sampler"], ph["prior"]))
p = pptest.run(["sample", path("z.ome.tif"), "--psf", G3, "-o", path("lib")] + Q[:-4]
               + ["--noise", "poisson:gain=1,offset=0", "--prior", "adaptive", "--sampler", "pcn"],
               check=False)
err = p.stderr.strip()
pptest.check(p.returncode == 1 and err.count("\n") == 0 and "z.ome.tif" in err and "adaptive" in err
             and "gmrf1" in err and not os.path.exists(path("lib")),
             "the library's refusal of --prior adaptive with pcn on a volume: one line naming "
             "the file (%s)" % err)

pptest.check(all(open(path(f), "rb").read() == b for f, b in inputs.items()), "inputs unchanged")
pptest.done()
