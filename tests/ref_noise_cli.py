"""Reference check of `pixpost simulate` through the binary: noise moments
against theory, and the noiseless forward model against scipy.

1. Flat truths (256 x 256 photons at mu = 2, 20, 200, periodic boundary, so
   the blur leaves them flat) with
     poisson:gain=G,offset=O          mean = O + G mu,  var = G^2 mu
     camera:gain=G,offset=O,read=R    mean = O + G mu,  var = G^2 (mu + R^2)
     gaussian:sigma=S                 mean = mu,        var = S^2
   (the camera model of include/pixpost/noise.h). Tolerance: 5 standard
   errors, with se(mean) = sqrt(var/n) and se(var) ~= var * sqrt(2/(n-1) +
   k/n), k the excess kurtosis (1/mu for Poisson counts, mu/(mu + R^2)^2 with
   read noise, 0 for Gaussian). With k = 0 this is the usual sqrt(2/(n-1))
   for near-Gaussian data; it is a large-n approximation, fine at n = 65536.
   Lag-1 correlations of neighbours must be within 5/sqrt(n) of 0 (noise is
   independent per pixel). Fixed seeds: the checks are deterministic.
2. --noise none equals scipy.signal.convolve2d(truth, psf, mode='same',
   boundary='wrap') for --boundary periodic and boundary='fill' (zero) for
   --boundary pad, with the kernel written by `pixpost psf` (source: scipy).
   One kernel is deliberately not point-symmetric, so a flipped kernel
   (correlation instead of convolution) would fail.
"""
import os

import numpy as np
import tifffile
from scipy.signal import convolve2d

import pptest

tmp = pptest.tmpdir()
P = lambda name: os.path.join(tmp, name)
N_SIDE = 256
n = N_SIDE * N_SIDE


def simulate(truth_path, out, psf, noise, seed, boundary="periodic"):
    # --overwrite: out is this check's scratch frame, rewritten on purpose
    pptest.run(["simulate", truth_path, "--psf", psf, "--noise", noise, "--seed", seed,
                "--boundary", boundary, "--quiet", "--overwrite", "-o", out])
    return tifffile.imread(out).astype(np.float64)  # tifffile reads it back


def moments_check(label, y, mean, var, kurt):
    m, v = y.mean(), y.var(ddof=1)
    se_m = np.sqrt(var / n)
    se_v = var * np.sqrt(2.0 / (n - 1) + kurt / n)  # large-n approximation (see top)
    pptest.check(abs(m - mean) < 5 * se_m, "%s: mean %.4f vs theory %.4f (5 se = %.4f)"
                 % (label, m, mean, 5 * se_m))
    pptest.check(abs(v - var) < 5 * se_v, "%s: variance %.4f vs theory %.4f (5 se = %.4f)"
                 % (label, v, var, 5 * se_v))
    d = y - m
    for axis, name in ((1, "row"), (0, "column")):
        a = np.moveaxis(d, axis, 0)
        r = float((a[1:] * a[:-1]).mean() / d.var())
        pptest.check(abs(r) < 5 / np.sqrt(n), "%s: lag-1 %s correlation %.4f within 5/sqrt(n) = %.4f"
                     % (label, name, r, 5 / np.sqrt(n)))


models = [
    # (spec, gain, offset, read or None for Poisson, gaussian sigma or None)
    ("poisson:gain=2,offset=100", 2.0, 100.0, 0.0, None),
    ("camera:gain=0.5,offset=100,read=1.6", 0.5, 100.0, 1.6, None),
    ("gaussian:sigma=2.5", 1.0, 0.0, None, 2.5),
]
seed = 7
for mu in (2.0, 20.0, 200.0):
    truth = P("flat_%g.tif" % mu)
    tifffile.imwrite(truth, np.full((N_SIDE, N_SIDE), mu, np.float32))
    for spec, g, o, r, s in models:
        seed += 1
        y = simulate(truth, P("y.tif"), "gaussian:sigma=1.5", spec, str(seed))
        label = "mu=%g %s" % (mu, spec.split(":")[0])
        if s is not None:
            moments_check(label, y, mu, s * s, 0.0)
            continue
        var = g * g * (mu + r * r)
        kurt = mu / (mu + r * r) ** 2  # fourth cumulant g^4 mu over var^2
        moments_check(label, y, o + g * mu, var, kurt)
        if r == 0.0:
            k = (y - o) / g  # Poisson: whole electron counts, never negative
            pptest.check(np.all(np.abs(k - np.round(k)) < 1e-4) and k.min() >= 0,
                         "%s: (ADU - offset)/gain are non-negative whole counts" % label)

# Same seed, same frame; another seed, another frame.
a = simulate(P("flat_20.tif"), P("a.tif"), "gaussian:sigma=1.5", models[0][0], "5")
b = simulate(P("flat_20.tif"), P("b.tif"), "gaussian:sigma=1.5", models[0][0], "5")
c = simulate(P("flat_20.tif"), P("c.tif"), "gaussian:sigma=1.5", models[0][0], "6")
pptest.check(np.array_equal(a, b), "simulate: the same seed gives the same frame")
pptest.check(not np.array_equal(a, c), "simulate: another seed gives another frame")

# ---- noiseless forward model vs scipy.signal.convolve2d ----------------------
rng = np.random.default_rng(12345)
truth = rng.uniform(0, 100, size=(48, 64)).astype(np.float32)  # not square: catches transposes
truth[10:14, 20:23] += 500.0
tifffile.imwrite(P("truth.tif"), truth)
# centroid at the centre, not point-symmetric, one connected spot (a file:
# PSF must be one bead, src/psf_bead.c)
asym = np.zeros((7, 7), np.float32)
asym[3, 3], asym[3, 4], asym[2, 2], asym[4, 2] = 2.0, 2.0, 1.0, 1.0
tifffile.imwrite(P("asym.tif"), asym)
psfs = ["gaussian:sigma=1.6", "airy:na=1.4,wavelength=0.52,pixel=0.065",
        "file:" + P("asym.tif")]
for i, spec in enumerate(psfs):
    kpath = P("kernel%d.tif" % i)
    pptest.run(["psf", spec, "--quiet", "-o", kpath])
    k = tifffile.imread(kpath).astype(np.float64)
    if spec.startswith("file:"):
        pptest.check(not np.allclose(k, k[::-1, ::-1]), "file kernel stays asymmetric")
    for boundary, sp in (("periodic", "wrap"), ("pad", "fill")):
        y = simulate(P("truth.tif"), P("y.tif"), spec, "none", "1", boundary)
        ref = convolve2d(truth.astype(np.float64), k, mode="same", boundary=sp)  # scipy
        err = np.abs(y - ref).max() / np.abs(ref).max()
        # float32 kernel file and float32 output: ~1e-7 relative rounding
        pptest.check(y.shape == ref.shape and err < 1e-5,
                     "%s %s: max |pixpost - scipy convolve2d(%s)| / max = %.2e (< 1e-5)"
                     % (spec.split(":")[0], boundary, sp, err))

pptest.done()
