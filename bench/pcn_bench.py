#!/usr/bin/python3
"""Benchmark (not a test): ESS per second of gpcn vs pcn on photon-counting
frames at a low (~5) and a high (~500) photon level per pixel.

Usage: /usr/bin/python3 bench/pcn_bench.py PIXPOST_BINARY [SIZE]

Each frame: log intensity drawn from the Matern prior (range 6, nu 1) around
log(level), Gaussian PSF sigma 1.5, Poisson counts (numpy). Both samplers run
the same settings (periodic, 2 chains, 1000 burn-in, 4000 kept, delta fixed
at the value used to draw the truth, prior mean free, i.e. the level is
sampled): the figure of merit is the smallest ESS over the 9 probe pixels
(Geyer's initial monotone sequence, summed over chains) divided by the
sampling seconds in summary.json. Prints one table row per run.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import tifffile

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "tests"))
import pptest  # noqa: E402  (tests/pptest.py: shared estimators)


def frame(level, size, tmp, seed):
    rng = np.random.default_rng(seed)
    k1 = np.arange(size)[:, None]
    k2 = np.arange(size)[None, :]
    q = (8.0 / 36 + 4 - 2 * np.cos(2 * np.pi * k1 / size) - 2 * np.cos(2 * np.pi * k2 / size)) ** 2
    delta = float(os.environ.get("PCN_BENCH_DELTA", "2.0"))
    z = np.log(level) + np.real(np.fft.ifft2(np.fft.fft2(rng.standard_normal((size, size)))
                                             / np.sqrt(delta * q)))
    r = np.arange(-4, 5)
    g = np.exp(-(r[:, None] ** 2 + r[None, :] ** 2) / (2 * 1.5 ** 2))
    pad = np.zeros((size, size))
    pad[:9, :9] = g / g.sum()
    A = np.fft.fft2(np.roll(pad, (-4, -4), axis=(0, 1)))
    mu = np.real(np.fft.ifft2(A * np.fft.fft2(np.exp(z))))
    n = rng.poisson(np.maximum(mu, 0)).astype(np.float32)
    path = os.path.join(tmp, "y_%g.tif" % level)
    tifffile.imwrite(path, n)
    return path, delta, float(n.mean())


def run(binary, path, kind, delta, out):
    subprocess.run([binary, "sample", path, "--psf", "gaussian:sigma=1.5", "--noise",
                    "poisson:gain=1,offset=0", "--prior", "matern:range=6,nu=1,delta=%g" % delta,
                    "--sampler", kind, "--boundary", "periodic", "--chains", "2", "--threads", "1",
                    "--burn", "1000", "--iters", "4000", "--seed", "5", "--quiet", "-o", out],
                   check=True)
    s = json.load(open(os.path.join(out, "summary.json")))
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    ch = tr[:, 0].astype(int)
    ess = min(sum(pptest.geyer_ess(tr[ch == c, j]) for c in np.unique(ch))
              for j, name in enumerate(head) if name.startswith("p_"))
    sec = s["timing"]["seconds_sampling"]
    return ess, sec, [c["acceptance"] for c in s["chain_moves"]], [c["step"] for c in s["chain_moves"]]


def main():
    binary = sys.argv[1]
    size = int(sys.argv[2]) if len(sys.argv) > 2 else 64
    tmp = tempfile.mkdtemp(prefix="pcn_bench_")
    print("%-6s %-5s %8s %9s %8s %8s %10s %s" % ("level", "kind", "photons", "min ESS", "seconds",
                                              "ESS/s", "accept", "beta"))
    for level in (5.0, 500.0):
        path, delta, mean_n = frame(level, size, tmp, 11)
        res = {}
        for kind in os.environ.get("PCN_BENCH_KINDS", "pcn gpcn").split():
            ess, sec, acc, beta = run(binary, path, kind, delta, os.path.join(tmp, "%s_%g" % (kind, level)))
            res[kind] = ess / sec
            print("%-6g %-5s %8.1f %9.1f %8.2f %8.1f %10.3f %.3g" % (level, kind, mean_n, ess, sec,
                                                                 ess / sec, np.mean(acc), np.mean(beta)))
        for kind in res:
            if kind != "pcn" and "pcn" in res:
                print("level %g: %s / pcn ESS per second = %.1f" % (level, kind, res[kind] / res["pcn"]))


if __name__ == "__main__":
    main()
