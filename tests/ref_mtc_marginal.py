"""mtc's log marginal density vs a direct DENSE computation with numpy.

On a tiny periodic frame (6 x 5, N = 30) the marginal of the data given the
noise precision lam and prior precision del is Gaussian,
    y ~ N(A m, Sigma),  Sigma = I / lam + A Q^+ A' / del,
with A the circulant blur matrix and Q the GMRF precision structure, both
built here entry by entry as dense N x N matrices (numpy.linalg: slogdet,
solve, pinv, qr) -- none of pixpost's Fourier-space code. For the intrinsic
priors gmrf1 / gmrf2 (null space = the constant vector, which carries no
information about del) the density is that of z = U'y, U an orthonormal
basis of the complement of the constant vector (numpy.linalg.qr), with
covariance U' Sigma U; the proper matern prior with mean=M uses the full
N-dimensional density with mean A M 1. pixpost's O(N) half-spectrum sum
(probe_mtc logmarg) must agree to 1e-8 relative (double rounding on N = 30
terms is ~1e-14; 1e-8 leaves room only for an error-free formula).
A deliberately wrong variant (dropping the zero-frequency exclusion) must
fail the same tolerance, to show the check can fire.
"""
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(6)
H, W = 6, 5
N = H * W
y = (10 + 3 * rng.standard_normal((H, W))).astype(np.float32)
frame = os.path.join(tmp, "y.tif")
tifffile.imwrite(frame, y)
y = y.astype(np.float64).ravel()

PSF = "gaussian:sigma=0.5"  # radius 2: a 5 x 5 kernel fits the 5-wide frame
out = pptest.probe("model", ["psf", PSF, 0]).split()
n = int(out[0])
kern = np.array([float(v) for v in out[1:]]).reshape(n, n)
R = n // 2


def idx(r, c):
    return (r % H) * W + (c % W)


# Dense circulant blur: (A x)[r, c] = sum_ab k[a, b] x[r - (a - R), c - (b - R)].
A = np.zeros((N, N))
for r in range(H):
    for c in range(W):
        for a in range(n):
            for b in range(n):
                A[idx(r, c), idx(r - (a - R), c - (b - R))] += kern[a, b]
# Dense periodic 5-point Laplacian (Rue & Held 2005, first-order intrinsic GMRF).
L = np.zeros((N, N))
for r in range(H):
    for c in range(W):
        i = idx(r, c)
        L[i, i] += 4
        for dr, dc in ((1, 0), (-1, 0), (0, 1), (0, -1)):
            L[i, idx(r + dr, c + dc)] -= 1

U = np.linalg.qr(np.hstack([np.ones((N, 1)), np.eye(N)[:, : N - 1]]))[0][:, 1:]


def dense_logpdf(z, S):
    sign, logdet = np.linalg.slogdet(S)
    assert sign > 0
    return -0.5 * (len(z) * np.log(2 * np.pi) + logdet + z @ np.linalg.solve(S, z))


def dense_intrinsic(Q, lam, dlt):
    S = np.eye(N) / lam + A @ np.linalg.pinv(Q) @ A.T / dlt
    return dense_logpdf(U.T @ y, U.T @ S @ U)


def dense_proper(Q, mean, lam, dlt):
    S = np.eye(N) / lam + A @ np.linalg.inv(Q) @ A.T / dlt
    return dense_logpdf(y - A @ (mean * np.ones(N)), S)


pairs = [(0.1, 0.05), (1.0, 1.0), (0.02, 3.0), (5.0, 0.001)]
flat = [v for p in pairs for v in p]
kappa2 = 8 * 1.0 / 3.0 ** 2  # matern range=3, nu=1: kappa = sqrt(8 nu)/range, alpha = 2
cases = [
    ("gmrf1", lambda lam, dlt: dense_intrinsic(L, lam, dlt)),
    ("gmrf2", lambda lam, dlt: dense_intrinsic(L @ L, lam, dlt)),
    ("matern:range=3,nu=1,mean=9.5",
     lambda lam, dlt: dense_proper(np.linalg.matrix_power(kappa2 * np.eye(N) + L, 2), 9.5, lam, dlt)),
]
for prior, dense in cases:
    got = [float(v) for v in pptest.probe("mtc", ["logmarg", frame, PSF, prior] + flat).split()]
    for (lam, dlt), g in zip(pairs, got):
        ref = dense(lam, dlt)
        rel = abs(g - ref) / abs(ref)
        pptest.check(rel < 1e-8, "%s lam=%g del=%g: half-spectrum log marginal %.12g vs dense "
                     "numpy %.12g (rel %.1e)" % (prior, lam, dlt, g, ref, rel))

# The check can fire: the full-N density of the intrinsic model with a tiny
# proper ridge on the constant (not the restricted one) differs.
lam, dlt = 1.0, 1.0
g = float(pptest.probe("mtc", ["logmarg", frame, PSF, "gmrf1", lam, dlt]).split()[0])
S = np.eye(N) / lam + A @ np.linalg.pinv(L) @ A.T / dlt
wrong = dense_logpdf(y - y.mean(), S)
pptest.check(abs(g - wrong) / abs(wrong) > 1e-6,
             "a wrong null-space treatment (full N-dim density) is detected (rel %.1e)"
             % (abs(g - wrong) / abs(wrong)))
pptest.done()
