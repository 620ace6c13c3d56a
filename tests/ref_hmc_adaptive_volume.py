"""hmc with the adaptive prior on a volume under Poisson noise (issue 18: the
adaptive prior on rank-3 grids for every sampler that runs it; the kernel
is src/sampler_pcn.c's hmc with src/adaptive.c's weights, now with the z
increments and their factor c_z) against an independent numpy reference
chain of the same posterior, as tests/ref_hmc_adaptive.py does for a frame
and tests/ref_adaptive_volume_chain.py for gibbs on a volume.

Model (src/adaptive.h, src/sampler_pcn.c's head comment):
    n ~ Poisson(A exp(z) + b) on the frame's voxels, z = m + u, flat prior
    on the level m, and the adaptive prior's joint density on u with
    increments along x, y and z weighted c_a e^{s_B} tau_e, c = (spacing_x /
    spacing_a)^2, blocks B x B in-plane by B_z slices, 6 block neighbours,
    kappa ~ Gamma(1, rate 0.5), delta = e^L ~ Gamma(1, rate 1).

Outside sources: numpy / scipy.linalg. The reference (written here and in
tests/adaptref.py's Model from src/adaptive.h's joint density, not from the
C code) is a different algorithm from pixpost's split HMC with a Fourier
reference, Laplace block moves and scale moves along the tau/s ridge: tau
is integrated out throughout (Student-t increments, prod_e (1 + c e^{s}
d_e^2 / nu)^{-(nu+1)/2}); per sweep s by random-walk Metropolis
(adaptref.Model.s_sweep: block by block plus a global shift, the level's
hyperprior included), kappa | s exactly (Gamma), z | s by elliptical slice
sampling (Murray, Adams & MacKay, AISTATS 2010) against a Gaussian
reference N(a, H^-1) that depends on s and a point frozen after burn-in
only (H = D'(c e^s)D plus the Poisson Fisher information there, a dense
Cholesky factor by scipy.linalg; the rest of the target is the slice's
"likelihood", so the move is exact for any such reference), and a random
walk along the ridge (s + c, e^{-c/2} u), u = z - its mean, the joint
changing by e^{N c/2} (blocks), the Jacobian e^{-(N-1) c/2}, the
likelihood and p(L). Standard errors: Geyer's initial monotone sequence
ESS (Geyer, Statist. Sci. 7, 1992; pptest.geyer_ess), per chain, summed.

Volume 4 x 5 x 6 periodic (PP_REF_PAD=1 adds the pad boundary: the numpy
chain on pixpost's padded 6 x 8 x 8 grid with only the frame's voxels in
the likelihood; off by default for runtime), an asymmetric 3 x 3 x 3 PSF
(peaked, about half its weight on the centre, times random factors), b = 2
photons, a background of 100 photons per voxel, a box of 500 and a voxel
of 1500. Voxel {z, y, x} = {0.2, 0.1, 0.1} um: c_z = 0.25 and B_z =
round(3 x 0.1 / 0.2) = 2 slices, so adaptive:block=3 gives 2 x 2 x 2 = 8
blocks. nu = 8 and a scene this bright: with nu = 2, 20-photon voxels and
a flatter PSF the numpy chain crossed between a voxel's dips and its level
every few thousand sweeps (voxel ESS 4-16 per 4000 sweeps; at nu = 2 and
this scene 10), far beyond this test's budget; the code paths are the
same for every nu.
hyper_delta=1,1 (as tests/ref_adaptive_volume_chain.py, for its reason).

Compared (z = (pixpost - numpy) / sqrt(se_pp^2 + se_np^2); voxel means:
pixpost's MCSE map; voxel sds: the delta method with the numpy chain's
kurtosis, adaptref.pixel_z_arrays): the posterior means and sds of delta,
kappa and the level m, and every voxel's mean and sd: 6 + 2 x 120 = 246
comparisons, each |z| < 4.2 (two-sided P(|Z| > 4.2) = 2.7e-5: a correct
sampler fails one with probability below 246 x 2.7e-5 = 0.7 %,
Bonferroni). Fixed seeds.

Can fail: the same numpy chain with the z increments' factor left out (c_z
= 1 instead of 0.25) is compared with the same pixpost run and must miss
it by more than 2 x 4.2 se somewhere (a shorter chain: its errors are far
larger than its se).

Measured (fixed seeds, numpy 40000 sweeps, pixpost 4 x 6000 iterations):
worst |z| 1.74 (hyperparameters), 2.73 (voxel means, mean z^2 1.03), 2.38
(voxel sds, mean z^2 0.35: their se is conservative, pixpost's ESS of
squared deviations being 6 % of its ESS of means, hmc's draws
anticorrelated); numpy voxel ESS min 277, pixpost's squared-deviation ESS
min 111 (at 9000 iterations per chain: 1.77, 2.78, 2.23 and still 110,
so 6000 are kept). The c_z = 1 reference:
delta 44 se off (0.618 against 0.916), the voxels only 3.5 se. With
PP_REF_PAD=1 PP_REF_SCALE=0.3 the pad case passed too (worst 2.40, 3.48,
2.46) but on few effective draws (numpy voxel ESS 36, pixpost's level
ESS 37), so it failed the draws check: a pad run to the full standard
would take roughly 10 CPU minutes (estimated from that run; the dense
384-voxel grid).
Runtime: 82-125 s at ctest -j2 on a loaded machine (about 1.5 CPU
minutes), nearly all of it the numpy chains: pixpost's run takes 1.4 CPU
s, so PIXPOST_TEST_SMALL is not read (shortening the chains halved the
effective draws below the draws check's floor and saved the sanitizer job
next to nothing). PP_REF_SCALE=K scales every chain and that floor.
"""
import os

os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np
import scipy.linalg

import adaptref
import pptest

SCALE = float(os.environ.get("PP_REF_SCALE", "1"))
PAD = os.environ.get("PP_REF_PAD") == "1"
D, H, W = 4, 5, 6
BLOCK, BZ = 3, 2
NU = 8.0
VOX = (0.2, 0.1, 0.1)
CA = tuple((VOX[2] / v) ** 2 for v in VOX)
BG = 2.0
NP_BURN, NP_ITERS = 1000, int(40000 * SCALE)
WRONG_ITERS = int(8000 * SCALE)
PP_CHAINS, PP_BURN, PP_ITERS = 4, 1000, int(6000 * SCALE)
ZMAX = 4.2

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261205)
N = D * H * W
# a peaked PSF (about half its weight on the centre voxel), made asymmetric by
# random factors: the data then pin each voxel, so both chains mix
psf = np.einsum("i,j,k->ijk", [0.15, 0.7, 0.15], [0.1, 0.8, 0.1], [0.1, 0.8, 0.1])
psf *= rng.uniform(0.7, 1.3, (3, 3, 3))
psf /= psf.sum()
truth = np.full((D, H, W), 100.0)
truth[1:3, 1:4, 2:5] = 500.0
truth[3, 4, 0] = 1500.0


def pixpost_run(boundary, counts):
    return adaptref.volume_run(tmp, boundary, counts, psf, (D, H, W), [
        "sampler=hmc", "prior=adaptive:block=%d,nu=%g" % (BLOCK, NU),
        "noise=poisson:gain=1,offset=0", "background=%g" % BG, "boundary=" + boundary,
        "chains=%d" % PP_CHAINS, "burn=%d" % PP_BURN, "iters=%d" % PP_ITERS, "seed=11",
        "threads=2", "hyper_delta=1,1", "voxel=%g,%g,%g" % VOX])

def ref_chain(grid, SA, counts, obs, ca, seed, burn, iters):
    """The numpy chain on the grid (gd, gh, gw); SA: the rows of the grid's
    dense A at the observed voxels obs, counts their photons. Returns
    (iters x 3 draws of delta, kappa, m; iters x len(obs) draws of x)."""
    gd, gh, gw = grid
    m = adaptref.Model(gh, gw, BLOCK, nu=NU, hyper=(1.0, 1.0), frame=(D, H, W), depth=gd, bz=BZ, ca=ca)
    n_all = m.N
    r = np.random.default_rng(seed)

    def loglik(z):
        mu = np.maximum(SA @ np.exp(z) + BG, 1e-300)
        return float(counts @ np.log(mu) - mu.sum())

    z = np.full(n_all, 0.0)
    z0 = np.log(np.maximum(counts - BG, 1.0))
    z[:] = z0.mean()
    z[obs] = z0
    zref, zsum, nsum = z.copy(), np.zeros(n_all), 0
    s = np.full(m.nb, np.log(1.0 / max(np.var(z0), 1e-3)))
    kappa, ll = 2.0, loglik(z)
    cstep, fisher, gl = 0.1, None, None
    hyp, xs = np.zeros((iters, 3)), np.zeros((iters, len(obs)))
    for t in range(burn + iters):
        d2 = m.incr(z) ** 2 * m.ce
        m.s_sweep(s, d2, kappa, r, 0.5, True, 0.3)  # tau integrated out
        kappa = m.draw_kappa(s, r)
        # z | s, tau integrated out (Student-t increments, the collapsed
        # factor of Model.block_logf), by elliptical slice sampling against
        # a Gaussian reference N(a, H^-1) that depends on s and the frozen
        # point zref only: H = D'(c e^s)D plus the likelihood's Fisher
        # information at zref, a = one Newton step from zref; the rest of
        # the target, loglik(z) + log p(z | s) + (z - a)'H(z - a)/2, is the
        # slice's "likelihood" (exact for any such reference).
        wts = m.ce * np.exp(s[m.be])
        Q = m.laplacian(wts, np.zeros((n_all, n_all)))
        if fisher is None:  # at zref (changes once, at the end of burn-in)
            xr = np.exp(zref)
            mur = SA @ xr + BG
            J = SA * xr[None, :]
            fisher, gl = J.T @ (J * (counts / mur ** 2)[:, None]), J.T @ (counts / mur - 1.0)
        Hm = Q + fisher
        grad = gl - Q @ zref
        cf = scipy.linalg.cho_factor(Hm, lower=True)
        a = zref + scipy.linalg.cho_solve(cf, grad)
        nu = scipy.linalg.solve_triangular(cf[0].T, r.standard_normal(n_all), lower=False)

        def rest(zz):
            e = zz - a
            return (loglik(zz) - 0.5 * (m.nu + 1) * np.log1p(wts * m.incr(zz) ** 2 / m.nu).sum()
                    + 0.5 * e @ Hm @ e)

        cur = rest(z)
        logy = cur + np.log(r.random())
        th = r.uniform(0, 2 * np.pi)
        lo, hi = th - 2 * np.pi, th
        while True:
            zc = a + (z - a) * np.cos(th) + nu * np.sin(th)
            if rest(zc) > logy:
                z = zc
                break
            if th < 0:
                lo = th
            else:
                hi = th
            th = r.uniform(lo, hi)
        ll = loglik(z)
        # the ridge (s + c, e^{-c/2} u), u = z - its grid mean
        c = cstep * r.standard_normal()
        lvl = z.mean()
        zp = lvl + (z - lvl) * np.exp(-0.5 * c)
        llp = loglik(zp)
        L0 = m.level(s)
        la = llp - ll + 0.5 * c + m.level_logp(L0 + c) - m.level_logp(L0)
        a_c = min(1.0, np.exp(min(la, 0.0)))
        if r.random() < a_c:
            z, ll, s = zp, llp, s + c
        if t < burn:  # Robbins-Monro towards 0.44 (common practice), burn-in only
            cstep *= np.exp((a_c - 0.44) / (t + 1) ** 0.6)
            if t >= burn // 2:  # the reference point: mean of the second half of burn-in
                zsum += z
                nsum += 1
            if t == burn - 1:
                zref, fisher = zsum / nsum, None
        else:
            hyp[t - burn] = np.exp(m.level(s)), kappa, z.mean()
            xs[t - burn] = np.exp(z[obs])
    return hyp, xs


def compare(label, pp, hyp, xs):
    """z-scores of pixpost's run pp against the numpy draws; returns the
    worst |z| of the hyperparameters and of the voxel means and sds."""
    stdout, grid, pmean, psd, pmcse, head, tr = pp
    ch = np.repeat(np.arange(PP_CHAINS), PP_ITERS)  # chain-major rows
    worst = [0.0, 0.0, 0.0]
    for k, name in enumerate(("delta", "kappa", "level")):
        col = tr[:, head.index(name)]
        pm, psd_, pess, nm, nsd, ness, zm, zsd = adaptref.hyper_z(col, ch, hyp[:, k])
        worst[0] = max(worst[0], abs(zm), abs(zsd))
        print("%s %s: pixpost mean %.5g sd %.5g (ESS %.0f) vs numpy %.5g sd %.5g (ESS %.0f): "
              "z mean %.2f, z sd %.2f" % (label, name, pm, psd_, pess, nm, nsd, ness, zm, zsd))
    pz = adaptref.pixel_z_arrays(pmean, psd, pmcse, xs, tr, head, ch)
    worst[1], worst[2] = np.abs(pz["z_mean"]).max(), np.abs(pz["z_sd"]).max()
    print("%s: voxel means worst |z| %.2f (mean z^2 %.2f), sds worst |z| %.2f (mean z^2 %.2f); "
          "numpy voxel ESS min %.0f, probe ratio %.2f"
          % (label, worst[1], (pz["z_mean"] ** 2).mean(), worst[2], (pz["z_sd"] ** 2).mean(),
             pz["ess"].min(), pz["ratio"]))
    return worst, pz


def check_boundary(boundary, seed):
    if boundary == "periodic":
        counts = rng.poisson(A0 @ truth.ravel() + BG).astype(np.float64)
    else:  # pad: the frame blurred from a surround at the background level
        big = np.full((D + 2, H + 2, W + 2), 100.0)
        big[1:-1, 1:-1, 1:-1] = truth
        Ab = pptest.dense_blur3(psf, big.shape)
        mu = (Ab @ big.ravel()).reshape(big.shape)[1:-1, 1:-1, 1:-1].ravel() + BG
        counts = rng.poisson(mu).astype(np.float64)
    pp = pixpost_run(boundary, counts)
    stdout, grid = pp[0], pp[1]
    pptest.check("kind hmc" in stdout and (grid == (D, H, W)) == (boundary == "periodic"),
                 "%s: pixpost ran hmc on the grid %s" % (boundary, "x".join(map(str, grid))))
    pptest.check(len(pp[6]) == PP_CHAINS * PP_ITERS and "kappa" in pp[5],
                 "%s: trace of %d rows with kappa" % (boundary, len(pp[6])))
    gd, gh, gw = grid
    A = A0 if boundary == "periodic" else pptest.dense_blur3(psf, grid)
    obs = np.array([(k * gh + i) * gw + j for k in range(D) for i in range(H) for j in range(W)])
    hyp, xs = ref_chain(grid, A[obs], counts, obs, CA, seed, NP_BURN, NP_ITERS)
    worst, pz = compare(boundary, pp, hyp, xs)
    pptest.check(worst[0] < ZMAX, "%s: delta, kappa, level: means and sds within %g se of the "
                 "numpy chain (worst %.2f)" % (boundary, ZMAX, worst[0]))
    pptest.check(worst[1] < ZMAX, "%s: all %d voxel means within %g se (worst %.2f)"
                 % (boundary, N, ZMAX, worst[1]))
    pptest.check(worst[2] < ZMAX, "%s: all %d voxel sds within %g se (worst %.2f)"
                 % (boundary, N, ZMAX, worst[2]))
    pp_ess2 = ((pz["psd"] / pz["pmcse"]) ** 2 * pz["ratio"]).min()
    e1, e2 = 200 * min(SCALE, 1.0), 100 * min(SCALE, 1.0)
    pptest.check(pz["ess"].min() > e1 and pp_ess2 > e2,
                 "%s: Monte Carlo errors rest on enough effective draws (numpy voxel ESS min "
                 "%.0f > %.0f; pixpost's ESS of squared deviations min %.0f > %.0f, common "
                 "practice)" % (boundary, pz["ess"].min(), e1, pp_ess2, e2))
    if boundary == "periodic":  # power: the z weights left out must fail
        hyp_w, xs_w = ref_chain(grid, A[obs], counts, obs, (1.0, CA[1], CA[2]), seed + 100,
                                NP_BURN, WRONG_ITERS)
        ww, _ = compare("wrong (c_z = 1)", pp, hyp_w, xs_w)
        pptest.check(max(ww) > 2 * ZMAX, "a reference without the z weights (c_z = 1) misses "
                     "pixpost by %.1f se (> %g): the check can fail" % (max(ww), 2 * ZMAX))


A0 = pptest.dense_blur3(psf, (D, H, W))
check_boundary("periodic", 31)
if PAD:
    check_boundary("pad", 32)
pptest.done()
