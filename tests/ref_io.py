"""Reference check of frame I/O against Pillow and tifffile.

pixpost's files must read back identically in Pillow (16-bit PNG) and
tifffile (float32 TIFF); files written by Pillow and tifffile, in the
layouts microscopy files come in, must read identically in pixpost (through
tests/probe_io). Sources: Pillow 9.4 (Debian python3-pil), tifffile
2023.2.3 (Debian python3-tifffile), numpy for the comparisons.
"""
import os
import subprocess

import numpy as np
import tifffile
from PIL import Image

import pptest

T = pptest.tmpdir()
rng = np.random.default_rng(20240611)


def path(name):
    return os.path.join(T, name)


def pp_read(p, *extra):
    """pixpost's reading of p: (array, pages, bits, is_float, was_colour, nonfinite)."""
    out = pptest.probe("io", ["read", p] + list(extra)).split("\n")
    w, h, pages = map(int, out[0].split())
    bits, is_float, was_colour, nonfinite = map(int, out[1].split())
    vals = np.array([float(v) for v in out[2:2 + w * h]])
    return vals.reshape(h, w), pages, bits, is_float, was_colour, nonfinite


def pp_fails(p, *extra):
    """(returncode, stderr) of a read expected to fail."""
    exe = os.path.join(pptest.PROBES, "probe_io")
    r = subprocess.run([exe, "read", p] + list(extra), capture_output=True, text=True)
    return r.returncode, r.stderr


def same(a, b):
    return a.shape == b.shape and np.array_equal(a.astype(np.float64), b.astype(np.float64),
                                                 equal_nan=True)


# --- files written by pixpost, read by Pillow and tifffile -----------------
src = (rng.standard_normal((23, 31)) * 50 + 300).astype(np.float32)
src[0, 0], src[1, 1] = np.nan, np.inf
tifffile.imwrite(path("src.tif"), src)  # tifffile writes the float32 source
pptest.probe("io", ["write", path("src.tif"), path("out.tif")])
with tifffile.TiffFile(path("out.tif")) as tf:  # tifffile reads pixpost's float TIFF
    page = tf.pages[0]
    back = page.asarray()
    pptest.check(back.dtype == np.float32 and len(tf.pages) == 1,
                 "pixpost TIFF is single-page float32 (tifffile)")
    pptest.check(page.compression == 1 and page.photometric == 1 and page.sampleformat == 3,
                 "pixpost TIFF uncompressed, min-is-black, IEEE float (tifffile tags)")
pptest.check(same(back, src), "pixpost float TIFF reads back identically in tifffile")

ramp = rng.integers(0, 65536, size=(17, 29)).astype(np.uint16)
ramp[0, 0], ramp[0, 1] = 0, 65535  # full range: auto scale is offset 0, scale 1
tifffile.imwrite(path("ramp.tif"), ramp)
off, sc = map(float, pptest.probe("io", ["write", path("ramp.tif"), path("ramp.png")]).split())
im = Image.open(path("ramp.png"))  # Pillow reads pixpost's 16-bit PNG
pptest.check(im.mode in ("I", "I;16") and off == 0.0 and sc == 1.0,
             "pixpost PNG is 16-bit gray with scale 1 (Pillow mode %s)" % im.mode)
pptest.check(same(np.array(im), ramp), "pixpost PNG16 reads back identically in Pillow")

off, sc = map(float, pptest.probe("io", ["write", path("src.tif"), path("src.png")]).split())
fin = np.isfinite(src)
lo, hi = src[fin].min(), src[fin].max()
pptest.check(off == float(lo) and abs(sc - (float(hi) - float(lo)) / 65535) < 1e-12 * sc,
             "auto scale is [lo, hi] / 65535 of the finite values (io.h)")
want = np.floor((src.astype(np.float64) - off) / sc + 0.5)  # round half up, values >= 0
want = np.clip(np.nan_to_num(want, nan=0.0, posinf=65535.0), 0, 65535)
got = np.array(Image.open(path("src.png"))).astype(np.float64)  # Pillow
pptest.check(same(got, want), "scaled PNG16 stores round((v-offset)/scale), clipped (Pillow)")

# --- files written by Pillow, read by pixpost -------------------------------
g8 = rng.integers(0, 256, size=(13, 19)).astype(np.uint8)
Image.fromarray(g8, mode="L").save(path("pil_L.png"))  # Pillow 8-bit L
a, pages, bits, *_ = pp_read(path("pil_L.png"))
pptest.check(same(a, g8) and pages == 1 and bits == 8, "Pillow 8-bit L PNG read identically")

g16 = rng.integers(0, 65536, size=(11, 14)).astype(np.uint16)
Image.fromarray(g16).save(path("pil_I16.png"))  # Pillow I;16 PNG (16-bit gray)
a, _, bits, *_ = pp_read(path("pil_I16.png"))
pptest.check(same(a, g16) and bits == 16, "Pillow 16-bit (I;16) PNG read identically")

rgb = rng.integers(0, 256, size=(9, 12, 3)).astype(np.uint8)
Image.fromarray(rgb, mode="RGB").save(path("pil_rgb.png"))  # Pillow RGB PNG
for k, ch in enumerate("rgb"):
    a, _, _, _, was_colour, _ = pp_read(path("pil_rgb.png"), "--channel", ch)
    pptest.check(same(a, rgb[..., k]) and was_colour == 1,
                 "Pillow RGB PNG channel %s read identically" % ch)
luma = rgb.astype(np.float64) @ np.array([0.2126, 0.7152, 0.0722])  # Rec. 709 weights
a, *_ = pp_read(path("pil_rgb.png"), "--channel", "luma")
pptest.check(np.max(np.abs(a - luma)) < 1e-9, "Pillow RGB PNG luma = Rec. 709 weighted sum")
rc, err = pp_fails(path("pil_rgb.png"))
pptest.check(rc == 1 and path("pil_rgb.png") in err and "colour image (RGB)" in err
             and "choose a channel to read (r, g, b or luma)" in err and "--" not in err
             and err.count("\n") == 1,
             "RGB without a channel refused in one line, in the library's words: %s" % err.strip())
# the command line names its flag (cli_read_defaults)
p = pptest.run(["sample", path("pil_rgb.png"), "--psf", "gaussian:sigma=1", "-o", path("o_rgb")],
               check=False)
pptest.check(p.returncode != 0 and "choose a channel with --channel r|g|b|luma" in p.stderr
             and len(p.stderr.strip().splitlines()) == 1,
             "pixpost sample names --channel for an RGB frame: %s" % p.stderr.strip())

Image.fromarray(rgb, mode="RGB").convert("P", palette=Image.ADAPTIVE, colors=16).save(
    path("pil_P.png"))  # Pillow palette PNG
pal_rgb = np.array(Image.open(path("pil_P.png")).convert("RGB"))  # Pillow's own expansion
a, *_ = pp_read(path("pil_P.png"), "--channel", "g")
pptest.check(same(a, pal_rgb[..., 1]), "Pillow palette PNG channel g through the palette")

Image.open(path("pil_P.png")).save(path("pil_P.tif"))  # Pillow palette TIFF
a, *_ = pp_read(path("pil_P.tif"), "--channel", "r")  # pixpost: libtiff's RGBA conversion
pptest.check(same(a, pal_rgb[..., 0]), "Pillow palette TIFF channel r through the colour map")
rc, err = pp_fails(path("pil_P.tif"))
pptest.check(rc == 1 and "colour image (palette)" in err, "palette TIFF refused without channel")

Image.fromarray(g16).save(path("pil_lzw.tif"), compression="tiff_lzw")  # Pillow via libtiff
a, _, bits, *_ = pp_read(path("pil_lzw.tif"))
pptest.check(same(a, g16) and bits == 16, "Pillow LZW 16-bit TIFF read identically")

# --- files written by tifffile, read by pixpost ------------------------------
cases = {
    "u8": (rng.integers(0, 256, (21, 17)).astype(np.uint8), {}),
    "u16be": (rng.integers(0, 65536, (21, 17)).astype(np.uint16), {"byteorder": ">"}),
    "u16le": (rng.integers(0, 65536, (21, 17)).astype(np.uint16), {"byteorder": "<"}),
    "u32": (rng.integers(0, 2**32, (21, 17), dtype=np.uint64).astype(np.uint32), {}),
    "f32be": (rng.standard_normal((21, 17)).astype(np.float32), {"byteorder": ">"}),
    "i16": (rng.integers(-32768, 32768, (21, 17)).astype(np.int16), {}),
    "f64": (rng.standard_normal((21, 17)), {}),
    "deflate": (rng.integers(0, 65536, (40, 37)).astype(np.uint16),
                {"compression": "zlib", "rowsperstrip": 7}),
    # horizontal predictor (the float predictor would need imagecodecs)
    "deflate_pred": (rng.integers(0, 65536, (40, 37)).astype(np.uint16),
                     {"compression": "zlib", "predictor": True}),
    "tiled": (rng.integers(0, 65536, (40, 37)).astype(np.uint16), {"tile": (16, 16)}),
    "tiled_be_zlib": (rng.standard_normal((40, 37)).astype(np.float32),
                      {"tile": (16, 32), "byteorder": ">", "compression": "zlib"}),
}
for name, (arr, kw) in cases.items():
    tifffile.imwrite(path(name + ".tif"), arr, photometric="minisblack", **kw)  # tifffile
    a, pages, bits, is_float, *_ = pp_read(path(name + ".tif"))
    pptest.check(same(a, arr) and pages == 1 and bits == arr.dtype.itemsize * 8
                 and is_float == (arr.dtype.kind == "f"),
                 "tifffile %s (%s %s) read identically" % (name, arr.dtype, kw))

nf = rng.standard_normal((8, 9)).astype(np.float32)
nf[2, 3], nf[4, 5], nf[6, 7] = np.nan, np.inf, -np.inf
tifffile.imwrite(path("nonfinite.tif"), nf)  # tifffile float32 with NaN/Inf
a, _, _, _, _, nonfinite = pp_read(path("nonfinite.tif"))
pptest.check(same(a, nf) and nonfinite == 3, "NaN/Inf read as they are and counted (3)")

stack = rng.integers(0, 65536, (4, 10, 12)).astype(np.uint16)
with tifffile.TiffWriter(path("pages.tif")) as tw:  # tifffile: one page per write
    for p in stack:
        tw.write(p, photometric="minisblack", compression="zlib")
for k in range(4):
    a, pages, *_ = pp_read(path("pages.tif"), "--page", str(k))
    pptest.check(same(a, stack[k]) and pages == 4, "tifffile 4-page file, page %d" % k)
rc, err = pp_fails(path("pages.tif"), "--page", "4")
pptest.check(rc == 1 and "4 page" in err, "page 4 of 4 refused: %s" % err.strip())

crgb = rng.integers(0, 65536, (10, 11, 3)).astype(np.uint16)
tifffile.imwrite(path("rgb16.tif"), crgb, photometric="rgb")  # tifffile contiguous RGB
tifffile.imwrite(path("rgb16sep.tif"), np.moveaxis(crgb, -1, 0), photometric="rgb",
                 planarconfig="separate")  # tifffile planar RGB
for f in ("rgb16.tif", "rgb16sep.tif"):
    a, *_ = pp_read(path(f), "--channel", "b")
    pptest.check(same(a, crgb[..., 2]), "tifffile %s channel b read identically" % f)
    a, *_ = pp_read(path(f), "--channel", "luma")
    luma = crgb.astype(np.float64) @ np.array([0.2126, 0.7152, 0.0722])
    pptest.check(np.max(np.abs(a - luma)) < 1e-9, "tifffile %s luma (Rec. 709)" % f)
    rc, err = pp_fails(path(f))
    pptest.check(rc == 1 and "colour image (RGB)" in err, "%s refused without channel" % f)

# --- broken files: one line on stderr naming the file; libtiff stays quiet --
data = open(path("deflate.tif"), "rb").read()
open(path("cut.tif"), "wb").write(data[: len(data) * 2 // 3])  # tifffile puts the IFD first
data = open(path("pil_I16.png"), "rb").read()
open(path("cut.png"), "wb").write(data[: len(data) // 2])
open(path("notes.png"), "w").write("not an image at all\n")
open(path("zero.tif"), "wb").close()
for f in ("cut.tif", "cut.png", "notes.png", "zero.tif"):
    rc, err = pp_fails(path(f))
    pptest.check(rc == 1 and path(f) in err and err.count("\n") == 1,
                 "%s refused in one line naming it: %s" % (f, err.strip()))

pptest.done()
