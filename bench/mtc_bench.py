"""Benchmark: ESS per second of delta, mtc vs gibbs (issue 6).

For each frame size (default 256, 512, 1024) a periodic frame is simulated
with numpy (smooth random scene, sd 20 around 100; Gaussian PSF sigma 1.5;
noise sd 0.5 added by `pixpost simulate`), then `pixpost sample --boundary
periodic --chains 1 --threads 1` runs each sampler at its sensible settings:
  gibbs        thin 1 (every iteration draws x and updates lambda, delta);
               burn-in 200 (its delta chain needs several autocorrelation
               times to forget a dispersed start)
  mtc          thin 1, burn-in 20 (the independence proposal on log rho is
               accepted ~98 % of the time: the chain forgets its start in a
               couple of iterations); every kept iteration draws x
  mtc thin K   thin K: x drawn only every K-th iteration; the other
               iterations cost one marginal evaluation. The delta trace is
               recorded at kept draws only, so its ESS counts kept draws: as
               mtc's delta chain is already nearly independent per iteration,
               thinning cannot raise ESS per kept draw above ~1 and lowers
               ESS/s (it would pay only if ESS per iteration were << 1)
  mtc x once   thin = iters: one x draw in all; its time per iteration is
               the cost of the (lambda, delta) step alone.
ESS of the delta trace: Geyer's initial-positive-sequence estimator
(Geyer, Statist. Sci. 7, 1992; numpy FFT autocovariance), beside
summary.json's rank-normalised bulk ESS. Time: summary.json's
timing.seconds_sampling (burn-in included) -- "ESS/s". "ESS/s run" excludes
burn-in: ESS / (seconds per iteration x iters), the rate of a long run. A
chain whose ESS is < 20 is flagged (unreliable, usually optimistic).

Usage: /usr/bin/python3 bench/mtc_bench.py PIXPOST_BINARY [SIZES...]

Measured (this machine, 2 cores shared with other sessions at load ~2-3,
one thread; timings move by ~20 % with that load):
  size  gibbs ms/it  tau(delta)  mtc ms/it  (lambda,delta) step  ESS/kept  mtc/gibbs ESS/s
  256      1.41        9.8         1.63        0.26 ms             0.76        6.6x
  512      5.55        9.2         6.85        0.83 ms             0.87        6.8x
  1024    26.1        12.4        41.9         5.8 ms              0.72        6.2x
  (mtc thin 5: 6.4x, 4.1x, 5.1x.) The 50x target at 512^2 is out of reach
  on this frame: mtc's ESS per iteration is already ~0.8-1 and its cost per
  kept draw is that of an x draw (~6 ms at 512^2, about a gibbs iteration)
  plus the 0.83 ms step, so the ratio is bounded by gibbs's autocorrelation
  time of delta, tau ~ 9 at 512^2 (here it grows only from 9.8 to 12.4
  between 256^2 and 1024^2): at most ~9 x 5.55 / 6.85 ~ 7x. Counting every
  iteration's delta (not recorded: the trace keeps kept draws only) would
  give ~1 / 0.83 ms ~ 1200 draws/s vs gibbs's 18 ESS/s (~65x) -- a rate for
  delta alone, without the image draws the outputs need.
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

# size: (gibbs burn, gibbs iters, mtc iters, K). Gibbs at 1024^2 costs
# ~25 ms per iteration here; the counts keep the whole run to ~3 minutes.
PLAN = {256: (200, 4000, 1000, 5), 512: (200, 2000, 500, 5), 1024: (200, 1000, 300, 5)}
MTC_BURN = 20


def ess_ips(x):
    """Initial positive sequence ESS (Geyer 1992), shared with the tests."""
    return pptest.geyer_ess(x, monotone=False)


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


def run(frame, kind, psf, burn, iters, thin, outdir):
    subprocess.run([BIN, "sample", frame, "--psf", psf, "--boundary", "periodic", "--sampler",
                    kind, "--chains", "1", "--threads", "1", "--burn", str(burn), "--iters",
                    str(iters), "--thin", str(thin), "--seed", "5", "--quiet", "-o", outdir],
                   check=True)
    s = json.load(open(os.path.join(outdir, "summary.json")))
    data = np.genfromtxt(os.path.join(outdir, "trace.csv"), delimiter=",", names=True)
    d = np.atleast_1d(data["delta"])
    sec = s["timing"]["seconds_sampling"]
    moves = s.get("chain_moves") or [{}]
    return {"sec": sec, "spi": sec / (burn + iters), "ess": ess_ips(d) if len(d) > 3 else 0.0,
            "bulk": s["hyper"]["delta"].get("ess_bulk") or 0.0, "kept": len(d),
            "mean": d.mean(), "sd": d.std(), "acc": moves[0].get("acceptance")}


BIN = sys.argv[1] if len(sys.argv) > 1 else "pixpost"
sizes = [int(v) for v in sys.argv[2:]] or [256, 512, 1024]
psf = "gaussian:sigma=1.5"
tmp = tempfile.mkdtemp(prefix="mtc_bench_")
print("%5s %-11s %5s %5s %5s %8s %8s %8s %7s %8s %9s %10s %10s %6s" % (
    "size", "run", "burn", "iters", "thin", "seconds", "ms/iter", "ESS", "bulk", "ESS/kept",
    "ESS/s", "ESS/s run", "delta", "acc"))
summary = []
for n in sizes:
    gburn, giters, miters, K = PLAN.get(n, (200, 1000, 300, 5))
    frame = simulate(n, os.path.join(tmp, "scene%d.tif" % n), psf)
    runs = [("gibbs", "gibbs", gburn, giters, 1), ("mtc", "mtc", MTC_BURN, miters, 1),
            ("mtc thin %d" % K, "mtc", MTC_BURN, K * miters, K),
            ("mtc x once", "mtc", MTC_BURN, miters, miters)]
    res = {}
    for label, kind, burn, iters, thin in runs:
        out = os.path.join(tmp, "%s%d" % (label.replace(" ", "_"), n))
        r = run(frame, kind, psf, burn, iters, thin, out)
        r["rate"] = r["ess"] / r["sec"]
        r["rate_run"] = r["ess"] / (r["spi"] * iters)
        res[label] = r
        flag = " (ESS < 20: unreliable)" if r["ess"] < 20 and thin < iters else ""
        acc = "%.3f" % r["acc"] if r["acc"] is not None else "-"
        print("%5d %-11s %5d %5d %5d %8.2f %8.3f %8.1f %7.1f %8.3f %9.3f %10.3f %10.5g %6s%s" % (
            n, label, burn, iters, thin, r["sec"], 1e3 * r["spi"], r["ess"], r["bulk"],
            r["ess"] / r["kept"], r["rate"], r["rate_run"], r["mean"], acc, flag))
        sys.stdout.flush()
    summary.append((n, res, K))
print()
for n, res, K in summary:
    g, m, t, x = res["gibbs"], res["mtc"], res["mtc thin %d" % K], res["mtc x once"]
    print("%d^2: mtc/gibbs ESS/s of delta = %.1fx (burn-in included), %.1fx (long run); "
          "mtc thin %d: %.1fx; gibbs ESS per iteration %.4f (tau %.1f); mtc %.3f; "
          "x draw %.2f ms vs (lambda, delta) step %.2f ms; gibbs iteration %.2f ms" % (
              n, m["rate"] / g["rate"], m["rate_run"] / g["rate_run"], K,
              t["rate"] / g["rate"], g["ess"] / g["kept"], g["kept"] / g["ess"],
              m["ess"] / m["kept"], 1e3 * (m["spi"] - x["spi"]), 1e3 * x["spi"],
              1e3 * g["spi"]))
