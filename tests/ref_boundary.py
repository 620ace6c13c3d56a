"""--boundary pad vs periodic on a frame made by LINEAR convolution.

The frame is blurred with scipy.signal.convolve2d(mode='same',
boundary='fill') — the outside reference for "the scene is zero outside the
frame" — so the periodic model is wrong near the edges and the padded model
(padding pixels unobserved, redrawn each iteration) is right. The check: the
RMS error of the posterior mean against the truth in a border band (the
PSF radius wide) is clearly smaller with pad; we require a ratio < 0.7 and
print the measured value. Also, the pad run's 95 % bounds must cover the
truth in the band about as often as inside (>= 85 %; a loose bound, since
the prior is not the one that made the truth).
"""
import os

import numpy as np
import scipy.signal
import tifffile

import pptest

tmp = pptest.tmpdir()
H, W = 64, 72
yy, xx = np.mgrid[0:H, 0:W]
# Bright structure running into the edges: blobs and a ridge.
truth = 5 + 40 * np.exp(-((xx - 3) ** 2 + (yy - 30) ** 2) / 30.0)
truth += 30 * np.exp(-((xx - 60) ** 2 + (yy - 62) ** 2) / 20.0)
truth += 20 * np.exp(-((yy - 1.0 - 0.2 * xx) ** 2) / 4.0)
pptest.run(["psf", "gaussian:sigma=2", "-o", os.path.join(tmp, "psf.tif")])
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
R = psf.shape[0] // 2
blur = scipy.signal.convolve2d(truth, psf, mode="same", boundary="fill")
rng = np.random.default_rng(7)
y = blur + 0.5 * rng.standard_normal(blur.shape)
tifffile.imwrite(os.path.join(tmp, "y.tif"), y.astype(np.float32))

band = np.zeros((H, W), bool)
band[:R, :] = band[-R:, :] = band[:, :R] = band[:, -R:] = True
res = {}
for b in ("pad", "periodic"):
    out = os.path.join(tmp, b)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=2",
                "--boundary", b, "--chains", "2", "--burn", "200", "--iters", "400",
                "--seed", "3", "--quiet", "-o", out])
    m = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    lo = tifffile.imread(os.path.join(out, "lo.tif")).astype(np.float64)
    hi = tifffile.imread(os.path.join(out, "hi.tif")).astype(np.float64)
    res[b] = (np.sqrt(np.mean((m - truth)[band] ** 2)),
              np.sqrt(np.mean((m - truth)[~band] ** 2)),
              np.mean(((lo <= truth) & (truth <= hi))[band]))
    print("%-8s border RMSE %.3f  interior RMSE %.3f  border coverage %.3f" % ((b,) + res[b]))
ratio = res["pad"][0] / res["periodic"][0]
pptest.check(ratio < 0.7, "border-band RMSE pad/periodic = %.3f (< 0.7)" % ratio)
pptest.check(res["pad"][2] >= 0.85, "pad: 95%% bounds cover the truth in the border band (%.3f)" % res["pad"][2])
pptest.done()
