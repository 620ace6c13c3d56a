#!/usr/bin/python3
"""bench/f32_moments.py — what float32 storage of the per-voxel running
moments would change (issue 18, memory item; bench/NOTES.md "volumes").
Welford updates computed in double and stored in float32 (mean and M2, or
M2 only) against all-double storage, on AR(1) draws (rho 0.5, so ESS =
n (1 - rho) / (1 + rho)) of 2000 independent voxels with sd 1 and mean
10, 100, 1000 sd. Prints max |dmean|/MCSE and max |dsd|/sd. numpy only;
fixed seed; ~2 minutes and ~3.5 GB (the 10^5-draw case holds its draws).
Run with /usr/bin/python3.
"""
import numpy as np
rng = np.random.default_rng(5)
for ratio in (10.0, 100.0, 1000.0):          # |mean| / sd of a voxel
    for n, rho in ((1000, 0.5), (10000, 0.5), (100000, 0.5)):
        P = 2000                              # voxels (independent series)
        e = rng.standard_normal((n, P))
        x = np.empty((n, P)); x[0] = e[0]
        for t in range(1, n):
            x[t] = rho * x[t-1] + np.sqrt(1 - rho*rho) * e[t]
        x = ratio + x                         # sd 1, mean `ratio`
        m64 = np.zeros(P); s64 = np.zeros(P)
        m32 = np.zeros(P, np.float32); s32 = np.zeros(P, np.float32)
        m32m = np.zeros(P)                    # mean double, M2 float32
        s32m = np.zeros(P, np.float32)
        for t in range(n):
            v = x[t]; k = t + 1
            d = v - m64; m64 += d / k; s64 += d * (v - m64)
            d = v - m32.astype(np.float64); mn = m32.astype(np.float64) + d / k
            s32 = (s32.astype(np.float64) + d * (v - mn)).astype(np.float32); m32 = mn.astype(np.float32)
            d = v - m32m; m32m += d / k; s32m = (s32m.astype(np.float64) + d * (v - m32m)).astype(np.float32)
        sd64 = np.sqrt(s64 / (n - 1)); ess = n * (1 - rho) / (1 + rho)
        mcse = sd64 / np.sqrt(ess)
        dm = np.max(np.abs(m32.astype(np.float64) - m64) / mcse)
        ds = np.max(np.abs(np.sqrt(s32.astype(np.float64) / (n - 1)) - sd64) / sd64)
        ds2 = np.max(np.abs(np.sqrt(s32m.astype(np.float64) / (n - 1)) - sd64) / sd64)
        print("mean/sd %6g n %6d: both float32: max|dmean|/MCSE %.2e max|dsd|/sd %.2e; "
              "M2 only float32: max|dsd|/sd %.2e (MC error of sd ~ %.1e)"
              % (ratio, n, dm, ds, ds2, 1 / np.sqrt(2 * ess)), flush=True)
