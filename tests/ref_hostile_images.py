"""Hostile frames through the real binary (`pixpost sample`), issue 9.

Every broken frame is made here, byte by byte (zlib + struct for PNG chunks,
CRCs from zlib.crc32 as the PNG specification, ISO/IEC 15948 section 5.5,
defines them) or with outside writers (Pillow, tifffile). Each case states
its expected exit status and the words its one-line message must contain:
  truncated PNG, bad CRC, wrong signature, declared 100000 x 100000
  (refused before any allocation: the child runs under RLIMIT_AS = 1 GiB, so
  a 80 GB buffer could not even be tried; an ASan build cannot run under
  RLIMIT_AS, its shadow memory needs terabytes of address space, so there
  the refusal is checked without the limit), zero width (PNG and TIFF), NaN/Inf
  in a float TIFF, palette/RGBA PNGs without --channel -> exit 1;
  palette, RGBA, gray+alpha with --channel, 3x3 and odd (7x5, 5x9) frames,
  constant frames -> exit 0 with finite outputs;
  1x1 and 2x2 frames -> exit 1 (no PSF fits: even a 3x3 kernel is larger);
  16-bit big-endian, striped, tiled, LZW and Deflate TIFFs of the same
  integers -> exit 0 and the same posterior mean as the plain little-endian
  uncompressed file to the last bit (same seed; the reader must give the same
  doubles, so the sampler must give the same draws).
Inputs are hashed before and after every run (never modified).
"""
import hashlib
import io
import os
import resource
import struct
import subprocess
import zlib

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
with open(pptest.BIN, "rb") as f:
    SANITIZED = b"__asan_init" in f.read()  # ASan reserves terabytes of address space
FAST = ["--iters", "8", "--burn", "4", "--chains", "2", "--threads", "1", "--quiet"]


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def limited(as_bytes):
    def pre():
        if not SANITIZED:
            resource.setrlimit(resource.RLIMIT_AS, (as_bytes, as_bytes))
    return pre


def sample(frame, extra, out, mem=None):
    h = digest(frame)
    args = [pptest.BIN, "sample", frame, "-o", out] + FAST + [str(a) for a in extra]
    p = subprocess.run(args, capture_output=True, text=True,
                       preexec_fn=limited(mem) if mem else None)
    pptest.check(digest(frame) == h, "%s: input unchanged (sha256)" % os.path.basename(frame))
    return p


def expect_fail(frame, extra, words, what, mem=None, names_file=True):
    out = P("out_" + os.path.basename(frame))
    p = sample(frame, extra, out, mem)
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s: exit 1 (got %d: %r)" % (what, p.returncode, p.stderr))
    pptest.check(len(lines) == 1, "%s: one stderr line (got %r)" % (what, p.stderr))
    for w in ([os.path.basename(frame)] if names_file else []) + words:
        pptest.check(w in p.stderr, "%s: message has %r (%r)" % (what, w, p.stderr.strip()))
    pptest.check(not os.path.exists(out) or not os.listdir(out),
                 "%s: no output written" % what)


def expect_ok(frame, extra, what):
    out = P("out_" + os.path.basename(frame))
    p = sample(frame, extra, out)
    pptest.check(p.returncode == 0, "%s: exit 0 (got %d: %r)" % (what, p.returncode, p.stderr))
    if p.returncode != 0:
        return None
    arrs = {n: tifffile.imread(os.path.join(out, n + ".tif")) for n in ("mean", "sd", "lo", "hi")}
    pptest.check(all(np.isfinite(a).all() for a in arrs.values()),
                 "%s: mean/sd/lo/hi finite" % what)
    return arrs


# ---- PNG chunks by hand ------------------------------------------------------
def chunk(kind, data, crc=None):
    c = zlib.crc32(kind + data) & 0xFFFFFFFF if crc is None else crc
    return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", c)


def png_bytes(w, h, rows, depth=8, ctype=0, bad_crc=False):
    ihdr = struct.pack(">IIBBBBB", w, h, depth, ctype, 0, 0, 0)
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", ihdr, 0x12345678 if bad_crc else None) +
            chunk(b"IDAT", zlib.compress(rows)) + chunk(b"IEND", b""))


def write(name, data):
    with open(P(name), "wb") as f:
        f.write(data)
    return P(name)


G = ["--psf", "gaussian:sigma=0.7"]  # radius ceil(2.8) = 3: a 7x7 kernel
rows16 = b"".join(b"\0" + bytes(range(i, i + 16)) for i in range(16))
good = png_bytes(16, 16, rows16)
write("good.png", good)
expect_ok(P("good.png"), G, "hand-made 16x16 gray PNG (control)")
expect_fail(write("truncated.png", good[:-30]), G, ["truncated"], "PNG cut inside IDAT")
expect_fail(write("badcrc.png", png_bytes(16, 16, rows16, bad_crc=True)), G, ["CRC"],
            "PNG with a wrong IHDR CRC")
expect_fail(write("signature.png", b"GIF89a" + good[6:]), G, ["signature"],
            "PNG whose signature was overwritten")
expect_fail(write("zerowidth.png", png_bytes(0, 16, b"\0" * 16)), G, ["IHDR", "width"],
            "PNG declaring width 0")
# 100000 x 100000: 1e10 pixels > the default limit of 2^28. The IDAT holds
# four rows only; the refusal must come from the header, before allocation.
huge = write("huge.png", png_bytes(100000, 100000, b"\0" * 400004))
expect_fail(huge, G, ["100000x100000", "limit"], "PNG declaring 100000x100000 (RLIMIT_AS 1 GiB)",
            mem=1 << 30)
# the same header with the limit lifted: must fail cleanly (out of memory or
# truncated data), never crash, under the 1 GiB address-space limit
if not SANITIZED:
    p = sample(huge, G + ["--max-pixels", "20000000000"], P("out_huge2"), mem=1 << 30)
    pptest.check(p.returncode == 1 and "huge.png" in p.stderr and len(p.stderr.splitlines()) == 1,
                 "100000x100000 with --max-pixels 2e10 under RLIMIT_AS: exit 1, one line "
                 "(got %d %r)" % (p.returncode, p.stderr))

# TIFF headers by hand: little-endian, one IFD (TIFF 6.0 section 2)
def tiff_bytes(w, h, data=b"\0" * 16):
    tags = [(256, 4, w), (257, 4, h), (258, 3, 8), (259, 3, 1), (262, 3, 1),
            (273, 4, 8 + 2 + 12 * 9 + 4), (277, 3, 1), (278, 4, max(h, 1)), (279, 4, len(data))]
    ifd = struct.pack("<H", len(tags)) + b"".join(
        struct.pack("<HHII", t, typ, 1, v) if typ == 4 else struct.pack("<HHIHH", t, typ, 1, v, 0)
        for t, typ, v in tags) + struct.pack("<I", 0)
    return b"II*\0" + struct.pack("<I", 8) + ifd + data


# a 3x3 kernel fits the 4x4 frame (gaussian sigma below 0.3 px is refused
# as deblurring nothing, and sigma 0.3 makes a 5x5 kernel)
k3 = np.zeros((3, 3), np.float32)
k3[1, 1], k3[0, 1], k3[1, 0], k3[1, 2], k3[2, 1] = 1, 0.1, 0.1, 0.1, 0.1
tifffile.imwrite(P("k3.tif"), k3)
expect_ok(write("hand.tif", tiff_bytes(4, 4)), ["--psf", "file:" + P("k3.tif")],
          "hand-made 4x4 8-bit TIFF (control)")
expect_fail(write("zerowidth.tif", tiff_bytes(0, 4)), G, ["zerowidth.tif"], "TIFF declaring width 0")
expect_fail(write("huge.tif", tiff_bytes(100000, 100000)), G, ["100000x100000", "limit"],
            "TIFF declaring 100000x100000 (RLIMIT_AS 1 GiB)", mem=1 << 30)

# ---- colour, alpha, sizes ---------------------------------------------------
rng = np.random.default_rng(9)
g = rng.integers(0, 256, (16, 16)).astype(np.uint8)
Image.fromarray(g).convert("P").save(P("palette.png"))  # Pillow palette PNG
Image.fromarray(np.dstack([g, g, g, np.full_like(g, 128)]), "RGBA").save(P("rgba.png"))
Image.fromarray(np.dstack([g, g]), "LA").save(P("gray_alpha.png"))
expect_fail(P("palette.png"), G, ["palette", "--channel"], "palette PNG without --channel")
expect_fail(P("rgba.png"), G, ["RGB", "--channel"], "RGBA PNG without --channel")
expect_ok(P("palette.png"), G + ["--channel", "luma"], "palette PNG with --channel luma")
expect_ok(P("rgba.png"), G + ["--channel", "g"], "RGBA PNG with --channel g")
a_gray = expect_ok(P("gray_alpha.png"), G, "gray+alpha PNG (alpha ignored)")
Image.fromarray(g).save(P("gray.png"))
a_plain = expect_ok(P("gray.png"), G, "the same gray PNG without alpha")
if a_gray and a_plain:
    pptest.check(np.array_equal(a_gray["mean"], a_plain["mean"]),
                 "gray+alpha gives the same posterior mean as plain gray (alpha is not intensity)")

delta3 = np.zeros((3, 3), np.float32)
delta3[1, 1] = 1
tifffile.imwrite(P("delta3.tif"), delta3)
D3 = ["--psf", "file:" + P("delta3.tif")]
for (h, w) in [(1, 1), (2, 2)]:
    tifffile.imwrite(P("f%dx%d.tif" % (h, w)), (50 + rng.standard_normal((h, w))).astype(np.float32))
    # (the message names the sizes but not the frame file: run_frame.c passes
    # pp_psf_check's text through; reported, see ref_hostile_pending.py)
    expect_fail(P("f%dx%d.tif" % (h, w)), D3, ["3x3", "larger", "%dx%d" % (h, w)],
                "%dx%d frame (smallest PSF is 3x3)" % (h, w), names_file=False)
for (h, w) in [(3, 3), (7, 5), (5, 9)]:
    tifffile.imwrite(P("f%dx%d.tif" % (h, w)), (50 + rng.standard_normal((h, w))).astype(np.float32))
    r = expect_ok(P("f%dx%d.tif" % (h, w)), D3, "%dx%d frame" % (h, w))
    if r:
        pptest.check(r["mean"].shape == (h, w), "%dx%d frame: mean is %dx%d" % (h, w, h, w))

# ---- NaN / Inf, constant frames ---------------------------------------------
f = (50 + rng.standard_normal((16, 16))).astype(np.float32)
f[3, 4], f[7, 7], f[9, 1] = np.nan, np.inf, -np.inf
tifffile.imwrite(P("nonfinite.tif"), f)
expect_fail(P("nonfinite.tif"), G, ["3 pixels", "NaN or infinite"], "float TIFF with NaN/+Inf/-Inf")
for v in (0.0, 7.0, 60000.0):
    tifffile.imwrite(P("const_%g.tif" % v), np.full((16, 16), v, np.float32))
    r = expect_ok(P("const_%g.tif" % v), G, "constant frame %g" % v)
    if r:  # a flat frame's mean is flat at v: 0.01 is 10 posterior sds (sd ~ 1e-3 here)
        pptest.check(np.abs(r["mean"] - v).max() < 0.01 + 1e-6 * v,
                     "constant frame %g: mean within 0.01 of %g (max dev %.3g)"
                     % (v, v, np.abs(r["mean"] - v).max()))

# ---- TIFF layouts of the same integers ---------------------------------------
a = rng.integers(0, 60000, (24, 20)).astype(np.uint16)
tifffile.imwrite(P("plain.tif"), a)  # tifffile: little-endian, one strip, uncompressed
layouts = {
    "be16.tif": lambda p: tifffile.imwrite(p, a, byteorder=">"),          # tifffile
    "strips.tif": lambda p: tifffile.imwrite(p, a, rowsperstrip=5),        # tifffile
    "tiled.tif": lambda p: tifffile.imwrite(p, a, tile=(16, 16)),          # tifffile
    "deflate.tif": lambda p: tifffile.imwrite(p, a, compression="zlib"),   # tifffile
    "lzw.tif": lambda p: Image.fromarray(a).save(p, compression="tiff_lzw"),  # Pillow/libtiff
    "float.tif": lambda p: tifffile.imwrite(p, a.astype(np.float32)),     # tifffile
}
ref = expect_ok(P("plain.tif"), G + ["--seed", "5"], "16-bit little-endian TIFF (reference)")
for name, make in layouts.items():
    make(P(name))
    r = expect_ok(P(name), G + ["--seed", "5"], name)
    if r and ref:
        pptest.check(np.array_equal(r["mean"], ref["mean"]) and np.array_equal(r["sd"], ref["sd"]),
                     "%s: same posterior mean/sd as the plain TIFF, bit for bit" % name)

pptest.done()
