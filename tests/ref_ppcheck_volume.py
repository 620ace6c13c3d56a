"""The posterior predictive check (src/pixpost/ppcheck.h) on z-stacks
sampled as volumes (issue 17 item 4 on the volumes of issue 18).

On a volume every figure is the frame's, computed over the voxels used
and, for the lag-1 correlations, the curvature (the 5-point Laplacian in
the slice) and the PSF-band power, within each slice: the band from the
transfer function of the kernel summed over z (its 3-D transfer
function's kz = 0 plane, Fourier slice theorem), powers summed over the
slices. With --boundary pad the band of the kernel's radius is left out
along z too.

1. Figures recomputed independently from the files pixpost wrote (the
   stack, mean.tif, the kernel of `pixpost psf`): A x-bar by
   scipy.ndimage.convolve (mode 'wrap' for periodic, 'constant' 0 for
   pad), the standardised residual of ppcheck.h with numpy, the figures
   with numpy (numpy.fft.fft2 per slice for the band power). Two runs:
   Gaussian noise with lambda sampled, periodic (mtc; lambda = the mean of
   trace.csv's column), and camera noise with pad (hmc, 3-D PSF), where
   residual.tif must be blank exactly on the left-out band. Tolerance 1e-4
   (float32 maps, as tests/ref_ppcheck.py).
2. Right settings: both runs say "fits". The gain inverted (camera:gain=
   0.5 for 2) fires the variance warning naming the inverted gain.
Scenes (our own): beads of 300-1500 photons on a background of 1-5
photons, tests/ppcheckref.py's, stacked at random depths.
"""
import json
import os

import numpy as np
import tifffile
from scipy import ndimage

import ppcheckref
import pptest

tmp = pptest.tmpdir()
P = lambda name: os.path.join(tmp, name)
D, H, W = 10, 32, 32
PSF3 = "gaussian:sigma=1.2,sigma_z=0.8"
pptest.run(["psf", PSF3, "-o", P("psf.tif")])
K = tifffile.imread(P("psf.tif")).astype(np.float64)
rng = np.random.default_rng(61)
truth = np.full((D, H, W), 3.0)
zz, yy, xx = np.mgrid[:D, :H, :W]
for _ in range(14):
    cz, cy, cx = rng.uniform(1, D - 1), rng.uniform(3, H - 3), rng.uniform(3, W - 3)
    truth += rng.uniform(300, 1500) / 8.0 * np.exp(-((zz - cz) ** 2 + (yy - cy) ** 2 +
                                                     (xx - cx) ** 2) / (2 * 0.8 ** 2))
META = {"axes": "ZYX", "PhysicalSizeZ": 0.2, "PhysicalSizeY": 0.1, "PhysicalSizeX": 0.1}


def figures(r, keep, ax, e):
    """ppcheck.h's figures of the residual volume r over the voxels keep;
    e = y - E[y] (unscaled) for the curvature correlation."""
    v = r[keep]
    m = v.mean()
    out = {"mean": m, "var": v.var(), "beyond3": float((np.abs(v) > 3).mean())}
    a = np.where(keep, r - m, np.nan)
    for key, (x, y) in (("lag1_row", (a[:, :, :-1], a[:, :, 1:])),
                        ("lag1_col", (a[:, :-1, :], a[:, 1:, :]))):
        ok = np.isfinite(x) & np.isfinite(y)
        out[key] = (x[ok] * y[ok]).sum() / (0.5 * (x[ok] ** 2 + y[ok] ** 2)).sum()
    otf = np.abs(pptest.transfer(K.sum(axis=0), (H, W)))
    pw = (np.abs(np.fft.fft2(np.where(keep, r - m, 0.0), axes=(1, 2))) ** 2).sum(axis=0)
    nz = np.ones((H, W), bool)
    nz[0, 0] = False
    band = nz & (otf >= 0.1) & (otf <= 0.9)
    out["psf_band_power"] = (pw[band].sum() / pw[nz].sum()) / (band.sum() / nz.sum())
    lap = 4 * ax - sum(np.roll(ax, s, axis=ax_) for s in (1, -1) for ax_ in (1, 2))
    out["curvature_corr"] = np.corrcoef(e[keep], lap[keep])[0, 1]
    return out


def compare(label, out, r_np, ax, e, keep):
    with open(os.path.join(out, "summary.json")) as f:
        pred = json.load(f)["predictive"]
    pptest.check(pred is not None, "%s: the check was made on the volume" % label)
    if pred is None:
        return None
    r_tif = tifffile.imread(os.path.join(out, "residual.tif")).astype(np.float64)
    pptest.check(r_tif.shape == (D, H, W) and np.array_equal(np.isfinite(r_tif), keep),
                 "%s: residual.tif %s, blank exactly where left out (%d voxels used)"
                 % (label, r_tif.shape, keep.sum()))
    d = np.abs(r_tif[keep] - r_np[keep]).max()
    pptest.check(d < 1e-4, "%s: residual.tif equals numpy's residual (max diff %.2g)" % (label, d))
    pptest.check(pred["pixels"] == keep.sum(), "%s: voxels used %d" % (label, pred["pixels"]))
    for k, v in figures(r_np, keep, ax, e).items():
        pptest.check(abs(pred[k] - v) < 1e-4, "%s: %s %.6f vs numpy %.6f" % (label, k, pred[k], v))
    return pred


# 1a. Gaussian noise, lambda sampled, periodic (mtc)
gp = P("gauss.ome.tif")
A = lambda x, mode: ndimage.convolve(x, K, mode=mode, cval=0.0)
y = A(truth, "wrap") + 20.0 * rng.standard_normal(truth.shape)
tifffile.imwrite(gp, y.astype(np.float32), metadata=META)
pptest.run(["sample", gp, "--psf", PSF3, "--noise", "gaussian", "--prior", "gmrf1", "--boundary",
            "periodic", "--burn", 200, "--iters", 300, "--seed", 4, "--progress", "none", "-o",
            P("out_gauss")])
head, tr = pptest.read_trace(P("out_gauss/trace.csv"))
lam = tr[:, head.index("lambda")].mean()
y = tifffile.imread(gp).astype(np.float64)
ax = A(tifffile.imread(P("out_gauss/mean.tif")).astype(np.float64), "wrap")
pred = compare("gaussian periodic", P("out_gauss"), (y - ax) * np.sqrt(lam), ax, y - ax,
               np.ones(y.shape, bool))
pptest.check(pred is not None and pred["verdict"] == "fits",
             "gaussian periodic, right model: fits (%s)" % (pred and pred["warnings"]))

# 1b. camera noise, pad, 3-D PSF (hmc)
cp = P("cam.ome.tif")
tifffile.imwrite(P("truth.ome.tif"), truth.astype(np.float32), metadata=META)
pptest.run(["simulate", P("truth.ome.tif"), "--psf", PSF3, "--noise", ppcheckref.CAMERA,
            "--seed", 5, "--quiet", "-o", cp])
y = tifffile.imread(cp).astype(np.float64)


def camera_run(name, noise):
    out = P(name)
    p = pptest.run(["sample", cp, "--psf", PSF3, "--noise", noise, "--burn", 200, "--iters",
                    300, "--seed", 6, "--progress", "none", "-o", out])
    return out, p.stderr


out, _ = camera_run("out_cam", ppcheckref.CAMERA)
ax = A(tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64), "constant")
sd = np.sqrt(4.0 * (np.maximum(ax, 0) + 1.5 ** 2) + (1 / 12.0 if (y == np.round(y)).all() else 0))
keep = np.zeros(y.shape, bool)
rz, ry, rx = (n // 2 for n in K.shape)
keep[rz:D - rz, ry:H - ry, rx:W - rx] = True
pred = compare("camera pad", out, (y - 100 - 2 * ax) / sd, ax, y - 100 - 2 * ax, keep)
pptest.check(pred is not None and pred["verdict"] == "fits",
             "camera pad, right model: fits (%s)" % (pred and pred["warnings"]))

# 2. the gain inverted fires, naming the cause
out, err = camera_run("out_gain", "camera:gain=0.5,offset=100,read=1.5")
with open(os.path.join(out, "summary.json")) as f:
    pred = json.load(f)["predictive"]
text = " ".join(pred["warnings"]) if pred else ""
pptest.check(pred is not None and pred["verdict"] == "misfit" and "residual variance" in text and
             "the gain may be inverted" in text and "warning: predictive check" in err,
             "camera pad, gain inverted: fires and is printed (%s)" % text[:160])
pptest.done()
