"""The adaptive prior's operators on a volume against numpy's dense
matrices (issue 18: "Priors in 3-D with anisotropic voxels ..., the
adaptive prior included"). Outside source: numpy / numpy.linalg, with the
increment matrix D and the blur A built here from their definitions
(src/incr.h's increments along z, y and x of a periodic D x H x W grid;
A by numpy.fft.fftn of the centred kernel), not from the C code.

Volume 4 x 5 x 6 (N = 120; even and odd sides, depth 4).

1. D'WD (tests/probe_incr: pp_incr_apply on every unit vector) against the
   dense D' diag(w) D, weights log-uniform over six decades: equal to
   1e-12 relative to the largest weight (each entry is a sum of at most 6
   weights: rounding is ~1e-16 of that). Also its diagonal (pp_incr_diag),
   x'D'WDx (pp_incr_quad, rel. 1e-12) and D'(sqrt(w) xi) (pp_incr_perturb,
   1e-12 of sqrt(max w)). A frame's operator (D = 1: no z increments) is
   checked the same way on 5 x 6.
2. x | W, lambda by perturbation-optimisation on the rank-3 grid
   (tests/probe_po with depth 4; src/po_solve.c) against the dense Gaussian
   posterior N(P^-1 lam A'y, P^-1), P = lam A'A + D'WD: an asymmetric
   3 x 3 x 3 PSF (random positive values: an axis flip changes A),
   anisotropic voxels (axis factors c = {0.16, 1, 1}, i.e. z spacing 2.5
   times x's, folded into the weights as src/adaptive.h does and given to
   the preconditioner), weights log-uniform over 4 decades times c_a,
   tol 1e-10, 20000 independent draws: the 120 voxel means within 4.5
   standard errors of the dense mean (max |z|; for 120 independent normals
   P(max |z| > 4.5) ~ 120 x 6.8e-6 = 8e-4) and each voxel's sample variance
   / dense variance within 1 +- 4 sqrt(2/n) (the sample variance of n
   normal draws has relative sd sqrt(2/(n-1)); P(any of 120 outside) ~
   120 x 6.3e-5 = 8e-3). Every draw converged (status 0, relres <= tol).
"""
import os

import numpy as np

import pptest

PP_OK = 0
Dz, H, W = 4, 5, 6


def incr_matrix(d, h, w):
    """Dense increment matrix: rows x (horizontal), then y (vertical), then
    z (d > 1 only), each N rows indexed by the increment's first voxel;
    +1 at the voxel it ends at, -1 at its first (periodic)."""
    n = d * h * w
    idx = np.arange(n).reshape(d, h, w)
    blocks = []
    for axis in (2, 1, 0)[: 3 if d > 1 else 2]:
        M = np.zeros((n, n))
        nxt = np.roll(idx, -1, axis=axis).ravel()
        M[np.arange(n), nxt] += 1
        M[np.arange(n), np.arange(n)] -= 1
        blocks.append(M)
    return np.vstack(blocks)


def check_incr(d, h, w, rng):
    n = d * h * w
    wz, wh, wv = (10 ** rng.uniform(-3, 3, n) for _ in range(3))
    x = rng.standard_normal(n)
    xi = [rng.standard_normal(n) for _ in range(3)]  # xi_z, xi_h, xi_v
    tmp = pptest.tmpdir()
    fin, fout = os.path.join(tmp, "incr%d.in" % d), os.path.join(tmp, "incr%d.out" % d)
    np.concatenate([[d, h, w], wz, wh, wv, x] + xi).astype(float).tofile(fin)
    pptest.probe("incr", [fin, fout])
    out = np.fromfile(fout)
    M = out[: n * n].reshape(n, n)
    diag, quad, pert = out[n * n: n * n + n], out[n * n + n], out[n * n + n + 1:]
    Dm = incr_matrix(d, h, w)
    wall = np.concatenate([wh, wv, wz] if d > 1 else [wh, wv])
    ref = Dm.T @ (wall[:, None] * Dm)
    err = np.abs(M - ref).max() / wall.max()
    tag = "%dx%dx%d" % (d, h, w)
    pptest.check(err <= 1e-12, "%s: D'WD equals numpy's dense matrix (max error %.2e of the "
                 "largest weight; bound 1e-12)" % (tag, err))
    pptest.check(np.abs(diag - np.diag(ref)).max() / wall.max() <= 1e-12,
                 "%s: diagonal equals numpy's" % tag)
    qref = x @ ref @ x
    pptest.check(abs(quad - qref) <= 1e-12 * abs(qref), "%s: x'D'WDx %.15g vs numpy %.15g"
                 % (tag, quad, qref))
    xs = np.concatenate([xi[1], xi[2], xi[0]] if d > 1 else [xi[1], xi[2]])
    pref = Dm.T @ (np.sqrt(wall) * xs)
    perr = np.abs(pert - pref).max() / np.sqrt(wall.max())
    pptest.check(perr <= 1e-12, "%s: D'(sqrt(w) xi) equals numpy's (max error %.2e of "
                 "sqrt(max w))" % (tag, perr))
    return Dm


def main():
    rng = np.random.default_rng(20261204)
    check_incr(1, H, W, rng)
    Dm = check_incr(Dz, H, W, rng)

    # 2. x | W on the volume
    n = Dz * H * W
    psf = rng.uniform(0.1, 1.0, (3, 3, 3))
    psf /= psf.sum()
    T = np.fft.fftn(pptest.centred_kernel(psf, (Dz, H, W)))
    eye = np.eye(n).reshape(n, Dz, H, W)
    A = np.real(np.fft.ifftn(T[None] * np.fft.fftn(eye, axes=(1, 2, 3)), axes=(1, 2, 3)))
    A = A.reshape(n, n).T
    # the probe's y on the grid, and the transfer function as its half spectrum
    otf = T[:, :, : W // 2 + 1]
    lam, tol, ndraw = 1e3, 1e-10, 20000
    ca = np.array([0.16, 1.0, 1.0])  # {z, y, x}: z spacing 2.5 x the in-plane one
    truth = rng.random(n) * 5
    y = A @ truth + rng.standard_normal(n) / np.sqrt(lam)
    wh = 10 ** rng.uniform(-1, 3, n) * ca[2]
    wv = 10 ** rng.uniform(-1, 3, n) * ca[1]
    wz = 10 ** rng.uniform(-1, 3, n) * ca[0]
    wall = np.concatenate([wh, wv, wz])
    P = lam * A.T @ A + Dm.T @ (wall[:, None] * Dm)
    C = np.linalg.inv(0.5 * (P + P.T))
    mu = C @ (lam * A.T @ y)
    tmp = pptest.tmpdir()
    fin, fout = os.path.join(tmp, "po.in"), os.path.join(tmp, "po.out")
    hd = np.array([H, W, lam, 1.0, tol, 2000, ndraw, 5, 0], float)
    oz = np.stack([otf.real, otf.imag], -1).ravel()
    np.concatenate([hd, y, oz, wh, wv, np.zeros(n), wz]).tofile(fin)
    pptest.probe("po", [fin, fout, Dz] + list(ca))
    out = np.fromfile(fout)
    info = out[: 3 * ndraw].reshape(ndraw, 3)
    mean, var = out[3 * ndraw: 3 * ndraw + n], out[3 * ndraw + n: 3 * ndraw + 2 * n]
    it = info[:, 0]
    print("4x5x6 tol 1e-10: CG iterations per draw min %d median %d max %d"
          % (it.min(), np.median(it), it.max()))
    pptest.check(np.all(info[:, 2] == PP_OK) and np.all(info[:, 1] <= tol),
                 "4x5x6: all %d draws converged to tol %g (max relres %.2e)"
                 % (ndraw, tol, info[:, 1].max()))
    z = (mean - mu) / np.sqrt(np.diag(C) / ndraw)
    pptest.check(np.abs(z).max() < 4.5, "4x5x6: max |z| of the 120 voxel means %.2f < 4.5 "
                 "(mean z^2 %.3f)" % (np.abs(z).max(), (z ** 2).mean()))
    vr = var / np.diag(C)
    vt = 4 * np.sqrt(2 / ndraw)
    pptest.check(np.abs(vr - 1).max() <= vt, "4x5x6: variance ratios %.4f..%.4f within 1 +- %.4f"
                 % (vr.min(), vr.max(), vt))
    # the blur must matter: a z-flipped PSF gives a different posterior mean
    Tf = np.fft.fftn(pptest.centred_kernel(psf[::-1], (Dz, H, W)))
    pptest.check(np.abs(Tf - T).max() > 1e-3, "the PSF is asymmetric along z (a flip changes A)")
    pptest.done()


if __name__ == "__main__":
    main()
