"""Shared helpers for the reference checks (tests/ref_*.py).

Running pixpost and the probes, recording checks, and the numerical pieces
several checks need (reading trace.csv, batch-means errors, the PSF transfer
function, the gmrf1 eigenvalues, Geyer's ESS).

ctest sets PP_BIN (the pixpost binary), PP_PROBES (folder of the probe_*
programs), PP_TMP (a scratch folder for this check) and PP_SOURCE_DIR.
"""
import hashlib
import os
import shutil
import subprocess
import sys

BIN = os.environ.get("PP_BIN", "pixpost")
PROBES = os.environ.get("PP_PROBES", ".")
SOURCE = os.environ.get("PP_SOURCE_DIR", ".")
_failures = []


def tree_digest(root):
    """sha256 of every file below root, by relative path (to show a folder unchanged)."""
    out = {}
    for d, _, files in os.walk(root):
        for f in files:
            p = os.path.join(d, f)
            with open(p, "rb") as fh:
                out[os.path.relpath(p, root)] = hashlib.sha256(fh.read()).hexdigest()
    return out


def tmpdir():
    """A fresh, empty scratch folder for this check."""
    d = os.environ.get("PP_TMP", "/tmp/pp_ref")
    shutil.rmtree(d, ignore_errors=True)
    os.makedirs(d)
    return d


def run(args, check=True, **kw):
    """Run the pixpost binary; returns CompletedProcess (text mode)."""
    p = subprocess.run([BIN] + [str(a) for a in args], capture_output=True, text=True, **kw)
    if check and p.returncode != 0:
        raise AssertionError("pixpost %s failed (%d): %s" % (" ".join(map(str, args)), p.returncode, p.stderr))
    return p


def probe(name, args, stdin=None):
    """Run tests/probe_<name> and return its stdout (text)."""
    exe = os.path.join(PROBES, "probe_" + name)
    p = subprocess.run([exe] + [str(a) for a in args], input=stdin, capture_output=True, text=True)
    if p.returncode != 0:
        raise AssertionError("probe_%s failed (%d): %s" % (name, p.returncode, p.stderr))
    return p.stdout


def check(cond, what):
    """Record one assertion; prints PASS/FAIL with the description."""
    print(("PASS " if cond else "FAIL ") + what)
    if not cond:
        _failures.append(what)


def done():
    """Exit non-zero if any check failed."""
    n = len(_failures)
    print("%d failed" % n)
    sys.exit(1 if n else 0)


# ---- numerical helpers shared by the reference checks ----------------------
# numpy is imported inside each helper so that checks which never call them
# (CLI, hostile-input, I/O checks) do not pay for, or depend on, numpy.


def read_trace(path):
    """Reads a trace.csv: returns (header as a list of str, float64 array of
    shape rows x columns). An empty cell becomes NaN (columns that a sampler
    leaves blank, e.g. a hyperparameter it does not draw)."""
    import csv
    import numpy as np
    with open(path) as f:
        rows = list(csv.reader(f))
    return rows[0], np.array([[float(v) if v else np.nan for v in r] for r in rows[1:]])


def batch_se(draws, chains, batches=20):
    """Monte Carlo standard error of the mean of `draws` by batch means.

    draws: 1-D, the chains one after another (trace.csv order), equal
    lengths. Each chain is cut into `batches` batches of equal length (the
    remainder at its end is dropped); the se is the sd of the chains x
    batches batch means over sqrt(their number) (batch means: e.g. Flegal &
    Jones, Ann. Statist. 38, 2010, cited from memory; the batch count is a rule of thumb,
    common practice)."""
    import numpy as np
    per = draws.reshape(chains, -1)
    means = per[:, : per.shape[1] // batches * batches].reshape(chains * batches, -1).mean(axis=1)
    return means.std(ddof=1) / np.sqrt(len(means))


def batch_ess(draws, se, cap=True):
    """Effective sample size implied by a batch-means standard error `se`
    (from batch_se): (sd(draws) / se)^2, capped at len(draws) when `cap`."""
    ess = (draws.std(ddof=1) / se) ** 2
    return min(ess, len(draws)) if cap else ess


def centred_kernel(psf, shape):
    """The PSF image (or volume) zero-padded to `shape` ((H, W) or (D, H, W)),
    its centre element (psf.shape // 2) rolled to the origin: pixpost's
    centring (DESIGN.md 1), the same as skimage.restoration.uft.ir2tf's."""
    import numpy as np
    pad = np.zeros(shape)
    pad[tuple(slice(0, n) for n in psf.shape)] = psf
    return np.roll(pad, tuple(-(n // 2) for n in psf.shape), axis=tuple(range(len(shape))))


def transfer(psf, shape):
    """Full-spectrum transfer function A = numpy.fft.fft2(centred_kernel)
    (periodic convolution by the PSF on an H x W grid)."""
    import numpy as np
    return np.fft.fft2(centred_kernel(psf, shape))


def blurred_frame(tmp, truth, psf_spec, sigma, rng):
    """truth blurred periodically by pixpost's PSF `psf_spec` (written by
    `pixpost psf` to tmp/psf.tif; the blur by numpy's FFT) plus N(0, sigma^2)
    noise from rng: returns (psf, A, y), A the transfer function, y float64."""
    import os
    import numpy as np
    import tifffile
    psf_path = os.path.join(tmp, "psf.tif")
    run(["psf", psf_spec, "-o", psf_path])
    psf = tifffile.imread(psf_path).astype(np.float64)
    A = transfer(psf, truth.shape)
    y = np.real(np.fft.ifft2(np.fft.fft2(truth) * A)) + sigma * rng.standard_normal(truth.shape)
    return psf, A, y


def clipped_frame(tmp, rng, psf_spec="gaussian:sigma=1.0", sigma=1.0, clip=8):
    """The 12 x 12 test frame of the censoring checks (ref_censor_exact,
    ref_censor_gauss_pcn): a smooth scene with one bump, blurred_frame's
    blur and noise, rounded to float32 and clipped at its clip-th largest
    value, written to tmp/y.tif. Returns (psf, A, y, s, cens, path): y the
    clipped frame as float64, s the clip level, cens the clipped pixels."""
    import os
    import numpy as np
    import tifffile
    yy, xx = np.mgrid[0:12, 0:12]
    truth = (10 + 4 * np.sin(xx / 2.0) + 3 * np.cos(yy / 3.0)
             + 8 * np.exp(-((yy - 6) ** 2 + (xx - 5) ** 2) / 4.0))
    psf, A, y = blurred_frame(tmp, truth, psf_spec, sigma, rng)
    y = y.astype(np.float32)
    s = np.sort(y.ravel())[-clip]
    y = np.minimum(y, s)
    cens = y == s
    path = os.path.join(tmp, "y.tif")
    tifffile.imwrite(path, y)
    return psf, A, y.astype(np.float64), float(s), cens, path


def censored_reference(A, P, fr, cens, y, s, sigma, chains=2000, iters=300, burn=50, seed=2024):
    """The posterior of x under y = A x + N(0, sigma^2) with prior precision
    P (dense, fixed) when the frame pixels fr (grid indices; y, cens over
    them) marked cens are only known to be >= s. Returns, on fr: the
    missing-data posterior's mean and sd (cens dropped: exact, numpy.linalg)
    and the censored one's mean, sd and the mean's standard error from a
    numpy Gibbs sampler by data augmentation (Tanner & Wong, JASA 82,
    1987): x | y_o, y_c ~ N(K lam B2'[y_o; y_c], K), K = (lam B2'B2 + P)^-1,
    y_c | x from N((A x)_c, sigma^2) truncated at s (scipy.stats.truncnorm),
    `chains` independent chains from y_c = s, the first `burn` of `iters`
    dropped; the SE from the spread of the chains' means (independent
    chains). Last: the number of kept draws."""
    import numpy as np
    import scipy.stats as st
    obs, cidx = fr[~cens], fr[cens]
    lam = 1.0 / sigma ** 2
    B = A[obs]
    cov = np.linalg.inv(lam * B.T @ B + P)
    m = cov @ (lam * B.T @ y[~cens])
    B2 = A[np.concatenate([obs, cidx])]
    K = np.linalg.inv(lam * B2.T @ B2 + P)
    L = np.linalg.cholesky(K)
    G = K @ (lam * B2.T)
    r = np.random.default_rng(seed)
    yo = np.repeat(y[~cens][:, None], chains, axis=1)
    yc = np.full((cidx.size, chains), s)
    s1 = np.zeros((fr.size, chains))
    s2 = np.zeros((fr.size, chains))
    for t in range(iters):
        x = G @ np.vstack([yo, yc]) + L @ r.standard_normal((A.shape[1], chains))
        mu = A[cidx] @ x
        yc = st.truncnorm.rvs((s - mu) / sigma, np.inf, loc=mu, scale=sigma, random_state=r)
        if t >= burn:
            s1 += x[fr]
            s2 += x[fr] ** 2
    n = iters - burn
    cm = s1 / n
    mean = cm.mean(axis=1)
    sd = np.sqrt(s2.sum(axis=1) / (n * chains) - mean ** 2)
    se = cm.std(axis=1, ddof=1) / np.sqrt(chains)  # chains independent: exact SE
    return m[fr], np.sqrt(np.diag(cov)[fr]), mean, sd, se, n * chains


def gmrf1_q(H, W):
    """Eigenvalues of the periodic 5-point Laplacian on an H x W grid (the
    gmrf1 precision up to delta; Rue & Held 2005), full spectrum:
    q(k1, k2) = 4 - 2 cos(2 pi k1 / H) - 2 cos(2 pi k2 / W)."""
    import numpy as np
    k1 = np.arange(H)[:, None]
    k2 = np.arange(W)[None, :]
    return 4 - 2 * np.cos(2 * np.pi * k1 / H) - 2 * np.cos(2 * np.pi * k2 / W)


def gmrf1_frame_posterior(tmp, truth, sim_seed, lam=4.0, dlt=0.8):
    """A frame simulated by pixpost from `truth` (gaussian:sigma=1.3 PSF,
    gaussian:sigma=0.5 noise, periodic, seed sim_seed; written to
    tmp/y.tif, the PSF to tmp/psf.tif) and its closed-form posterior under
    gmrf1 with fixed lam, dlt (periodic: diagonal in the DFT basis,
    precision p = lam |A|^2 + dlt q): returns (y, A, p, mu), mu =
    ifft2(lam conj(A) fft2(y) / p). The posterior covariance is
    ifft2(1/p) shifted; what the region, profile and probability checks
    compare against."""
    import os
    import numpy as np
    import tifffile
    H, W = truth.shape
    tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
    run(["psf", "gaussian:sigma=1.3", "-o", os.path.join(tmp, "psf.tif")])
    run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", "gaussian:sigma=1.3",
         "--noise", "gaussian:sigma=0.5", "--boundary", "periodic", "--seed", str(sim_seed),
         "-o", os.path.join(tmp, "y.tif")])
    y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
    psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
    A = transfer(psf, (H, W))
    p = lam * np.abs(A) ** 2 + dlt * gmrf1_q(H, W)
    mu = np.real(np.fft.ifft2(lam * np.conj(A) * np.fft.fft2(y) / p))
    return y, A, p, mu


def geyer_ess(x, monotone=True):
    """Effective sample size of one chain `x` (1-D) by Geyer's initial
    sequence estimators (Geyer, Statist. Sci. 7, 1992): autocorrelations
    rho_t from the FFT autocovariance (numpy, zero-padded to 2n, divided by
    n), summed in pairs G_m = rho_2m + rho_2m+1 up to the first
    non-positive pair.
      monotone=True: initial monotone sequence (each pair replaced by the
        smallest so far); tau = -1 + 2 sum G_m, ESS = n / max(tau, 1e-9).
      monotone=False: initial positive sequence; tau = max(2 sum G_m - 1,
        1/n), ESS = n / tau.
    A constant chain (zero variance) has no defined autocorrelation: NaN is
    returned, so that every tolerance built from it fails its comparison."""
    import numpy as np
    n = len(x)
    x = x - x.mean()
    f = np.fft.rfft(x, 2 * n)
    acf = np.fft.irfft(f * np.conj(f))[:n] / n
    if acf[0] <= 0:
        return float("nan")
    acf /= acf[0]
    pairs = acf[0:n - 1:2] + acf[1:n:2]
    if not monotone:
        s = 0.0
        for g in pairs:
            if g <= 0:
                break
            s += g
        return n / max(2 * s - 1, 1.0 / n)
    tau, prev = -1.0, np.inf
    for g in pairs:
        if g <= 0:
            break
        g = min(g, prev)
        tau += 2 * g
        prev = g
    return n / max(tau, 1e-9)


def dense_blur3(psf, shape):
    """Dense A of the periodic 3-D blur by psf on a grid of this shape
    (numpy.fft.fftn of centred_kernel), voxels row-major."""
    import numpy as np
    n = int(np.prod(shape))
    T = np.fft.fftn(centred_kernel(psf, shape))
    eye = np.eye(n).reshape((n,) + tuple(shape))
    A = np.real(np.fft.ifftn(T[None] * np.fft.fftn(eye, axes=(1, 2, 3)), axes=(1, 2, 3)))
    return A.reshape(n, n).T


def chain_summary(s1, s2, v1, m):
    """Pixel mean, sd and the mean's standard error over independent chains
    (the between-chain spread of the chain means), from per-chain sums s1,
    s2 of x and x^2 over m kept draws; and the mean and standard error of a
    scalar whose per-chain sums are v1."""
    cm = s1 / m
    mean = cm.mean(axis=0)
    chains = s1.shape[0]
    sd = (s2.sum(axis=0) / (m * chains) - mean ** 2) ** 0.5
    se = cm.std(axis=0, ddof=1) / chains ** 0.5
    vm = v1 / m
    return mean, sd, se, vm.mean(), vm.std(ddof=1) / chains ** 0.5


def dense_periodic(psf, gh, gw):
    """Dense operators on a gh x gw periodic grid (row-major index
    r * gw + c), built entry by entry (no FFT, so independent of pixpost's
    transfer functions): A, periodic convolution by psf centred at its
    middle pixel, and Q, the 5-point Laplacian precision of gmrf1
    (include/pixpost/prior.h). Returns (A, Q)."""
    import numpy as np
    R = psf.shape[0] // 2
    n = gh * gw
    A = np.zeros((n, n))
    for r in range(gh):
        for c in range(gw):
            for i in range(psf.shape[0]):
                for j in range(psf.shape[1]):
                    A[r * gw + c, ((r + i - R) % gh) * gw + (c + j - R) % gw] += psf[i, j]
    Q = np.zeros((n, n))
    for r in range(gh):
        for c in range(gw):
            k = r * gw + c
            Q[k, k] = 4
            for dr, dc in ((1, 0), (-1, 0), (0, 1), (0, -1)):
                Q[k, ((r + dr) % gh) * gw + (c + dc) % gw] -= 1
    return A, Q


def matern_q(H, W, range_, nu=1.0):
    """Eigenvalues of pixpost's Matern precision on an H x W periodic grid
    (include/pixpost/prior.h; Lindgren, Rue & Lindstrom 2011), full
    spectrum: (kappa^2 + q_lap)^(nu + 1) with kappa^2 = 8 nu / range^2 and
    q_lap the 5-point Laplacian's eigenvalues (gmrf1_q)."""
    return (8.0 * nu / range_ ** 2 + gmrf1_q(H, W)) ** (nu + 1)


def check_probes_gaussian(label, head, tr, mu, v, tol=4.5):
    """Checks every probe column p_<r>_<c> of a trace (tr: rows of
    read_trace, chain in column 0) against a Gaussian posterior with mean
    mu[r, c] and variance v (a scalar or an array like mu): the draw mean
    within tol standard errors (se = sqrt(v / ESS)) and the mean squared
    deviation from mu within tol of v (se = v sqrt(2 / ESS2), for a
    Gaussian), ESS and ESS2 by Geyer's estimator on each chain, summed, of
    the draws and of their squared deviations (an antithetic chain has a
    large ESS for x but not for x^2). Returns the smallest ESS seen."""
    import numpy as np
    ch = tr[:, 0].astype(int)
    ess_min = np.inf
    for j, name in enumerate(head):
        if not name.startswith("p_"):
            continue
        rr, cc = map(int, name.split("_")[1:])
        vv = v[rr, cc] if np.ndim(v) else v
        d = tr[:, j]
        dev2 = (d - mu[rr, cc]) ** 2
        ess = sum(geyer_ess(d[ch == c]) for c in np.unique(ch))
        ess2 = sum(geyer_ess(dev2[ch == c]) for c in np.unique(ch))
        ess_min = min(ess_min, ess, ess2)
        z_mean = (d.mean() - mu[rr, cc]) / np.sqrt(vv / ess)
        z_var = (dev2.mean() - vv) / (vv * np.sqrt(2.0 / ess2))
        check(abs(z_mean) < tol and abs(z_var) < tol,
              "%s, probe %s (ESS %.0f): mean z=%.2f, variance z=%.2f vs the closed form"
              % (label, name, ess, z_mean, z_var))
    return ess_min


def beads_truth(rng, size=40, beads=10):
    """A size x size test scene of our own: a flat background of 20 and
    `beads` Gaussian spots of height 200 (variance 4 px^2) at positions drawn
    from rng, uniform in [4, size - 4)."""
    import numpy as np
    yy, xx = np.mgrid[:size, :size]
    return 20 + sum(200 * np.exp(-((yy - r) ** 2 + (xx - c) ** 2) / 8)
                    for r, c in rng.uniform(4, size - 4, (beads, 2)))


def check_hyper_marginal(label, log_post, gl, gd, lam_s, del_s, chains=4):
    """Checks sampled lambda and delta against their exact marginal posterior,
    integrated on the fixed grid gl x gd of log lambda x log delta
    (log_post(log lambda, log delta), unnormalised; the grid must not depend
    on the sampler being right, and is checked to hold the whole posterior).
    Means within 4 batch-means Monte Carlo standard errors (a false alarm
    about 6e-5 per check for a normal error) plus 1 % for the grid's
    discretisation; sds within 15 %, a looser check with no error estimate
    of its own (the sd of an sd estimated from n effective draws is about
    1/sqrt(2n) relative: a few % here; the rest is margin, common practice)."""
    import numpy as np
    LP = np.array([[log_post(a, b) for b in gd] for a in gl])
    Pm = np.exp(LP - LP.max())
    Pm /= Pm.sum()
    check(max(Pm[0].max(), Pm[-1].max(), Pm[:, 0].max(), Pm[:, -1].max()) < 1e-5,
          "the integration grid holds the whole posterior")
    Lg = np.exp(gl)[:, None] * np.ones_like(Pm)
    Dg = np.exp(gd)[None, :] * np.ones_like(Pm)
    for name, d, G in (("lambda", lam_s, Lg), ("delta", del_s, Dg)):
        m_ex = np.sum(Pm * G)
        s_ex = np.sqrt(np.sum(Pm * G ** 2) - m_ex ** 2)
        tol = 4 * batch_se(d, chains) + 0.01 * m_ex
        check(abs(d.mean() - m_ex) < tol, "%s: %s posterior mean %.5g vs exact dense marginal "
              "%.5g (tol %.2g)" % (label, name, d.mean(), m_ex, tol))
        check(abs(d.std() - s_ex) < 0.15 * s_ex, "%s: %s posterior sd %.4g vs exact %.4g "
              "(within 15 %%)" % (label, name, d.std(), s_ex))
