"""mtc vs gibbs on the same frame, and mtc vs the exact marginal posterior.

Same linear-Gaussian model, same periodic frame (40 x 36, simulated with a
known PSF and noise). The two samplers must agree within Monte Carlo error:
  * lambda, delta posterior means: |difference| < 4 combined standard
    errors, each from batch means of its chains (20 batches per chain);
  * lambda, delta posterior sds: within 10 % (the sd of an sd estimate is
    about sd / sqrt(2 ESS); ESS > 300 here makes 10 % over 4 errors);
  * pixel means (Rao-Blackwellised) and pixel sds (law of total variance):
    the map difference, relative to the pixel sd, below a tolerance made
    from the traces (4 x the spread of log delta and log lambda over the
    posterior, times sqrt(1/ESS_mtc + 1/ESS_gibbs)): both estimates vary
    with the hyperparameter draws only.
  * mtc's lambda, delta posterior means also match the exact marginal
    posterior integrated on a grid with numpy (formula and style of
    tests/ref_gibbs_closed_form.py), within 4 standard errors + 1 % (grid).
"""
import json
import os

import numpy as np
import tifffile

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261206)
H, W = 40, 36
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
PSF = "gaussian:sigma=1.3"
pptest.run(["psf", PSF, "-o", os.path.join(tmp, "psf.tif")])
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", "7", "-o",
            os.path.join(tmp, "y.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)

runs = {}
for kind in ("gibbs", "mtc"):
    out = os.path.join(tmp, kind)
    pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", PSF, "--boundary", "periodic",
                "--sampler", kind, "--prior", "gmrf1", "--chains", "4", "--burn", "300", "--iters", "3000",
                "--seed", "21", "--quiet", "-o", out])
    head, tr = pptest.read_trace(os.path.join(out, "trace.csv"))
    s = json.load(open(os.path.join(out, "summary.json")))
    pptest.check(s["sampler"] == kind, "%s: summary.json names the sampler" % kind)
    r = {"summary": s,
         "mean": tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64),
         "sd": tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)}
    for name in ("lambda", "delta"):
        d = tr[:, head.index(name)]
        se = pptest.batch_se(d, 4)
        r[name] = (d.mean(), d.std(ddof=1), se, pptest.batch_ess(d, se, cap=False),
                   np.log(d).std())
    runs[kind] = r

g, m = runs["gibbs"], runs["mtc"]
for name in ("lambda", "delta"):
    mg, sg, seg, essg, _ = g[name]
    mm, sm, sem, essm, _ = m[name]
    z = (mm - mg) / np.hypot(seg, sem)
    pptest.check(abs(z) < 4, "%s mean: mtc %.6g vs gibbs %.6g (z = %.2f; ESS %.0f vs %.0f)"
                 % (name, mm, mg, z, essm, essg))
    pptest.check(abs(sm - sg) < 0.1 * sg, "%s sd: mtc %.4g vs gibbs %.4g (within 10%%)"
                 % (name, sm, sg))
    if name == "delta":  # gibbs's slow direction (Agapiou et al. 2014)
        pptest.check(essm > 3 * essg, "delta: mtc's ESS %.0f is over 3x gibbs's %.0f"
                     % (essm, essg))

ess_g = min(g["lambda"][3], g["delta"][3])
ess_m = min(m["lambda"][3], m["delta"][3])
spread = m["lambda"][4] + m["delta"][4]
tol = 4 * spread * np.sqrt(1 / ess_g + 1 / ess_m)
dmean = np.max(np.abs(m["mean"] - g["mean"]) / g["sd"])
dsd = np.max(np.abs(m["sd"] - g["sd"]) / g["sd"])
pptest.check(dmean < tol, "pixel means: max |mtc - gibbs| / sd = %.4f < %.4f" % (dmean, tol))
pptest.check(dsd < tol, "pixel sds: max |mtc - gibbs| / sd = %.4f < %.4f" % (dsd, tol))

# ---- mtc vs the exact marginal posterior (numpy grid) ----------------------
A = pptest.transfer(psf, (H, W))
q = pptest.gmrf1_q(H, W)
Y = np.fft.fft2(y)
nz = q > 1e-12
a2, qq, yy = np.abs(A[nz]) ** 2, q[nz], np.abs(Y[nz]) ** 2 / (H * W)


def log_post(ll, ld):
    c = 1.0 / np.exp(ll) + a2 / (np.exp(ld) * qq)
    return (-0.5 * np.sum(np.log(c)) - 0.5 * np.sum(yy / c)
            - 1e-4 * np.exp(ll) - 1e-4 * np.exp(ld) + ll + ld)


gl = np.linspace(np.log(m["lambda"][0]) - 0.6, np.log(m["lambda"][0]) + 0.6, 121)
gd = np.linspace(np.log(m["delta"][0]) - 1.5, np.log(m["delta"][0]) + 1.5, 121)
LP = np.array([[log_post(a, b) for b in gd] for a in gl])
P = np.exp(LP - LP.max())
P /= P.sum()
exact = {"lambda": np.sum(P * np.exp(gl)[:, None]), "delta": np.sum(P * np.exp(gd)[None, :])}
for name in ("lambda", "delta"):
    mm, _, sem, _, _ = m[name]
    tol = 4 * sem + 0.01 * exact[name]
    pptest.check(abs(mm - exact[name]) < tol, "mtc %s mean %.6g vs exact marginal %.6g (tol %.2g)"
                 % (name, mm, exact[name], tol))
pptest.done()
