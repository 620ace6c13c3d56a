"""hmc with the adaptive prior (--prior adaptive:block=2) on a tiny Poisson
frame vs an independent reference chain written here in numpy for the same
joint density (src/adaptive.h):

    n ~ Poisson(A exp(z) + b),   z = m + u, flat prior on the level m,
    u | W ~ N(0, (Dᵀ W D)⁺) on the sum-zero fields, w_e = exp(s_B(e)) τ_e,
    p(z, τ, s, κ) ∝ Π_B e^{n_B s_B/2} Π_e τ_e^{1/2} e^{-w_e d_e²/2}
                    Π_e Gamma(τ_e; ν/2, ν/2) p(s | κ) p(κ),
    p(s | κ) ∝ κ^{(nB-1)/2} exp(-κ/2 Σ_{block pairs} (s_B - s_B')²)
    (4 neighbours, free edges, flat prior on the mean of s), κ ~ Gamma(1, 0.5).

The reference is a different algorithm from pixpost's (split HMC with a
Fourier reference, Laplace block moves, scale moves along the τ/s ridge):
per sweep and per chain, (s, τ) | z as one block -- s by single-site
random-walk Metropolis on its density with τ integrated out (Student-t
increments: Π_e (ν/2 + e^{s} d_e²/2)^{-(ν+1)/2}), then τ | z, s exactly
(Gamma) --; u | τ, s, m by elliptical slice sampling (Murray, Adams &
MacKay, AISTATS 2010) with the prior draw from a dense Cholesky factor of
Dᵀ W D + 11ᵀ (numpy.linalg); m by random-walk Metropolis; a random walk
along the ridge (s + c, e^{-c/2} u) that Gibbs steps cross slowly; κ | s
exactly (Gamma). It runs C independent chains vectorised over the chain axis.

Frame: 10 x 10 periodic (5 x 5 blocks), gaussian:sigma=1 PSF, b = 2 photons, a truth with a
bright spot (about 400 photons), an edge between levels 30 and 120 and a
dim background (about 15): bright enough that a flat image is far less
likely than the truth (the flat prior on the level of s leaves the model
improper towards s -> +inf, a flat field; neither chain can reach it from
here).

Checked (tolerances: combined Monte Carlo standard errors, 5 se per pixel
over 100 pixels and 2 maps, so a false alarm is rare; the reference's se is
the spread of its C chain means / sqrt(C), pixpost's is from its trace by
Geyer's ESS (pptest.geyer_ess) of the worst probe applied to every pixel):
  * mean.tif and sd.tif (photons) against the reference's posterior mean and
    sd of x = exp(z) at every pixel (se of an sd ~ sd / sqrt(2 ESS), near-
    Gaussian draws);
  * the posterior means of kappa and of delta = exp(mean s) (trace.csv)
    against the reference within 5 combined se (pixpost's by batch means,
    pptest.batch_se; the reference's from its chain means).
"""
import json
import os

import numpy as np
import tifffile

import pptest

root = pptest.tmpdir()
H = W = 10
N = H * W
BS = 2            # block side
MH, MW = H // BS, W // BS
NB = MH * MW
NU = 2.0
BG = 2.0
SIGMA = 1.0

# ---- the frame ---------------------------------------------------------------
pptest.run(["psf", "gaussian:sigma=%g" % SIGMA, "--size", "9", "-o", os.path.join(root, "psf.tif")])
psf = tifffile.imread(os.path.join(root, "psf.tif")).astype(np.float64)
A = pptest.transfer(psf, (H, W))
truth = np.full((H, W), 15.0)
truth[:, 5:] = 120.0
truth[:, 7] = 30.0
truth[2, 2] = 400.0
truth[1:4, 1:4] += 40.0
truth[7, 2] = 60.0
rng = np.random.default_rng(20261203)
mu_t = np.real(np.fft.ifft2(A * np.fft.fft2(truth))) + BG
n = rng.poisson(mu_t).astype(np.float64)
tifffile.imwrite(os.path.join(root, "y.tif"), n.astype(np.float32))

# ---- pixpost -----------------------------------------------------------------
out = os.path.join(root, "hmc")
pptest.run(["sample", os.path.join(root, "y.tif"), "--psf", "gaussian:sigma=%g" % SIGMA,
            "--noise", "poisson:gain=1,offset=0", "--background", str(BG),
            "--prior", "adaptive:block=%d" % BS, "--sampler", "hmc", "--boundary", "periodic",
            "--chains", "4", "--burn", "2000", "--iters", "30000", "--thin", "3",
            "--seed", "17", "--quiet", "-o", out,
            # the reference below has a flat prior on the level of s; Gamma(0, 0)
            # on exp(level) is exactly that (src/adaptive.h)
            "--hyper-delta", "0,0"])
summ = json.load(open(os.path.join(out, "summary.json")))
pptest.check(summ["sampler"] == "hmc" and summ["prior"].startswith("adaptive"),
             "summary: hmc with the adaptive prior")
head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
ch = tr[:, 0].astype(int)
ess = min(sum(pptest.geyer_ess(tr[ch == c, j]) for c in np.unique(ch))
          for j, name in enumerate(head) if name.startswith("p_"))
pp_mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
pp_sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
jk, jd = head.index("kappa"), head.index("delta")
pp_kappa, pp_delta = tr[:, jk].mean(), tr[:, jd].mean()
se_kappa_pp = pptest.batch_se(tr[:, jk], 4)
se_delta_pp = pptest.batch_se(tr[:, jd], 4)
print("pixpost: acceptance %s, step %s, min probe ESS %.0f, kappa %.4g (se %.2g), delta %.4g "
      "(se %.2g)" % ([round(c["acceptance"], 3) for c in summ["chain_moves"]],
                     [round(c["step"], 3) for c in summ["chain_moves"]], ess, pp_kappa,
                     se_kappa_pp, pp_delta, se_delta_pp))

# ---- the reference -----------------------------------------------------------
# increments: e = 0..N-1 horizontal (pixel i -> its right neighbour), N..2N-1
# vertical (pixel i -> the one below), wrapping; each in the block of pixel i
idx = np.arange(N).reshape(H, W)
first = np.concatenate([idx.ravel(), idx.ravel()])
second = np.concatenate([np.roll(idx, -1, axis=1).ravel(), np.roll(idx, -1, axis=0).ravel()])
Dm = np.zeros((2 * N, N))
Dm[np.arange(2 * N), second] += 1.0
Dm[np.arange(2 * N), first] -= 1.0
blk_of_pix = ((idx // W) // BS * MW + (idx % W) // BS).ravel()
blk_of_e = blk_of_pix[first]                       # (2N,)
E2B = np.zeros((2 * N, NB))
E2B[np.arange(2 * N), blk_of_e] = 1.0
nB = np.bincount(blk_of_pix, minlength=NB).astype(float)
# block-grid neighbour pairs (free edges)
bidx = np.arange(NB).reshape(MH, MW)
pairs = np.array([(bidx[i, j], bidx[i + 1, j]) for i in range(MH - 1) for j in range(MW)] +
                 [(bidx[i, j], bidx[i, j + 1]) for i in range(MH) for j in range(MW - 1)])
Adj = np.zeros((NB, NB))
Adj[pairs[:, 0], pairs[:, 1]] = Adj[pairs[:, 1], pairs[:, 0]] = 1.0
nnb = Adj.sum(axis=1)
colour = (np.arange(NB) // MW + np.arange(NB) % MW) % 2
# Dᵀ W D: each increment joins two distinct pixels and no two increments
# join the same pair (H, W >= 3), so its entries are -w_e off the diagonal
# and the sums of the touching weights on it
absD = np.abs(Dm)
diag = np.arange(N)

C = 32
BURN, ITERS = 1000, 10000
Ablur = A


def blur(x):
    return np.real(np.fft.ifft2(Ablur * np.fft.fft2(x.reshape(-1, H, W), axes=(-2, -1)),
                                axes=(-2, -1))).reshape(x.shape)


nflat = n.ravel()


def loglik(z):  # z: (C, N)
    mu = np.maximum(blur(np.exp(z)) + BG, 1e-300)
    return np.sum(nflat * np.log(mu) - mu, axis=1)


def s_logdens(s, d2, kappa):
    """log p(s | z, κ) per chain and block up to a constant, τ integrated out:
    returns (C, NB) local terms (the neighbour term uses the current s)."""
    es = np.exp(s)[:, blk_of_e]                              # (C, 2N)
    own = -0.5 * (NU + 1) * np.log(0.5 * NU + 0.5 * es * d2)  # (C, 2N)
    return 0.5 * nB * s + own @ E2B


rng = np.random.default_rng(7)
z = np.log(np.maximum(n - BG, 1.0)).ravel()[None] + 0.2 * rng.standard_normal((C, N))
lvl = np.log(1.0 / max(np.var(z[0]), 1e-3))
s = lvl + 0.5 * rng.standard_normal((C, 1)) + np.zeros((C, NB))
kappa = np.full(C, 2.0)
sstep, mstep, cstep = 0.5, 0.05, 0.1
ll = loglik(z)
sum_x = np.zeros((C, N))
sum_x2 = np.zeros((C, N))
kap_chain = np.zeros(C)
del_chain = np.zeros(C)
acc_s = acc_m = acc_c = 0.0
for t in range(BURN + ITERS):
    # (s, τ) | z: s by single-site random walk (τ integrated out), both colours
    d2 = (z @ Dm.T) ** 2                                   # (C, 2N)
    for col in (0, 1):
        sel = colour == col
        prop = s + sstep * rng.standard_normal(s.shape) * sel
        mean_nb = (s @ Adj) / nnb
        la = (s_logdens(prop, d2, kappa) - s_logdens(s, d2, kappa)
              - 0.5 * kappa[:, None] * nnb * ((prop - mean_nb) ** 2 - (s - mean_nb) ** 2))
        ok = (np.log(rng.uniform(size=s.shape)) < la) & sel
        s = np.where(ok, prop, s)
        a = np.mean(np.exp(np.minimum(la[:, sel], 0)))
        acc_s += a / 2
        if t < BURN:
            sstep *= np.exp((a - 0.44) / (t + 1) ** 0.6)   # Robbins-Monro, common practice
    es = np.exp(s)[:, blk_of_e]
    tau = rng.gamma(0.5 * NU + 0.5, 1.0 / (0.5 * NU + 0.5 * es * d2))
    w = es * tau                                          # (C, 2N)
    # u | W, m by elliptical slice sampling; prior draw from chol(DᵀWD + 11ᵀ)
    P = np.ones((C, N, N))
    P[:, first, second] -= w
    P[:, second, first] -= w
    P[:, diag, diag] += w @ absD
    L = np.linalg.cholesky(P)
    xi = rng.standard_normal((C, N, 1))
    nu_ = np.linalg.solve(np.transpose(L, (0, 2, 1)), xi)[:, :, 0]
    nu_ -= nu_.mean(axis=1, keepdims=True)
    m = z.mean(axis=1, keepdims=True)
    u = z - m
    logy = ll + np.log(rng.uniform(size=C))
    th = rng.uniform(0, 2 * np.pi, size=C)
    lo, hi = th - 2 * np.pi, th.copy()
    todo = np.ones(C, bool)
    while todo.any():
        zc = m + u * np.cos(th)[:, None] + nu_ * np.sin(th)[:, None]
        llc = loglik(zc)
        ok = todo & (llc > logy)
        z = np.where(ok[:, None], zc, z)
        ll = np.where(ok, llc, ll)
        todo &= ~ok
        shrink_lo = todo & (th < 0)
        lo = np.where(shrink_lo, th, lo)
        hi = np.where(todo & ~shrink_lo, th, hi)
        th = np.where(todo, rng.uniform(lo, hi), th)
    # m by random walk (flat prior)
    dm = mstep * rng.standard_normal((C, 1))
    llp = loglik(z + dm)
    la = llp - ll
    ok = np.log(rng.uniform(size=C)) < la
    z = np.where(ok[:, None], z + dm, z)
    ll = np.where(ok, llp, ll)
    a = np.mean(np.exp(np.minimum(la, 0)))
    acc_m += a
    if t < BURN:
        mstep *= np.exp((a - 0.44) / (t + 1) ** 0.6)
    # along the ridge: s + c in every block and u scaled by e^{-c/2} (e^{s} d²
    # unchanged), c ~ N(0, cstep²): density ratio e^{N c/2} (blocks) times
    # the Jacobian e^{-(N-1) c/2} times the likelihood ratio
    cc = cstep * rng.standard_normal(C)
    m = z.mean(axis=1, keepdims=True)
    zp = m + (z - m) * np.exp(-0.5 * cc)[:, None]
    llp = loglik(zp)
    la = llp - ll + 0.5 * cc
    ok = np.log(rng.uniform(size=C)) < la
    z = np.where(ok[:, None], zp, z)
    s = np.where(ok[:, None], s + cc[:, None], s)
    ll = np.where(ok, llp, ll)
    a = np.mean(np.exp(np.minimum(la, 0)))
    acc_c += a
    if t < BURN:
        cstep *= np.exp((a - 0.44) / (t + 1) ** 0.6)
    # κ | s
    q = np.sum((s[:, pairs[:, 0]] - s[:, pairs[:, 1]]) ** 2, axis=1)
    kappa = rng.gamma(1.0 + 0.5 * (NB - 1), 1.0 / (0.5 + 0.5 * q))
    if t >= BURN:
        x = np.exp(z)
        sum_x += x
        sum_x2 += x * x
        kap_chain += kappa
        del_chain += np.exp(s.mean(axis=1))

m_chain = sum_x / ITERS
ref_mean = m_chain.mean(axis=0).reshape(H, W)
ref_sd = np.sqrt(sum_x2.sum(axis=0) / (C * ITERS) - ref_mean.ravel() ** 2).reshape(H, W)
ref_se = (m_chain.std(axis=0, ddof=1) / np.sqrt(C)).reshape(H, W)
ess_ref = np.min((ref_sd / ref_se) ** 2)
kap_chain /= ITERS
del_chain /= ITERS
ref_kappa, ref_delta = kap_chain.mean(), del_chain.mean()
se_kappa_ref = kap_chain.std(ddof=1) / np.sqrt(C)
se_delta_ref = del_chain.std(ddof=1) / np.sqrt(C)
print("reference: steps s %.3g, m %.3g, ridge %.3g, acceptance s %.3f m %.3f ridge %.3f; worst chain-mean se / sd "
      "%.3f (ESS %.0f); kappa %.4g (se %.2g), delta %.4g (se %.2g)"
      % (sstep, mstep, cstep, acc_s / (BURN + ITERS), acc_m / (BURN + ITERS), acc_c / (BURN + ITERS),
         np.max(ref_se / ref_sd), ess_ref, ref_kappa, se_kappa_ref, ref_delta, se_delta_ref))

# ---- comparisons -------------------------------------------------------------
se_m = np.sqrt(ref_se ** 2 + ref_sd ** 2 / ess)
zm = np.abs(pp_mean - ref_mean) / se_m
rel_sd = np.abs(pp_sd / ref_sd - 1)
zs = rel_sd / np.sqrt(1 / (2 * ess) + 1 / (2 * ess_ref))
zk = abs(pp_kappa - ref_kappa) / np.hypot(se_kappa_pp, se_kappa_ref)
zd = abs(pp_delta - ref_delta) / np.hypot(se_delta_pp, se_delta_ref)
print("worst |mean - ref| %.2f se (rel %.3f), worst sd rel err %.3f (%.2f se); kappa %.2f se, "
      "delta %.2f se" % (zm.max(), np.max(np.abs(pp_mean / ref_mean - 1)), rel_sd.max(),
                         zs.max(), zk, zd))
pptest.check(zm.max() < 5, "mean.tif vs the numpy reference chain: worst %.2f combined se" % zm.max())
pptest.check(zs.max() < 5, "sd.tif vs the numpy reference chain: worst %.2f combined se" % zs.max())
pptest.check(zk < 5, "kappa posterior mean %.4g vs reference %.4g: %.2f combined se"
             % (pp_kappa, ref_kappa, zk))
pptest.check(zd < 5, "delta (exp mean s) posterior mean %.4g vs reference %.4g: %.2f combined se"
             % (pp_delta, ref_delta, zd))

# ---- consistency: hmc (positivity none) vs gibbs on a Gaussian frame ---------
# Not an outside source: pixpost's two kernels for the same adaptive model
# (gibbs draws x | W exactly by perturbation-optimisation, hmc by split HMC
# through the positivity-none path, whose prior gradient takes its own r2c).
# 24 x 24 periodic, a step edge and a bright square, sd 3 noise. Tolerances:
# means 5 combined se per pixel (each from its mcse.tif); lambda, delta and
# kappa 5 combined se (summary mcse). sd: the pixel draws are a scale
# mixture (heavy-tailed), so sd / sqrt(2 ESS) understates the error of an
# sd (first run: 5.4 % of pixels beyond 3 such se, none biased: median
# ratio 1.0017); instead se(sd)/sd ~ sqrt((k - 1) / (4 ESS)) with kurtosis
# k <= 9 (assumed) and the smaller of the two ESS (sd/mcse)^2, 5 se per
# pixel, and the median ratio over the 576 pixels within 1 % (a bias).
gdir = os.path.join(root, "gauss")
os.makedirs(gdir)
gt = np.full((24, 24), 10.0)
gt[:, 12:] += 50.0
gt[5:9, 5:9] += 80.0
tifffile.imwrite(os.path.join(gdir, "truth.tif"), gt.astype(np.float32))
pptest.run(["simulate", os.path.join(gdir, "truth.tif"), "--psf", "gaussian:sigma=1.2", "--noise",
            "gaussian:sigma=3", "--boundary", "periodic", "--seed", "2", "-o",
            os.path.join(gdir, "frame.tif")])
res = {}
for kind in ("gibbs", "hmc"):
    o = os.path.join(gdir, kind)
    pptest.run(["sample", os.path.join(gdir, "frame.tif"), "--psf", "gaussian:sigma=1.2",
                "--noise", "gaussian", "--prior", "adaptive:block=4", "--sampler", kind,
                "--positivity", "none", "--boundary", "periodic", "--burn", "1000", "--iters",
                "8000", "--seed", "3", "--quiet", "-o", o])
    res[kind] = {m: tifffile.imread(os.path.join(o, m + ".tif")).astype(np.float64)
                 for m in ("mean", "sd", "mcse")}
    res[kind]["hyper"] = json.load(open(os.path.join(o, "summary.json")))["hyper"]
g, h = res["gibbs"], res["hmc"]
zm = np.abs(g["mean"] - h["mean"]) / np.hypot(g["mcse"], h["mcse"])
ess_g, ess_h = (g["sd"] / g["mcse"]) ** 2, (h["sd"] / h["mcse"]) ** 2
ratio = h["sd"] / g["sd"]
zs = np.abs(ratio - 1) / np.sqrt(8.0 / (4 * np.minimum(ess_g, ess_h)))
print("gaussian: hmc vs gibbs worst mean %.2f se, worst sd %.2f se (sd ratio %.3f..%.3f, "
      "median %.4f)" % (zm.max(), zs.max(), ratio.min(), ratio.max(), np.median(ratio)))
pptest.check(abs(np.median(ratio) - 1) < 0.01,
             "gaussian frame: median sd ratio hmc/gibbs %.4f within 1 %%" % np.median(ratio))
pptest.check(zm.max() < 5, "gaussian frame: hmc mean.tif vs gibbs within 5 se (worst %.2f)" % zm.max())
pptest.check(zs.max() < 5, "gaussian frame: hmc sd.tif vs gibbs within 5 se (worst %.2f)" % zs.max())
for key in ("lambda", "delta", "kappa"):
    a, b = g["hyper"][key], h["hyper"][key]
    zk = abs(a["mean"] - b["mean"]) / np.hypot(a["mcse"], b["mcse"])
    pptest.check(zk < 5, "gaussian frame: %s hmc %.4g vs gibbs %.4g (%.2f se)"
                 % (key, b["mean"], a["mean"], zk))
pptest.done()
