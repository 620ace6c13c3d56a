"""Reference checks of src/rng.c against numpy and scipy (Debian python3-numpy
1.24, python3-scipy 1.10), through tests/probe_rng.

1. Raw Philox4x64-10 words equal numpy.random.Philox(key=seed + 2**64*stream,
   counter=...).random_raw() exactly, for several (seed, stream) pairs
   including the largest 64-bit seed, and across counter carries.
2. Goodness of fit, each at significance level 1e-3 with fixed seeds
   (12 tests in all, so a correct generator would fail one with probability
   about 1.2 % for a random seed; the seeds are fixed, so the outcome is
   deterministic):
   - Kolmogorov-Smirnov (scipy.stats.kstest) of 100000 bulk normals vs norm;
   - KS of 50000 gamma draws vs scipy.stats.gamma(a, scale=1/rate) for
     shapes 0.3, 1, 2.5, 1000 and 5e5 (the samplers use shape ~ N/2);
   - chi-square of 100000 Poisson draws vs scipy.stats.poisson.pmf for
     mu = 0.5, 4, 30, 1e4, 1e6, with cells pooled so every expected count is
     >= 5 (common practice for the chi-square approximation).
3. pp_hash64 / pp_hash_string equal an independent Python implementation of
   splitmix64 and 64-bit FNV-1a (the algorithms as published; non-ASCII bytes
   included).
"""
import numpy as np
import scipy.stats as st

import pptest

ALPHA = 1e-3
M64 = (1 << 64) - 1


def probe_values(args, kind=float):
    out = pptest.probe("rng", args).split()
    return np.array([kind(x) for x in out], dtype=object if kind is int else float)


def check_raw():
    n = 1003  # not a multiple of 4: ends inside a block
    for seed, stream in [(0, 0), (5, 7), (M64, 1), (12345678901234567890, M64)]:
        got = [int(x) for x in pptest.probe("rng", ["raw", seed, stream, n]).split()]
        # numpy.random.Philox: key words little-endian, counter starts at 0
        want = [int(x) for x in np.random.Philox(key=seed + (stream << 64)).random_raw(n)]
        pptest.check(got == want, "raw words == numpy Philox(key=%d + 2**64*%d), %d words"
                     % (seed, stream, n))
    for c in [M64 - 1, M64]:
        got = [int(x) for x in pptest.probe("rng", ["raw", 9, 2, 64, c]).split()]
        ctr = c + (c << 64) + (c << 128)
        want = [int(x) for x in np.random.Philox(key=9 + (2 << 64), counter=ctr).random_raw(64)]
        pptest.check(got == want, "counter carry from words 0-2 = %d matches numpy" % c)


def check_normals():
    z = probe_values(["normal", 424242, 0, 100000])
    p = st.kstest(z, "norm").pvalue
    pptest.check(p > ALPHA, "KS normals vs scipy norm: p = %.3g > %g" % (p, ALPHA))


def check_gamma():
    rate = 2.0
    for i, a in enumerate([0.3, 1.0, 2.5, 1000.0, 5e5]):
        g = probe_values(["gamma", 5000 + i, 1, 50000, repr(a), repr(rate)])
        p = st.kstest(g, st.gamma(a, scale=1.0 / rate).cdf).pvalue
        pptest.check(p > ALPHA, "KS gamma(shape=%g, rate=%g) vs scipy gamma: p = %.3g > %g"
                     % (a, rate, p, ALPHA))


def pooled_cells(mu, n):
    """Integer cell edges [lo, hi) around the mode, every expected count >= 5;
    the two tails are pooled into the end cells."""
    dist = st.poisson(mu)
    lo = int(dist.ppf(1e-7))
    hi = int(dist.isf(1e-7)) + 1
    ks = np.arange(lo, hi + 1)
    edges = [lo]
    acc = 0.0
    for k in ks[:-1]:
        acc += dist.pmf(k) * n
        if acc >= 5:
            edges.append(k + 1)
            acc = 0.0
    edges[-1] = hi  # the last partial cell joins its neighbour
    return np.array(edges), dist


def check_poisson():
    n = 100000
    for i, mu in enumerate([0.5, 4.0, 30.0, 1e4, 1e6]):
        k = probe_values(["poisson", 7000 + i, 3, n, repr(mu)])
        ok_int = bool(np.all(k == np.floor(k)) and np.all(k >= 0))
        edges, dist = pooled_cells(mu, n)
        # cell probabilities with the tails folded into the first / last cell
        cdf = dist.cdf(edges - 1)
        probs = np.diff(cdf)
        probs[0] += cdf[0]
        probs[-1] += dist.sf(edges[-1] - 1)
        obs = np.histogram(np.clip(k, edges[0], edges[-1] - 1), bins=edges)[0]
        chi2, p = st.chisquare(obs, probs * n)
        pptest.check(ok_int and p > ALPHA,
                     "chi-square Poisson(mu=%g) vs scipy poisson pmf, %d cells: p = %.3g > %g"
                     % (mu, len(obs), p, ALPHA))


def splitmix64(x):
    z = (x + 0x9E3779B97F4A7C15) & M64
    z = ((z ^ (z >> 30)) * 0xBF58476D1CE4E5B9) & M64
    z = ((z ^ (z >> 27)) * 0x94D049BB133111EB) & M64
    return z ^ (z >> 31)


def fnv1a(data, h):
    for b in data:
        h = ((h ^ b) * 0x100000001B3) & M64
    return h


def check_hash():
    for x in [0, 1, 0xDEADBEEF, M64]:
        got = int(pptest.probe("rng", ["hash64", x]))
        pptest.check(got == splitmix64(x), "pp_hash64(%d) == splitmix64 (Python)" % x)
    for seed, s in [(0, "frame_0001.tif"), (17, "/data/run 3/ß-tubulin.tif"), (M64, "a")]:
        got = int(pptest.probe("rng", ["hash", seed, s]))
        want = splitmix64(fnv1a(s.encode("utf-8"), 0xCBF29CE484222325 ^ seed))
        pptest.check(got == want, "pp_hash_string(%d, %r) == FNV-1a + splitmix64 (Python)"
                     % (seed, s))


check_raw()
check_normals()
check_gamma()
check_poisson()
check_hash()
pptest.done()
