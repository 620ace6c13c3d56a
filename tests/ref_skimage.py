"""pixpost's gmrf2 Gibbs sampler vs scikit-image's unsupervised_wiener.

Source: skimage.restoration.unsupervised_wiener (Debian python3-skimage,
0.19; read in /usr/lib/python3/dist-packages/skimage/restoration/
deconvolution.py and uft.py). It is a Gibbs sampler for the same model:
  x | gn, gx, y  Gaussian, precision gn |A|^2 + gx |L|^2 in Fourier space;
  gn ~ Gamma(N/2, rate ||y - A x||^2/2),  gx ~ Gamma((N-1)/2, rate ||L x||^2/2)
with L the 5-point Laplacian (uft.laplacian; its transfer function is our
q(k), so |L|^2 = q^2 = our gmrf2), periodic boundaries, and shapes with no
hyperprior term = Jeffreys priors 1/gn, 1/gx (our --hyper-* 0,0).
Conventions (checked below, not assumed):
  * the data go through uft.urfft2 = numpy rfft2 with norm='ortho' (unitary),
    the PSF through uft.ir2tf = plain rfft2 after rolling the kernel centre
    floor(size/2) to (0, 0), which is our centring (DESIGN.md 1). With a
    unitary transform the quadratic norms are pixel-domain norms (Parseval),
    so chains['noise'] (gn) IS our lambda and chains['prior'] (gx) IS our
    delta, no rescaling. One exception: uft.image_quad_norm weights every
    rfft column except k2 = 0 twice, so for EVEN widths the Nyquist column
    k2 = W/2 is counted twice. Its prior-dominated entries then bias gx low
    by much more than H/N (the bias is amplified at the Gibbs fixed point),
    and its noise-dominated residual entries bias gn by about -H/(N+H).
  * the mean is the plain average of its x draws after `burnin`; by default
    it stops once the mean changes by < 1e-4 (about 30 iterations). Its chain starts at gn = gx = 1.

Frames: 96x80 (even width, as in the task) and 96x79 (odd width, where
image_quad_norm is exact), simulated with --boundary periodic from a smooth
periodic truth, Gaussian PSF sigma 1.5, Gaussian noise sigma 0.5.
Exact reference: p(lambda, delta | y) on an 81x81 log grid, with the marginal
likelihood of ref_gibbs_closed_form.py using q^2 and Jeffreys priors (flat
in log lambda, log delta), and the exact posterior mean
E[x|y] = sum_grid p(lambda, delta | y) mu(lambda, delta). (Strictly the
Jeffreys posterior is improper in the far delta -> infinity tail, where the
likelihood tends to that of a constant image; that tail is > 1e3 log-units
below the mode — printed — so it has no numerical weight.)

Checks (fixed seeds everywhere, skimage via random_state):
  * pixpost lambda, delta means vs exact: 4 batch-means se + 1 % (grid);
    sds within 10 % (sd of an sd estimate ~ 1/sqrt(2 ESS)).
  * pixpost mean.tif vs exact E[x|y]: rel. RMS < 1e-4. pixpost averages mu
    over its (lambda, delta) draws (Rao-Blackwellised), so its error is the
    hyper-induced spread of mu (printed, rel. ~4e-4) / sqrt(ESS), ESS >~ 100.
  * skimage mean vs exact E[x|y] and vs pixpost: skimage's plain average of
    n draws has expected RMS error e_mc = sqrt(mean posterior var / n)
    (posterior var from pixpost's sd.tif; the RMS over 7680 pixels is
    tightly concentrated); tolerance 1.5 e_mc for a long chain, 2 e_mc for
    the default short one (it still carries the transient of its start at
    gn = gx = 1). On the even frame skimage's biased hyperparameters also
    shift the mean by e_sys = RMS(mu(mean gn, mean gx) - E[x|y]); tolerance
    1.5 sqrt(e_mc^2 + e_sys^2).
  * skimage gn, gx means (long chain, odd frame) vs exact lambda, delta:
    4 batch-means se + 1 %. Even frame: gn vs the predicted
    lambda N/(N+H) within 4 se + 0.5 %; gx / exact delta is only REPORTED.
"""
import json
import os

import numpy as np
import tifffile
from skimage.restoration import uft, unsupervised_wiener

import pptest

tmp = pptest.tmpdir()
PSF = "gaussian:sigma=1.5"
psf_path = os.path.join(tmp, "psf.tif")
pptest.run(["psf", PSF, "-o", psf_path])
psf = tifffile.imread(psf_path).astype(np.float64)
LONG, LONG_BURN = 2300, 300


def smooth_truth(H, W, seed):
    """Sum of periodic Gaussian blobs on a background: smooth, periodic."""
    rng = np.random.default_rng(seed)
    yy, xx = np.mgrid[0:H, 0:W]
    t = np.full((H, W), 10.0)
    for _ in range(12):
        cy, cx, s, a = rng.uniform(0, H), rng.uniform(0, W), rng.uniform(3, 9), rng.uniform(5, 20)
        dy = (yy - cy + H / 2) % H - H / 2
        dx = (xx - cx + W / 2) % W - W / 2
        t += a * np.exp(-(dy ** 2 + dx ** 2) / (2 * s * s))
    return t


def exact_posterior(y, A, q2, center):
    """Grid posterior of (lambda, delta) and the exact posterior mean image."""
    H, W = y.shape
    Y = np.fft.fft2(y)
    nz = q2 != 0
    a2, qq, yy = np.abs(A[nz]) ** 2, q2[nz], np.abs(Y[nz]) ** 2 / (H * W)

    def loglik(ll, ld):
        c = np.exp(-ll) + a2 / (np.exp(ld) * qq)
        return -0.5 * np.sum(np.log(c)) - 0.5 * np.sum(yy / c)

    # Posterior sd/mean is ~2 % (lambda) and ~7 % (delta): +/- 8 sd or more.
    gl = np.linspace(np.log(center[0]) - 0.15, np.log(center[0]) + 0.15, 81)
    gd = np.linspace(np.log(center[1]) - 0.5, np.log(center[1]) + 0.5, 81)
    LP = np.array([[loglik(a, b) for b in gd] for a in gl])  # Jeffreys: flat in logs
    # delta -> infinity: c -> 1/lambda (a constant image); compare with the mode.
    i_best = np.unravel_index(np.argmax(LP), LP.shape)
    tail = LP.max() - loglik(gl[i_best[0]], np.log(center[1]) + 40)
    P = np.exp(LP - LP.max())
    P /= P.sum()
    L, D = np.exp(gl)[:, None] * np.ones_like(P), np.exp(gd)[None, :] * np.ones_like(P)
    out = {"P_edge": max(P[0].max(), P[-1].max(), P[:, 0].max(), P[:, -1].max()), "tail": tail}
    for name, G in (("lambda", L), ("delta", D)):
        m = np.sum(P * G)
        out[name] = (m, np.sqrt(np.sum(P * G ** 2) - m * m))
    # mu is linear in its spectrum, so average spectra; the pixel-mean of
    # Var(mu) over the hyper posterior follows by Parseval:
    # mean_i Var mu_i = (E sum_k |mu_k|^2 - sum_k |E mu_k|^2) / N^2.
    m1 = np.zeros((H, W), complex)
    A2, w, e2 = np.abs(A) ** 2, 0.0, 0.0
    for i, j in np.argwhere(P > 1e-10 * P.max()):
        lam, dl = L[i, j], D[i, j]
        mu_hat = lam * np.conj(A) * Y / (lam * A2 + dl * q2)
        m1 += P[i, j] * mu_hat
        e2 += P[i, j] * np.sum(np.abs(mu_hat) ** 2)
        w += P[i, j]
    m1 /= w
    out["mean"] = np.real(np.fft.ifft2(m1))
    out["hyper_spread"] = np.sqrt(max(e2 / w - np.sum(np.abs(m1) ** 2), 0.0) / (H * W) ** 2)
    return out


def mu_at(y, A, q2, lam, dl):
    mu_hat = lam * np.conj(A) * np.fft.fft2(y) / (lam * np.abs(A) ** 2 + dl * q2)
    return np.real(np.fft.ifft2(mu_hat))


def rel_rms(a, b):
    return np.sqrt(np.mean((a - b) ** 2)) / np.sqrt(np.mean(b ** 2))


for H, W, seed in ((96, 80, 7), (96, 79, 8)):
    tag = "%dx%d" % (H, W)
    N = H * W
    d = os.path.join(tmp, tag)
    os.makedirs(d)
    tifffile.imwrite(os.path.join(d, "truth.tif"), smooth_truth(H, W, seed).astype(np.float32))
    pptest.run(["simulate", os.path.join(d, "truth.tif"), "--psf", PSF,
                "--noise", "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", seed,
                "-o", os.path.join(d, "y.tif")])
    y = tifffile.imread(os.path.join(d, "y.tif")).astype(np.float64)
    pad = pptest.centred_kernel(psf, (H, W))
    A = np.fft.fft2(pad)
    q2 = pptest.gmrf1_q(H, W) ** 2
    q2[0, 0] = 0.0

    # ---- conventions of skimage (uft.py), checked numerically ----------------
    e_tf = np.max(np.abs(uft.ir2tf(psf, (H, W), is_real=True) - np.fft.rfft2(pad)))
    pptest.check(e_tf < 1e-6, "%s: skimage ir2tf(psf) = rfft2 of our centred OTF (max diff %.1e)"
                 % (tag, e_tf))
    lap_tf, _ = uft.laplacian(2, (H, W), is_real=True)
    e_q = np.max(np.abs(np.abs(lap_tf) ** 2 - q2[:, : W // 2 + 1]))
    pptest.check(e_q < 1e-9, "%s: |skimage laplacian tf|^2 = our gmrf2 q^2 (max diff %.1e)"
                 % (tag, e_q))
    e_u = np.max(np.abs(uft.urfft2(y) - np.fft.rfft2(y) / np.sqrt(N)))
    pptest.check(e_u < 1e-9, "%s: skimage urfft2 = rfft2 / sqrt(N) (unitary)" % tag)
    r = y - y.mean()
    parseval = uft.image_quad_norm(uft.urfft2(r)) / np.sum(r ** 2) - 1
    print("%s: skimage image_quad_norm(urfft2(r)) / ||r||^2 - 1 = %.2e (nonzero for even W: the "
          "Nyquist column is counted twice)" % (tag, parseval))
    if W % 2:
        pptest.check(abs(parseval) < 1e-9, "%s: odd width, skimage's quadratic norm is "
                     "Parseval-exact, so gn = lambda and gx = delta" % tag)

    # ---- pixpost: gibbs and mtc, each against the exact posterior ----------------
    for smp in ("gibbs", "mtc"):
        out = os.path.join(d, "pp_" + smp)
        pptest.run(["sample", os.path.join(d, "y.tif"), "--psf", PSF, "--prior", "gmrf2",
                    "--hyper-lambda", "0,0", "--hyper-delta", "0,0", "--boundary", "periodic",
                    "--sampler", smp, "--chains", "4", "--burn", "300", "--iters", "1500",
                    "--seed", seed + 10, "--quiet", "-o", out])
        head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
        pp = {n: tr[:, head.index(n)] for n in ("lambda", "delta")}
        pp_mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
        pp_sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
        s = json.load(open(os.path.join(out, "summary.json")))
        pptest.check(abs(s["hyper"]["delta"]["mean"] - pp["delta"].mean())
                     < 1e-6 * pp["delta"].mean(),
                     "%s %s: summary.json delta mean = trace mean" % (tag, smp))
        if smp == "gibbs":
            ex = exact_posterior(y, A, q2, (pp["lambda"].mean(), pp["delta"].mean()))
            pptest.check(ex["P_edge"] < 1e-6, "%s: the grid holds the exact posterior (edge "
                         "%.1e); improper delta tail %.0f log-units below the mode"
                         % (tag, ex["P_edge"], ex["tail"]))
            pptest.check(ex["tail"] > 100, "%s: improper Jeffreys tail negligible" % tag)
        for name in ("lambda", "delta"):
            m_ex, s_ex = ex[name]
            tol = 4 * pptest.batch_se(pp[name], 4) + 0.01 * m_ex
            ok = abs(pp[name].mean() - m_ex) < tol
            pptest.check(ok, "%s: pixpost %s %s mean %.5g vs exact %.5g (tol %.2g)"
                         % (tag, smp, name, pp[name].mean(), m_ex, tol))
            ok = abs(pp[name].std() - s_ex) < 0.1 * s_ex
            pptest.check(ok, "%s: pixpost %s %s sd %.4g vs exact %.4g (10 %%)"
                         % (tag, smp, name, pp[name].std(), s_ex))
        e_pp = rel_rms(pp_mean, ex["mean"])
        rms_ex = np.sqrt(np.mean(ex["mean"] ** 2))
        print("%s: hyper-induced spread of mu, rel. RMS %.2e" % (tag, ex["hyper_spread"] / rms_ex))
        pptest.check(e_pp < 1e-4, "%s: pixpost %s mean.tif vs exact E[x|y]: rel. RMS %.2e "
                     "(tol 1e-4)" % (tag, smp, e_pp))
    # skimage is compared below with the last (mtc) run's mean.tif

    # ---- skimage: default (short) run and a long run --------------------------
    post_var = np.mean(pp_sd ** 2)
    for label, params, burn, fac in (("default", None, 15, 2.0),
                                     ("long", {"max_num_iter": LONG, "min_num_iter": LONG,
                                               "burnin": LONG_BURN}, LONG_BURN, 1.5)):
        sk_mean, chains = unsupervised_wiener(y, psf, clip=False, is_real=True, user_params=params,
                                              random_state=seed)
        gn = np.array(chains["noise"])[burn + 1:]  # chain[0] is the start value 1
        gx = np.array(chains["prior"])[burn + 1:]
        n = len(gn)
        e_mc = np.sqrt(post_var / n) / rms_ex
        e_sys = rel_rms(mu_at(y, A, q2, gn.mean(), gx.mean()), ex["mean"]) if W % 2 == 0 else 0.0
        tol = fac * np.sqrt(e_mc ** 2 + e_sys ** 2)
        e_sk = rel_rms(sk_mean, ex["mean"])
        e_skpp = rel_rms(sk_mean, pp_mean)
        print("%s skimage %s: %d iterations, %d averaged; gn %.5g (exact lambda %.5g), "
              "gx %.5g = %.3f x exact delta %.5g"
              % (tag, label, len(chains["noise"]) - 1, n, gn.mean(), ex["lambda"][0],
                 gx.mean(), gx.mean() / ex["delta"][0], ex["delta"][0]))
        pptest.check(e_sk < tol, "%s skimage %s: mean vs exact E[x|y] rel. RMS %.2e "
                     "(expected MC %.2e, hyper-bias shift %.2e, tol %.2e)"
                     % (tag, label, e_sk, e_mc, e_sys, tol))
        pptest.check(e_skpp < tol, "%s skimage %s: mean vs pixpost mean.tif rel. RMS %.2e "
                     "(tol %.2e)" % (tag, label, e_skpp, tol))
        if label != "long":
            continue
        se_n, se_x = pptest.batch_se(gn, 1), pptest.batch_se(gx, 1)
        if W % 2:
            for nm, ch, se in (("lambda", gn, se_n), ("delta", gx, se_x)):
                m_ex = ex[nm][0]
                tol = 4 * se + 0.01 * m_ex
                ok = abs(ch.mean() - m_ex) < tol
                pptest.check(ok, "%s skimage %s chain mean %.5g vs exact %.5g "
                             "(tol %.2g)" % (tag, nm, ch.mean(), m_ex, tol))
        else:
            pred = ex["lambda"][0] * N / (N + H)
            tol = 4 * se_n + 0.005 * pred
            ok = abs(gn.mean() - pred) < tol
            pptest.check(ok, "%s skimage noise chain mean %.5g vs exact lambda "
                         "x N/(N+H) = %.5g (Nyquist column counted twice; tol %.2g)"
                         % (tag, gn.mean(), pred, tol))
            print("INFO %s: skimage prior chain mean %.5g is %.1f %% of the exact delta %.5g "
                  "(pixpost %.5g); cause: image_quad_norm counts the k2 = W/2 column twice"
                  % (tag, gx.mean(), 100 * gx.mean() / ex["delta"][0], ex["delta"][0],
                     pp["delta"].mean()))
pptest.done()
