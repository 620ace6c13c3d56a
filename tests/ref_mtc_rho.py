"""mtc's rho-scheme draws of (lambda, delta) vs the exact marginal posterior.

mtc draws r = log(lambda/delta) from its 1-D marginal by an independence
Metropolis step, then lambda | rho exactly (Gamma) and delta = lambda/rho
(src/sampler_mtc.c). Here the posterior of (lambda, delta) is computed
independently with numpy on a 241 x 241 grid in (log lambda, log delta):
    log p = -1/2 sum_k [log c_k + |Y_k|^2 / (N c_k)] + log priors + Jacobian,
    c_k = 1/lambda + |A_k|^2 / (delta q_k)   over the q_k > 0 frequencies
(numpy.fft.fft2 of the frame and of pixpost's kernel placed with wrap; the
Gamma(1, 1e-4) hyperpriors; the same formula as
tests/ref_gibbs_closed_form.py part 2 and tests/ref_mtc_gibbs.py). On a
small periodic frame (28 x 24, simulated here with numpy) the sampled
posterior must match it within Monte Carlo error:
  * means of lambda, delta and log rho: |difference| < 4 batch-means
    standard errors (20 batches per chain) + 0.2 % (grid discretisation);
  * sds: within 4 x sd / sqrt(2 ESS) + 0.5 % (the sd of an sd estimate of a
    near-Gaussian quantity is about sd / sqrt(2 ESS); ESS from the batch
    means);
  * the fraction of draws below the exact 5 %, 50 % and 95 % quantiles of
    lambda and of delta: within 4 binomial sds sqrt(p (1 - p) / ESS).
The same for the 1-D cases: delta fixed (prior ...,delta=D: lambda free)
and lambda fixed (noise gaussian:sigma=S: delta free), against 1-D grids.
The independence proposal must fit: acceptance in summary.json's
chain_moves above 0.8 (measured 0.95-0.98 on such frames) and the delta
trace nearly independent (ESS over 0.5 per draw).
A deliberately wrong posterior (the Jacobian of (lambda, delta) ->
(lambda, rho) dropped, i.e. one power of lambda/rho^2 missing) must fail the
same mean check, to show the check can fire.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261207)
H, W = 28, 24
N = H * W
PSF = "gaussian:sigma=1.2"
pptest.run(["psf", PSF, "-o", os.path.join(tmp, "psf.tif")])
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
A = pptest.transfer(psf, (H, W))
q = pptest.gmrf1_q(H, W)  # gmrf1 (Rue & Held)
nz = q > 1e-12
truth = 50 + np.cumsum(np.cumsum(rng.standard_normal((H, W)), 0), 1) / 4
y = np.real(np.fft.ifft2(np.fft.fft2(truth) * A)) + 0.3 * rng.standard_normal((H, W))
frame = os.path.join(tmp, "y.tif")
tifffile.imwrite(frame, y.astype(np.float32))
y = tifffile.imread(frame).astype(np.float64)
a2, qq = np.abs(A[nz]) ** 2, q[nz]
yy = np.abs(np.fft.fft2(y)[nz]) ** 2 / N
HL = HD = (1.0, 1e-4)  # pixpost's default Gamma(shape, rate) hyperpriors


def log_marg(lam, dlt):
    c = 1.0 / lam + a2 / (dlt * qq)
    return -0.5 * np.sum(np.log(c)) - 0.5 * np.sum(yy / c)


def log_prior(ll, h):  # Gamma(shape, rate) on e^ll, in ll (Jacobian e^ll)
    return h[0] * ll - h[1] * np.exp(ll)


def batch(d, chains):
    """Batch-means se (20 batches per chain) and the ESS it implies (<= n)."""
    se = pptest.batch_se(d, chains)
    return se, pptest.batch_ess(d, se)


def sample(name, extra, chains=4, iters=4000):
    out = os.path.join(tmp, name)
    pptest.run(["sample", frame, "--psf", PSF, "--boundary", "periodic", "--sampler", "mtc",
                "--chains", str(chains), "--burn", "100", "--iters", str(iters), "--seed", "31",
                "--quiet", "-o", out] + extra
               + ([] if "--prior" in extra else ["--prior", "gmrf1"]))
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    return head, tr, json.load(open(os.path.join(out, "summary.json")))


def grid_quantiles(x, p, probs):
    cdf = np.cumsum(p) / np.sum(p)
    return np.interp(probs, cdf, x)


def compare(label, draws, xs, px, chains):
    """draws: sampled values; xs, px: grid values of the same quantity and weights."""
    px = px / px.sum()
    mean = np.sum(px * xs)
    sd = np.sqrt(np.sum(px * (xs - mean) ** 2))
    se, ess = batch(draws, chains)
    dm = abs(draws.mean() - mean)
    pptest.check(dm < 4 * se + 2e-3 * abs(mean), "%s mean: mtc %.6g vs exact grid %.6g (|d| %.2g, "
                 "tol %.2g, ESS %.0f)" % (label, draws.mean(), mean, dm, 4 * se + 2e-3 * abs(mean),
                                         ess))
    tol = 4 * sd / np.sqrt(2 * ess) + 5e-3 * sd
    pptest.check(abs(draws.std(ddof=1) - sd) < tol, "%s sd: mtc %.5g vs exact grid %.5g (tol %.2g)"
                 % (label, draws.std(ddof=1), sd, tol))
    return mean, sd, ess


def check_quantiles(label, draws, xs, px, ess):
    order = np.argsort(xs)
    for prob in (0.05, 0.5, 0.95):
        qv = grid_quantiles(xs[order], px[order], prob)
        frac = np.mean(draws < qv)
        tol = 4 * np.sqrt(prob * (1 - prob) / ess)
        pptest.check(abs(frac - prob) < tol, "%s: fraction below the exact %g quantile %.4f "
                     "(tol %.4f)" % (label, prob, frac, tol))


# ---- both free: the rho scheme --------------------------------------------
head, tr, summ = sample("free", [])
lam, dlt = tr[:, head.index("lambda")], tr[:, head.index("delta")]
ll0, ld0 = np.log(np.median(lam)), np.log(np.median(dlt))
sl, sd_ = np.log(lam).std(), np.log(dlt).std()
gl = np.linspace(ll0 - 8 * sl, ll0 + 8 * sl, 241)
gd = np.linspace(ld0 - 8 * sd_, ld0 + 8 * sd_, 241)
LP = np.array([[log_marg(np.exp(a), np.exp(b)) + log_prior(a, HL) + log_prior(b, HD)
                for b in gd] for a in gl])
P = np.exp(LP - LP.max())
pptest.check(P[0, :].max() < 1e-8 and P[-1, :].max() < 1e-8 and P[:, 0].max() < 1e-8 and
             P[:, -1].max() < 1e-8, "the grid holds the posterior (edge mass < 1e-8)")
GL, GD = np.meshgrid(gl, gd, indexing="ij")
_, _, ess_l = compare("lambda", lam, np.exp(GL).ravel(), P.ravel(), 4)
check_quantiles("lambda", lam, np.exp(GL).ravel(), P.ravel(), ess_l)
_, _, ess_d = compare("delta", dlt, np.exp(GD).ravel(), P.ravel(), 4)
check_quantiles("delta", dlt, np.exp(GD).ravel(), P.ravel(), ess_d)
compare("log rho", np.log(lam / dlt), (GL - GD).ravel(), P.ravel(), 4)
moves = summ.get("chain_moves", [])
acc = [m["acceptance"] for m in moves]
pptest.check(len(acc) == 4 and min(acc) > 0.8 and "independence" in summ.get("hyper_move", ""),
             "rho move: independence proposal accepted %s of proposals (> 0.8 each)"
             % ", ".join("%.3f" % a for a in acc))
pptest.check(ess_d > 0.5 * len(dlt), "delta trace nearly independent: ESS %.0f of %d draws"
             % (ess_d, len(dlt)))

# The check can fire: a posterior without the Jacobian lambda/rho^2 of the
# change of variables (one factor delta^2/lambda less in (lambda, delta)).
Pw = np.exp(LP - 2 * GD + GL - (LP - 2 * GD + GL).max())
Pw /= Pw.sum()
wrong = np.sum(Pw * np.exp(GD))
se_d, _ = batch(dlt, 4)
pptest.check(abs(dlt.mean() - wrong) > 4 * se_d + 2e-3 * wrong,
             "a posterior missing the Jacobian (delta mean %.6g vs mtc %.6g) is detected"
             % (wrong, dlt.mean()))

# ---- delta fixed: lambda alone (1-D walk) ---------------------------------
D = float(np.exp(ld0))
head, tr, summ = sample("fixdelta", ["--prior", "gmrf1:delta=%.15g" % D], chains=2, iters=3000)
lam = tr[:, head.index("lambda")]
pptest.check(np.all(tr[:, head.index("delta")] == tr[0, head.index("delta")]),
             "delta fixed: the delta column is constant")
g1 = np.linspace(np.log(lam).mean() - 8 * np.log(lam).std(), np.log(lam).mean() +
                 8 * np.log(lam).std(), 2001)
lp = np.array([log_marg(np.exp(a), D) + log_prior(a, HL) for a in g1])
p1 = np.exp(lp - lp.max())
_, _, e1 = compare("delta fixed: lambda", lam, np.exp(g1), p1, 2)
check_quantiles("delta fixed: lambda", lam, np.exp(g1), p1, e1)

# ---- lambda fixed: delta alone (1-D walk) ---------------------------------
S = float(np.exp(-0.5 * ll0))
head, tr, summ = sample("fixlambda", ["--noise", "gaussian:sigma=%.15g" % S], chains=2, iters=3000)
dlt = tr[:, head.index("delta")]
g1 = np.linspace(np.log(dlt).mean() - 8 * np.log(dlt).std(), np.log(dlt).mean() +
                 8 * np.log(dlt).std(), 2001)
lp = np.array([log_marg(1 / S ** 2, np.exp(b)) + log_prior(b, HD) for b in g1])
p1 = np.exp(lp - lp.max())
_, _, e1 = compare("lambda fixed: delta", dlt, np.exp(g1), p1, 2)
check_quantiles("lambda fixed: delta", dlt, np.exp(g1), p1, e1)
acc = [m["acceptance"] for m in summ.get("chain_moves", [])]
pptest.check(len(acc) == 2 and all(0.2 < a < 0.7 for a in acc) and
             "random-walk" in summ.get("hyper_move", ""),
             "1-D walk acceptance %s (adapted towards 0.44)" % ", ".join("%.3f" % a for a in acc))
pptest.done()
