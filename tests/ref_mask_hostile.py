"""--mask FILE: hostile masks through the real binary (`pixpost sample` and
`pixpost batch`). Each case asserts the exit status (1: bad input, DESIGN.md
section 6), that stderr is one line naming --mask and the mask's file (or
the frame, for a frame left with too few observed pixels) with the words of
the fix, that no output folder content was written, and that the inputs are
unchanged (sha256). Masks are written with outside writers (Pillow,
tifffile): wrong size, missing file, not an image, RGB colour, all pixels
masked. Then: a valid mask in batch is applied to every frame
(summary.json missing_data.masked)."""
import hashlib
import json
import os

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
FAST = ["--psf", "gaussian:sigma=1", "--iters", "20", "--burn", "10", "--chains", "2", "--threads", "1",
        "--quiet"]
rng = np.random.default_rng(1)
frame = P("f.tif")
tifffile.imwrite(frame, (50 + 5 * rng.standard_normal((24, 20))).astype(np.float32))
tifffile.imwrite(P("small.tif"), np.zeros((10, 10), np.uint8))
Image.fromarray(np.zeros((24, 20, 3), np.uint8)).save(P("rgb.png"))
with open(P("text.tif"), "w") as f:
    f.write("not an image\n")
tifffile.imwrite(P("all.tif"), np.ones((24, 20), np.uint8))


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def expect_fail(mask, words, what, cmd="sample"):
    ins = [frame] + ([mask] if os.path.exists(mask) else [])
    before = [digest(p) for p in ins]
    out = P("out_" + what.replace(" ", "_"))
    src = frame if cmd == "sample" else P("indir")
    p = pptest.run([cmd, src, "-o", out, "--mask", mask] + FAST, check=False)
    lines = p.stderr.strip().splitlines()
    ok = p.returncode == 1 and len(lines) == 1 and all(w in lines[0] for w in words)
    pptest.check(ok, "%s %s: exit %d, message %r (want exit 1, one line with %s)"
                 % (cmd, what, p.returncode, p.stderr.strip(), words))
    left = [f for f in os.listdir(out)] if os.path.isdir(out) else []
    pptest.check(not any(f.endswith(".tif") or f == "summary.json" for f in left),
                 "%s %s: no results written (%s)" % (cmd, what, left))
    pptest.check([digest(p) for p in ins] == before, "%s %s: inputs unchanged" % (cmd, what))


expect_fail(P("small.tif"), ["--mask", P("small.tif"), "10x10", "20x24", "frame's size"], "wrong size")
expect_fail(P("none.tif"), ["--mask", P("none.tif"), "cannot be read", "grayscale PNG or TIFF"], "missing file")
expect_fail(P("text.tif"), ["--mask", P("text.tif"), "cannot be read"], "not an image")
expect_fail(P("rgb.png"), ["--mask", P("rgb.png"), "colour", "grayscale"], "colour")
expect_fail(P("all.tif"), [frame, "only 0 of the frame's 480 pixels are observed", "at least 5", "mask fewer pixels"],
            "every pixel masked")
p = pptest.run(["sample", frame, "-o", P("empty"), "--mask", ""] + FAST, check=False)
pptest.check(p.returncode == 1 and "--mask" in p.stderr and "empty file name" in p.stderr,
             "sample --mask '': exit %d, %r" % (p.returncode, p.stderr.strip()))

# batch: the same mask for every frame
os.makedirs(P("indir"))
for k in range(2):
    tifffile.imwrite(P("indir", "f%d.tif" % k), (50 + 5 * rng.standard_normal((24, 20))).astype(np.float32))
m = np.zeros((24, 20), np.uint8)
m[3:5, 4:9] = 7
tifffile.imwrite(P("m.tif"), m)
p = pptest.run(["batch", P("indir"), "-o", P("bout"), "--mask", P("m.tif")] + FAST, check=False)
pptest.check(p.returncode == 0, "batch --mask: exit %d (%s)" % (p.returncode, p.stderr.strip()[-300:]))
for k in range(2):
    sj = [os.path.join(d, f) for d, _, fs in os.walk(P("bout")) for f in fs
          if f == "summary.json" and ("f%d" % k) in d]
    md = json.load(open(sj[0]))["missing_data"] if sj else {}
    pptest.check(md.get("masked") == 10 and md.get("observed") == 470,
                 "batch --mask: frame f%d missing_data %s" % (k, md))
# --resume sees a mask edited in place (same name): the finished frames were
# made with other settings, which only --overwrite replaces
m[10, 10] = 1
tifffile.imwrite(P("m.tif"), m)
os.utime(P("m.tif"), ns=(1, 1))  # an old time, as if copied with its date kept
pr = pptest.run(["batch", P("indir"), "-o", P("bout"), "--mask", P("m.tif"), "--resume"] + FAST, check=False)
pptest.check(pr.returncode == 1 and "2 finished frames were made with other settings" in pr.stderr,
             "batch --resume after the mask changed: refused (exit %d): %r" % (pr.returncode, pr.stderr.strip()))
pp = pptest.run(["batch", P("indir"), "-o", P("bout2"), "--mask", P("small.tif")] + FAST[:-1], check=False)
pptest.check(pp.returncode == 2 and "frame's size" in pp.stderr,
             "batch with a wrong-size mask: every frame fails (exit %d): %r" % (pp.returncode, pp.stderr.strip()[-300:]))
pptest.done()
