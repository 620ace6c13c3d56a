"""The adaptive-prior Gibbs sampler on a volume (issue 18: the adaptive
prior in 3-D with anisotropic voxels; src/sampler_adaptive.c on a rank-3
grid) against a long independent numpy reference chain, as
tests/ref_adaptive_chain.py does for a frame.

Outside sources: numpy / scipy.linalg (tests/adaptref.py's reference chain,
written from src/adaptive.h's joint density, here with depth: increments
along x, y and z weighted c_a e^{s} tau, c = (spacing_x / spacing_a)^2;
x | W, lambda by a dense Cholesky factor of lambda A'A + D'WD, A built with
numpy.fft.fftn; s by random-walk Metropolis with tau integrated out; tau,
kappa, lambda exact), Geyer's initial monotone sequence ESS (Geyer,
Statist. Sci. 7, 1992; pptest.geyer_ess). pixpost runs through
tests/probe_volume (the library on raw float64 files).

Volume 4 x 5 x 6, an asymmetric random 3 x 3 x 3 PSF, a bright box and a
bright voxel, Gaussian noise sd 1; once with periodic boundaries and once
with pad (pixpost's grid 6 x 8 x 8; the numpy chain runs on that grid with
only the frame's voxels in the likelihood, A's rows of the frame, so the
padding is integrated out exactly where pixpost imputes it). Voxel {z, y, x} = {0.2, 0.1,
0.1} um: c_z = 0.25 and the blocks' z extent B_z = round(3 x 0.1 / 0.2) =
2 slices (src/adaptive.h's rule), so adaptive:block=3 gives 2 x 2 x 2 = 8
blocks with z neighbours in the block GMRF. lambda ~ Gamma(1, rate 1e-4);
delta = e^L ~ Gamma(1, rate 1) (hyper_delta=1,1, as
tests/ref_adaptive_pad_chain.py and for its reason: a field this small has
a second, minute mode at large delta with the default rate).

Compared (posterior means and sds, z = (pixpost - numpy) / sqrt(se_pp^2 +
se_np^2), the standard errors of tests/ref_adaptive_chain.py: Geyer ESS per
chain, summed; voxel means: pixpost's MCSE map; voxel sds: the delta method
with the numpy chain's kurtosis): lambda, delta, kappa and every voxel.
2 x (6 + 2 x 120) comparisons, each |z| < 4.2: two-sided P(|Z| > 4.2) =
2.7e-5, so a correct sampler fails one with probability below 492 x 2.7e-5
= 1.3 % (Bonferroni). Fixed seeds.

Measured (fixed seeds): periodic: worst |z| 1.95 (hyperparameters), 2.72
(voxel means), 3.23 (voxel sds); with PP_REF_SCALE=3 (three times longer
chains) 1.21, 2.65, 2.63 and mean z^2 0.99 / 1.00 (1.69 / 2.19 at scale 1:
no growth with length, so no bias the test can see). pad: 1.65, 4.01 (a
corner voxel of the frame beside the padding), 2.76; at PP_REF_SCALE=3 (pad
alone, so other noise draws) 1.27, 3.21, 2.74, mean z^2 1.11 / 1.50.
Can fail (measured, a binary built from a temporary edit of src/adaptive.c):
the ridge move's Gamma shape of a frame, N (nu + 1/2), left on volumes for
N (3 nu + 2) / 2: |z| 53 on lambda, 17 on delta, 59 on a voxel mean.
Runtime ~1 CPU minute per boundary on an idle machine.
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np

import adaptref
import pptest

SCALE = int(os.environ.get("PP_REF_SCALE", "1"))
D, H, W = 4, 5, 6
BLOCK, BZ = 3, 2
VOX = (0.2, 0.1, 0.1)
CA = tuple((VOX[2] / v) ** 2 for v in VOX)
NP_BURN, NP_ITERS = 2000, 30000 * SCALE
PP_CHAINS, PP_BURN, PP_ITERS = 8, 1000, 8000 * SCALE
ZMAX = 4.2

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261204)
N = D * H * W
psf = rng.uniform(0.1, 1.0, (3, 3, 3))
psf /= psf.sum()
truth = np.zeros((D, H, W))
truth[1:3, 1:4, 2:5] = 10.0
truth[3, 4, 0] = 20.0


def pixpost_run(boundary, y):
    return adaptref.volume_run(tmp, boundary, y, psf, (D, H, W), [
        "prior=adaptive:block=%d" % BLOCK, "boundary=" + boundary, "chains=%d" % PP_CHAINS,
        "burn=%d" % PP_BURN, "iters=%d" % PP_ITERS, "seed=5", "threads=2", "hyper_delta=1,1",
        "voxel=%g,%g,%g" % VOX])

def compare(boundary, seed):
    """pixpost on the volume with this boundary against the numpy chain
    (pad: the grid's extra voxels integrated out in numpy, A restricted to
    the frame's rows)."""
    if boundary == "periodic":
        y = A0 @ truth.ravel() + rng.standard_normal(N)
    else:  # pad: the frame blurred from a zero-filled surround, as pixpost models it
        big = np.zeros((D + 2, H + 2, W + 2))
        big[1:-1, 1:-1, 1:-1] = truth
        Ab = pptest.dense_blur3(psf, big.shape)
        y = (Ab @ big.ravel()).reshape(big.shape)[1:-1, 1:-1, 1:-1].ravel()
        y = y + rng.standard_normal(N)
    stdout, grid, pmean, psd, pmcse, head, tr = pixpost_run(boundary, y)
    pptest.check("kind gibbs" in stdout and (grid == (D, H, W)) == (boundary == "periodic"),
                 "%s: pixpost ran gibbs on the grid %s" % (boundary, "x".join(map(str, grid))))
    gd, gh, gw = grid
    A = A0 if boundary == "periodic" else pptest.dense_blur3(psf, grid)
    obs = np.array([(k * gh + i) * gw + j for k in range(D) for i in range(H) for j in range(W)])
    hyp, xs = adaptref.gibbs_chain(grid, BLOCK, (D, H, W), A[obs], y, obs, seed, NP_BURN,
                                   NP_ITERS, bz=BZ, ca=CA)
    ch = np.repeat(np.arange(PP_CHAINS), PP_ITERS)  # chain-major rows
    pptest.check(len(tr) == PP_CHAINS * PP_ITERS, "%s: trace of %d rows" % (boundary, len(tr)))
    for k, name in enumerate(("lambda", "delta", "kappa")):
        col = tr[:, head.index(name)]
        pm, psd_, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
        pptest.check(abs(zm) < ZMAX and abs(zsd) < ZMAX,
                     "%s %s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS "
                     "%.0f): z mean %.2f, z sd %.2f (|z| < %g)"
                     % (boundary, name, pm, psd_, pess, nm, nsd, ness, zm, zsd, ZMAX))
    pz = adaptref.pixel_z_arrays(pmean, psd, pmcse, xs, tr, head, ch)
    z_mean, z_sd, ess, ess2, ratio = (pz[k] for k in ("z_mean", "z_sd", "ess", "ess2", "ratio"))
    print("%s: voxel means: mean z^2 %.2f; voxel sds: mean z^2 %.2f; sd ratio pixpost/numpy "
          "%.3f..%.3f" % (boundary, (z_mean ** 2).mean(), (z_sd ** 2).mean(),
                          (psd / pz["nsd"]).min(), (psd / pz["nsd"]).max()))
    zm, im = np.abs(z_mean).max(), int(np.abs(z_mean).argmax())
    zd, idd = np.abs(z_sd).max(), int(np.abs(z_sd).argmax())
    pptest.check(zm < ZMAX, "%s: all %d voxel means within %g se of the numpy chain (worst |z| "
                 "%.2f at voxel %s)" % (boundary, N, ZMAX, zm, np.unravel_index(im, (D, H, W))))
    pptest.check(zd < ZMAX, "%s: all %d voxel sds within %g se of the numpy chain (worst |z| "
                 "%.2f at voxel %s)" % (boundary, N, ZMAX, zd, np.unravel_index(idd, (D, H, W))))
    pptest.check(ess.min() > 1000 and ess2.min() > 500 and ratio > 0.2,
                 "%s: Monte Carlo errors rest on enough effective draws (numpy voxel ESS min "
                 "%.0f, squared deviations %.0f; probe ratio %.2f)"
                 % (boundary, ess.min(), ess2.min(), ratio))


A0 = pptest.dense_blur3(psf, (D, H, W))
compare("periodic", 77)
compare("pad", 78)
pptest.done()
