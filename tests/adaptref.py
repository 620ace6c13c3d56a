"""An independent numpy implementation of the adaptive prior (src/adaptive.h)
for the reference checks tests/ref_adaptive_chain.py and
tests/ref_adaptive_coverage.py.

Written from the model's statement in src/adaptive.h (the joint density),
not from the C code; outside sources: numpy / scipy.linalg (dense Cholesky
draws). The model, H x W periodic grid, N = H W pixels:
  increments d_e = x[q(e)] - x[p(e)], 2N of them (src/incr.h layout:
    horizontal e = i W + j joins (i, j) -> (i, (j + 1) % W), then vertical
    e = N + i W + j joins (i, j) -> ((i + 1) % H, j)); e belongs to the
    block of its first pixel p(e);
  p(x, tau, s, kappa) prop. to prod_B e^{n_B s_B / 2}
      prod_e tau_e^{1/2} e^{-w_e d_e^2 / 2} Gamma(tau_e; nu/2, rate nu/2)
      kappa^{(nB - 1)/2} e^{-kappa/2 sum_{pairs} (s_B - s_B')^2}
      Gamma(kappa; 1, rate 0.5) e^{a L - b e^L},  w_e = e^{s_B(e)} tau_e,
  L the mean of s over the frame's blocks with pixpost's default
    --hyper-delta (a, b) = (1, 1e-4) on e^L,
  block grid pairs: 4 neighbours, free (not periodic) edges.

The sampler here differs from pixpost's on purpose (so that a shared
mistake is unlikely): s is moved with tau integrated out (collapsed),
    int tau^{1/2} e^{-e^s tau d^2/2} Gamma(tau; nu/2, nu/2) dtau
        prop. to (1 + e^s d^2 / nu)^{-(nu + 1)/2},
by random-walk Metropolis (one block at a time in two checkerboard
colours, vectorised, plus a move of the global level when it is free),
then tau | x, s is drawn exactly (Gamma(nu/2 + 1/2, rate nu/2 + e^s d^2/2)),
kappa | s exactly, and x by a dense Cholesky factor of its precision.
An MH move on the tau-marginal of s followed by an exact tau | s draw is a
valid update of (s, tau) jointly.
"""
import os

import numpy as np
import scipy.linalg
import scipy.stats
import tifffile

import pptest

KAPPA_SHAPE, KAPPA_RATE = 1.0, 0.5  # src/adaptive.h: kappa ~ Gamma(1, rate 0.5)


class Model:
    """Index tables of the adaptive prior on an H x W periodic grid, or a
    depth x H x W volume (depth > 1: increments along z too, 3N of them, z
    last; blocks of block x block in-plane by bz slices, 6 neighbours;
    ca = (c_z, c_y, c_x) the axes' fixed weight factors of src/adaptive.h,
    in self.ce per increment: the weights are ce e^{s} tau and every d^2
    of the model reads ce d^2, which the caller applies)."""

    def __init__(self, H, W, block, nu=2.0, hyper=(1.0, 1e-4), frame=None, depth=1, bz=1,
                 ca=(1.0, 1.0, 1.0)):
        """frame: (fh, fw) (a volume: (fd, fh, fw)) when the observed frame is
        the first corner of the grid (--boundary pad): the level L is then
        the mean of s over the blocks that hold frame pixels
        (src/adaptive.h)."""
        self.H, self.W, self.N, self.block, self.nu = H, W, depth * H * W, block, nu
        self.hyper = hyper  # pixpost's default --hyper-delta (shape, rate)
        kk, ii, jj = np.meshgrid(np.arange(depth), np.arange(H), np.arange(W), indexing="ij")
        p = ((kk * H + ii) * W + jj).ravel()
        qh = ((kk * H + ii) * W + (jj + 1) % W).ravel()
        qv = ((kk * H + (ii + 1) % H) * W + jj).ravel()
        qz = ((((kk + 1) % depth) * H + ii) * W + jj).ravel()
        ax = 3 if depth > 1 else 2
        self.p = np.concatenate([p] * ax)
        self.q = np.concatenate([qh, qv, qz][:ax])
        self.ce = np.concatenate([np.full(self.N, c) for c in (ca[2], ca[1], ca[0])][:ax])
        self.md = -(-depth // bz)
        self.mh, self.mw = -(-H // block), -(-W // block)
        self.nb = self.md * self.mh * self.mw
        bpix = (((kk // bz) * self.mh + ii // block) * self.mw + jj // block).ravel()
        self.bpix = bpix
        self.be = np.concatenate([bpix] * ax)  # block of each increment
        self.nB = np.bincount(bpix, minlength=self.nb).astype(float)
        bk, rem = np.divmod(np.arange(self.nb), self.mh * self.mw)
        bi, bj = np.divmod(rem, self.mw)
        self.colour = (bk + bi + bj) % 2
        pairs = [(b, b + 1) for b in range(self.nb) if bj[b] + 1 < self.mw]
        pairs += [(b, b + self.mw) for b in range(self.nb) if bi[b] + 1 < self.mh]
        pairs += [(b, b + self.mh * self.mw) for b in range(self.nb) if bk[b] + 1 < self.md]
        self.pairs = np.array(pairs)
        nbr = np.zeros((self.nb, self.nb))
        for a, b in pairs:
            nbr[a, b] = nbr[b, a] = 1
        self.nbr = nbr
        self.deg = nbr.sum(axis=1)
        self.diag_idx = np.arange(self.N) * (self.N + 1)
        fd, fh, fw = ((1,) + tuple(frame) if len(frame) == 2 else frame) if frame else (depth, H, W)
        self.fblocks = np.array([b for b in range(self.nb)
                                 if bk[b] * bz < fd and bi[b] * block < fh and bj[b] * block < fw])

    def level(self, s):
        """L: the mean of s over the blocks holding frame pixels."""
        return s[self.fblocks].mean()

    def incr(self, x):
        """The 2N (volume: 3N) increments of the flat field x."""
        return x[self.q] - x[self.p]

    def laplacian(self, w, base):
        """base + D' diag(w) D as a dense N x N matrix (base is not changed)."""
        P = base.copy()
        flat = P.reshape(-1)
        flat[self.diag_idx] += np.bincount(self.p, w, self.N) + np.bincount(self.q, w, self.N)
        np.subtract.at(flat, self.p * self.N + self.q, w)
        np.subtract.at(flat, self.q * self.N + self.p, w)
        return P

    def block_logf(self, s, d2):
        """Per block: n_B s_B/2 - (nu+1)/2 sum_{e in B} log(1 + e^{s_B} d_e^2/nu),
        the tau-collapsed part of the joint that involves s_B alone."""
        t = np.log1p(np.exp(s[self.be]) * d2 / self.nu)
        return 0.5 * self.nB * s - 0.5 * (self.nu + 1) * np.bincount(self.be, t, self.nb)

    def level_logp(self, L):
        """log p(L) of the level L (self.level): Gamma(a, rate b) on e^L with
        the Jacobian, a L - b e^L."""
        a, b = self.hyper
        return a * L - b * np.exp(L)

    def gmrf_q(self, s):
        d = s[self.pairs[:, 0]] - s[self.pairs[:, 1]]
        return float(d @ d)

    def s_sweep(self, s, d2, kappa, rng, step, free_level, step_level=0.0):
        """Moves s (in place) by random-walk Metropolis on p(s | x, kappa) with
        tau integrated out. free_level: blocks one at a time (checkerboard,
        vectorised) plus a global shift; otherwise every block move keeps the
        mean of s fixed (direction e_B - 1/nB, symmetric), one block at a
        time. Returns the number of accepted block moves."""
        acc = 0
        if free_level:
            # The level L = mean of s has the Gamma(a, b) hyperprior on e^L
            # (src/adaptive.h: log p(L) = a L - b e^L), which couples every
            # block: blocks move one at a time.
            def target(v):
                return (self.block_logf(v, d2).sum() - 0.5 * kappa * self.gmrf_q(v) +
                        self.level_logp(self.level(v)))
            cur = target(s)
            for b in range(self.nb):
                prop = s.copy()
                prop[b] += step * rng.standard_normal()
                new = target(prop)
                if np.log(rng.random()) < new - cur:
                    s[:] = prop
                    cur = new
                    acc += 1
            prop = s + step_level * rng.standard_normal()
            if np.log(rng.random()) < target(prop) - cur:
                s[:] = prop
            return acc
        cur = self.block_logf(s, d2).sum() - 0.5 * kappa * self.gmrf_q(s)
        for b in range(self.nb):
            eps = step * rng.standard_normal()
            prop = s - eps / self.nb  # s + eps (e_b - 1/nB): the mean of s is kept
            prop[b] += eps
            new = self.block_logf(prop, d2).sum() - 0.5 * kappa * self.gmrf_q(prop)
            if np.log(rng.random()) < new - cur:
                s[:] = prop
                cur = new
                acc += 1
        return acc

    def draw_tau(self, s, d2, rng):
        rate = 0.5 * self.nu + 0.5 * np.exp(s[self.be]) * d2
        return rng.gamma(0.5 * self.nu + 0.5, 1.0 / rate)

    def draw_kappa(self, s, rng):
        shape = KAPPA_SHAPE + 0.5 * (self.nb - 1)
        return rng.gamma(shape, 1.0 / (KAPPA_RATE + 0.5 * self.gmrf_q(s)))


def draw_gaussian(P, b, rng):
    """x ~ N(P^-1 b, P^-1) by a dense Cholesky factor (scipy.linalg)."""
    L = scipy.linalg.cholesky(P, lower=True)
    mean = scipy.linalg.cho_solve((L, True), b)
    return mean + scipy.linalg.solve_triangular(L.T, rng.standard_normal(len(b)), lower=False)


def gibbs_chain(grid, block, frame, SA, y, frame_px, seed, burn, iters, bz=1, ca=(1.0, 1.0, 1.0),
                hyper=(1.0, 1.0), cens=None, level=None):
    """A numpy Gibbs chain for the adaptive prior with Gaussian noise, only
    the observed pixels SA = A[rows] (rows: the observed grid pixels, y their
    values) in the likelihood, so every other grid pixel (padding, masked)
    is integrated out exactly; lambda ~ Gamma(1, 1e-4) as pixpost's default.
    grid = (GH, GW), frame = (H, W) (a volume: (GD, GH, GW), (D, H, W), with
    the blocks' z extent bz and the axes' weight factors ca = (c_z, c_y,
    c_x), Model's); frame_px: the grid indices of the frame pixels. Per sweep: s (Model.s_sweep), tau, kappa, x | rest by a dense
    Cholesky draw, lambda | rest. Returns (iters x 3 draws of lambda, delta,
    kappa; iters x H*W draws of the frame pixels). hyper: the level's
    Gamma(shape, rate) (pixpost's --hyper-delta). cens (a boolean mask over
    y) marks censored pixels, known only to be >= level: they are imputed
    from N((SA x)_i, 1/lambda) truncated at level (scipy.stats.truncnorm)
    each sweep, after lambda, and enter the x and lambda draws as data (data
    augmentation, Tanner & Wong, JASA 82, 1987), starting at level."""
    depth = grid[0] if len(grid) == 3 else 1
    m = Model(grid[-2], grid[-1], block, hyper=hyper, frame=frame, depth=depth, bz=bz, ca=ca)
    r = np.random.default_rng(seed)
    y = np.array(y, dtype=np.float64)
    if cens is not None:
        y[cens] = level
    AtA, Aty = SA.T @ SA, SA.T @ y
    lam, kappa, s = 1.0, 2.0, np.full(m.nb, np.log(0.1))
    x = np.linalg.solve(AtA + 0.1 * m.laplacian(m.ce, np.zeros((m.N, m.N))), Aty)
    hyp, xs = np.zeros((iters, 3)), np.zeros((iters, len(frame_px)))
    for t in range(burn + iters):
        d2 = m.incr(x) ** 2 * m.ce  # ce = 1 on a frame and for cubic voxels
        m.s_sweep(s, d2, kappa, r, 0.5, True, 0.4)
        tau = m.draw_tau(s, d2, r)
        kappa = m.draw_kappa(s, r)
        x = draw_gaussian(m.laplacian(m.ce * np.exp(s[m.be]) * tau, lam * AtA), lam * Aty, r)
        res = SA @ x - y
        lam = r.gamma(1.0 + 0.5 * len(y), 1.0 / (1e-4 + 0.5 * res @ res))
        if cens is not None:
            mu, sd = (SA @ x)[cens], 1.0 / np.sqrt(lam)
            y[cens] = scipy.stats.truncnorm.rvs((level - mu) / sd, np.inf, loc=mu, scale=sd,
                                                random_state=r)
            Aty = SA.T @ y
        if t >= burn:
            hyp[t - burn] = lam, np.exp(m.level(s)), kappa
            xs[t - burn] = x[frame_px]
    return hyp, xs


def volume_run(tmp, name, y, psf, shape, keys):
    """pixpost's library on the volume y (shape (D, H, W)) blurred by the 3-D
    kernel psf, through tests/probe_volume with the config keys given;
    files under tmp named by name. Returns (stdout, grid (gd, gh, gw), mean,
    sd and mcse as flat arrays, the trace's header and rows)."""
    fp, pp = os.path.join(tmp, name + ".f64"), os.path.join(tmp, "psf.f64")
    y.astype("<f8").tofile(fp)
    psf.astype("<f8").tofile(pp)
    out = os.path.join(tmp, name)
    stdout = pptest.probe("volume", ["run", fp] + list(shape) + [pp] + list(psf.shape) + [out] +
                          list(keys))
    print(stdout.strip())
    rd = lambda e: np.fromfile(out + "." + e, "<f8")
    with open(out + ".trace") as f:
        head = f.readline().split()
        tr = np.loadtxt(f, ndmin=2)
    grid = [tuple(int(v) for v in l.split()[1:]) for l in stdout.splitlines()
            if l.startswith("grid ")][0]
    return stdout, grid, rd("mean"), rd("sd"), rd("mcse"), head, tr


def dense_blur(psf, H, W, transfer):
    """Dense A: periodic convolution by psf with pixpost's centring
    (transfer = pptest.transfer), row-major pixels."""
    n = H * W
    T = transfer(psf, (H, W))
    eye = np.eye(n).reshape(n, H, W)
    return np.real(np.fft.ifft2(T[None] * np.fft.fft2(eye))).reshape(n, n).T


def mean_sd_se(chains):
    """Mean, sd and the se of each from a list of 1-D chains (Geyer ESS of
    the draws and of the squared deviations, summed over chains)."""
    d = np.concatenate(chains)
    mu, sd = d.mean(), d.std(ddof=1)
    ess = sum(pptest.geyer_ess(c) for c in chains)
    ess2 = sum(pptest.geyer_ess((c - mu) ** 2) for c in chains)
    return mu, sd, sd / np.sqrt(ess), ((d - mu) ** 2).std(ddof=1) / np.sqrt(ess2) / (2 * sd), ess


def hyper_z(col, ch, draws):
    """A hyperparameter's posterior mean and sd from pixpost's trace column
    col (rows of chains ch) against the numpy draws: returns (pixpost mean,
    sd, ESS; numpy mean, sd, ESS; z of the mean, z of the sd), each z the
    difference over the hypot of the two standard errors (mean_sd_se)."""
    pm, psd, pse_m, pse_s, pess = mean_sd_se([col[ch == c] for c in np.unique(ch)])
    nm, nsd, nse_m, nse_s, ness = mean_sd_se([draws])
    return (pm, psd, pess, nm, nsd, ness, (pm - nm) / np.hypot(pse_m, nse_m),
            (psd - nsd) / np.hypot(pse_s, nse_s))


def pixel_z(out, xs, tr, head, ch):
    """pixel_z_arrays of the output folder out's mean.tif, sd.tif and
    mcse.tif."""
    rd = lambda n: tifffile.imread(os.path.join(out, n)).astype(np.float64).ravel()
    return pixel_z_arrays(rd("mean.tif"), rd("sd.tif"), rd("mcse.tif"), xs, tr, head, ch)


def pixel_z_arrays(pmean, psd, pmcse, xs, tr, head, ch):
    """z-scores of pixpost's pixel means and sds (pmean, psd, pmcse: flat
    arrays of its mean, sd and MCSE maps; the trace rows tr with columns head and chain numbers ch) against
    the numpy draws xs (draws x pixels). The se of a mean joins pixpost's
    MCSE and numpy's sd / sqrt(Geyer ESS); that of an sd uses the kurtosis
    of the numpy draws and an ESS of the squared deviations, pixpost's taken
    from its MCSE map scaled by the worst probe pixel's ratio of the two
    ESS. Returns a dict: z_mean, z_sd, psd and nsd (pixpost's and numpy's
    sds), pmcse, ess and ess2 (numpy's Geyer ESS of the draws and of their
    squared deviations) and ratio (the probe ESS ratio used)."""
    nmean, nsd = xs.mean(axis=0), xs.std(axis=0, ddof=1)
    dev2 = (xs - nmean) ** 2
    npix = xs.shape[1]
    ess = np.array([pptest.geyer_ess(xs[:, i]) for i in range(npix)])
    ess2 = np.array([pptest.geyer_ess(dev2[:, i]) for i in range(npix)])
    k4 = (dev2 ** 2).mean(axis=0) / dev2.mean(axis=0) ** 2
    ratio = 1.0
    for name in head:
        if name.startswith("p_"):
            col = tr[:, head.index(name)]
            parts = [col[ch == c] for c in np.unique(ch)]
            mu = col.mean()
            e1 = sum(pptest.geyer_ess(c) for c in parts)
            e2 = sum(pptest.geyer_ess((c - mu) ** 2) for c in parts)
            ratio = min(ratio, e2 / e1)
    pp_ess2 = (psd / pmcse) ** 2 * ratio
    se_mean = np.sqrt(pmcse ** 2 + nsd ** 2 / ess)
    se_sd = np.sqrt(psd ** 2 * (k4 - 1) / (4 * pp_ess2) +
                    dev2.std(axis=0, ddof=1) ** 2 / ess2 / (4 * nsd ** 2))
    return dict(z_mean=(pmean - nmean) / se_mean, z_sd=(psd - nsd) / se_sd, psd=psd, nsd=nsd,
                pmcse=pmcse, ess=ess, ess2=ess2, ratio=ratio)
