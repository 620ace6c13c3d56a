"""`pixpost simulate` on a z-stack: the volume read back with tifffile and
checked against scipy, its noise against its stated model, and the refusals.

1. Round trip (noise none): a multi-page float TIFF truth (tifffile) with
   --pages z and --voxel, or with OME metadata (tifffile's OME writer), odd
   and even sides, blurred by gaussian:sigma=S,sigma_z=Z. The output must be
   an OME-TIFF of one float32 page per slice (tifffile: is_ome, series axes
   ZYX, PhysicalSizeX/Y/Z as given) whose values equal
   scipy.ndimage.convolve(truth, kernel, mode='constant', cval=0) (pad) or
   mode='wrap' (periodic), the kernel numpy's sampled 3-D gaussian
   normalised to sum 1 (the rule of src/psf3.c; tests/ref_psf3.py checks
   that `pixpost psf` makes the same). Tolerance 1e-6 of the largest value:
   OUT is float32 (rounding 6e-8 relative), the blur itself is exact to
   1e-15 (tests/ref_model3d.py). Pad with a PSF wider and deeper than the
   volume equals scipy's constant mode too. A 2-D PSF on a volume equals
   scipy.signal.convolve2d per slice; a bead stack (file:) uses the same
   cleaned kernel that `pixpost psf file:` writes.
2. Noise (two seeds, 64 x 64 x 16 voxels): r = y - A x with A x from scipy.
   gaussian:sigma=2.5: the mean of r within 4 standard errors of 0 (SE
   2.5/sqrt(N)), its variance within 4 SE of 6.25 (SE of a normal sample
   variance sigma^2 sqrt(2/(N-1))), and the lag-1 correlation along z, y
   and x each within 4/sqrt(N) of 0 (white noise, added after the blur).
   camera:gain=0.5,offset=100,read=1.6: z = ((y - 100)/0.5 - A x) /
   sqrt(A x + 1.6^2) has mean 0 and variance 1 (Poisson mean = variance,
   plus the read noise); 4 SE, the SE of the variance from the sample's own
   fourth moment. 4 SE: a false alarm about 1 in 16000 per check (normal
   tails); the seeds are fixed, so the outcome is reproducible.
3. Refusals: exit 1, one line on stderr naming the file or option and the
   fix, OUT not written, TRUTH unchanged.
4. The bundled demo z-stack (images/README.md): the documented simulate
   command on images/stack_truth.tif reproduces images/demo_stack_gaussian.tif
   exactly, and both carry the voxel size 0.065, 0.065, 0.2 um.
"""
import os
import re

import numpy as np
import scipy.ndimage
import scipy.signal
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(20261205)


def gauss3(s, sz):
    r, rz = int(np.ceil(4 * s)), int(np.ceil(4 * sz))
    z, y, x = np.meshgrid(np.arange(-rz, rz + 1), np.arange(-r, r + 1), np.arange(-r, r + 1),
                          indexing="ij")
    k = np.exp(-(x ** 2 + y ** 2) / (2 * s * s) - z ** 2 / (2 * sz * sz))
    return k / k.sum()


def gauss2(s):
    r = int(np.ceil(4 * s))
    y, x = np.meshgrid(np.arange(-r, r + 1), np.arange(-r, r + 1), indexing="ij")
    k = np.exp(-(x ** 2 + y ** 2) / (2 * s * s))
    return k / k.sum()


def ome_sizes(path):
    with tifffile.TiffFile(path) as t:
        xml = t.ome_metadata or ""
        sizes = {}
        for key in ("PhysicalSizeX", "PhysicalSizeY", "PhysicalSizeZ", "SizeZ"):
            m = re.search(key + r'="([^"]+)"', xml)
            sizes[key] = float(m.group(1)) if m else None
        return (t.is_ome, t.series[0].axes, len(t.pages), t.pages[0].dtype, sizes)


def rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


worst = 0.0
# ---- 1. round trip ----------------------------------------------------------
for shape, ome, boundary in [((9, 20, 24), False, "pad"), ((8, 21, 17), True, "periodic"),
                             ((10, 16, 15), False, "periodic"), ((7, 18, 22), True, "pad")]:
    truth = (rng.random(shape) * 200).astype(np.float32)
    tp = P("truth_%d.tif" % shape[0])
    if ome:
        tifffile.imwrite(tp, truth, ome=True, metadata={
            "axes": "ZYX", "PhysicalSizeX": 0.08, "PhysicalSizeY": 0.08, "PhysicalSizeZ": 0.25})
        extra = []
    else:
        tifffile.imwrite(tp, truth)
        extra = ["--pages", "z", "--voxel", "0.08,0.25"]
    out = P("y_%d.tif" % shape[0])
    p = pptest.run(["simulate", tp, "--psf", "gaussian:sigma=1.2,sigma_z=0.7", "--noise", "none",
                    "--boundary", boundary, "-o", out] + extra)
    k = gauss3(1.2, 0.7)
    ref = scipy.ndimage.convolve(truth.astype(np.float64), k,
                                 mode="wrap" if boundary == "periodic" else "constant", cval=0.0)
    got = tifffile.imread(out).astype(np.float64)
    is_ome, axes, pages, dtype, sz = ome_sizes(out)
    pptest.check(got.shape == shape and pages == shape[0] and dtype == np.float32,
                 "%s: %d float32 pages of %dx%d read back (%s, %d pages)"
                 % (os.path.basename(tp), shape[0], shape[2], shape[1], got.shape, pages))
    pptest.check(is_ome and axes == "ZYX" and sz["PhysicalSizeX"] == 0.08
                 and sz["PhysicalSizeY"] == 0.08 and sz["PhysicalSizeZ"] == 0.25
                 and sz["SizeZ"] == shape[0],
                 "%s (%s): OME-TIFF ZYX with PhysicalSizeX/Y 0.08, Z 0.25 um (%s, %s, %s)"
                 % (os.path.basename(out), "OME input" if ome else "--voxel", is_ome, axes, sz))
    e = rel(got, ref)
    worst = max(worst, np.abs(got - ref).max())
    pptest.check(e < 1e-6, "simulate %s %s == scipy.ndimage.convolve mode=%s (rel err %.1e, "
                 "max abs %.1e)" % (shape, boundary, "wrap" if boundary == "periodic"
                                     else "constant", e, np.abs(got - ref).max()))
    pptest.check("%d slices of %dx%d" % (shape[0], shape[2], shape[1]) in p.stdout,
                 "says what it wrote: %s" % p.stdout.strip())

# pad takes a PSF wider and deeper than the volume (41 x 41 x 25 on 6 x 12 x 14)
truth = (rng.random((6, 12, 14)) * 100).astype(np.float32)
tifffile.imwrite(P("small.tif"), truth)
pptest.run(["simulate", P("small.tif"), "--pages", "z", "--psf", "gaussian:sigma=5,sigma_z=3",
            "--noise", "none", "-o", P("ysmall.tif")])
ref = scipy.ndimage.convolve(truth.astype(np.float64), gauss3(5, 3), mode="constant", cval=0.0)
e = rel(tifffile.imread(P("ysmall.tif")).astype(np.float64), ref)
pptest.check(e < 1e-6, "pad with a PSF larger than the volume on every axis == scipy constant "
             "(rel err %.1e)" % e)

# a 2-D PSF blurs each slice alone
truth = (rng.random((6, 19, 23)) * 100).astype(np.float32)
tifffile.imwrite(P("t2.tif"), truth)
pptest.run(["simulate", P("t2.tif"), "--pages", "z", "--psf", "gaussian:sigma=1.5", "--noise",
            "none", "-o", P("y2.tif")])
got = tifffile.imread(P("y2.tif")).astype(np.float64)
ref = np.stack([scipy.signal.convolve2d(s.astype(np.float64), gauss2(1.5), mode="same",
                                        boundary="fill") for s in truth])
e = rel(got, ref)
pptest.check(e < 1e-6, "a 2-D PSF on a volume == scipy.signal.convolve2d per slice (%.1e)" % e)
# without --voxel or OME, no physical size is invented
_, _, _, _, sz = ome_sizes(P("y2.tif"))
pptest.check(sz["PhysicalSizeX"] is None and sz["PhysicalSizeZ"] is None,
             "no voxel size given, none written (%s)" % sz)

# a bead stack (file:) blurs with the kernel `pixpost psf file:` makes from it
pptest.run(["psf", "gaussian:sigma=1.3,sigma_z=1.1", "-o", P("bead.tif"), "--quiet"])
bead = tifffile.imread(P("bead.tif")).astype(np.float64)
bead = 50 + 1000 * np.pad(bead / bead.max(), 3) + rng.standard_normal(np.add(bead.shape, 6))
tifffile.imwrite(P("beadstack.tif"), bead.astype(np.float32))
pptest.run(["psf", "file:" + P("beadstack.tif"), "-o", P("kclean.tif"), "--quiet"])
kc = tifffile.imread(P("kclean.tif")).astype(np.float64)
truth = (rng.random((12, 20, 20)) * 100).astype(np.float32)
tifffile.imwrite(P("t3.tif"), truth)
pptest.run(["simulate", P("t3.tif"), "--pages", "z", "--psf", "file:" + P("beadstack.tif"),
            "--noise", "none", "-o", P("y3.tif")])
got = tifffile.imread(P("y3.tif")).astype(np.float64)
ref = scipy.ndimage.convolve(truth.astype(np.float64), kc / kc.sum(), mode="constant", cval=0.0)
e = rel(got, ref)
pptest.check(kc.shape[0] > 1 and e < 1e-5, "bead stack %s: simulate == scipy with the cleaned "
             "kernel of pixpost psf (rel err %.1e; float32 kernel)" % (kc.shape, e))

# ---- 2. noise statistics -----------------------------------------------------
shape = (16, 64, 64)
N = np.prod(shape)
z, y, x = np.meshgrid(*[np.arange(n) for n in shape], indexing="ij")
scene = 20 + 80 * np.exp(-((x - 30) ** 2 + (y - 34) ** 2) / 200 - (z - 7) ** 2 / 8)
scene += 60 * (rng.random(shape) < 0.01)
tifffile.imwrite(P("scene.tif"), scene.astype(np.float32), ome=True, metadata={"axes": "ZYX"})
truth = tifffile.imread(P("scene.tif")).astype(np.float64)
ax = scipy.ndimage.convolve(truth, gauss3(1.5, 1.0), mode="constant", cval=0.0)


def lag1(r, axis):
    a = np.moveaxis(r, axis, 0)
    return float(np.corrcoef(a[1:].ravel(), a[:-1].ravel())[0, 1])


for seed in (11, 12):
    pptest.run(["simulate", P("scene.tif"), "--psf", "gaussian:sigma=1.5,sigma_z=1", "--noise",
                "gaussian:sigma=2.5", "--seed", seed, "--overwrite", "-o", P("g.tif")])
    r = tifffile.imread(P("g.tif")).astype(np.float64) - ax
    m, v = r.mean(), r.var(ddof=1)
    se_m, se_v = 2.5 / np.sqrt(N), 6.25 * np.sqrt(2 / (N - 1))
    pptest.check(abs(m) < 4 * se_m, "gaussian seed %d: mean of y - Ax %.4f (4 SE = %.4f)"
                 % (seed, m, 4 * se_m))
    pptest.check(abs(v - 6.25) < 4 * se_v, "gaussian seed %d: variance %.4f vs 6.25 (4 SE = %.4f)"
                 % (seed, v, 4 * se_v))
    rho = [lag1(r, a) for a in range(3)]
    pptest.check(max(map(abs, rho)) < 4 / np.sqrt(N), "gaussian seed %d: lag-1 correlation "
                 "z, y, x %s (4/sqrt(N) = %.4f)" % (seed, ["%.4f" % q for q in rho], 4 / np.sqrt(N)))
    pptest.run(["simulate", P("scene.tif"), "--psf", "gaussian:sigma=1.5,sigma_z=1", "--noise",
                "camera:gain=0.5,offset=100,read=1.6", "--seed", seed, "--overwrite", "-o",
                P("c.tif")])
    yc = tifffile.imread(P("c.tif")).astype(np.float64)
    zc = ((yc - 100) / 0.5 - ax) / np.sqrt(ax + 1.6 ** 2)
    m, v = zc.mean(), zc.var(ddof=1)
    se_v = np.sqrt(((zc - m) ** 4).mean() - v * v) / np.sqrt(N)
    pptest.check(abs(m) < 4 / np.sqrt(N) and abs(v - 1) < 4 * se_v,
                 "camera seed %d: standardised y - Ax mean %.4f (4 SE %.4f), variance %.4f "
                 "(4 SE %.4f)" % (seed, m, 4 / np.sqrt(N), v, 4 * se_v))
# the check can fail: the same residuals measured against a blur by the
# wrong kernel (z and x swapped in sigma) miss by far
wrong = scipy.ndimage.convolve(truth, gauss3(1.0, 1.5)[:, 1:-1, 1:-1], mode="constant", cval=0.0)
rw = tifffile.imread(P("g.tif")).astype(np.float64) - wrong
pptest.check(abs(rw.var(ddof=1) - 6.25) > 4 * 6.25 * np.sqrt(2 / (N - 1)),
             "against a wrong kernel the variance misses (%.3f vs 6.25)" % rw.var(ddof=1))

# ---- 3. refusals --------------------------------------------------------------
tifffile.imwrite(P("frame.tif"), (rng.random((32, 32)) * 100).astype(np.float32))
tifffile.imwrite(P("stack.tif"), (rng.random((5, 32, 32)) * 100).astype(np.float32))
tifffile.imwrite(P("cz.tif"), (rng.random((2, 4, 16, 16)) * 100).astype(np.float32), ome=True,
                 metadata={"axes": "CZYX"})
tifffile.imwrite(P("omez.tif"), (rng.random((6, 16, 16)) * 100).astype(np.float32), ome=True,
                 metadata={"axes": "ZYX", "PhysicalSizeX": 0.1, "PhysicalSizeY": 0.1,
                           "PhysicalSizeZ": 0.3})
before = pptest.tree_digest(tmp)
WF = "widefield:na=1.2,wavelength=0.52,pixel=%s,step=0.3,n=1.33"
cases = [
    (["frame.tif", "--psf", "gaussian:sigma=1,sigma_z=2"], ["--psf", "3-D", "one frame", "z-stack"]),
    (["frame.tif", "--psf", "file:" + P("beadstack.tif")], ["--psf", "3-D", "one frame"]),
    (["stack.tif", "--plane", "2", "--psf", "gaussian:sigma=1,sigma_z=2"], ["--psf", "one frame"]),
    (["stack.tif", "--psf", "gaussian:sigma=1"], ["stack.tif", "--pages z", "--plane K"]),
    (["stack.tif", "--pages", "t", "--psf", "gaussian:sigma=1"], ["stack.tif", "time points", "--plane K"]),
    (["stack.tif", "--pages", "c", "--psf", "gaussian:sigma=1"], ["stack.tif", "channels", "--plane K"]),
    (["stack.tif", "--pages", "z", "--psf", "gaussian:sigma=1,sigma_z=2", "--boundary", "periodic"],
     ["larger than the volume", "--boundary pad"]),
    (["omez.tif", "--psf", WF % "0.065"], ["--psf", "pixel=0.065", "omez.tif", "pixel=0.1"]),
    (["omez.tif", "--pages", "t", "--psf", "gaussian:sigma=1"], ["omez.tif", "--pages t", "OME"]),
    (["cz.tif", "--psf", "gaussian:sigma=1"], ["cz.tif", "SizeC 2", "one volume"]),
    (["stack.tif", "--pages", "z", "--voxel", "0.1,0", "--psf", "gaussian:sigma=1"], ["--voxel"]),
]
for args, words in cases:
    # a volume to .png is refused first (tested below), so only .tif there
    volume = "--pages" in args and "z" in args
    for out in ("o.tif",) if volume else ("o.tif", "o.png"):
        p = pptest.run(["simulate", P(args[0])] + args[1:] + ["--noise", "gaussian:sigma=1",
                                                              "-o", P(out)], check=False)
        lines = p.stderr.strip().splitlines()
        ok = (p.returncode == 1 and len(lines) == 1 and all(w in p.stderr for w in words)
              and not os.path.exists(P(out)))
        pptest.check(ok, "refused (exit %d, %d line): %s" % (p.returncode, len(lines), p.stderr.strip()))
p = pptest.run(["simulate", P("omez.tif"), "--psf", "gaussian:sigma=1", "--noise", "none", "-o",
                P("o.png")], check=False)
pptest.check(p.returncode == 1 and "o.png" in p.stderr and ".tif" in p.stderr
             and not os.path.exists(P("o.png")), "a volume to PNG refused: %s" % p.stderr.strip())
pptest.check(pptest.tree_digest(tmp) == before, "inputs unchanged, nothing written by a refusal")

# ---- 4. the bundled demo z-stack ----------------------------------------------
img = os.path.join(pptest.SOURCE, "images")
pptest.run(["simulate", os.path.join(img, "stack_truth.tif"), "--psf",
            "gaussian:sigma=1.2,sigma_z=1.5", "--noise", "gaussian:sigma=1.5", "--seed", 103,
            "--boundary", "periodic", "-o", P("demo_stack.tif")])
made = tifffile.imread(P("demo_stack.tif"))
bundled = tifffile.imread(os.path.join(img, "demo_stack_gaussian.tif"))
pptest.check(made.shape == (16, 64, 64) and np.array_equal(made, bundled),
             "images/demo_stack_gaussian.tif reproduced by this build (%s, max diff %.3g)"
             % (made.shape, np.abs(made.astype(float) - bundled).max()))
for f in ("stack_truth.tif", "demo_stack_gaussian.tif"):
    _, axes, pages, _, sz = ome_sizes(os.path.join(img, f))
    pptest.check(axes == "ZYX" and pages == 16 and sz["PhysicalSizeX"] == 0.065
                 and sz["PhysicalSizeY"] == 0.065 and sz["PhysicalSizeZ"] == 0.2,
                 "images/%s: 16 z-slices, voxel 0.065 x 0.065 x 0.2 um (%s)" % (f, sz))

print("max abs error of simulate (float32 OUT, values 0..200) vs scipy: %.2e" % worst)
pptest.done()
