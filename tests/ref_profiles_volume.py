"""Profiles (--profile z0,r0,c0,z1,r1,c1) and spots (--spots R[,RZ]) on a
volume against the closed form, with numpy and scipy.

A 10 x 14 x 16 volume simulated by pixpost (gaussian:sigma=1.2,sigma_z=1
PSF, gaussian:sigma=0.5 noise, periodic, voxel 0.1 um in the plane and
0.2 um along z: the prior weighs z increments by (0.1/0.2)^2,
include/pixpost/prior.h). With lambda (= 1/0.5^2) and delta fixed and
periodic boundaries the posterior of x is Gaussian: mean mu = ifftn(lam
conj(A) Y / p), covariance Sigma = F^-1 diag(1/p) F, p = lam |A|^2 + del q,
q the periodic first-order precision's eigenvalues (tests/volref.lap; Rue
& Held 2005), so any fixed linear combination w'x is Gaussian with mean
w'mu and variance w'Sigma w = (1/N) sum_k |fftn(w)(k)|^2 / p(k)
(ref_volume_closed_form.py checks mu and the sd of this model).

Profiles: a line is sampled at n = ceil(max(|dz|, |dr|, |dc|)) + 1 evenly
spaced points, both ends included; the value at a point is the trilinear
interpolation of x there. Checked: the points' z, row, column, distance
(index units) and distance_um (voxel sizes) as the rule says; numpy's
trilinear weights agree with scipy.ndimage.map_coordinates(mu, order=1)
(an outside reference for the weights) at every point; mean within 4.5
MCSE of w'mu, sd within 4.5 sd/sqrt(2 ESS) of sqrt(w'Sigma w), lo/hi within
4.5 x (1.96 MCSE of the sd + MCSE of the mean) of w'mu -/+ 1.96 sd (gibbs
with fixed hyperparameters: independent draws, ESS = 4000; common practice
for the sd of a normal sample). Lines: oblique through all three axes with
fractional ends, one along z only, one ending on the last slice, row and
column (the edge rule), a single point.

Spots: candidates are the strict 26-neighbour local maxima (ties to the
first in (z, row, column) order) of the 3 x 3 x 3 box mean over the voxels
inside (scipy's generic_filter with nanmean), with a positive contrast
over the shell of voxels (dz, dy, dx), R - 1/2 <= sqrt((dz R/Rz)^2 + dy^2
+ dx^2) < R + 1/2, largest first; Rz = R x 0.1 / 0.2 by default (a sphere
in um). spots.csv must list exactly these with their shell sizes; per spot
contrast_mean within 4.5 MCSE of w'mu, contrast_sd within 4.5 sd/sqrt(2
ESS) of sqrt(w'Sigma w), p_real within 4.5 x max(binomial sd, 0.005) of
Phi(w'mu / sqrt(w'Sigma w)) (scipy.stats.norm). The beads' candidates
within 1 voxel of a bead centre have P(C > 0) > 0.99. An explicit
--spots 3,2 uses Rz = 2. The report lists every profile and spot.
Bad input: a frame's four-number profile on a volume, a six-number one on
a frame, a line outside the volume, --spots 3,0: exit 1, one line naming
the option (after the reader's line on how a volume's pages are read),
nothing written.
"""
import csv
import math
import os
import re
import warnings

import numpy as np
import tifffile
from scipy import ndimage
from scipy.stats import norm

import pptest
import volref

warnings.filterwarnings("ignore", "Mean of empty slice")
tmp = pptest.tmpdir()
D, H, W = 10, 14, 16
N = D * H * W
VOX = (0.2, 0.1, 0.1)  # z, y, x um
SIG, DLT = 0.5, 0.8
lam = 1 / SIG ** 2
PSF = "gaussian:sigma=1.2,sigma_z=1"
rng = np.random.default_rng(2026)
zz, yy, xx = np.mgrid[:D, :H, :W]
beads = [(3, 4, 5), (5, 9, 11), (2, 10, 4)]
truth = 20 + 3 * rng.standard_normal((D, H, W)).cumsum(1).cumsum(2) / 30
for bz, by, bx in beads:
    truth = truth + 25 * np.exp(-((zz - bz) ** 2 / 1.0 + (yy - by) ** 2 / 2.0 + (xx - bx) ** 2 / 2.0))
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
vox = ["--pages", "z", "--voxel", "0.1,0.2"]
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", PSF, "--noise",
            "gaussian:sigma=%g" % SIG, "--boundary", "periodic", "--seed", "11", "-o",
            os.path.join(tmp, "y.tif")] + vox)
pptest.run(["psf", PSF, "-o", os.path.join(tmp, "psf.tif")])
y = tifffile.imread(os.path.join(tmp, "y.tif")).astype(np.float64)
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
pptest.check(y.shape == (D, H, W) and psf.ndim == 3, "simulated volume %s, PSF %s"
             % (y.shape, psf.shape))
A = np.fft.fftn(pptest.centred_kernel(psf, (D, H, W)))
p = lam * np.abs(A) ** 2 + DLT * volref.lap((D, H, W), VOX)
mu = np.real(np.fft.ifftn(lam * np.conj(A) * np.fft.fftn(y) / p))


def var_of(w):
    return float((np.abs(np.fft.fftn(w)) ** 2 / p).sum() / N)


lines = [(0.5, 1.25, 2.0, 6.5, 11.75, 13.5), (0, 7, 8, 7, 7, 8), (4, 6, 9, 7, 13, 15),
         (3, 3, 3, 3, 3, 3)]
R = 3.0
base = ["sample", os.path.join(tmp, "y.tif"), "--psf", PSF, "--noise", "gaussian:sigma=%g" % SIG,
        "--prior", "gmrf1:delta=%g" % DLT, "--boundary", "periodic", "--sampler", "gibbs",
        "--chains", "4", "--burn", "10", "--quiet"] + vox
out = os.path.join(tmp, "out")
args = base + ["--iters", "1000", "--seed", "13", "-o", out, "--spots", "%g" % R]
for l in lines:
    args += ["--profile", ",".join("%g" % v for v in l)]
pptest.run(args)


def weights(z, r, c):
    """Trilinear weights of the point (z, r, c) as a D x H x W volume."""
    w = np.zeros((D, H, W))
    i0 = [min(int(math.floor(v)), n - 1) for v, n in ((z, D), (r, H), (c, W))]
    f = [v - i for v, i in zip((z, r, c), i0)]
    for dz, wz in ((0, 1 - f[0]), (1, f[0])):
        for dr, wr in ((0, 1 - f[1]), (1, f[1])):
            for dc, wc in ((0, 1 - f[2]), (1, f[2])):
                if wz * wr * wc:
                    w[i0[0] + dz, i0[1] + dr, i0[2] + dc] += wz * wr * wc
    return w


for k, (z0, r0, c0, z1, r1, c1) in enumerate(lines):
    with open(os.path.join(out, "profile_%d.csv" % (k + 1))) as fh:
        rows = list(csv.DictReader(fh))
    n = int(math.ceil(max(abs(z1 - z0), abs(r1 - r0), abs(c1 - c0)))) + 1
    t = np.linspace(0, 1, n) if n > 1 else np.zeros(1)
    pz, pr, pc = z0 + t * (z1 - z0), r0 + t * (r1 - r0), c0 + t * (c1 - c0)
    dist = t * math.sqrt((z1 - z0) ** 2 + (r1 - r0) ** 2 + (c1 - c0) ** 2)
    dum = t * math.sqrt(((z1 - z0) * VOX[0]) ** 2 + ((r1 - r0) * VOX[1]) ** 2
                        + ((c1 - c0) * VOX[2]) ** 2)
    pptest.check(len(rows) == n, "profile %d: %d points (got %d)" % (k + 1, n, len(rows)))
    geo = max(max(abs(float(a[key]) - b) for key, b in
                  (("z", e[0]), ("row", e[1]), ("col", e[2]), ("distance", e[3]),
                   ("distance_um", e[4])))
              for a, e in zip(rows, zip(pz, pr, pc, dist, dum)))
    pptest.check(geo < 1e-4, "profile %d: z, rows, columns, distances (steps and um) as the "
                 "rule says (max err %.1e)" % (k + 1, geo))
    want_m = ndimage.map_coordinates(mu, [pz, pr, pc], order=1, mode="nearest")
    worst = {"weights": 0, "mean": 0, "sd": 0, "lo": 0, "hi": 0}
    for i, row in enumerate(rows):
        w = weights(pz[i], pr[i], pc[i])
        wm = float(np.sum(w * mu))
        s = math.sqrt(var_of(w))
        gm, gs, se = float(row["mean"]), float(row["sd"]), float(row["mcse_mean"])
        se_s = gs / math.sqrt(2 * 4000)
        worst["weights"] = max(worst["weights"], abs(wm - want_m[i]) / abs(wm))
        worst["mean"] = max(worst["mean"], abs(gm - wm) / se)
        worst["sd"] = max(worst["sd"], abs(gs - s) / se_s)
        tol = 1.96 * se_s + se
        worst["lo"] = max(worst["lo"], abs(float(row["lo"]) - (wm - 1.959964 * s)) / tol)
        worst["hi"] = max(worst["hi"], abs(float(row["hi"]) - (wm + 1.959964 * s)) / tol)
    pptest.check(worst.pop("weights") < 1e-9, "profile %d: numpy's trilinear weights agree "
                 "with scipy's map_coordinates(order=1) at every point" % (k + 1))
    for key, z in worst.items():
        pptest.check(z <= 4.5, "profile %d: %s along the line vs the closed form, worst %.2f "
                     "(tolerance 4.5)" % (k + 1, key, z))


def shell(r, rz):
    ez = int(math.ceil(rz * (r + 0.5) / r))
    e = int(math.ceil(r + 0.5))
    return [(c, a, b) for c in range(-ez, ez + 1) for a in range(-e, e + 1)
            for b in range(-e, e + 1)
            if r - 0.5 <= math.sqrt((c * r / rz) ** 2 + a * a + b * b) < r + 0.5]


def candidates(vol, r, rz):
    pilot = ndimage.generic_filter(vol, np.nanmean, size=3, mode="constant", cval=np.nan)
    offs = shell(r, rz)
    out = []
    for z in range(D):
        for a in range(H):
            for b in range(W):
                v = pilot[z, a, b]
                ok = True
                for dz in (-1, 0, 1):
                    for da in (-1, 0, 1):
                        for db in (-1, 0, 1):
                            q = (z + dz, a + da, b + db)
                            if (dz, da, db) == (0, 0, 0) or not (0 <= q[0] < D and 0 <= q[1] < H
                                                                 and 0 <= q[2] < W):
                                continue
                            u = pilot[q]
                            if u > v or (u == v and (dz, da, db) < (0, 0, 0)):
                                ok = False
                if not ok:
                    continue
                ring = [(z + c, a + d, b + e) for c, d, e in offs
                        if 0 <= z + c < D and 0 <= a + d < H and 0 <= b + e < W]
                con = v - np.mean([pilot[i] for i in ring])
                if con > 0:
                    out.append((-con, z, a, b, ring))
    out.sort(key=lambda t: t[:4])
    return out[:256]


def check_spots(path, r, rz, label):
    with open(path) as fh:
        rows = list(csv.DictReader(fh))
    cand = candidates(y, r, rz)
    pptest.check([(int(x["z"]), int(x["row"]), int(x["col"]), int(x["ring_voxels"]))
                  for x in rows] == [(t[1], t[2], t[3], len(t[4])) for t in cand],
                 "%s: spots.csv lists numpy's %d candidates in order with their shells (R %g, "
                 "Rz %g: %d offsets; %d rows)" % (label, len(cand), r, rz, len(shell(r, rz)),
                                                  len(rows)))
    bad, ps = [], []
    for x, (_, z, a, b, ring) in zip(rows, cand):
        w = np.zeros((D, H, W))
        w[z, a, b] += 1
        for i in ring:
            w[i] -= 1.0 / len(ring)
        m = float((w * mu).sum())
        sd = math.sqrt(var_of(w))
        P = norm.cdf(m / sd)
        ess = float(x["ess_bulk"])
        pm = max(math.sqrt(P * (1 - P) / ess), 0.005)
        e1 = abs(float(x["contrast_mean"]) - m) / float(x["mcse_mean"])
        e2 = abs(float(x["contrast_sd"]) - sd) / (sd / math.sqrt(2 * ess))
        e3 = abs(float(x["p_real"]) - P) / pm
        if not (e1 < 4.5 and e2 < 4.5 and e3 < 4.5):
            bad.append((z, a, b, round(e1, 2), round(e2, 2), round(e3, 2)))
        ps.append((z, a, b, float(x["p_real"])))
    pptest.check(rows and not bad, "%s: every spot's contrast mean, sd and P(C > 0) agree with "
                 "the closed form w'mu / sqrt(w'Sigma w) within 4.5 Monte Carlo errors "
                 "(failures %s)" % (label, bad[:4]))
    return rows, ps


rows, ps = check_spots(os.path.join(out, "spots.csv"), R, R * VOX[2] / VOX[0], "--spots 3")
near = [t for t in ps if min(math.dist(t[:3], bd) for bd in beads) <= 1.0]
pptest.check(len(near) >= 2 and all(t[3] > 0.99 for t in near),
             "the candidates within 1 voxel of a bead have P(C > 0) > 0.99: %s" % near)
with open(os.path.join(out, "report.html")) as fh:
    page = fh.read()
tp = re.findall(r'<tr class="spot" data-spot="(\d+)"><td>\d+</td><td>(\d+), (\d+), (\d+)</td>', page)
pptest.check([(int(a), int(b), int(c)) for _, a, b, c in tp]
             == [(int(x["z"]), int(x["row"]), int(x["col"])) for x in rows]
             and all('id="profile-%d-figure"' % (k + 1) in page for k in range(len(lines)))
             and "distance from the start (\u00b5m)" in page,
             "report.html: one row per spot with its slice, row and column as spots.csv; one "
             "plot per profile, distances in um")

out2 = os.path.join(tmp, "out2")
pptest.run(base + ["--iters", "300", "--seed", "5", "-o", out2, "--spots", "3,2"])
check_spots(os.path.join(out2, "spots.csv"), 3.0, 2.0, "--spots 3,2")

tifffile.imwrite(os.path.join(tmp, "frame.tif"), y[3].astype(np.float32))
for frame, bad, words in (
        ("y.tif", ["--profile", "1,2,3,4"], ["--profile", "volume", "z0,r0,c0,z1,r1,c1"]),
        ("frame.tif", ["--profile", "0,1,2,0,3,4"], ["--profile", "frame", "r0,c0,r1,c1"]),
        ("y.tif", ["--profile", "0,0,0,10,0,0"], ["--profile", "slice 10", "outside"]),
        ("y.tif", ["--spots", "3,0"], ["--spots", "'3,0'"])):
    extra = vox if frame == "y.tif" else []
    pr = pptest.run(["sample", os.path.join(tmp, frame), "--psf",
                     PSF if frame == "y.tif" else "gaussian:sigma=1.2",
                     "-o", os.path.join(tmp, "bad")] + extra + bad, check=False)
    # a volume's reader first says how its pages are read (one line)
    lines_ = [x for x in pr.stderr.splitlines() if not x.endswith("sampled as one volume")]
    pptest.check(pr.returncode == 1 and len(lines_) == 1 and
                 all(w in lines_[0] for w in words) and not os.path.exists(os.path.join(tmp, "bad")),
                 "%s on %s: exit 1, one line naming it, nothing written (%r)"
                 % (" ".join(bad), frame, pr.stderr.strip()))
pptest.done()
