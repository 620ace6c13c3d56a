"""Reference check: pp_diag_compute (via tests/probe_diag) against R's
`posterior` package (Debian r-cran-posterior, 1.4.0 when written) on the
same draws: rhat, ess_bulk, ess_tail, mcse_mean, ess_basic, plus the bulk and
tail halves of rhat (posterior:::.rhat on z_scale(.split_chains(x)) and on
the folded draws), all to 1e-6 relative.

Source of truth: posterior::rhat, ess_bulk, ess_tail, mcse_mean, ess_basic
(Vehtari, Gelman, Simpson, Carpenter & Buerkner, Bayesian Analysis 16, 2021).
Draws are made with numpy (fixed seeds) and written to one text file per case
(chains rows of n numbers); R reads each file and transposes it into the
iterations x chains matrix posterior expects.

Where the definitions might not coincide (documented in diag.h / diag.c):
- draws with NaN/Inf: we return NaN everywhere; posterior would still give a
  finite rhat / ess_bulk for Inf (not tested here, by design);
- autocovariances: we zero-pad to good_size(2h) (2,3,5,7-smooth), posterior
  to 2 nextn(h) (2,3,5-smooth); both exceed 2h - 1, so both are the exact
  linear autocovariance up to FFT rounding (~1e-15 of lag 0);
- the normal quantile: pp_norm_quantile (|error| < 1e-14) vs R's qnorm.
Neither rounding difference is anywhere near 1e-6.

Missing Rscript or posterior is a FAILURE (CI installs r-cran-posterior),
never a skip.
"""
import math
import os
import shutil
import subprocess

import numpy as np

import pptest

REL_TOL = 1e-6  # our agreement target: far above rounding (~1e-13), far below any real bug
FIELDS = ["rhat", "rhat_bulk", "rhat_tail", "ess_bulk", "ess_tail", "ess_basic", "mcse_mean"]

R_SCRIPT = r"""
suppressPackageStartupMessages(library(posterior))
args <- commandArgs(trailingOnly = TRUE)
f <- function(v) if (is.na(v)) "nan" else sprintf("%.17g", v)
for (path in args) {
  x <- t(as.matrix(read.table(path)))      # iterations x chains
  dimnames(x) <- NULL
  if (startsWith(basename(path), "pixel_")) {  # rows are half-chains already
    cat(basename(path), f(rhat_basic(x, split = FALSE)), "\n")
    next
  }
  sp <- posterior:::.split_chains(x)
  rb <- posterior:::.rhat(posterior:::z_scale(sp))
  rt <- posterior:::.rhat(posterior:::z_scale(posterior:::.split_chains(posterior:::fold_draws(x))))
  vals <- suppressWarnings(c(rhat(x), rb, rt, ess_bulk(x), ess_tail(x), ess_basic(x),
                             mcse_mean(x)))
  cat(basename(path), sapply(vals, f), "\n")
}
"""


def ar1(rng, chains, n, rho, offsets=None):
    """AR(1) chains x_t = rho x_{t-1} + sqrt(1-rho^2) e_t, stationary start."""
    x = np.empty((chains, n))
    x[:, 0] = rng.standard_normal(chains)
    e = rng.standard_normal((chains, n)) * math.sqrt(1 - rho * rho)
    for t in range(1, n):
        x[:, t] = rho * x[:, t - 1] + e[:, t]
    if offsets is not None:
        x += np.asarray(offsets, dtype=float)[:, None]
    return x


def cases():
    rng = np.random.default_rng(20240611)
    c = {}
    c["iid_normal"] = rng.standard_normal((4, 1000))
    c["ar1_rho09"] = ar1(rng, 4, 1000, 0.9)
    c["student_t3"] = rng.standard_t(3, size=(4, 500))
    c["offsets"] = ar1(rng, 4, 300, 0.5, offsets=[0, 0, 0.4, 2.5])
    c["odd_n_201"] = ar1(rng, 3, 201, 0.5)
    c["one_chain_odd"] = ar1(rng, 1, 101, 0.3)
    c["antithetic_cap"] = ar1(rng, 4, 1000, -0.95)  # ESS above S log10 S: the cap binds
    c["ties_poisson"] = rng.poisson(0.7, size=(4, 200)).astype(float)
    c["tiny_n9"] = rng.standard_normal((2, 9))  # h = 4: Geyer loop never runs (max_t = 0)
    c["tiny_n7"] = rng.standard_normal((3, 7))  # h = 3, the smallest with an ESS
    c["n5_rhat_only"] = rng.standard_normal((2, 5))  # ESS is NA (h = 2), rhat defined
    c["constant"] = np.full((3, 50), 2.5)  # everything NA
    c["stuck_chains"] = np.repeat([[1.0], [2.0]], 20, axis=1)  # W = 0: bulk rhat Inf
    c["trend"] = np.linspace(0, 3, 4 * 400).reshape(4, 400) + rng.standard_normal((4, 400))
    return c


def pixel_cases():
    """Half-chain matrices (nhalves x m) of one pixel for pp_diag_pixel_maps."""
    rng = np.random.default_rng(77)
    return {
        "pixel_iid": rng.standard_normal((8, 250)),
        "pixel_ar09": ar1(rng, 8, 500, 0.9),
        "pixel_offsets": rng.standard_normal((8, 100)) + np.repeat([0.0, 1.5], 4)[:, None],
        "pixel_two_halves": 3.0 + 0.01 * rng.standard_normal((2, 40)),
    }


def pixel_direct(x):
    """numpy, straight from the draws: BDA3 R-hat on the given half-chains and
    the batch-means MCSE documented in diag.h."""
    k, m = x.shape
    w = x.var(axis=1, ddof=1).mean()
    b_over_m = x.mean(axis=1).var(ddof=1)
    var_plus = (m - 1) / m * w + b_over_m
    var_mean = max(b_over_m / k, var_plus / (k * m))
    return math.sqrt(var_plus / w), math.sqrt(var_mean), var_plus / var_mean


def parse(text):
    out = {}
    for line in text.strip().splitlines():
        k, v = line.split()
        out[k] = float(v)
    return out


def agree(a, b):
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    if math.isinf(a) or math.isinf(b):
        return a == b
    return abs(a - b) <= REL_TOL * max(abs(b), 1e-300)


def main():
    tmp = pptest.tmpdir()
    rscript = shutil.which("Rscript")
    pptest.check(rscript is not None,
                 "Rscript found on PATH (install r-base-core and r-cran-posterior)")
    if rscript is None:
        pptest.done()
    data = cases()
    pix = pixel_cases()
    paths = []
    for name, x in list(data.items()) + list(pix.items()):
        p = os.path.join(tmp, name)
        np.savetxt(p, x, fmt="%.17g")
        paths.append(p)
    script = os.path.join(tmp, "ref.R")
    with open(script, "w") as fh:
        fh.write(R_SCRIPT)
    r = subprocess.run([rscript, script] + paths, capture_output=True, text=True)
    pptest.check(r.returncode == 0,
                 "R posterior ran (library(posterior) must load; Debian r-cran-posterior): "
                 + r.stderr.strip()[-300:])
    if r.returncode != 0:
        pptest.done()
    ref = {}
    for line in r.stdout.strip().splitlines():
        parts = line.split()
        ref[parts[0]] = [float(v) for v in parts[1:]]
    worst = 0.0
    for name, x in data.items():
        ours = parse(pptest.probe("diag", [x.shape[0], x.shape[1], os.path.join(tmp, name)]))
        theirs = ref.get(name)
        pptest.check(theirs is not None and len(theirs) == len(FIELDS), "R gave values for " + name)
        if theirs is None:
            continue
        for field, want in zip(FIELDS, theirs):
            got = ours[field]
            ok = agree(got, want)
            if ok and math.isfinite(got) and math.isfinite(want):
                worst = max(worst, abs(got - want) / max(abs(want), 1e-300))
            pptest.check(ok, "%s %s: ours %.12g vs posterior %.12g (rel tol %g; R posterior)"
                         % (name, field, got, want, REL_TOL))
    print("largest relative difference over finite values: %.3g" % worst)
    worst_pix = 0.0
    for name, x in pix.items():
        ours = parse(pptest.probe("diag", ["pixel", x.shape[0], x.shape[1],
                                           os.path.join(tmp, name)]))
        want = ref[name][0]
        pptest.check(agree(ours["rhat"], want),
                     "%s pixel-map rhat %.12g vs posterior rhat_basic(split=FALSE) %.12g"
                     % (name, ours["rhat"], want))
        d_rhat, d_mcse, d_ess = pixel_direct(x)
        for field, v in (("rhat", d_rhat), ("mcse", d_mcse), ("ess", d_ess)):
            pptest.check(agree(ours[field], v), "%s pixel-map %s %.12g vs numpy direct %.12g"
                         % (name, field, ours[field], v))
            worst_pix = max(worst_pix, abs(ours[field] - v) / abs(v))
        worst_pix = max(worst_pix, abs(ours["rhat"] - want) / want)
    print("pixel maps: largest relative difference %.3g" % worst_pix)
    pptest.check(ref["pixel_offsets"][0] > 1.1, "offset half-chains have rhat > 1.1 in posterior")
    # The cases must exercise what they claim (else a check above proves little).
    ab = ref["antithetic_cap"]
    s = 4 * 1000
    pptest.check(abs(ab[FIELDS.index("ess_basic")] - s * math.log10(s)) < 1e-6 * s,
                 "antithetic case hits posterior's ESS cap S log10 S")
    pptest.check(ref["offsets"][0] > 1.1, "offset chains have rhat > 1.1 in posterior")
    # Folded stuck chains are constant (|x - 1.5| = 0.5), so posterior's rhat
    # is NA while its bulk part is Inf (within variance 0).
    st = ref["stuck_chains"]
    pptest.check(math.isinf(st[1]) and math.isnan(st[0]),
                 "stuck chains: posterior's bulk rhat is Inf and rhat NA")
    pptest.done()


main()
