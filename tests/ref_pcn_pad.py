"""gpcn and hmc with --boundary pad vs the dense closed-form Gaussian posterior
computed with numpy.

Model on the padded grid (its size read from summary.json "grid"; the frame
sits at the grid's origin, DESIGN.md section 1): x ~ N(M, (delta Q)^-1) with
the periodic Matern Q of pixpost's prior.h, (kappa^2 + q_lap)^2 with
kappa^2 = 8/range^2 (nu = 1), mean M and delta fixed; y = S A x + e on the
observed pixels only, e ~ N(0, 1/lambda), lambda fixed (gaussian:sigma=S),
A the periodic convolution by the PSF on the grid, S the selection of the
frame block. Positivity none, so the posterior of x is Gaussian with
precision delta Q + lambda (S A)'(S A) and mean solving
(delta Q + lambda (S A)'(S A)) mu = delta Q M 1 + lambda (S A)' y:
numpy.linalg on the dense grid (a few hundred unknowns). This checks the
samplers' pad path: the likelihood summed over the observed pixels only and
the unobserved border left to the prior.

Tolerances, Monte Carlo: for each probe pixel the trace mean vs mu within
4.5 se (se = sd / sqrt(ESS), ESS by Geyer's initial monotone sequence on each
chain, summed), the mean squared deviation from mu vs the exact variance
within 4.5 se (ESS of the squared deviations); mean.tif and sd.tif at every
frame pixel within 5 se using the smallest probe ESS.
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261205)
H, W = 10, 9
PSF, SIG, M, DLT, RANGE = "gaussian:sigma=1.0", 0.5, 5.0, 0.5, 4.0
yy, xx = np.mgrid[0:H, 0:W]
truth = M + 2 * np.sin(xx / 2.0) * np.cos(yy / 3.0)
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
pptest.run(["psf", PSF, "-o", os.path.join(tmp, "psf.tif")])
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=%g" % SIG, "--boundary", "pad", "--seed", "4", "-o",
            os.path.join(tmp, "y.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
lam = 1.0 / SIG ** 2

exact = None
for kind, iters in (("hmc", 4000), ("gpcn", 8000)):
    out = os.path.join(tmp, kind)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", PSF,
                "--noise", "gaussian:sigma=%g" % SIG,
                "--prior", "matern:range=%g,nu=1,mean=%g,delta=%g" % (RANGE, M, DLT),
                "--sampler", kind, "--positivity", "none", "--boundary", "pad",
                "--chains", "4", "--burn", "1000", "--iters", str(iters), "--seed", "41",
                "--quiet", "-o", out])
    s = json.load(open(os.path.join(out, "summary.json")))
    gh, gw = s["grid"]["height"], s["grid"]["width"]
    if exact is None:
        n = gh * gw
        A = pptest.transfer(psf, (gh, gw))
        q = pptest.matern_q(gh, gw, RANGE)
        E = np.eye(n).reshape(n, gh, gw)
        Ad = np.real(np.fft.ifft2(A * np.fft.fft2(E))).reshape(n, n).T
        Qd = np.real(np.fft.ifft2(q * np.fft.fft2(E))).reshape(n, n).T
        obs = np.array([r * gw + c for r in range(H) for c in range(W)])
        B = Ad[obs]
        Pp = DLT * Qd + lam * B.T @ B
        C = np.linalg.inv(Pp)
        mu = C @ (DLT * Qd @ np.full(n, M) + lam * B.T @ y.reshape(-1))
        mu_f = mu.reshape(gh, gw)[:H, :W]
        v_f = np.diag(C).reshape(gh, gw)[:H, :W]
        exact = (mu_f, v_f)
        pptest.check(gh > H and gw > W, "grid %dx%d pads the %dx%d frame" % (gh, gw, H, W))
    mu_f, v_f = exact
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    ess_min = pptest.check_probes_gaussian("%s pad" % kind, head, tr, mu_f, v_f)
    mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
    sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
    zm = np.max(np.abs(mean - mu_f) / np.sqrt(v_f / ess_min))
    zs = np.max(np.abs(sd / np.sqrt(v_f) - 1) / np.sqrt(1.0 / (2 * ess_min)))
    pptest.check(zm < 5, "%s pad mean.tif vs dense closed form: worst %.2f se (ESS %.0f)"
                 % (kind, zm, ess_min))
    pptest.check(zs < 5, "%s pad sd.tif vs dense closed form: worst %.2f se" % (kind, zs))
    print("%s: acceptance %s, step %s" % (kind, [c["acceptance"] for c in s["chain_moves"]],
                                          [c["step"] for c in s["chain_moves"]]))
pptest.done()
