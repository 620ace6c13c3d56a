"""3-D gaussian PSFs and bead stacks through `pixpost psf` (multi-page
float TIFF, read and written with tifffile), and the refusal of 3-D PSFs
where sampling needs a 2-D one.

1. gaussian:sigma=S,sigma_z=Z against numpy: exp(-(x^2+y^2)/(2 S^2) -
   z^2/(2 Z^2)) sampled at voxel centres (the 2-D gaussian's rule, see
   src/psf.c), radius ceil(4 S) and ceil(4 Z), normalised to sum 1 over the
   volume; equal within float32 rounding (1e-6 of the peak).
2. A synthetic bead stack (numpy): that same gaussian (S 1.5, Z 2) scaled to
   a peak of 1000 above an offset of 100, Gaussian noise of sd 5
   (numpy.random.default_rng, fixed seed), its centre off the stack's
   centre at voxel (9, 14, 27) of 25 x 41 x 45. `pixpost psf file:` must
   give an odd kernel centred on the bead (its centroid within 0.1 voxel of
   the middle voxel), summing to 1, and within 0.09 in summed absolute
   difference of the true normalised gaussian. Expected ~0.06: the cut at
   3 noise sds (15 / 1000 of the peak) removes the voxels holding 2.8 % of
   the true kernel's sum (numpy, below), and renormalising moves that onto
   the rest, 2 x 0.028; the kept voxels' noise adds ~0.01. The same
   measure between the true kernel and itself shifted by one voxel in x is
   printed and must exceed the tolerance (the check can fail).
3. sample and simulate refuse a 3-D PSF for a single frame (exit 1, one
   line naming --psf and saying a 3-D PSF blurs a z-stack; volumes:
   tests/ref_pages_volume.py, tests/ref_simulate3d.py), and sample refuses a
   bead stack for a frame instead of taking its first page; a widefield spec without step= is
   refused naming step=; a kernel above 2^27 voxels is refused.
"""
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)


def gauss3(s, sz, rz=None, r=None, centre=None, shape=None):
    r = int(np.ceil(4 * s)) if r is None else r
    rz = int(np.ceil(4 * sz)) if rz is None else rz
    shape = shape or (2 * rz + 1, 2 * r + 1, 2 * r + 1)
    centre = centre or (rz, r, r)
    z, y, x = np.meshgrid(*[np.arange(n) - c for n, c in zip(shape, centre)], indexing="ij")
    return np.exp(-(x ** 2 + y ** 2) / (2 * s * s) - z ** 2 / (2 * sz * sz))


# ---- 1. gaussian with sigma_z vs numpy ---------------------------------------
pptest.run(["psf", "gaussian:sigma=1.5,sigma_z=2", "-o", P("g.tif"), "--quiet"])
g = tifffile.imread(P("g.tif")).astype(np.float64)
ref = gauss3(1.5, 2.0)
ref /= ref.sum()
pptest.check(g.shape == ref.shape == (17, 13, 13), "3-D gaussian is 17 x 13 x 13 pages: %s" % (g.shape,))
d = np.abs(g - ref).max() / ref.max()
print("3-D gaussian vs numpy: max diff %.3g of the peak" % d)
pptest.check(d < 1e-6, "3-D gaussian = numpy's sampled gaussian (%.2g of the peak)" % d)
with tifffile.TiffFile(P("g.tif")) as t:
    pptest.check(len(t.pages) == 17 and t.pages[0].dtype == np.float32,
                 "one float32 page per z-slice (%d pages)" % len(t.pages))
    pptest.check(t.is_ome and t.series[0].axes == "ZYX",
                 "written as an OME-TIFF volume (tifffile: is_ome %s, axes %s)"
                 % (t.is_ome, t.series[0].axes))

# the widefield kernel carries its voxel size (pixel, pixel, step) in the
# OME-XML (tifffile reads the OME standard's PhysicalSize attributes)
pptest.run(["psf", "widefield:na=1.2,wavelength=0.52,pixel=0.1,step=0.25,n=1.33", "-o",
            P("w.tif"), "--quiet", "--size", "15", "--depth", "9"])
with tifffile.TiffFile(P("w.tif")) as t:
    px = t.ome_metadata
    pptest.check('PhysicalSizeZ="0.25"' in px and 'PhysicalSizeX="0.1"' in px,
                 "widefield kernel records PhysicalSizeZ 0.25 and PhysicalSizeX 0.1 um")

# ---- 2. bead stack ------------------------------------------------------------
rng = np.random.default_rng(31)
shape, centre = (25, 41, 45), (9, 14, 27)
bead = gauss3(1.5, 2.0, centre=centre, shape=shape)
stack = 100 + 1000 * bead + 5 * rng.standard_normal(shape)
tifffile.imwrite(P("bead.tif"), stack.astype(np.float32))
out = pptest.run(["psf", "file:" + P("bead.tif"), "-o", P("k.tif"), "--size", 13, "--depth", 9])
k = tifffile.imread(P("k.tif")).astype(np.float64)
pptest.check(k.shape == (9, 13, 13), "cleaned bead kernel is 9 x 13 x 13: %s" % (k.shape,))
pptest.check(abs(k.sum() - 1) < 1e-5, "cleaned bead kernel sums to 1 (%.7f)" % k.sum())
grid = np.meshgrid(*[np.arange(n) for n in k.shape], indexing="ij")
cen = [float((k * c).sum()) for c in grid]
off = max(abs(c - (n // 2)) for c, n in zip(cen, k.shape))
print("bead kernel centroid", ["%.3f" % c for c in cen], "offset %.3f voxel" % off)
pptest.check(off < 0.1, "bead kernel centred (centroid %.3f voxel from the middle)" % off)
true = gauss3(1.5, 2.0, rz=4, r=6)
true /= true.sum()
l1 = np.abs(k - true).sum()
print("bead kernel vs the true gaussian: summed |difference| %.4f" % l1)
lost = true[true < 0.015 * true.max()].sum()
shifted = np.abs(np.roll(true, 1, axis=2) - true).sum()
print("mass below the 3-sd cut %.4f; one-voxel shift gives %.3f" % (lost, shifted))
pptest.check(l1 < 0.09 < shifted, "bead kernel = the true normalised gaussian within 0.09 (%.4f; "
             "a one-voxel shift: %.3f)" % (l1, shifted))
# a stack of pure noise is refused, naming the file
tifffile.imwrite(P("noise.tif"), (100 + 5 * rng.standard_normal((9, 21, 21))).astype(np.float32))
p = pptest.run(["psf", "file:" + P("noise.tif"), "-o", P("n.tif")], check=False)
pptest.check(p.returncode == 1 and "noise.tif" in p.stderr and "bead stack" in p.stderr
             and not os.path.exists(P("n.tif")),
             "a noise stack is refused (exit %d): %s" % (p.returncode, p.stderr.strip()))

# two beads are refused, naming the file and the brightest voxel (the 2-D
# one-spot rule of psf_bead.c, 26-connected in 3-D): side by side in one
# slice, and one above the other along z (the case a per-slice test misses)
for name, c2 in (("two_xy.tif", (9, 14, 10)), ("two_z.tif", (20, 14, 27))):
    two = 100 + 1000 * (bead + 0.8 * gauss3(1.5, 2.0, centre=c2, shape=shape)) \
        + 5 * rng.standard_normal(shape)
    tifffile.imwrite(P(name), two.astype(np.float32))
    p = pptest.run(["psf", "file:" + P(name), "-o", P("t.tif"), "--size", 13, "--depth", 9],
                   check=False)
    pptest.check(p.returncode == 1 and name in p.stderr and "not one bead" in p.stderr
                 and "slice 9, row 14, column 27" in p.stderr
                 and len(p.stderr.strip().splitlines()) == 1 and not os.path.exists(P("t.tif")),
                 "a stack of two beads (%s) is refused (exit %d): %s"
                 % (name, p.returncode, p.stderr.strip()))

# ---- 3. refusals ----------------------------------------------------------------
tifffile.imwrite(P("frame.tif"), (100 + 5 * rng.standard_normal((32, 32))).astype(np.float32))
for cmd in (["sample", P("frame.tif"), "-o", P("o")],
            ["simulate", P("frame.tif"), "--noise", "gaussian:sigma=1", "-o", P("s.tif")]):
    for spec in ("gaussian:sigma=1,sigma_z=2", "widefield:na=1.4,wavelength=0.52,pixel=0.065,step=0.2,n=1.515"):
        p = pptest.run(cmd + ["--psf", spec], check=False)
        lines = p.stderr.strip().splitlines()
        pptest.check(p.returncode == 1 and len(lines) == 1 and "--psf" in p.stderr
                     and "3-D PSF" in p.stderr and "z-stack" in p.stderr,
                     "%s refuses %s (exit %d): %s" % (cmd[0], spec.split(":")[0], p.returncode, p.stderr.strip()))
p = pptest.run(["sample", P("frame.tif"), "--psf", "file:" + P("bead.tif"), "-o", P("o2")], check=False)
pptest.check(p.returncode == 1 and "bead.tif" in p.stderr and "3-D bead stack" in p.stderr
             and len(p.stderr.strip().splitlines()) == 1,
             "sample refuses a bead stack instead of using its first page: %s" % p.stderr.strip())
p = pptest.run(["psf", "gaussian:sigma=20,sigma_z=20", "--size", 4001, "-o", P("big.tif")], check=False)
# the library's words (issue 18: pp_psf_make3 takes no names; "size and
# depth" are its arguments, and sample/simulate have no --size)
pptest.check(p.returncode == 1 and "give a smaller size and depth" in p.stderr
             and not os.path.exists(P("big.tif")),
             "an over-large 3-D kernel refused: %s" % p.stderr.strip())
p = pptest.run(["psf", "widefield:na=1.4,wavelength=0.52,pixel=0.065,n=1.515", "-o", P("w.tif")], check=False)
pptest.check(p.returncode == 1 and "step=" in p.stderr, "widefield without step= refused: %s" % p.stderr.strip())
p = pptest.run(["psf", "gaussian:sigma=1,sigma_z=2", "--depth", "4", "-o", P("w.tif")], check=False)
pptest.check(p.returncode == 1 and "--depth" in p.stderr, "even --depth refused: %s" % p.stderr.strip())
pptest.done()
