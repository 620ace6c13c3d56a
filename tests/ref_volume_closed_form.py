"""3-D sampling against the closed form computed independently with numpy
(numpy.fft.fftn on the full spectrum, not pixpost's half-spectrum code),
and a volume of identical slices against the 2-D answer.

Library calls through tests/probe_volume (the command line does not read
z-stacks yet). Volume 7 x 10 x 12 (odd depth, non-square slices), an
asymmetric 3 x 5 x 5 PSF (random positive values: a flipped axis gives a
different transfer function; checked below that it moves the answer) and an
anisotropic voxel {z, y, x} = {1.5, 0.4, 0.5} um, so the prior weighs its
increments along axis a by w_a = (0.5 / spacing_a)^2 (include/pixpost/prior.h).

1. Fixed lambda and delta, periodic boundary (as tests/ref_gibbs_closed_form.py
   fixes them: gaussian:sigma=0.5 gives lambda = 4, the prior's delta=D key
   fixes delta): the posterior of x is Gaussian with
     mean  mu = ifftn( lam conj(A) Y / p ),  p = lam |A|^2 + del q,
     var   v  = mean_k 1 / p   (the same at every voxel),
   q(k) = sum_a w_a (2 - 2 cos(2 pi k_a / n_a)) for gmrf1 (Rue & Held 2005),
   its square for gmrf2,
   (kappa^2 + q)^(nu + 3/2) for matern (Lindgren, Rue & Lindstrom 2011:
   alpha = nu + d/2, d = 3), kappa = sqrt(8 nu) / range, q(0) = 0 for a
   free mean. With fixed hyperparameters the Rao-Blackwellised mean and the
   law-of-total-variance sd are exact, so mean and sd must equal mu and
   sqrt(v) to rounding (rel. 1e-9, double output). Both gibbs and mtc. The
   probe voxels' draws (middle slice) must have mean mu and variance v
   within Monte Carlo error (pptest.check_probes_gaussian, 4.5 se).

2. Identical slices: a volume of D copies of one frame y2, a depth-1 PSF
   (blur within each slice) and periodic boundaries. Its posterior mean is
   constant along z and equals the 2-D posterior mean of y2 with lambda and
   delta scaled by D: the data spectrum is D Y2 at kz = 0 and 0 elsewhere;
   at kz = 0 the 3-D precision is lam |A2|^2 + del q2 (the z term vanishes),
   so mu3(0, k) = D lam conj(A2) Y2 / (lam |A2|^2 + del q2), i.e. every
   slice is F2^-1[lam conj(A2) Y2 / (lam |A2|^2 + del q2)]; equivalently the
   z-average of x has the 2-D posterior with precisions (D lam, D del),
   whose mean is the same (only lam/del enters). Checked with gmrf1 (not
   matern: its exponent nu + d/2 differs between d = 2 and 3), 2-D run with
   sigma / sqrt(D) and delta D, to rounding (rel. 1e-9). Square pixels
   (voxel {2, 0.5, 0.5}: w_y = w_x = 1 as in 2-D; w_z does not enter).
"""
import os
import subprocess

import numpy as np

import pptest
import volref

tmp = pptest.tmpdir()
rng = np.random.default_rng(20261204)
D, H, W = 7, 10, 12
VOX = (1.5, 0.4, 0.5)
LAM, DEL, SIGMA = 4.0, 0.8, 0.5


def run(frame, psf, name, *keys, ok=True):
    fp, pp = os.path.join(tmp, name + ".frame"), os.path.join(tmp, name + ".psf")
    f3 = frame.reshape((1,) * (3 - frame.ndim) + frame.shape)
    k3 = psf.reshape((1,) * (3 - psf.ndim) + psf.shape)
    f3.astype("<f8").tofile(fp)
    k3.astype("<f8").tofile(pp)
    exe = os.path.join(pptest.PROBES, "probe_volume")
    out = os.path.join(tmp, name)
    p = subprocess.run([exe, "run", fp] + [str(n) for n in f3.shape] + [pp] +
                       [str(n) for n in k3.shape] + [out] + list(keys),
                       capture_output=True, text=True)
    if not ok:
        return p
    if p.returncode != 0:
        raise AssertionError("probe_volume %s failed: %s" % (name, p.stderr))
    res = {"stdout": p.stdout}
    for ext in ("mean", "sd", "lo", "hi"):
        res[ext] = np.fromfile(out + "." + ext, "<f8").reshape(frame.shape)
    with open(out + ".trace") as f:
        res["head"] = f.readline().split()
        res["trace"] = np.loadtxt(f, ndmin=2)
    return res


# an asymmetric 3-D PSF and a smooth volume
psf = rng.uniform(0.1, 1.0, (3, 5, 5))
psf[0] *= 0.3  # stronger asymmetry along z
psf /= psf.sum()
A = np.fft.fftn(pptest.centred_kernel(psf, (D, H, W)))
truth = 20 + 10 * rng.standard_normal((D, H, W)).cumsum(1).cumsum(2) / 30
y = np.real(np.fft.ifftn(A * np.fft.fftn(truth))) + SIGMA * rng.standard_normal((D, H, W))
Y = np.fft.fftn(y)
voxel = "voxel=%g,%g,%g" % VOX
fixed = ["noise=gaussian:sigma=%g" % SIGMA, "boundary=periodic", voxel, "chains=2",
         "burn=5", "iters=600", "seed=7"]

priors = {
    "gmrf1": ("gmrf1:delta=%g" % DEL, volref.lap((D, H, W), VOX)),
    "gmrf2": ("gmrf2:delta=%g" % DEL, volref.lap((D, H, W), VOX) ** 2),
    "matern": ("matern:range=3,nu=1,delta=%g" % DEL,
               (8 * 1.0 / 9 + volref.lap((D, H, W), VOX)) ** (1.0 + 1.5)),
}
for pname, (ptext, q) in priors.items():
    q = q.copy()
    q.flat[0] = 0.0  # free mean
    p = LAM * np.abs(A) ** 2 + DEL * q
    mu = np.real(np.fft.ifftn(LAM * np.conj(A) * Y / p))
    v = np.mean(1.0 / p)
    for kind in ("gibbs", "mtc"):
        r = run(y, psf, "%s_%s" % (pname, kind), "sampler=" + kind, "prior=" + ptext, *fixed)
        pptest.check(("kind %s" % kind) in r["stdout"] and "grid 7 10 12" in r["stdout"],
                     "%s %s: ran on the 7 x 10 x 12 grid" % (pname, kind))
        em = np.max(np.abs(r["mean"] - mu)) / np.max(np.abs(mu))
        es = np.max(np.abs(r["sd"] - np.sqrt(v))) / np.sqrt(v)
        pptest.check(em < 1e-9, "%s %s: mean = numpy fftn closed form (max rel err %.2e)"
                     % (pname, kind, em))
        pptest.check(es < 1e-9, "%s %s: sd = numpy closed form sqrt(mean 1/p) = %.6g "
                     "(max rel err %.2e)" % (pname, kind, np.sqrt(v), es))
        probes = [h for h in r["head"] if h.startswith("p_")]
        pptest.check(len(probes) == 9 and all(h.split("_")[1] == str((D - 1) // 2) for h in probes),
                     "%s %s: 9 probes p_z_r_c in the middle slice z = %d" % (pname, kind, (D - 1) // 2))
        tr = r["trace"]
        n = tr.shape[0]
        for j, h in enumerate(r["head"]):
            if not h.startswith("p_"):
                continue
            zz, rr, cc = map(int, h.split("_")[1:])
            d = tr[:, j]
            se = pptest.batch_se(d, 2)
            z_mean = (d.mean() - mu[zz, rr, cc]) / max(se, np.sqrt(v / n))
            z_var = (d.var(ddof=1) - v) / (v * np.sqrt(2.0 / (n - 1)))
            pptest.check(abs(z_mean) < 4.5 and abs(z_var) < 4.5,
                         "%s %s probe %s: draw mean z=%.2f, variance z=%.2f vs closed form"
                         % (pname, kind, h, z_mean, z_var))
    if pname == "gmrf1":
        # the test's power: each flipped axis of the PSF, or swapped voxel
        # weights, moves the closed form by far more than the tolerance
        for ax in range(3):
            Af = np.fft.fftn(pptest.centred_kernel(np.flip(psf, ax), (D, H, W)))
            muf = np.real(np.fft.ifftn(LAM * np.conj(Af) * Y / (LAM * np.abs(Af) ** 2 + DEL * q)))
            dd = np.max(np.abs(muf - mu)) / np.max(np.abs(mu))
            pptest.check(dd > 1e-3, "PSF flipped on axis %d moves the closed form by %.2e" % (ax, dd))
        qs = volref.lap((D, H, W), VOX[::-1])
        qs.flat[0] = 0
        mus = np.real(np.fft.ifftn(LAM * np.conj(A) * Y / (LAM * np.abs(A) ** 2 + DEL * qs)))
        dd = np.max(np.abs(mus - mu)) / np.max(np.abs(mu))
        pptest.check(dd > 1e-3, "voxel weights reversed move the closed form by %.2e" % dd)

# ---- 2. identical slices = the 2-D answer --------------------------------
y2 = y[3]
vol = np.repeat(y2[None], D, axis=0)
psf2 = rng.uniform(0.1, 1.0, (5, 5))
psf2 /= psf2.sum()
# square pixels (w_y = w_x = 1, as the 2-D prior) with a coarse z step: the
# z weight does not matter at kz = 0
r3 = run(vol, psf2[None], "slices3", "sampler=gibbs", "prior=gmrf1:delta=%g" % DEL, *fixed,
         "voxel=2,0.5,0.5")
r2 = run(y2, psf2, "slices2", "sampler=gibbs", "prior=gmrf1:delta=%.17g" % (DEL * D),
         "noise=gaussian:sigma=%.17g" % (SIGMA / np.sqrt(D)), "boundary=periodic", "chains=2",
         "burn=5", "iters=50", "seed=3")
pptest.check("grid 7 10 12" in r3["stdout"] and "grid 10 12" in r2["stdout"],
             "identical slices: a depth-1 PSF adds no z padding; the 2-D run is rank 2")
A2 = np.fft.fft2(pptest.centred_kernel(psf2, (H, W)))
q2 = volref.lap((H, W), (1, 1))
q2[0, 0] = 0
mu2 = np.real(np.fft.ifft2(LAM * np.conj(A2) * np.fft.fft2(y2) / (LAM * np.abs(A2) ** 2 + DEL * q2)))
e2 = np.max(np.abs(r2["mean"] - mu2)) / np.max(np.abs(mu2))
pptest.check(e2 < 1e-9, "2-D run (lambda D, delta D) = numpy 2-D closed form (rel err %.2e)" % e2)
e3 = max(np.max(np.abs(r3["mean"][z] - r2["mean"])) for z in range(D)) / np.max(np.abs(mu2))
pptest.check(e3 < 1e-9, "identical slices: every slice of the 3-D mean = the 2-D mean "
             "(max rel err %.2e over %d slices)" % (e3, D))
pptest.done()
