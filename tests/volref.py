"""Shared by the volume checks (tests/ref_volume_*.py): the weighted
Laplacian's eigenvalues (lap), and the dense model of a volume on its padded
grid (dense_model, for ref_volume_pad.py and ref_volume_pad_hyper.py): the circular
3 x 3 x 3 blur A and the first-order prior precision Q on a gd x gh x gw
grid (row-major, slowest axis first), increments along axis a weighted
(voxel_x / voxel_a)^2 as include/pixpost/prior.h says for volumes.
"""
import numpy as np


def lap(shape, vox):
    """Eigenvalues of the periodic first-order precision on a grid of any
    rank, full spectrum: sum_a w_a (2 - 2 cos(2 pi k_a / n_a)), w_a =
    (vox_x / vox_a)^2 (include/pixpost/prior.h; Rue & Held 2005 for the
    unweighted 2-D case)."""
    q = np.zeros(shape)
    for a, n in enumerate(shape):
        k = np.arange(n).reshape([-1 if b == a else 1 for b in range(len(shape))])
        q = q + (vox[-1] / vox[a]) ** 2 * (2 - 2 * np.cos(2 * np.pi * k / n))
    return q


def dense_model(grid, psf, vox):
    """Returns (A, Q, idx): n x n matrices for n = gd gh gw, and idx(z, a, b)
    the flat index of a grid voxel (wrapping)."""
    gd, gh, gw = grid
    n = gd * gh * gw

    def idx(z, a, b):
        return ((z % gd) * gh + a % gh) * gw + b % gw

    A = np.zeros((n, n))
    Q = np.zeros((n, n))
    w = [(vox[2] / v) ** 2 for v in vox]
    for z in range(gd):
        for a in range(gh):
            for b in range(gw):
                i = idx(z, a, b)
                for dz in range(3):
                    for da in range(3):
                        for db in range(3):
                            A[i, idx(z - dz + 1, a - da + 1, b - db + 1)] += psf[dz, da, db]
                for ax, wa in enumerate(w):
                    for sgn in (1, -1):
                        d = [0, 0, 0]
                        d[ax] = sgn
                        Q[i, i] += wa
                        Q[i, idx(z + d[0], a + d[1], b + d[2])] -= wa
    return A, Q, idx
