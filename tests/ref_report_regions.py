"""The regions and profiles in report.html (issue #19 items 1 and 3), parsed
from the page and checked against the CSV files and numpy.

A 40x40 beads frame (pptest.beads_truth), three regions (two discs around
beads and the dimmest 8x8 square, drawn here with numpy), --compare 1/3 and
2/3, two --profile lines, 4 gibbs chains. Checks:
  1. the section "regions" exists, the nav links it, and a run without
     --regions/--profile has neither (nor the marks over the mean image);
  2. every table row of the page equals the row of regions.csv (the same
     draws, pp_series_summarise): mean, sd, lo, hi, R-hat, bulk/tail ESS,
     MCSE to the 4 significant digits the page prints; pixel counts equal
     numpy's label counts; compare rows give difference, ratio, P(A>B);
  3. a row is flagged (class "warn") exactly when its R-hat > 1.01 or an
     ESS < 100 x chains (the diagnostics table's thresholds), checked on
     a short run where some ESS fall below 400;
  4. each profile plot has one point per profile point and a band polygon
     whose y values, mapped back through the axis, bracket the mean line;
     the line's points equal profile_<k>.csv's means (up to the 0.1-unit
     SVG rounding, converted by the plot's own scale);
  5. the marks over the mean image: each label at its region's centroid
     (scipy.ndimage.center_of_mass, within 0.01 px), and the outline's unit
     segments equal numpy's count of region boundary edges.
"""
import csv
import os
import re
from html.parser import HTMLParser

import numpy as np
import tifffile
from scipy import ndimage

import pptest

tmp = pptest.tmpdir()
rng = np.random.default_rng(19)
truth = pptest.beads_truth(rng, size=40, beads=6)
tifffile.imwrite(os.path.join(tmp, "truth.tif"), truth.astype(np.float32))
pptest.run(["simulate", os.path.join(tmp, "truth.tif"), "--psf", "gaussian:sigma=1.5",
            "--noise", "gaussian:sigma=4", "--seed", "3", "-o", os.path.join(tmp, "y.tif")])
H = W = 40
yy, xx = np.mgrid[:H, :W]
lab = np.zeros((H, W), np.uint16)
# discs around two beads (their centres as beads_truth draws them from the same seed)
b = np.rint(np.random.default_rng(19).uniform(4, 36, (6, 2))).astype(int)
lab[(yy - b[0, 0]) ** 2 + (xx - b[0, 1]) ** 2 <= 16] = 1
lab[((yy - b[1, 0]) ** 2 + (xx - b[1, 1]) ** 2 <= 9) & (lab == 0)] = 2
bg = np.argmin(ndimage.uniform_filter(truth, 8)[4:-4, 4:-4])  # the dimmest 8x8 square
r, c = np.unravel_index(bg, (32, 32))
lab[r:r + 8, c:c + 8][lab[r:r + 8, c:c + 8] == 0] = 3
tifffile.imwrite(os.path.join(tmp, "labels.tif"), lab)
lines = [(12, 2, 12, 37), (3.5, 30.25, 36, 20)]


def run(out, iters, extra):
    args = ["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.5",
            "--noise", "gaussian:sigma=4", "--sampler", "gibbs", "--chains", "4",
            "--burn", "50", "--iters", str(iters), "--seed", "5", "--quiet", "-o", out] + extra
    pptest.run(args)
    with open(os.path.join(out, "report.html")) as fh:
        return fh.read()


class Page(HTMLParser):
    """Rows of the regions tables, the profile SVGs' shapes, the marks."""

    def __init__(self):
        super().__init__()
        self.rows, self.row, self.cell, self.in_td = [], None, [], False
        self.svgs, self.svg = {}, None
        self.texts, self.text_attrs = [], None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "tr" and a.get("class") in ("region", "compare"):
            self.row = {"attrs": a, "cells": []}
        elif tag == "td" and self.row is not None:
            self.in_td, self.cell = True, []
            self.row["cells"].append({"class": a.get("class", "")})
        elif tag == "svg" and a.get("id"):
            self.svg = a["id"]
            self.svgs[self.svg] = {"attrs": a, "items": []}
        elif self.svg and tag in ("polyline", "polygon", "path", "line", "text", "rect"):
            self.svgs[self.svg]["items"].append((tag, a))
            if tag == "text":
                self.text_attrs = a
                self.texts.append([self.svg, a, ""])

    def handle_endtag(self, tag):
        if tag == "td" and self.in_td:
            self.row["cells"][-1]["text"] = "".join(self.cell).strip()
            self.in_td = False
        elif tag == "tr" and self.row is not None:
            self.rows.append(self.row)
            self.row = None
        elif tag == "svg":
            self.svg = None
        elif tag == "text":
            self.text_attrs = None

    def handle_data(self, data):
        if self.in_td:
            self.cell.append(data)
        if self.text_attrs is not None and self.texts:
            self.texts[-1][2] += data


def num(s):
    s = s.split()[0] if s else s
    return float("nan") if s in ("\u2013", "") else float(s)


def close4(a, b):
    """Equal to the 4 significant digits of %.4g."""
    if np.isnan(a) or np.isnan(b):
        return np.isnan(a) and np.isnan(b)
    return abs(a - float("%.4g" % b)) <= 1e-12 * max(1.0, abs(b))


def check_page(out, html, chains=4):
    p = Page()
    p.feed(html)
    with open(os.path.join(out, "regions.csv")) as fh:
        csvrows = list(csv.DictReader(fh))
    pptest.check('<section id="regions">' in html and 'href="#regions"' in html,
                 "the regions section is on the page and the nav links it")
    pptest.check(len(p.rows) == len(csvrows),
                 "one page row per regions.csv row (%d, %d)" % (len(p.rows), len(csvrows)))
    bad, flags_bad = [], []
    counts = {k: int((lab == k).sum()) for k in (1, 2, 3)}
    for pr, cr in zip(p.rows, csvrows):
        cells = pr["cells"]
        a = pr["attrs"]
        if cr["kind"] == "region":
            ok = (int(a["data-label"]) == int(cr["label"]) and a["data-quantity"] == cr["quantity"]
                  and int(cells[1]["text"]) == int(cr["pixels"]) == counts[int(cr["label"])])
            vals = cells[3:]
        else:
            ok = (int(a["data-a"]) == int(cr["label"]) and int(a["data-b"]) == int(cr["label_b"])
                  and a["data-quantity"] == cr["quantity"])
            vals = cells[2:]
        mean, sd = num(vals[0]["text"]), num(vals[1]["text"])
        ok &= close4(mean, float(cr["mean"])) and close4(sd, float(cr["sd"]))
        if cr["quantity"] != "p_greater":
            lo, hi = [float(v) for v in re.split("\u2013", vals[2]["text"])]
            ok &= close4(lo, float(cr["lo"])) and close4(hi, float(cr["hi"]))
        rh, eb, et, mc = (num(vals[i]["text"]) for i in (3, 4, 5, 6))
        ok &= close4(rh, float(cr["rhat"])) and close4(eb, float(cr["ess_bulk"]))
        ok &= close4(et, float(cr["ess_tail"])) and close4(mc, float(cr["mcse_mean"]))
        if not ok:
            bad.append((cr, [c.get("text") for c in cells]))
        want = [float(cr["rhat"]) > 1.01, float(cr["ess_bulk"]) < 100 * chains,
                float(cr["ess_tail"]) < 100 * chains]
        got = ["warn" in vals[i]["class"] for i in (3, 4, 5)]
        if want != got:
            flags_bad.append((cr["label"], cr["quantity"], want, got))
    pptest.check(not bad, "every page row equals regions.csv (labels, pixels = numpy's counts, "
                          "mean, sd, interval, R-hat, ESS, MCSE to 4 digits): %s" % bad[:2])
    pptest.check(not flags_bad, "rows flagged exactly when R-hat > 1.01 or ESS < 400: %s"
                 % flags_bad[:3])
    nflag = sum(any("warn" in c["class"] for c in pr["cells"]) for pr in p.rows)
    m = re.search(r'<p id="regions-count">(\d+) of (\d+) rows flagged', html)
    pptest.check(m and int(m.group(1)) == nflag and int(m.group(2)) == len(p.rows),
                 "the count line says %s of %d rows flagged" % (nflag, len(p.rows)))
    return p, csvrows


# ---- 1-5 on a run long enough to converge --------------------------------
out = os.path.join(tmp, "out")
extra = ["--regions", os.path.join(tmp, "labels.tif"), "--compare", "1/3", "--compare", "2/3"]
for l in lines:
    extra += ["--profile", ",".join("%g" % v for v in l)]
html = run(out, 800, extra)
p, csvrows = check_page(out, html)
pq = [r for r in csvrows if r["quantity"] == "p_greater"]
pptest.check(len(pq) == 2 and all(float(r["mean"]) > 0.99 for r in pq),
             "beads brighter than the background: P(A > B) %s" % [r["mean"] for r in pq])

for k, (r0, c0, r1, c1) in enumerate(lines):
    sv = p.svgs.get("profile-%d" % (k + 1))
    pptest.check(sv is not None, "profile %d has a plot" % (k + 1))
    if sv is None:
        continue
    with open(os.path.join(out, "profile_%d.csv" % (k + 1))) as fh:
        prow = list(csv.DictReader(fh))
    mid = [a for t, a in sv["items"] if t == "polyline"][0]["points"].split()
    band = [a for t, a in sv["items"] if t == "polygon"][0]["points"].split()
    pts = np.array([[float(v) for v in s.split(",")] for s in mid])
    bpts = np.array([[float(v) for v in s.split(",")] for s in band])
    n = len(prow)
    pptest.check(len(pts) == n and len(bpts) == 2 * n,
                 "profile %d: %d line points and %d band points for %d CSV points"
                 % (k + 1, len(pts), len(bpts), n))
    if len(pts) != n or len(bpts) != 2 * n:
        continue
    lo_y, hi_y = bpts[:n, 1], bpts[n:, 1][::-1]
    pptest.check(np.all(hi_y <= pts[:, 1] + 0.05) and np.all(pts[:, 1] <= lo_y + 0.05),
                 "profile %d: the mean line lies inside its band at every point" % (k + 1))
    # the SVG's y is an affine map of the value: fit it from the band ends and check the means
    mean = np.array([float(r["mean"]) for r in prow])
    lo = np.array([float(r["lo"]) for r in prow])
    hi = np.array([float(r["hi"]) for r in prow])
    A = np.vstack([np.concatenate([lo, hi]), np.ones(2 * n)]).T
    coef, *_ = np.linalg.lstsq(A, np.concatenate([lo_y, hi_y]), rcond=None)
    err = np.abs(coef[0] * mean + coef[1] - pts[:, 1]).max()
    pptest.check(err < 0.1, "profile %d: the line's points are profile_%d.csv's means (max "
                            "%.3f SVG units off, rounding 0.05)" % (k + 1, k + 1, err))

# marks over the mean image
mk = p.svgs.get("mean-regions")
pptest.check(mk is not None, "the mean image carries the regions' marks")
if mk is not None:
    cm = ndimage.center_of_mass(np.ones_like(lab), lab, [1, 2, 3])
    labs = {int(a["data-label"]): (float(a["x"]), float(a["y"]))
            for t, a in mk["items"] if t == "text" and a.get("class") == "rlabel"}
    offs = [abs(labs[k][0] - (cm[k - 1][1] + 0.5)) + abs(labs[k][1] - (cm[k - 1][0] + 0.5))
            for k in (1, 2, 3) if k in labs]
    pptest.check(len(offs) == 3 and max(offs) < 0.01,
                 "each label sits at its region's centroid (scipy center_of_mass): %s" % offs)
    d = [a for t, a in mk["items"] if t == "path"][0]["d"]
    nseg = len(re.findall(r"[hv]1", d))
    pad = np.pad(lab.astype(int), 1)
    # boundary edges: each labelled pixel's side whose neighbour has another label,
    # counted once per pixel (a side between two regions is drawn by both)
    want = 0
    for dy, dx in ((1, 0), (-1, 0), (0, 1), (0, -1)):
        nb = np.roll(pad, (dy, dx), axis=(0, 1))
        want += int(((pad > 0) & (nb != pad)).sum())
    pptest.check(nseg == want, "the outline has %d unit edges, numpy counts %d" % (nseg, want))
    nlines = [a for t, a in mk["items"] if t == "line"]
    pptest.check(len(nlines) == 2 and all(
        abs(float(a["x1"]) - (l[1] + 0.5)) < 0.01 and abs(float(a["y2"]) - (l[2] + 0.5)) < 0.01
        for a, l in zip(nlines, lines)), "the profiles' lines are drawn from end to end")

# ---- 3: a short run, where some ESS are low --------------------------------
out2 = os.path.join(tmp, "short")
html2 = run(out2, 60, ["--regions", os.path.join(tmp, "labels.tif"), "--compare", "1/3"])
p2, rows2 = check_page(out2, html2)
pptest.check(any(float(r["ess_bulk"]) < 400 for r in rows2),
             "the short run has rows with bulk ESS < 400 (so the flags are exercised)")
pptest.check("profile-1" not in html2, "no profile plot without --profile")

# ---- 1: no regions, no section --------------------------------------------
out3 = os.path.join(tmp, "plain")
html3 = run(out3, 60, [])
pptest.check('id="regions"' not in html3 and 'href="#regions"' not in html3
             and "mean-regions" not in html3, "a run without --regions/--profile has no "
                                             "regions section, link or marks")
print("screenshot page: " + os.path.join(out, "report.html"))
pptest.done()
