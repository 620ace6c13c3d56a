"""The grey scale of uncertainty maps (src/display.h, issue #19 leftovers):
a nearly constant sd map must look flat.

A stationary-prior Gaussian run (gmrf1 with lambda and delta fixed, gibbs,
the default padded boundary): with periodic boundaries the posterior
covariance would be circulant and the sd the same at every pixel,
sqrt(mean(1/p)) with p the precision spectrum (pptest.gmrf1_frame_posterior,
numpy); the padding makes it a few % larger near the frame's edges only
(measured: 0.594 inside, up to 0.631 at the edges). Checks:
  1. sd.tif's median (an inner pixel) is the periodic closed-form sd within
     2 % and its relative spread (max/min - 1) is above 0 and under 15 %:
     nearly constant, not constant.
  2. sd.png (decoded with Pillow) is the stated rule: stored =
     round(sd / top * 65535) clipped, top = numpy.percentile(sd, 99.5), with
     summary.json's png_scale.sd = {offset 0, scale top / 65535, range
     "0 to the 99.5th ..."} (at most 1 apart: sd.tif is float32, the writer
     used doubles).
  3. Nearly uniform: every decoded value is at least 80 % of 65535 and the
     PNG's relative spread is that of sd.tif (within 2 / 65535 of rounding),
     whereas the robust range (the 0.5th to 99.5th percentile, the mean's
     scale, computed here with numpy) would spread the same map over more
     than 90 % of the grey range -- the check would fail under it.
  4. mean.png keeps the robust range: png_scale.mean = numpy percentiles
     0.5/99.5 of mean.tif, and its decoded values span 0..65535.
  5. report.html: the sd and interval-width images start at data-low 0 and
     end at numpy's 99.5th percentile, and their captions say "0 and the
     99.5th percentile"; the embedded sd image (Pillow) has a nearly
     uniform luminance (Rec. 709; 1st-99th percentile range < 20 % of
     the ramp's).
"""
import base64
import io
import json
import os
import re

import numpy as np
import tifffile
from PIL import Image

import pptest
from ref_report_chromium import Collect

tmp = pptest.tmpdir()
rng = np.random.default_rng(41)
H, W = 28, 32
truth = 20 + 10 * rng.standard_normal((H, W)).cumsum(axis=0).cumsum(axis=1) / 30
lam, dlt = 4.0, 0.8
y, A, p, mu = pptest.gmrf1_frame_posterior(tmp, truth, 5, lam, dlt)
out = os.path.join(tmp, "out")
pptest.run(["sample", os.path.join(tmp, "y.tif"), "--psf", "gaussian:sigma=1.3",
            "--noise", "gaussian:sigma=0.5", "--prior", "gmrf1:delta=%g" % dlt,
            "--sampler", "gibbs", "--chains", "4", "--burn", "10",
            "--iters", "1000", "--seed", "21", "--quiet", "-o", out])

sd = tifffile.imread(os.path.join(out, "sd.tif")).astype(np.float64)
mean = tifffile.imread(os.path.join(out, "mean.tif")).astype(np.float64)
exact = float(np.sqrt(np.mean(1 / p)))
spread = sd.max() / sd.min() - 1
pptest.check(abs(np.median(sd) / exact - 1) < 0.02 and 0 < spread < 0.15,
             "sd.tif: median %.5g vs closed form %.5g (numpy), relative spread %.3f < 0.15"
             % (np.median(sd), exact, spread))

with open(os.path.join(out, "summary.json")) as f:
    ps = json.load(f)["png_scale"]
top = float(np.percentile(sd, 99.5))
png = np.asarray(Image.open(os.path.join(out, "sd.png"))).astype(np.int64)
want = np.clip(np.floor(sd / (top / 65535) + 0.5), 0, 65535).astype(np.int64)
diff = np.abs(png - want)
pptest.check(ps["sd"]["offset"] == 0 and abs(ps["sd"]["scale"] * 65535 / top - 1) < 1e-6
             and ps["sd"]["range"].startswith("0 to the 99.5th percentile")
             and png.shape == sd.shape and diff.max() <= 1,
             "sd.png (Pillow) = round(sd / p99.5 * 65535): png_scale.sd %s, numpy p99.5 %.6g, "
             "max diff %d" % (ps["sd"], top, diff.max()))
png_spread = png.max() / png.min() - 1
lo, hi = np.percentile(sd, [0.5, 99.5])
robust = np.clip((sd - lo) / (hi - lo), 0, 1)
pptest.check(png.min() >= 0.8 * 65535 and abs(png_spread - min(spread, 65535 / png.min() - 1))
             < 2.0 / png.min() + 1e-9 and robust.max() - robust.min() > 0.9,
             "sd.png nearly uniform: min %d of 65535, relative spread %.4f (sd.tif's %.4f); "
             "the robust range would span %.2f of the grey range"
             % (png.min(), png_spread, spread, robust.max() - robust.min()))

mlo, mhi = np.percentile(mean, [0.5, 99.5])
mpng = np.asarray(Image.open(os.path.join(out, "mean.png"))).astype(np.int64)
pptest.check(abs(ps["mean"]["offset"] - mlo) < 1e-5 * abs(mlo) + 1e-6
             and abs(ps["mean"]["scale"] * 65535 - (mhi - mlo)) < 1e-5 * (mhi - mlo)
             and "0.5th to 99.5th" in ps["mean"]["range"].replace("th to the ", "th to ")
             and mpng.min() == 0 and mpng.max() == 65535,
             "mean.png keeps the robust range: png_scale.mean %s vs numpy %.6g..%.6g, decoded "
             "%d..%d" % (ps["mean"], mlo, mhi, mpng.min(), mpng.max()))

with open(os.path.join(out, "report.html"), encoding="utf-8") as f:
    text = f.read()
page = Collect()
page.feed(text)
width = (tifffile.imread(os.path.join(out, "hi.tif")).astype(np.float64)
         - tifffile.imread(os.path.join(out, "lo.tif")).astype(np.float64))
for key, v in (("sd", sd), ("width", width)):
    a = page.imgs[key + "-image"]
    t = float(np.percentile(v, 99.5))
    pptest.check(float(a["data-low"]) == 0 and abs(float(a["data-high"]) / t - 1) < 1e-5,
                 "report %s image: %s..%s = 0..numpy p99.5 %.6g (float32 TIFF vs doubles: "
                 "1e-5)" % (key, a["data-low"], a["data-high"], t))
caps = re.findall(r"0 and the 99\.5th percentile of this map", text)
pptest.check(len(caps) == 2, "report: the sd and width captions say '0 and the 99.5th "
             "percentile of this map' (%d found)" % len(caps))
rgb = np.asarray(Image.open(io.BytesIO(base64.b64decode(
    page.imgs["sd-image"]["src"].split(",", 1)[1]))))
lum = rgb[..., :3] @ np.array([0.2126, 0.7152, 0.0722])  # Rec. 709 weights
l1, l99 = np.percentile(lum, [1, 99])
pptest.check(l99 - l1 < 0.2 * 255, "report's sd image nearly uniform: luminance 1st-99th "
             "percentile %.1f..%.1f (range < 51)" % (l1, l99))
pptest.done()
