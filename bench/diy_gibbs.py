"""The do-it-yourself baseline: a straightforward numpy version of pixpost's
periodic Gibbs sampler for the linear-Gaussian model (the same model as
`bench_sampler gibbs ... prior=gmrf2 jeffreys=1` and as scikit-image's
unsupervised_wiener): x | lambda, delta, y ~ N(mu, P^-1) with
P = lambda |A|^2 + delta q^2 diagonal in Fourier space (q the 5-point
Laplacian's transfer function), lambda ~ Gamma(N/2, ||Ax - y||^2/2),
delta ~ Gamma((N-1)/2, ||L x||^2/2) (Jeffreys hyperpriors). One iteration:
N normals, one rfft2 (the noise), one irfft2 (the draw), elementwise numpy
and two sums, written the way a numpy user would (no fusing, temporaries
everywhere). It also keeps a running mean of the draws, as any user would.

Usage: /usr/bin/python3 bench/diy_gibbs.py FRAME.tif PSF.tif ITERS
Prints "diy_sec_iter=S" (median-free: total time / ITERS after 3 warm-up
iterations) and "diy_delta_mean=D" (a sanity value to compare with
pixpost's delta). numpy's FFT (pocketfft) is single-threaded.
"""
import sys
import time

import numpy as np
import tifffile


def transfer(psf, shape):
    """rfft2 of the kernel embedded in the grid, centre rolled to (0, 0)."""
    pad = np.zeros(shape)
    pad[:psf.shape[0], :psf.shape[1]] = psf
    pad = np.roll(pad, (-(psf.shape[0] // 2), -(psf.shape[1] // 2)), axis=(0, 1))
    return np.fft.rfft2(pad)


def main():
    y = tifffile.imread(sys.argv[1]).astype(np.float64)
    psf = tifffile.imread(sys.argv[2]).astype(np.float64)
    iters = int(sys.argv[3])
    H, W = y.shape
    N = H * W
    A = transfer(psf, y.shape)
    k1 = np.arange(H)[:, None]
    k2 = np.arange(W // 2 + 1)[None, :]
    q2 = (4 - 2 * np.cos(2 * np.pi * k1 / H) - 2 * np.cos(2 * np.pi * k2 / W)) ** 2
    Y = np.fft.rfft2(y)
    A2 = np.abs(A) ** 2
    rng = np.random.default_rng(1)
    lam, dl = 1.0 / np.var(y), 1.0
    mean = np.zeros_like(y)
    deltas = []
    t0 = None
    for it in range(iters + 3):
        if it == 3:
            t0 = time.perf_counter()
        p = lam * A2 + dl * q2
        p[0, 0] = lam * A2[0, 0] + 1e-300  # q = 0 at k = 0: flat prior on the mean
        mu = lam * np.conj(A) * Y / p
        w = np.fft.rfft2(rng.standard_normal((H, W)))
        x = np.fft.irfft2(mu + w / np.sqrt(p), s=(H, W))
        mean += x
        r = np.fft.irfft2(A * np.fft.rfft2(x), s=(H, W)) - y
        lap = 4 * x - np.roll(x, 1, 0) - np.roll(x, -1, 0) - np.roll(x, 1, 1) - np.roll(x, -1, 1)
        lam = rng.gamma(N / 2, 2.0 / np.sum(r * r))
        dl = rng.gamma((N - 1) / 2, 2.0 / np.sum(lap * lap))
        deltas.append(dl)
    sec = (time.perf_counter() - t0) / iters
    print("diy_sec_iter=%.6g diy_delta_mean=%.6g" % (sec, np.mean(deltas[len(deltas) // 2:])))


if __name__ == "__main__":
    main()
