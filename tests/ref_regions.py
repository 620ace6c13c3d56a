"""Region totals (--regions) against the closed form, computed with numpy.

With lambda and delta fixed and periodic boundaries the posterior of x is
Gaussian, diagonal in Fourier: mean mu = F^-1[lam conj(A) Y / p], covariance
Sigma = F^-1 diag(1/p) F, p = lam |A|^2 + delta q (numpy.fft on the full
spectrum; as tests/ref_gibbs_closed_form.py). The total of a region R,
1_R' x, is then Gaussian with mean 1_R' mu and variance
1_R' Sigma 1_R = (1/N) sum_k |F 1_R (k)|^2 / p(k).

1. For the samplers gibbs, mtc and pcn (gibbs and mtc record the draw's
   totals from its spectrum; pcn the draw itself), regions.csv must give:
   - the mean of each total within 4.5 of its reported MCSE (mcse_mean:
     posterior's sd / sqrt(ess_basic)) of 1_R' mu;
   - its sd within 4.5 MCSE of the sd of sqrt(1_R' Sigma 1_R), where the
     MCSE of a Gaussian sample sd is taken as sd / sqrt(2 ess_bulk) (the
     large-sample variance of a normal sample sd, sd^2 / (2 n), with the ESS
     for n: common practice);
   - the interval at 0.95 within 4.5 such MCSEs (1.96 x the sd's) of
     1_R' mu -/+ 1.96 sd;
   - the "mean" rows = the totals / pixels (to 1e-8 relative);
   - for --compare A/B, the difference of the means against the closed form
     (mean and sd as above, with the vector 1_A/n_A - 1_B/n_B) and
     P(mean_A > mean_B) = Phi(d / s) within 4.5 of its MCSE;
   - R-hat of every total below 1.01 for gibbs and mtc (with both
     hyperparameters fixed their draws are exact and independent); pcn
     mixes slowly (R-hat up to ~1.5 on a single pixel here), so for it only
     the agreement within its own reported MCSE is asserted.
   4.5 MCSE over ~50 comparisons: a chance failure has probability ~3e-4.
2. Consistency where no closed form is at hand (--boundary pad, delta
   sampled: gibbs with the ASIS move and the padding's augmentation, and
   the default adaptive prior): a region of one pixel is that pixel, so its
   total's mean and sd must match mean.tif and sd.tif there (the
   Rao-Blackwellised pixel estimates, a different estimator of the same
   quantities) within 5 MCSE of their difference (the pixel's MCSE from
   mcse.tif is ignored: the Rao-Blackwellised mean is far more precise);
   and a larger region's total mean must match the sum of mean.tif over it
   within 5 of its MCSE.
"""
import csv
import math
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261204)
H, W = 30, 26
N = H * W
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
lam, dlt = 4.0, 0.8
y, A, p, mu = pptest.gmrf1_frame_posterior(tmp, truth, 5, lam, dlt)

# Labels: a rectangle, an irregular blob touching the right edge (wraps under
# periodic boundaries), a single pixel, a 1-pixel-wide line; label values
# not contiguous.
lab = np.zeros((H, W), np.uint16)
lab[2:8, 3:11] = 3
yy, xx = np.mgrid[0:H, 0:W]
lab[(yy - 18) ** 2 + (xx - 22) ** 2 <= 16] = 12
lab[25, 5] = 40
lab[10:22, 14] = 41
tifffile.imwrite(os.path.join(tmp, "labels.tif"), lab)


def closed(v):
    """Mean and sd of v' x under the exact posterior."""
    m = float(np.sum(v * mu))
    var = float(np.sum(np.abs(np.fft.fft2(v)) ** 2 / p)) / N
    return m, math.sqrt(var)


def read_rows(out):
    with open(os.path.join(out, "regions.csv")) as f:
        return list(csv.DictReader(f))


def phi(z):
    return 0.5 * (1 + math.erf(z / math.sqrt(2)))


def close(what, got, want, se, k=4.5, ref="closed form"):
    z = abs(got - want) / se
    pptest.check(z <= k, "%s: %.6g vs %s %.6g (%.2f MCSE, tolerance %g)" %
                 (what, got, ref, want, z, k))


for sampler, iters in (("gibbs", 1500), ("mtc", 1500), ("pcn", 6000)):
    out = os.path.join(tmp, sampler)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian:sigma=0.5", "--prior", "gmrf1:delta=%g" % dlt,
                "--boundary", "periodic", "--sampler", sampler, "--chains", "4",
                "--burn", "300" if sampler == "pcn" else "10", "--iters", str(iters),
                "--seed", "11", "--quiet", "-o", out,
                "--regions", os.path.join(tmp, "labels.tif"), "--compare", "3/12",
                "--compare", "41/40"])
    rows = read_rows(out)
    byk = {(r["kind"], r["label"], r["label_b"], r["quantity"]): r for r in rows}
    pptest.check(len(rows) == 4 * 2 + 2 * 3, "%s: regions.csv has 4 regions x 2 + 2 pairs x 3 rows"
                 % sampler)
    for L in (3, 12, 40, 41):
        ind = (lab == L).astype(np.float64)
        n = int(ind.sum())
        r = byk[("region", str(L), "", "total")]
        rm = byk[("region", str(L), "", "mean")]
        pptest.check(int(r["pixels"]) == n, "%s: label %d has %d pixels" % (sampler, L, n))
        m, s = closed(ind)
        got_m, got_s = float(r["mean"]), float(r["sd"])
        se_s = got_s / math.sqrt(2 * float(r["ess_bulk"]))
        close("%s label %d total mean" % (sampler, L), got_m, m, float(r["mcse_mean"]))
        close("%s label %d total sd" % (sampler, L), got_s, s, se_s)
        close("%s label %d total lo" % (sampler, L), float(r["lo"]), m - 1.959964 * s,
              1.96 * se_s + float(r["mcse_mean"]))
        close("%s label %d total hi" % (sampler, L), float(r["hi"]), m + 1.959964 * s,
              1.96 * se_s + float(r["mcse_mean"]))
        rel = abs(float(rm["mean"]) * n - got_m) / abs(got_m)
        pptest.check(rel < 1e-8 and abs(float(rm["sd"]) * n - got_s) <= 1e-8 * got_s,
                     "%s label %d: the mean row is the total / pixels" % (sampler, L))
        if sampler != "pcn":  # exact independent draws; pcn's R-hat is what it is
            pptest.check(float(r["rhat"]) < 1.01, "%s label %d: R-hat %s < 1.01" %
                         (sampler, L, r["rhat"]))
    for a, b in ((3, 12), (41, 40)):
        va = (lab == a) / float((lab == a).sum()) - (lab == b) / float((lab == b).sum())
        m, s = closed(va)
        d = byk[("compare", str(a), str(b), "difference")]
        gm, gs = float(d["mean"]), float(d["sd"])
        close("%s %d/%d difference mean" % (sampler, a, b), gm, m, float(d["mcse_mean"]))
        close("%s %d/%d difference sd" % (sampler, a, b), gs, s,
              gs / math.sqrt(2 * float(d["ess_bulk"])))
        pg = byk[("compare", str(a), str(b), "p_greater")]
        want = phi(m / s)
        got = float(pg["mean"])
        se = max(float(pg["mcse_mean"]) if pg["mcse_mean"] != "nan" else 0.0,
                 math.sqrt(max(want * (1 - want), 1e-12) / (4 * iters)))
        close("%s P(mean_%d > mean_%d)" % (sampler, a, b), got, want, se)
        rt = byk[("compare", str(a), str(b), "ratio")]
        ma = float(byk[("region", str(a), "", "mean")]["mean"])
        mb = float(byk[("region", str(b), "", "mean")]["mean"])
        pptest.check(abs(float(rt["mean"]) - ma / mb) < 0.01 * abs(ma / mb),
                     "%s %d/%d ratio's mean %.5g near the ratio of the means %.5g (within 1 %%: "
                     "the mean of a ratio is not the ratio of means, but the means' sds are "
                     "small here)" % (sampler, a, b, float(rt["mean"]), ma / mb))

# ---- 2. consistency with pad and sampled hyperparameters ------------------
for name, extra in (("gibbs_pad", ["--prior", "gmrf1", "--sampler", "gibbs"]),
                    ("adaptive_pad", [])):
    out = os.path.join(tmp, name)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian", "--boundary", "pad", "--chains", "4", "--burn", "300",
                "--iters", "1500", "--seed", "3", "--quiet", "-o", out,
                "--regions", os.path.join(tmp, "labels.tif")] + extra)
    rows = read_rows(out)
    byk = {(r["label"], r["quantity"]): r for r in rows}
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    r = byk[("40", "total")]
    gm, gs, se = float(r["mean"]), float(r["sd"]), float(r["mcse_mean"])
    close("%s single-pixel region mean" % name, gm, mean[25, 5], se, 5, "mean.tif")
    close("%s single-pixel region sd" % name, gs, sd[25, 5],
          gs / math.sqrt(2 * float(r["ess_bulk"])), 5, "sd.tif")
    for L in (3, 12, 41):
        r = byk[(str(L), "total")]
        close("%s label %d total mean" % (name, L), float(r["mean"]),
              float(mean[lab == L].sum()), float(r["mcse_mean"]), 5, "the sum of mean.tif")
pptest.done()
