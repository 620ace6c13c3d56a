"""Benchmark: ESS per second of delta, mtc vs gibbs (issue 6).

For each frame size (default 256, 512, 1024) a periodic frame is simulated
with numpy (smooth random scene, Gaussian PSF sigma 1.5, noise sd 0.5), then
`pixpost sample --boundary periodic --chains 1 --threads 1` runs gibbs and
mtc with the same burn-in and iterations. ESS of the delta trace is
Geyer's initial-positive-sequence estimator (Geyer, Statist. Sci. 7, 1992:
sum of autocorrelation pairs while positive), computed here with numpy;
the time is summary.json's timing.seconds_sampling (burn-in included).
A chain whose autocorrelation time is comparable to its length gives an
unreliable (usually optimistic) ESS: the table flags ESS < 20.

Usage: /usr/bin/python3 bench/mtc_bench.py PIXPOST_BINARY [SIZES...]
Prints one table row per size and sampler, then the ratios.
"""
import json
import os
import subprocess
import sys
import tempfile

import numpy as np
import tifffile

# Iterations per size: (burn, iters). Gibbs at 1024^2 costs ~0.1 s per
# iteration here, so the counts keep the whole run to a few minutes.
PLAN = {256: (200, 2000), 512: (150, 800), 1024: (100, 400)}


def ess_ips(x):
    """Initial positive sequence ESS (Geyer 1992), numpy FFT autocovariance."""
    n = len(x)
    x = x - x.mean()
    f = np.fft.rfft(x, 2 * n)
    acov = np.fft.irfft(f * np.conj(f))[:n] / n
    rho = acov / acov[0]
    s = 0.0
    for k in range(0, n - 1, 2):
        pair = rho[k] + rho[k + 1]
        if pair <= 0:
            break
        s += pair
    tau = max(2 * s - 1, 1.0 / n)
    return n / tau


def simulate(n, path, psf):
    rng = np.random.default_rng(n)
    k = np.fft.fftfreq(n)
    kk = k[:, None] ** 2 + k[None, :] ** 2
    scene = np.real(np.fft.ifft2(np.fft.fft2(rng.standard_normal((n, n))) / (1e-4 + kk)))
    scene = 100 + 20 * scene / scene.std()
    tifffile.imwrite(path, scene.astype(np.float32))
    out = path.replace(".tif", "_y.tif")
    subprocess.run([BIN, "simulate", path, "--psf", psf, "--noise", "gaussian:sigma=0.5",
                    "--boundary", "periodic", "--seed", "3", "-o", out], check=True)
    return out


def run(frame, kind, psf, burn, iters, outdir):
    subprocess.run([BIN, "sample", frame, "--psf", psf, "--boundary", "periodic", "--sampler",
                    kind, "--chains", "1", "--threads", "1", "--burn", str(burn), "--iters",
                    str(iters), "--seed", "5", "--quiet", "-o", outdir], check=True)
    s = json.load(open(os.path.join(outdir, "summary.json")))
    data = np.genfromtxt(os.path.join(outdir, "trace.csv"), delimiter=",", names=True)
    d = data["delta"]
    return s["timing"]["seconds_sampling"], ess_ips(d), d.mean(), d.std()


BIN = sys.argv[1] if len(sys.argv) > 1 else "pixpost"
sizes = [int(v) for v in sys.argv[2:]] or [256, 512, 1024]
psf = "gaussian:sigma=1.5"
tmp = tempfile.mkdtemp(prefix="mtc_bench_")
print("%6s %6s %6s %6s %9s %9s %10s %12s %12s" % ("size", "kind", "burn", "iters", "seconds",
                                                 "ESS", "ESS/s", "delta mean", "delta sd"))
ratios = []
for n in sizes:
    burn, iters = PLAN.get(n, (200, 1000))
    frame = simulate(n, os.path.join(tmp, "scene%d.tif" % n), psf)
    res = {}
    for kind in ("gibbs", "mtc"):
        out = os.path.join(tmp, "%s%d" % (kind, n))
        sec, ess, m, sd = run(frame, kind, psf, burn, iters, out)
        res[kind] = ess / sec
        flag = " (ESS < 20: unreliable)" if ess < 20 else ""
        print("%6d %6s %6d %6d %9.2f %9.1f %10.3f %12.6g %12.4g%s" % (n, kind, burn, iters, sec,
                                                                   ess, ess / sec, m, sd, flag))
        sys.stdout.flush()
    ratios.append((n, res["mtc"] / res["gibbs"]))
for n, r in ratios:
    print("%d^2: mtc / gibbs ESS per second of delta = %.1fx" % (n, r))
