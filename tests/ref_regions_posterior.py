"""The diagnostics in regions.csv against R's `posterior` package, end to
end: a region of one pixel placed on a probe pixel has as its total the
same draw as that probe's column of trace.csv (the probes record the draw
x at their pixel; the region computes it by another route, an inverse FFT
of the draw, so the two agree to ~1e-12 and trace.csv's 10 digits). R's
posterior (rhat, ess_bulk, ess_tail, mcse_mean, mean, sd, quantile2 at
0.025 / 0.975, type 7) on the trace column must equal the region's row to
2e-5 relative (regions.csv prints 6 to 10 significant digits). Samplers:
gibbs with lambda and delta sampled (autocorrelated draws, 4 chains) and
pcn (slower mixing, 3 chains, odd length). Missing Rscript or posterior is
a failure, never a skip (as tests/ref_diag_posterior.py).
"""
import csv
import os
import subprocess

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(31)
H, W = 30, 26
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", "5",
            "-o", os.path.join(tmp, "y.tif")])
probes = [(a * (H - 1) // 4, b * (W - 1) // 4) for a in (1, 2, 3) for b in (1, 2, 3)]
pick = [probes[0], probes[4], probes[8]]
lab = np.zeros((H, W), np.uint16)
for k, (r, c) in enumerate(pick):
    lab[r, c] = k + 1
tifffile.imwrite(os.path.join(tmp, "lab.tif"), lab)

R = r"""
suppressPackageStartupMessages(library(posterior))
f <- function(v) if (is.na(v)) "nan" else sprintf("%.17g", v)
for (path in commandArgs(trailingOnly = TRUE)) {
  x <- t(as.matrix(read.table(path)))
  dimnames(x) <- NULL
  q <- quantile2(x, probs = c(0.025, 0.975))
  v <- suppressWarnings(c(rhat(x), ess_bulk(x), ess_tail(x), mcse_mean(x), mean(x), sd(x), q))
  cat(basename(path), sapply(v, f), "\n")
}
"""
FIELDS = ["rhat", "ess_bulk", "ess_tail", "mcse_mean", "mean", "sd", "lo", "hi"]
for sampler, chains, iters in (("gibbs", 4, 400), ("pcn", 3, 501)):
    out = os.path.join(tmp, sampler)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "--prior", "gmrf1", "--boundary", "periodic", "--sampler", sampler,
                "--chains", chains, "--burn", "200", "--iters", iters, "--seed", "9",
                "--quiet", "-o", out, "--regions", os.path.join(tmp, "lab.tif")])
    head, vals = pptest.read_trace(os.path.join(out, "trace.csv"))
    with open(os.path.join(out, "regions.csv")) as fh:
        rows = {r["label"]: r for r in csv.DictReader(fh) if r["quantity"] == "total"}
    paths = []
    for k, (r, c) in enumerate(pick):
        col = vals[:, head.index("p_%d_%d" % (r, c))].reshape(chains, iters)
        path = os.path.join(tmp, "%s_%d.txt" % (sampler, k + 1))
        np.savetxt(path, col, fmt="%.17g")
        paths.append(path)
    p = subprocess.run(["Rscript", "-e", R] + paths, capture_output=True, text=True)
    pptest.check(p.returncode == 0, "Rscript with posterior ran (%s)" % p.stderr.strip()[-300:])
    for line in p.stdout.splitlines():
        name, *nums = line.split()
        label = name.split("_")[1].split(".")[0]
        got = rows[label]
        worst = max(abs(float(got[f]) - float(v)) / abs(float(v)) for f, v in zip(FIELDS, nums))
        pptest.check(worst < 2e-5, "%s region %s (one pixel at a probe): %s as R's posterior on "
                     "the probe's draws (worst rel diff %.1e)" % (sampler, label,
                                                                  ", ".join(FIELDS), worst))
    pptest.check(len(p.stdout.splitlines()) == 3, "%s: R answered for 3 regions" % sampler)
pptest.done()
