"""Per-pixel diagnostics maps and --strict, through the real binary (issue 4).

1. A well-mixed run (mtc, periodic: nearly independent draws, 4 x 1500) has
   a split-R-hat map close to 1 everywhere (99th percentile < 1.01, the
   threshold of Vehtari et al. 2021) and no convergence warning; exit 0
   even with --strict. (For gibbs/mtc the map is the R-hat of the draws x,
   whose conditional variance given the hyperparameters is exact, so it is
   close to 1 unless the chains' conditional means differ by a good part of
   a posterior sd.)
2. Chains started apart and run briefly with a random-walk sampler (pcn, no
   burn-in, 30 draws) have a map clearly above 1 (median > 1.05), warnings
   in summary.json, and --strict exits 3 while still writing every output.
3. The MCSE map is the Monte Carlo error of the posterior mean: at least
   sd / sqrt(draws) (independent draws; the estimator's cap), below sd / 2,
   and at the probe pixels it agrees with the MCSE that
   summary.json gives for the probes' traces (sd / sqrt(ESS), Vehtari et
   al. 2021) — two different estimators of one quantity: the map's
   batch means over 8 half-chains have a relative error of about
   1/sqrt(2 x 7) ~ 0.27, so the median ratio over the 9 probes must lie in
   [0.6, 1.6]. gpcn with a Gaussian likelihood, whose draws are nearly
   independent, is used. numpy computes the statistics of the maps.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(3)
H, W = 40, 44
yy, xx = np.mgrid[0:H, 0:W]
truth = 30 + 10 * np.sin(xx / 5.0) * np.cos(yy / 7.0) + rng.standard_normal((H, W))
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
PSF = "gaussian:sigma=1.4"
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=1", "--boundary", "periodic", "--seed", "2", "-o",
            os.path.join(tmp, "y.tif")])


def sample(name, *extra, check=True):
    out = os.path.join(tmp, name)
    p = pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", PSF, "--boundary", "periodic",
                    "--quiet", "-o", out] + list(extra)
                   + ([] if "--prior" in extra else ["--prior", "gmrf1"]), check=check)
    return p, out


def maps(out):
    return (tifffile.imread(os.path.join(out, "rhat.tif")).astype(np.float64),
            tifffile.imread(os.path.join(out, "mcse.tif")).astype(np.float64),
            json.load(open(os.path.join(out, "summary.json"))))


p, good = sample("good", "--sampler", "mtc", "--iters", "1500", "--strict", check=False)
rh, mc, s = maps(good)
pptest.check(p.returncode == 0, "well-mixed run with --strict exits 0 (%d)" % p.returncode)
pptest.check(np.percentile(rh, 99) < 1.01 and abs(np.median(rh) - 1) < 0.005,
             "well-mixed: rhat map median %.4f, p99 %.4f" % (np.median(rh), np.percentile(rh, 99)))
pptest.check(abs(s["diagnostics"]["pixel_maps"]["rhat"]["p99"] - np.percentile(rh, 99)) < 1e-3,
             "summary.json pixel_maps.rhat.p99 matches the map (%.4f)"
             % s["diagnostics"]["pixel_maps"]["rhat"]["p99"])
pptest.check(not s["warnings"], "well-mixed: no warnings (%r)" % s["warnings"])

p, bad = sample("bad", "--sampler", "pcn", "--noise", "gaussian:sigma=1", "--burn", "0",
                "--iters", "30", "--strict", check=False)
rh_b, _, s_b = maps(bad)
pptest.check(p.returncode == 3, "brief, dispersed chains with --strict exit 3 (%d)" % p.returncode)
pptest.check(np.median(rh_b) > 1.05, "brief run: rhat map median %.3f > 1.05" % np.median(rh_b))
pptest.check(any("R-hat" in w for w in s_b["warnings"]), "brief run: an R-hat warning is listed")
pptest.check(all(os.path.exists(os.path.join(bad, f)) for f in
                 ("mean.tif", "sd.tif", "lo.tif", "hi.tif", "summary.json", "report.html")),
             "--strict still writes every output")

_, gp = sample("gpcn", "--sampler", "gpcn", "--noise", "gaussian:sigma=1", "--burn", "300",
               "--iters", "2000")
_, mc_g, s_g = maps(gp)
sd = tifffile.imread(os.path.join(gp, "sd.tif")).astype(np.float64)
n_draws = 4 * 2000
pptest.check(np.all(mc_g >= sd / np.sqrt(n_draws) * 0.999) and np.median(mc_g / sd) < 0.5,
             "MCSE between sd/sqrt(draws) (its cap) and sd/2 (median ratio %.4f)"
             % np.median(mc_g / sd))
ratios = [mc_g[int(k.split("_")[1]), int(k.split("_")[2])] / v["mcse"]
          for k, v in s_g["diagnostics"]["scalars"].items() if k.startswith("p_")]
pptest.check(len(ratios) == 9 and 0.6 < np.median(ratios) < 1.6,
             "mcse.tif at the probes / the probes' trace MCSE: median %.2f (%s)"
             % (np.median(ratios), " ".join("%.2f" % r for r in ratios)))
pptest.done()
