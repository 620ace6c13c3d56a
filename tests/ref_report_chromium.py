"""Reference check of the run report (report.html) in a real browser and
against numpy/Pillow/tifffile.

tests/probe_report writes a synthetic report (fixed seed) plus the images it
shows as float TIFFs. Then:
  1. Pillow decodes every embedded PNG; the grey images must equal the
     stated linear mapping recomputed with numpy from the TIFFs (tifffile),
     the stated black/white points must be numpy.percentile(.., [0.5, 99.5]);
     the colour maps must rise in luminance with the mapped value, and the
     spread maps (sd, interval width) run from 0 to numpy's 99.5th.
  2. The autocorrelation used for the plots equals numpy's direct sum.
  3. Headless Chromium (Debian package chromium), network closed by flags:
     --dump-dom must contain the expected element ids, and no <script>
     element (the title carries one, escaped); a copy of the page with one
     injected checker script must report every <img> decoded at its stated
     size, every <svg> laid out, and no script error; the browser's console
     (--enable-logging=stderr --v=0 prints every console message as a
     ":CONSOLE" line) must stay silent for the page -- and must catch the
     errors of a deliberately broken control page, so we know it listens.
     The verdict banner (issue 16) is laid out first, with a non-zero box,
     above the warnings section, which is above the images, and ends within
     the first 900 px. Issue #19: probe p_30_44's circle is drawn over its
     pixel of the mean and the scale bar is 10/64 of the image wide (1 um
     of 0.1 um pixels), measured on the laid-out page.
  4. The first screen (1280x900 screenshot): the warning banner's colour
     fills a large area for the run with warnings and no pixel for a run
     that converged without one (probe_report --converged), which shows
     the quiet verdict line instead, loads every image, and stays silent.
  5. A screenshot (1280x2400) for a person to look at; its path is printed.
If chromium is missing the check FAILS (CI installs it through .ci/run).
"""
import base64
import html.parser
import io
import json
import os
import re
import shutil
import subprocess
import sys

import numpy as np
import pptest
import tifffile
from PIL import Image
from scipy import stats

TITLE = 'frame <script>alert("x")</script> & co.tif'
IDS = ["frame-image", "mean-image", "sd-image", "sd-colourbar", "width-image",
       "width-colourbar", "trace-lambda", "acf-lambda", "trace-delta", "acf-delta",
       "trace-loglik", "trace-p_12_15", "acf-p_30_44", "hist-lambda", "hist-delta",
       "diag-table", "settings-table", "warnings-list", "cautions", "cautions-text",
       "verdict", "verdict-word", "verdict-count", "verdict-hyper", "verdict-pixels",
       "verdict-text", "verdict-iters", "warnings-hyper", "warnings-other",
       "frame-marks", "mean-marks", "sd-marks", "width-marks", "mean-marks-bar",
       "frame-plain", "mean-plain", "sd-plain", "width-plain"]
CAUTIONS = ("A reconstruction is a model-based estimate. Its error bars hold only under the "
            "stated model \u2014 the PSF, the noise model and the prior. pixpost is not a "
            "diagnostic device; for clinical or forensic use, follow local rules and practice.")


class Collect(html.parser.HTMLParser):
    """Element ids, tag counts, <img> attributes and the text of the page."""

    def __init__(self):
        super().__init__()
        self.ids, self.tags, self.imgs, self.text = set(), {}, {}, []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags[tag] = self.tags.get(tag, 0) + 1
        if "id" in a:
            self.ids.add(a["id"])
        if tag == "img":
            self.imgs[a.get("id")] = a

    def handle_data(self, data):
        self.text.append(data)


def parse(text):
    p = Collect()
    p.feed(text)
    p.text = "".join(p.text)
    return p


def chromium_cmd(exe, profile):
    # A closed network: no background or component traffic, no QUIC, fresh profile.
    return [exe, "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
            "--no-first-run", "--disable-background-networking", "--disable-component-update",
            "--disable-sync", "--user-data-dir=" + profile, "--enable-logging=stderr", "--v=0"]


def browse(exe, tmp, name, url, extra):
    profile = os.path.join(tmp, "profile-" + name)
    shutil.rmtree(profile, ignore_errors=True)
    p = subprocess.run(chromium_cmd(exe, profile) + extra + [url], capture_output=True,
                       text=True, stdin=subprocess.DEVNULL)
    console = [l for l in p.stderr.splitlines() if ":CONSOLE" in l or "Uncaught" in l]
    return p, console


def check_images(page, tmp):
    """Embedded PNGs vs the numpy mapping of the TIFFs (Pillow decodes)."""
    for key in ("frame", "mean"):
        a = page.imgs.get(key + "-image", {})
        src = a.get("src", "")
        pptest.check(src.startswith("data:image/png;base64,"), key + " image is a PNG data URI")
        img = np.asarray(Image.open(io.BytesIO(base64.b64decode(src.split(",", 1)[1]))))
        v = tifffile.imread(os.path.join(tmp, key + ".tif")).astype(np.float64)
        lo, hi = np.percentile(v, [0.5, 99.5])  # numpy default: linear interpolation
        blk, wht = float(a["data-black"]), float(a["data-white"])
        pptest.check(abs(blk - lo) <= 1e-12 * abs(lo) and abs(wht - hi) <= 1e-12 * abs(hi),
                     "%s black/white %.6g/%.6g = numpy.percentile 0.5/99.5 %.6g/%.6g"
                     % (key, blk, wht, lo, hi))
        want = np.clip(np.round(255 * (v - lo) / (hi - lo)), 0, 255)
        diff = np.abs(img.astype(int) - want.astype(int))
        # exact except at x.5 ties (C rounds half away from zero, numpy to even): at most 1
        pptest.check(img.shape == v.shape and diff.max() <= 1 and (diff == 0).mean() > 0.999,
                     "%s PNG (Pillow) = linear grey mapping of %s.tif (numpy), max diff %d"
                     % (key, key, diff.max()))
    sd = tifffile.imread(os.path.join(tmp, "sd.tif")).astype(np.float64)
    width = (tifffile.imread(os.path.join(tmp, "hi.tif")).astype(np.float64)
             - tifffile.imread(os.path.join(tmp, "lo.tif")).astype(np.float64))
    for key, v in (("sd", sd), ("width", width)):
        a = page.imgs.get(key + "-image", {})
        rgb = np.asarray(Image.open(io.BytesIO(base64.b64decode(a["src"].split(",", 1)[1]))))
        lum = rgb[..., :3] @ np.array([0.2126, 0.7152, 0.0722])  # Rec. 709 weights
        lo, hi = float(a["data-low"]), float(a["data-high"])
        top = np.percentile(v, 99.5)  # numpy default: linear interpolation
        pptest.check(lo == 0 and abs(hi - top) <= 1e-12 * abs(top),
                     "%s map (a spread) mapped from 0 to numpy.percentile 99.5 %.6g: got "
                     "%.6g..%.6g" % (key, top, lo, hi))
        inside = (v > lo) & (v < hi)
        rho = stats.spearmanr(v[inside], lum[inside]).correlation
        pptest.check(rgb.shape == v.shape + (3,) and rho > 0.99,
                     "%s map: RGB PNG (Pillow), luminance rank-correlates with the value "
                     "(Spearman %.4f > 0.99, scipy)" % (key, rho))


def check_acf():
    rng = np.random.default_rng(5)
    x = np.zeros(500)
    for i in range(1, 500):
        x[i] = 0.8 * x[i - 1] + rng.standard_normal()
    out = pptest.probe("report", ["acf", 40], stdin="\n".join("%.17g" % v for v in x))
    got = np.array([float(s) for s in out.split()])
    d = x - x.mean()
    want = np.correlate(d, d, "full")[len(x) - 1:len(x) + 40] / (d @ d)  # numpy direct sum
    err = np.abs(got - want).max()
    pptest.check(got.shape == want.shape and err < 1e-12,
                 "autocorrelation = numpy.correlate(d, d)/d.d at lags 0..40 (max err %.2g)" % err)


INJECT = """<script>
(function () {
  var errs = [];
  window.addEventListener('error', function (e) { errs.push(String(e.message || e)); }, true);
  window.addEventListener('load', function () {
    var bad = [], imgs = document.images, svgs = document.querySelectorAll('svg');
    for (var i = 0; i < imgs.length; i++) {
      var im = imgs[i];
      if (!im.complete || im.naturalWidth != +im.getAttribute('width') ||
          im.naturalHeight != +im.getAttribute('height')) bad.push(im.id);
    }
    var flat = 0;
    for (var j = 0; j < svgs.length; j++) {
      var r = svgs[j].getBoundingClientRect();
      if (!(r.width > 0 && r.height > 0)) flat++;
    }
    var pre = document.createElement('pre');
    pre.id = 'probe-result';
    var box = function (id) {
      var e = document.getElementById(id), r = e ? e.getBoundingClientRect() : null;
      return r ? [r.top, r.height] : null;
    };
    // issue #19: where the browser draws probe p_30_44's circle and the
    // scale bar over the mean, against the mean image's own box
    var img = document.getElementById('mean-image'), ib = img ? img.getBoundingClientRect() : null;
    var circ = document.querySelector('#mean-marks g.probe[data-row="30"][data-col="44"] circle');
    var cb = circ ? circ.getBoundingClientRect() : null;
    var bar = document.querySelector('#mean-marks-bar rect'), bb = bar ? bar.getBoundingClientRect() : null;
    var marks = ib && cb && bb ? {img: [ib.left, ib.top, ib.width, ib.height],
                                   circle: [cb.left + cb.width / 2, cb.top + cb.height / 2],
                                   bar: bb.width} : null;
    pre.textContent = JSON.stringify({imgs: imgs.length, marks: marks,
                                      quiet: !!document.querySelector('.verdict-quiet'),
                                      banner: !!document.querySelector('.verdict.bad, .verdict.ok'), bad: bad, svgs: svgs.length,
                                      flat: flat, errors: errs, verdict: box('verdict'),
                                      warnings: box('warnings'), images: box('images'),
                                      scrollWidth: document.documentElement.scrollWidth});
    document.body.appendChild(pre);
  });
})();
</script>
"""


def check_browser(exe, tmp, report):
    url = "file://" + report
    p, console = browse(exe, tmp, "dom", url, ["--dump-dom"])
    dom = parse(p.stdout)
    pptest.check(p.returncode == 0 and "<html" in p.stdout, "chromium --dump-dom loaded the page")
    missing = [i for i in IDS if i not in dom.ids]
    pptest.check(not missing, "element ids present after load: missing %s" % missing)
    pptest.check(dom.tags.get("script", 0) == 0 and TITLE in dom.text,
                 "title with <script> shown as text, no script element in the DOM")
    pptest.check(CAUTIONS in " ".join(dom.text.split()), "cautions paragraph present")
    pptest.check(dom.tags.get("img", 0) == 4 and dom.tags.get("svg", 0) >= 12,
                 "4 images and the SVG plots in the DOM (%d img, %d svg)"
                 % (dom.tags.get("img", 0), dom.tags.get("svg", 0)))
    pptest.check(not console, "no console messages for the page: %s" % console[:3])

    with open(report, encoding="utf-8") as f:
        probed = f.read().replace("</body>", INJECT + "</body>")
    copy = os.path.join(tmp, "report_probe.html")
    with open(copy, "w", encoding="utf-8") as f:
        f.write(probed)
    p, console = browse(exe, tmp, "probe", "file://" + copy,
                        ["--dump-dom", "--window-size=1280,2400"])
    m = re.search(r'<pre id="probe-result">(.*?)</pre>', p.stdout, re.S)
    res = json.loads(m.group(1).replace("&quot;", '"')) if m else {}
    pptest.check(bool(m), "injected checker ran after load")
    pptest.check(res.get("imgs") == 4 and res.get("bad") == [],
                 "every image decoded at its stated size in chromium: %s" % res.get("bad"))
    pptest.check(res.get("svgs", 0) >= 12 and res.get("flat") == 0,
                 "every SVG laid out with a non-zero box (%s svgs)" % res.get("svgs"))
    pptest.check(res.get("errors") == [] and not console, "no script errors or console output")
    v, w, i = res.get("verdict"), res.get("warnings"), res.get("images")
    pptest.check(v and w and i and v[1] > 0 and w[1] > 0 and v[0] < w[0] < i[0] and v[0] < 300,
                 "laid out: the verdict banner near the top (y %s), then the warnings, then the "
                 "images (boxes %s %s %s)" % (v and v[0], v, w, i))
    pptest.check(v and v[0] + v[1] <= 900,
                 "the whole banner is in the first screen of 900 px (bottom at %s)"
                 % (v and v[0] + v[1]))
    mk = res.get("marks") or {}
    ib, cc = mk.get("img", [0, 0, 0, 0]), mk.get("circle", [0, 0])
    # p_30_44 is row 30, column 44 of the 64x48 image: its centre is at
    # (44.5/64, 30.5/48) of the image's box, wherever the page puts it
    want = (ib[0] + ib[2] * 44.5 / 64, ib[1] + ib[3] * 30.5 / 48)
    err = max(abs(cc[0] - want[0]), abs(cc[1] - want[1])) if mk else 1e9
    pptest.check(err < 0.5,
                 "probe p_30_44's circle drawn over its pixel on the mean (off by %.3g px)" % err)
    # 64 pixels of 0.1 um: a fifth is 1.28 um, the bar 1 um = 10 pixels of the 64
    bw, want_bw = mk.get("bar", 0), ib[2] * 10 / 64
    pptest.check(mk and abs(bw - want_bw) < 0.5,
                 "scale bar 1 um drawn 10/64 of the image wide (%.2f px, want %.2f)" % (bw, want_bw))
    pptest.check(res.get("banner") and not res.get("quiet"), "a run with warnings: the banner box")
    pptest.check(0 < res.get("scrollWidth", 1e9) <= 1280,
                 "no horizontal overflow at 1280 px (scrollWidth %s)" % res.get("scrollWidth"))

    # The console capture itself must work: a broken control page is caught.
    bad = os.path.join(tmp, "control_broken.html")
    with open(bad, "w") as f:
        f.write("<!DOCTYPE html><p>x</p><script>console.error('pp-control');"
                "noSuchFunction();</script>")
    p, console = browse(exe, tmp, "control", "file://" + bad, ["--dump-dom"])
    joined = "\n".join(console)
    pptest.check("pp-control" in joined and "Uncaught" in joined,
                 "console capture catches console.error and an uncaught error (control page)")

    shot = os.path.join(tmp, "report.png")
    p, _ = browse(exe, tmp, "shot", url, ["--screenshot=" + shot, "--window-size=1280,2400"])
    ok = os.path.exists(shot)
    arr = np.asarray(Image.open(shot).convert("L")) if ok else np.zeros((1, 1))
    pptest.check(ok and arr.shape == (2400, 1280) and arr.std() > 10,
                 "screenshot 1280x2400 written and not blank (sd of grey %.1f)" % arr.std())
    print("screenshot for a person to look at: " + shot)


def banner_pixels(exe, tmp, name, url):
    """A 1280x900 screenshot (the first screen) and how many of its pixels
    have the warning banner's background, #fbeadf (report.c's CSS)."""
    shot = os.path.join(tmp, name + "_first_screen.png")
    browse(exe, tmp, name, url, ["--screenshot=" + shot, "--window-size=1280,900"])
    if not os.path.exists(shot):
        return shot, -1
    rgb = np.asarray(Image.open(shot).convert("RGB")).astype(int)
    return shot, int((np.abs(rgb - [0xfb, 0xea, 0xdf]).max(axis=2) <= 2).sum())


def check_first_screen(exe, tmp, report):
    """Issue #19: the warning banner is in the first screen for a run with
    warnings and absent for a run that converged without any (one quiet
    line instead)."""
    shot, n = banner_pixels(exe, tmp, "warn", "file://" + report)
    # the banner box is ~1200 x 150 px; a tenth of that is plenty to say it is shown
    pptest.check(n > 20000, "run with warnings: the banner's colour covers %d px of the first "
                            "screen (1280x900), > 20000; %s" % (n, shot))
    qdir = os.path.join(tmp, "quiet")
    os.makedirs(qdir, exist_ok=True)
    quiet = pptest.probe("report", ["write", qdir, "--converged"]).strip()
    shot, n = banner_pixels(exe, tmp, "quiet", "file://" + quiet)
    pptest.check(n == 0, "converged run: no pixel of the banner's colour in the first screen "
                         "(%d); %s" % (n, shot))
    with open(quiet, encoding="utf-8") as f:
        probed = f.read().replace("</body>", INJECT + "</body>")
    copy = os.path.join(tmp, "quiet_probe.html")
    with open(copy, "w", encoding="utf-8") as f:
        f.write(probed)
    p, console = browse(exe, tmp, "quietprobe", "file://" + copy,
                        ["--dump-dom", "--window-size=1280,900"])
    m = re.search(r'<pre id="probe-result">(.*?)</pre>', p.stdout, re.S)
    res = json.loads(m.group(1).replace("&quot;", '"')) if m else {}
    v = res.get("verdict")
    pptest.check(res.get("quiet") and not res.get("banner") and v and v[0] < 300
                 and res.get("bad") == [] and res.get("errors") == [] and not console,
                 "converged run: the quiet verdict line at y %s, no banner box, every image "
                 "loaded, no console output" % (v and v[0]))
    print("first screens for a person to look at: %s_first_screen.png, %s_first_screen.png"
          % (os.path.join(tmp, "warn"), os.path.join(tmp, "quiet")))


def main():
    tmp = pptest.tmpdir()
    exe = shutil.which("chromium")
    if not exe:
        pptest.check(False, "chromium not found: install Debian's package "
                            "(apt-get install -y chromium); .ci/run does this")
        pptest.done()
    out = pptest.probe("report", ["write", tmp, "--title", TITLE]).strip()
    report = os.path.join(tmp, "report.html")
    pptest.check(out == report and os.path.exists(report), "probe wrote " + report)
    with open(report, encoding="utf-8") as f:
        raw = f.read()
    pptest.check(raw.startswith("<!DOCTYPE html>"), "page starts with the doctype")
    pptest.check("http://" not in raw and "https://" not in raw and "//" not in
                 re.sub(r'src="data:[^"]*"', "", raw).replace("://", ""),
                 "no network address anywhere in the page")
    srcs = re.findall(r'(?:src|href)="([^"#][^"]*)"', raw)
    pptest.check(all(s.startswith("data:image/png;base64,") for s in srcs),
                 "every src/href is an inline PNG or an in-page anchor")
    check_images(parse(raw), tmp)
    check_acf()
    check_browser(exe, tmp, report)
    check_first_screen(exe, tmp, report)
    pptest.done()


if __name__ == "__main__":
    main()
