"""Censored (saturated) pixels against an independent numpy reference
(issue 17, item 3: a saturated pixel's likelihood is P(y_i >= s | x)).

Model as tests/ref_missing_exact.py (12 x 12 frame, gaussian PSF, gmrf1,
noise and prior precisions fixed with --noise gaussian:sigma=S and --prior
gmrf1:delta=D), but the frame's 8 brightest pixels are clipped to the 8th
largest value s (float TIFF, a flat top: pixpost/saturation.h finds them).
Posterior: p(x | y) ∝ N(x; m, C) prod_i Q((s - (A x)_i) / sigma) with
N(m, C) the exact Gaussian posterior given the observed pixels alone
(numpy.linalg on the dense matrices, pptest.dense_periodic) and
Q = 1 - Phi (scipy.stats.norm.logsf) over the censored pixels i.
Reference: a numpy Gibbs sampler by data augmentation (Tanner & Wong,
JASA 82, 1987) written independently of pixpost: dense matrices, x drawn
by Cholesky of the dense posterior covariance given the observed and the
imputed censored data, the censored data drawn with
scipy.stats.truncnorm.rvs; 2000 independent chains of 300 iterations from
y_c = s, the first 50 dropped (fixed seed, numpy's Generator). Its
standard error, from the spread of the 2000 chain means (independent
chains: no autocorrelation estimate needed), enters the tolerance.
(Importance sampling from N(m, C) weighted by the censoring probability
was tried first: its Kish ESS was ~400 of 400000 draws, too few.)
Each run (gibbs periodic, gibbs pad, mtc periodic, which runs the gibbs
chain) must match the reference mean within 4.5 sqrt(MCSE^2 + SE_ref^2) +
1 % of the sd at every pixel (4.5: the worst of 144 pixels of a correct
sampler, |z| > 4.5 has probability ~1e-3 for the lot) and its sd within
10 % per pixel and 4 % averaged over the censored pixels (the tolerances of
ref_missing_exact, whose runs these mirror). A test that could fail if
censoring were ignored: at the censored pixels the reference mean sits
well above the missing-data posterior's (checked: by more than 10 sd of
pixpost's MCSE), and the censored run of --saturated-missing must match
the missing-data posterior m, C instead (the old behaviour kept).
pcn, gpcn and hmc censor too (tests/ref_censor_gauss_pcn.py checks their
posterior): a short pcn run here must say "censored" and carry no note of
the pixels treated as missing.
Last, delta sampled (see reference_delta below): the interweaving step
that carries the imputed censored data along with x must keep them above
s; pixel means and sds with the same tolerances, and the posterior mean of
delta within 4.5 sqrt(MCSE^2 + SE_ref^2).
"""
import json
import os

import numpy as np
import scipy.stats as st
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(17)
H, W = 12, 12
SIGMA, DELTA, PSF = 1.0, 0.5, "gaussian:sigma=1.0"
psf, A_f, y, s, cens, frame = pptest.clipped_frame(tmp, rng, PSF, SIGMA)
NC = int(cens.sum())


def reference(gh, gw, chains=2000, iters=300, burn=50):
    """Missing-data posterior (m, sd) and the censored one from a numpy
    Gibbs sampler (mean, sd, the mean's standard error, draws), on the frame."""
    A, Q = pptest.dense_periodic(psf, gh, gw)
    fr = np.array([r * gw + c for r in range(H) for c in range(W)])
    got = pptest.censored_reference(A, DELTA * Q, fr, cens.ravel(), y.ravel(), s, SIGMA, chains,
                                    iters, burn)
    return tuple(v.reshape(H, W) for v in got[:5]) + (got[5],)


common = ["--psf", PSF, "--noise", "gaussian:sigma=%g" % SIGMA, "--prior", "gmrf1:delta=%g" % DELTA,
          "--chains", "4", "--seed", "5", "--quiet", "--burn", "200", "--iters", "3000"]
cases = [("gibbs periodic", ["--sampler", "gibbs", "--boundary", "periodic"]),
         ("gibbs pad", ["--sampler", "gibbs", "--boundary", "pad"]),
         ("mtc periodic", ["--sampler", "mtc", "--boundary", "periodic"]),
         ("gibbs periodic, --saturated-missing", ["--sampler", "gibbs", "--boundary", "periodic",
                                                  "--saturated-missing"])]
refs = {}
for name, extra in cases:
    out = os.path.join(tmp, name.replace(" ", "_").replace(",", ""))
    pptest.run(["sample", frame, "-o", out] + common + extra)
    summ = json.load(open(os.path.join(out, "summary.json")))
    md = summ["missing_data"]
    want_as = "missing" if "missing" in name else "censored"
    pptest.check(md["saturated"] == NC and md["unobserved"] == NC and abs(md["saturation_level"] - s) < 1e-8 * s
                 and md.get("saturated_as") == want_as,
                 "%s: summary.json missing_data %s (%d clipped at %.9g)" % (name, md, NC, s))
    gw, gh = summ["grid"]["width"], summ["grid"]["height"]
    if (gh, gw) not in refs:
        refs[(gh, gw)] = reference(gh, gw)
    m_mis, s_mis, m_c, s_c, se_c, ess = refs[(gh, gw)]
    if want_as == "missing":
        m_c, s_c, se_c = m_mis, s_mis, 0.0 * s_mis
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    mcse = tifffile.imread(os.path.join(out, "mcse.tif")).astype(np.float64)
    z = np.abs(mean - m_c) / (4.5 * np.sqrt(mcse ** 2 + se_c ** 2) + 0.01 * s_c)
    pptest.check(np.all(np.isfinite(mean)) and np.all(np.isfinite(sd)), "%s: estimates finite" % name)
    pptest.check(z.max() < 1, "%s: mean within 4.5 sqrt(MCSE^2 + SE_ref^2) + 1 %% sd of the %s reference at "
                 "every pixel (worst %.2f of the tolerance; censored pixels' worst %.2f; reference draws %d)"
                 % (name, want_as, z.max(), z[cens].max(), ess))
    ratio = sd / s_c
    pptest.check(np.abs(ratio - 1).max() < 0.10 and abs(ratio[cens].mean() - 1) < 0.04,
                 "%s: sd / reference sd in [%.3f, %.3f] (within 10 %%), censored pixels' mean %.3f (within 4 %%)"
                 % (name, ratio.min(), ratio.max(), ratio[cens].mean()))
    if want_as == "censored":
        shift = (refs[(gh, gw)][2] - m_mis)[cens]
        pptest.check(shift.min() > 10 * mcse[cens].max(),
                     "%s: censoring moves the censored pixels' mean up by %.3f-%.3f over the missing-data "
                     "posterior (> 10 MCSE, %.4f): the test tells the two apart"
                     % (name, shift.min(), shift.max(), 10 * mcse[cens].max()))
        pptest.check((s_c[cens] < s_mis[cens]).all(),
                     "%s: the censored pixels' sd %.3f < %.3f as missing (reference)"
                     % (name, s_c[cens].mean(), s_mis[cens].mean()))
out = os.path.join(tmp, "pcn")
pptest.run(["sample", frame, "-o", out, "--sampler", "pcn", "--burn", "50", "--iters", "100"] + common[:-4])
summ = json.load(open(os.path.join(out, "summary.json")))
pptest.check(summ["missing_data"].get("saturated_as") == "censored" and "missing" not in json.dumps(summ["notes"]),
             "pcn: the saturated pixels censored, no note of them treated as missing (notes %s)" % summ["notes"])
# Delta sampled (--prior gmrf1, Gamma(1, 1e-4) hyperprior, pixpost's
# default), periodic: gibbs then also runs its delta interweaving step,
# which moves the imputed censored data along with x and must reject a move
# that takes one below s. Reference: the same numpy data augmentation with a
# delta step, all in Fourier space (periodic: every frame pixel is observed
# or imputed, so the posterior precision lam |A|^2 + delta q is diagonal),
# delta | x ~ Gamma(1 + rank / 2, 1e-4 + x'Qx / 2), rank = H W - 1
# (Bardsley 2012's conditional, as in src/sampler_gibbs.c but written
# independently here); 2000 chains x 600 iterations, the first 100 dropped.
def reference_delta(chains=2000, iters=600, burn=100):
    Af = A_f  # the transfer function of the frame above
    q = pptest.gmrf1_q(H, W)
    lam, n = 1.0 / SIGMA ** 2, H * W
    r = np.random.default_rng(4048)
    yaug = np.repeat(y[None], chains, axis=0)
    yaug[:, cens] = s
    delta = np.full(chains, DELTA)
    s1 = np.zeros((chains, H, W))
    s2 = np.zeros((chains, H, W))
    d1 = np.zeros(chains)
    for t in range(iters):
        p = lam * np.abs(Af) ** 2 + delta[:, None, None] * q
        xh = lam * np.conj(Af) * np.fft.fft2(yaug) / p + np.fft.fft2(r.standard_normal((chains, H, W))) / np.sqrt(p)
        x = np.real(np.fft.ifft2(xh))
        quad = np.sum(q * np.abs(np.fft.fft2(x)) ** 2, axis=(1, 2)) / n
        delta = r.gamma(1.0 + 0.5 * (n - 1), 1.0 / (1e-4 + 0.5 * quad))
        mu = np.real(np.fft.ifft2(np.fft.fft2(x) * Af))[:, cens]
        yaug[:, cens] = st.truncnorm.rvs((s - mu) / SIGMA, np.inf, loc=mu, scale=SIGMA, random_state=r)
        if t >= burn:
            s1 += x
            s2 += x ** 2
            d1 += delta
    return pptest.chain_summary(s1, s2, d1, iters - burn)


out = os.path.join(tmp, "delta")
pptest.run(["sample", frame, "-o", out, "--psf", PSF, "--noise", "gaussian:sigma=%g" % SIGMA, "--prior", "gmrf1",
            "--sampler", "gibbs", "--boundary", "periodic", "--chains", "4", "--seed", "7", "--quiet",
            "--burn", "500", "--iters", "8000"])
summ = json.load(open(os.path.join(out, "summary.json")))
m_c, s_c, se_c, d_ref, d_se = reference_delta()
mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
mcse = tifffile.imread(os.path.join(out, "mcse.tif")).astype(np.float64)
z = np.abs(mean - m_c) / (4.5 * np.sqrt(mcse ** 2 + se_c ** 2) + 0.01 * s_c)
pptest.check(z.max() < 1, "delta sampled: mean within 4.5 sqrt(MCSE^2 + SE_ref^2) + 1 %% sd of the reference at "
             "every pixel (worst %.2f of the tolerance; censored pixels' worst %.2f)" % (z.max(), z[cens].max()))
ratio = sd / s_c
pptest.check(np.abs(ratio - 1).max() < 0.10 and abs(ratio[cens].mean() - 1) < 0.04,
             "delta sampled: sd / reference sd in [%.3f, %.3f] (within 10 %%), censored pixels' mean %.3f (within 4 %%)"
             % (ratio.min(), ratio.max(), ratio[cens].mean()))
hd = summ["hyper"]["delta"]
pptest.check(abs(hd["mean"] - d_ref) < 4.5 * np.hypot(hd["mcse"], d_se),
             "delta sampled: posterior mean of delta %.4f vs reference %.4f (within 4.5 sqrt(MCSE^2 + SE_ref^2) = %.4f)"
             % (hd["mean"], d_ref, 4.5 * np.hypot(hd["mcse"], d_se)))
pptest.done()
