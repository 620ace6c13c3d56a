"""Spots (--spots R, src/pixpost/spots.h) against the closed form, with
numpy and scipy.

The candidates: strict 3x3 local maxima (ties to the first in row order)
of the frame's 3x3 box mean over the pixels inside the frame (scipy's
generic_filter with nanmean, an outside reference for the pilot), whose
contrast over the ring (pixels at distance d, R - 1/2 <= d < R + 1/2) is
positive, largest first, at most 256. spots.csv must list exactly these.
The contrast C = x_c - mean(x over the ring) = w'x. With lambda and delta
fixed and periodic boundaries the posterior of x is Gaussian (mean mu,
covariance Sigma = F^-1 diag(1/p) F; tests/ref_gibbs_closed_form.py), so C
is Gaussian with mean w'mu and variance w'Sigma w = (1/N) sum_k |F w(k)|^2
/ p(k), and P(C > 0) = Phi(w'mu / sqrt(w'Sigma w)) (scipy.stats.norm).
Per spot: contrast_mean within 4.5 MCSE of w'mu, contrast_sd within 4.5
sd/sqrt(2 ESS) of the closed-form sd, and p_real within 4.5 x its MCSE
(binomial sqrt(P(1-P)/ESS) of the closed-form P, floored at 0.005) of the
closed-form P; 4.5 sigma keeps a false failure unlikely over ~100 spots
(common practice). Gibbs with both hyperparameters fixed gives
independent draws, ESS ~ the number of draws.
Then: a frame with beads gives P > 0.99 at every candidate within 1 pixel
of a bead's centre; a frame of pure noise gives far fewer P > 0.95 (the
share is printed). report.html lists and marks every spot with spots.csv's
P. With --mask the candidates again equal numpy's (no unobserved pixel is
a candidate or in a ring). Bad --spots values exit 1 naming --spots.
"""
import csv
import math
import os
import re

import numpy as np
import tifffile
import warnings
from scipy import ndimage
from scipy.stats import norm

import pptest

warnings.filterwarnings("ignore", "Mean of empty slice")  # nanmean of an all-NaN box: NaN, as wanted
tmp = pptest.tmpdir()
H = W = 40
N = H * W
R = 3.0
SIG, DLT = 4.0, 0.02
lam = 1.0 / SIG ** 2
pptest.run(["psf", "gaussian:sigma=1.3", "-o", os.path.join(tmp, "psf.tif")])
psf = tifffile.imread(os.path.join(tmp, "psf.tif")).astype(np.float64)
A = pptest.transfer(psf, (H, W))
q = pptest.gmrf1_q(H, W)
p = lam * np.abs(A) ** 2 + DLT * q


def ring_offsets(r):
    e = int(math.ceil(r + 0.5))
    return [(a, b) for a in range(-e, e + 1) for b in range(-e, e + 1)
            if r - 0.5 <= math.hypot(a, b) < r + 0.5]


def candidates(y):
    pilot = ndimage.generic_filter(y, np.nanmean, size=3, mode="constant", cval=np.nan)
    out = []
    offs = ring_offsets(R)
    for r in range(H):
        for c in range(W):
            v = pilot[r, c]
            ok = True
            for dr in (-1, 0, 1):
                for dc in (-1, 0, 1):
                    rr, cc = r + dr, c + dc
                    if (dr, dc) == (0, 0) or not (0 <= rr < H and 0 <= cc < W):
                        continue
                    u = pilot[rr, cc]
                    if u > v or (u == v and (dr < 0 or (dr == 0 and dc < 0))):
                        ok = False
            if not ok:
                continue
            ring = [(r + a, c + b) for a, b in offs if 0 <= r + a < H and 0 <= c + b < W]
            con = v - np.mean([pilot[i, j] for i, j in ring])
            if con > 0:
                out.append((-con, r, c, ring))
    out.sort(key=lambda t: (t[0], t[1], t[2]))
    return out[:256]


def run(name, truth, seed):
    tifffile.imwrite(os.path.join(tmp, name + "_truth.tif"), truth.astype(np.float32))
    pptest.run(["simulate", os.path.join(tmp, name + "_truth.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian:sigma=%g" % SIG, "--boundary", "periodic", "--seed",
                str(seed), "-o", os.path.join(tmp, name + "_y.tif")])
    y = tifffile.imread(os.path.join(tmp, name + "_y.tif")).astype(np.float64)
    out = os.path.join(tmp, name)
    pptest.run(["sample", os.path.join(tmp, name + "_y.tif"), "--psf", "gaussian:sigma=1.3",
                "--noise", "gaussian:sigma=%g" % SIG, "--prior", "gmrf1:delta=%g" % DLT,
                "--boundary", "periodic", "--sampler", "gibbs", "--chains", "4", "--burn", "10",
                "--iters", "1000", "--seed", str(seed + 1), "--spots", "%g" % R, "--quiet",
                "-o", out])
    with open(os.path.join(out, "spots.csv")) as fh:
        rows = list(csv.DictReader(fh))
    mu = np.real(np.fft.ifft2(lam * np.conj(A) * np.fft.fft2(y) / p))
    cand = candidates(y)
    pptest.check([(int(r["row"]), int(r["col"])) for r in rows] == [(t[1], t[2]) for t in cand],
                 "%s: spots.csv lists numpy's %d candidates in order (%d rows)"
                 % (name, len(cand), len(rows)))
    bad, ps = [], []
    for r, (_, rr, cc, ring) in zip(rows, cand):
        w = np.zeros((H, W))
        w[rr, cc] += 1
        for i, j in ring:
            w[i, j] -= 1.0 / len(ring)
        m = float((w * mu).sum())
        v = float((np.abs(np.fft.fft2(w)) ** 2 / p).sum() / N)
        sd, P = math.sqrt(v), norm.cdf(m / math.sqrt(v))
        ess = float(r["ess_bulk"])
        pm = max(math.sqrt(P * (1 - P) / ess), 0.005)
        e1 = abs(float(r["contrast_mean"]) - m) / float(r["mcse_mean"])
        e2 = abs(float(r["contrast_sd"]) - sd) / (sd / math.sqrt(2 * ess))
        e3 = abs(float(r["p_real"]) - P) / pm
        ok = int(r["ring_pixels"]) == len(ring) and e1 < 4.5 and e2 < 4.5 and e3 < 4.5
        if not ok:
            bad.append((rr, cc, round(e1, 2), round(e2, 2), round(e3, 2)))
        ps.append((rr, cc, float(r["p_real"]), P))
    pptest.check(not bad, "%s: every spot's contrast mean, sd and P(C > 0) agree with the "
                          "closed form within 4.5 Monte Carlo errors (failures %s)"
                 % (name, bad[:4]))
    # the report: one table row and one mark per spot, P(C > 0) as in spots.csv
    with open(os.path.join(out, "report.html")) as fh:
        html = fh.read()
    tp = re.findall(r'<tr class="spot" data-spot="(\d+)"><td>\d+</td><td>(\d+), (\d+)</td>'
                    r'<td class="num">([^<]+)</td>', html)
    marks = re.findall(r'<g class="spot (real|unsure)" data-spot="(\d+)" data-p="([^"]+)">', html)
    ok = len(tp) == len(rows) == len(marks) and all(
        (int(a), int(b)) == (int(r["row"]), int(r["col"])) and
        abs(float(pv) - float("%.4g" % float(r["p_real"]))) < 1e-9 and
        (cls == "real") == (float(r["p_real"]) >= 0.95)
        for (_, a, b, pv), (cls, _, _), r in zip(tp, marks, rows))
    pptest.check(ok, "%s: report.html has one row and one mark per spot, with spots.csv's "
                     "place and P (marks solid exactly when P >= 0.95)" % name)
    return ps


rng = np.random.default_rng(31)
pos = rng.uniform(5, 35, (6, 2))
yy, xx = np.mgrid[:H, :W]
beads = 20 + sum(60 * np.exp(-((yy - r) ** 2 + (xx - c) ** 2) / 4) for r, c in pos)
ps = run("beads", beads, 4)
near = [t for t in ps if min(math.hypot(t[0] - r, t[1] - c) for r, c in pos) <= 1.0]
pptest.check(len(near) >= 4 and all(t[2] > 0.99 for t in near),
             "beads: the %d candidates within 1 px of a bead have P(C > 0) > 0.99: %s"
             % (len(near), [round(t[2], 4) for t in near]))
ps0 = run("noise", np.full((H, W), 20.0), 6)
share = np.mean([t[2] > 0.95 for t in ps0]) if ps0 else 0.0
med = np.median([t[2] for t in ps0]) if ps0 else float("nan")
print("pure noise: %d candidates, median P(C > 0) %.3f, share above 0.95 %.3f"
      % (len(ps0), med, share))
pptest.check(len(ps0) > 10 and share < 0.2,
             "pure noise: few candidates are called real (share with P > 0.95 = %.3f < 0.2)"
             % share)

# unobserved pixels (--mask): never candidates, left out of the pilot's box means and the rings
mask = np.zeros((H, W), np.uint8)
mask[8:14, 20:27] = 1
mask[30, :] = 1
tifffile.imwrite(os.path.join(tmp, "mask.tif"), mask)
ym = tifffile.imread(os.path.join(tmp, "beads_y.tif")).astype(np.float64)
ym[mask > 0] = np.nan
outm = os.path.join(tmp, "masked")
pptest.run(["sample", os.path.join(tmp, "beads_y.tif"), "--mask", os.path.join(tmp, "mask.tif"),
            "--psf", "gaussian:sigma=1.3", "--noise", "gaussian:sigma=%g" % SIG, "--prior",
            "gmrf1:delta=%g" % DLT, "--boundary", "periodic", "--sampler", "gibbs", "--chains",
            "2", "--burn", "10", "--iters", "100", "--seed", "3", "--spots", "%g" % R, "--quiet",
            "-o", outm])
with open(os.path.join(outm, "spots.csv")) as fh:
    mrows = list(csv.DictReader(fh))


def candidates_masked(y):
    pilot = ndimage.generic_filter(y, np.nanmean, size=3, mode="constant", cval=np.nan)
    pilot[np.isnan(y)] = np.nan
    out = []
    offs = ring_offsets(R)
    for r in range(H):
        for c in range(W):
            v = pilot[r, c]
            if np.isnan(v):
                continue
            ok = all(not (pilot[r + dr, c + dc] > v or (pilot[r + dr, c + dc] == v and
                                                         (dr < 0 or (dr == 0 and dc < 0))))
                     for dr in (-1, 0, 1) for dc in (-1, 0, 1)
                     if (dr, dc) != (0, 0) and 0 <= r + dr < H and 0 <= c + dc < W)
            ring = [(r + a, c + b) for a, b in offs if 0 <= r + a < H and 0 <= c + b < W
                    and not np.isnan(pilot[r + a, c + b])]
            if ok and ring and v - np.mean([pilot[i, j] for i, j in ring]) > 0:
                out.append((-(v - np.mean([pilot[i, j] for i, j in ring])), r, c, len(ring)))
    out.sort(key=lambda t: (t[0], t[1], t[2]))
    return out[:256]


cm = candidates_masked(ym)
pptest.check([(int(r["row"]), int(r["col"]), int(r["ring_pixels"])) for r in mrows]
             == [(t[1], t[2], t[3]) for t in cm] and not any(mask[t[1], t[2]] for t in cm),
             "masked frame: spots.csv lists numpy's %d candidates (none on an unobserved pixel, "
             "rings without them; %d rows)" % (len(cm), len(mrows)))

for bad in ["0", "x", "60"]:
    pr = pptest.run(["sample", os.path.join(tmp, "noise_y.tif"), "--psf", "gaussian:sigma=1.3",
                     "--spots", bad, "-o", os.path.join(tmp, "bad")], check=False)
    pptest.check(pr.returncode == 1 and "--spots" in pr.stderr and not os.path.exists(
        os.path.join(tmp, "bad", "spots.csv")), "--spots %s refused: exit %d, %s"
                 % (bad, pr.returncode, pr.stderr.strip()[:120]))
pptest.done()
