"""The Poisson scenario shared by tests/ref_pcn_poisson.py and
tests/ref_missing_photon.py: pcn, gpcn and hmc on a 12 x 12 periodic frame
against an independent numpy MALA chain (Roberts & Tweedie, Bernoulli 2,
1996) for the same model; the model, the reference and the 5-se tolerances
are described in ref_pcn_poisson.py's docstring.
"""
import json
import os

import numpy as np
import scipy.special as sp
import scipy.stats as st
import tifffile

import pptest

geyer_ess = pptest.geyer_ess  # Geyer 1992, initial monotone sequence
read_trace = pptest.read_trace

H = W = 12
RANGE = 3.0


def scenario(root, label, M, DLT, B, C, burn, iters, runs, seed, masked=False, censored=False):
    """One frame in root/label: MALA reference, then each (kind, kept
    iterations, thin) of runs checked against it. masked: 12 pixels (a 3 x 3
    block and 3 single pixels inside rows) are given to pixpost as --mask and
    left out of the reference's likelihood and gradient (obs = 0 there);
    without, obs = 1 everywhere (a product by 1.0: the same numbers).
    censored: the counts at or above the 8th largest, s, are clipped to s (a
    flat top: pixpost censors them by default); the reference's likelihood
    there is log P(Y >= s | mu) = log scipy.special.gammainc(s, mu), its
    slope scipy.stats.gamma(s).pdf(mu) / gammainc(s, mu). Returns the
    reference (mean, sd, se) and the censored pixels."""
    tmp = os.path.join(root, label)
    os.makedirs(tmp)
    pptest.run(["psf", "gaussian:sigma=1.0", "--size", "7", "-o", os.path.join(tmp, "psf.tif")])
    psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
    A = pptest.transfer(psf, (H, W))
    q = pptest.matern_q(H, W, RANGE)

    # Data: a truth drawn from the prior, counts drawn with numpy.
    rng = np.random.default_rng(seed)
    w = np.fft.fft2(rng.standard_normal((H, W)))
    truth = M + np.real(np.fft.ifft2(w / np.sqrt(DLT * q)))
    mu_true = np.real(np.fft.ifft2(A * np.fft.fft2(np.exp(truth)))) + B
    n = rng.poisson(mu_true).astype(np.float64)
    tifffile.imwrite(os.path.join(tmp, "y.tif"), n.astype(np.float32))
    obs = np.ones((H, W))
    cens = np.zeros((H, W), bool)
    if censored:
        s_lev = np.sort(n.ravel())[-8]
        cens = n >= s_lev
        n = np.minimum(n, s_lev)
        obs[cens] = 0
        tifffile.imwrite(os.path.join(tmp, "y.tif"), n.astype(np.float32))
    mask_args = []
    if masked:
        obs[4:7, 5:8] = 0
        obs[1, 3] = obs[9, 6] = obs[10, 0] = 0
        tifffile.imwrite(os.path.join(tmp, "mask.tif"), (1 - obs).astype(np.uint8))
        mask_args = ["--mask", os.path.join(tmp, "mask.tif")]

    def blur(x, adj=False):
        return np.real(np.fft.ifft2((np.conj(A) if adj else A) * np.fft.fft2(x, axes=(-2, -1)),
                                   axes=(-2, -1)))


    def logpost_grad(z):
        x = np.exp(z)
        mu = blur(x) + B
        d = z - M
        qd = np.real(np.fft.ifft2(q * np.fft.fft2(d, axes=(-2, -1)), axes=(-2, -1)))
        lp = np.sum(obs * (n * np.log(mu) - mu), axis=(-2, -1)) - 0.5 * DLT * np.sum(d * qd, axis=(-2, -1))
        r = obs * (n / mu - 1)
        if censored:
            lt = np.log(sp.gammainc(s_lev, mu[..., cens]))
            lp = lp + np.sum(lt, axis=-1)
            r[..., cens] = np.exp(st.gamma(s_lev).logpdf(mu[..., cens]) - lt)
        g = x * blur(r, adj=True) - DLT * qd
        return lp, g


    # ---- reference: MALA, 64 chains ------------------------------------------
    z = np.log(np.maximum(n - B, 0.5))[None] + 0.1 * rng.standard_normal((C, H, W))
    lp, g = logpost_grad(z)
    h = 0.05
    s1 = np.zeros((C, H, W))
    s2 = np.zeros((C, H, W))
    acc = 0.0
    for t in range(burn + iters):
        prop = z + 0.5 * h * g + np.sqrt(h) * rng.standard_normal(z.shape)
        lp2, g2 = logpost_grad(prop)
        fwd = -np.sum((prop - z - 0.5 * h * g) ** 2, axis=(1, 2)) / (2 * h)
        bwd = -np.sum((z - prop - 0.5 * h * g2) ** 2, axis=(1, 2)) / (2 * h)
        la = lp2 - lp + bwd - fwd
        ok = np.log(rng.uniform(size=C)) < la
        z[ok], lp[ok], g[ok] = prop[ok], lp2[ok], g2[ok]
        a = np.mean(np.exp(np.minimum(la, 0)))
        if t < burn:
            h *= np.exp((a - 0.57) / (t + 1) ** 0.6)  # Robbins-Monro, common practice
        else:
            acc += ok.mean()
            x = np.exp(z)
            s1 += x
            s2 += x * x
    m_chain = s1 / iters
    ref_mean = m_chain.mean(axis=0)
    ref_sd = np.sqrt(s2.sum(axis=0) / (C * iters) - ref_mean ** 2)
    ref_se = m_chain.std(axis=0, ddof=1) / np.sqrt(C)
    print("MALA: step %.4g, acceptance %.3f, worst chain-mean se / sd %.3f"
          % (h, acc / iters, np.max(ref_se / ref_sd)))
    ess_ref = np.min((ref_sd / ref_se) ** 2)

    for kind, iters_pp, thin in runs:
        out = os.path.join(tmp, kind)
        pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.0",
                    "--noise", "poisson:gain=1,offset=0", "--background", str(B),
                    "--prior", "matern:range=%g,nu=1,mean=%.17g,delta=%g" % (RANGE, M, DLT),
                    "--sampler", kind, "--boundary", "periodic", "--chains", "4",
                    "--burn", "1000", "--iters", str(iters_pp), "--thin", str(thin), "--seed", "31",
                    "--quiet"] + mask_args + ["-o", out])
        s = json.load(open(os.path.join(out, "summary.json")))
        name = "%s %s" % (label, kind) if masked else kind
        if masked:
            pptest.check(s["missing_data"]["masked"] == 12, "%s: 12 masked pixels" % name)
        if censored:
            name = "%s %s censored" % (label, kind)
            pptest.check(s["missing_data"]["saturated"] == int(cens.sum()) and
                         s["missing_data"]["saturated_as"] == "censored",
                         "%s: %d censored pixels (%s)" % (name, cens.sum(), s["missing_data"]))
        pptest.check("poisson" in s["likelihood"] and s["positivity"] == "log",
                     "%s summary names the likelihood and log positivity" % name)
        head, tr = read_trace(os.path.join(out, "trace.csv"))
        ch = tr[:, 0].astype(int)
        ess = min(sum(geyer_ess(tr[ch == c, j]) for c in np.unique(ch))
                  for j, name in enumerate(head) if name.startswith("p_"))
        mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
        sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
        se_m = np.sqrt(ref_se ** 2 + ref_sd ** 2 / ess)
        zm = np.max(np.abs(mean - ref_mean) / se_m)
        rel_sd = np.abs(sd / ref_sd - 1)
        zs = np.max(rel_sd / np.sqrt(1 / (2 * ess) + 1 / (2 * ess_ref)))
        print("%s: acceptance %s, step %s, min probe ESS %.0f; worst |mean - ref| %.2f se, worst "
              "sd rel err %.3f" % (kind, [c["acceptance"] for c in s["chain_moves"]],
                                   [c["step"] for c in s["chain_moves"]], ess, zm, rel_sd.max()))
        if masked:
            m0 = obs == 0
            print("%s masked pixels: worst %.2f se (mean), sd ratio %.3f (observed: %.3f)"
                  % (name, np.max(np.abs(mean - ref_mean)[m0] / se_m[m0]), (sd / ref_sd)[m0].mean(),
                     (sd / ref_sd)[~m0].mean()))
        if censored:
            print("%s censored pixels: worst %.2f se (mean), sd ratio %.3f"
                  % (name, np.max(np.abs(mean - ref_mean)[cens] / se_m[cens]), (sd / ref_sd)[cens].mean()))
        pptest.check(zm < 5, "%s mean.tif vs numpy MALA reference: worst %.2f combined se" % (name, zm))
        pptest.check(zs < 5, "%s sd.tif vs numpy MALA reference: worst %.2f combined se" % (name, zs))
    return ref_mean, ref_sd, ref_se, cens
