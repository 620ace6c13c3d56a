"""Writes the seed corpora of the fuzz targets (tests/fuzz/corpus/<target>/).

Run once with Debian's /usr/bin/python3 (Pillow, tifffile, numpy); the files
are committed, so CI does not need to run it. Each seed is small (a few
hundred bytes) so libFuzzer mutates quickly around every header layout the
readers handle: PNG gray 1/2/4/8/16 bit, gray+alpha, palette, RGB(A),
interlaced; TIFF uint8/16/32, int16, float32/64, big- and little-endian,
strips and tiles, LZW/Deflate/PackBits, separate planes, multi-page.
"""
import io
import os
import numpy as np
from PIL import Image
import tifffile

HERE = os.path.dirname(os.path.abspath(__file__))


def put(target, name, data):
    d = os.path.join(HERE, "corpus", target)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, name), "wb") as f:
        f.write(data)


def png_seeds():
    rng = np.random.default_rng(9)
    a8 = rng.integers(0, 256, (5, 7), dtype=np.uint8)
    for mode, arr in [("L", a8), ("LA", np.dstack([a8, a8])), ("RGB", np.dstack([a8] * 3)),
                      ("RGBA", np.dstack([a8] * 4))]:
        b = io.BytesIO()
        Image.fromarray(arr, mode).save(b, "PNG")
        put("png", "gray_%s.png" % mode.lower(), b.getvalue())
    b = io.BytesIO()
    Image.fromarray(a8, "L").convert("P").save(b, "PNG")
    put("png", "palette.png", b.getvalue())
    b = io.BytesIO()
    Image.fromarray(a8 // 128, "L").convert("1").save(b, "PNG")
    put("png", "bilevel.png", b.getvalue())
    b = io.BytesIO()
    Image.fromarray((a8.astype(np.uint16) * 257), "I;16").save(b, "PNG")
    put("png", "gray16.png", b.getvalue())
    b = io.BytesIO()
    b = io.BytesIO()
    Image.fromarray(np.zeros((1, 1), np.uint8), "L").save(b, "PNG")
    put("png", "one.png", b.getvalue())


def tiff_seeds():
    rng = np.random.default_rng(9)
    a = rng.integers(0, 60000, (6, 5)).astype(np.uint16)
    cases = {
        "u8.tif": dict(data=(a // 256).astype(np.uint8)),
        "u16_be.tif": dict(data=a, byteorder=">"),
        "u32.tif": dict(data=a.astype(np.uint32)),
        "i16.tif": dict(data=(a.astype(np.int32) - 30000).astype(np.int16)),
        "f32.tif": dict(data=a.astype(np.float32)),
        "f64_be.tif": dict(data=a.astype(np.float64), byteorder=">"),
        "tiled.tif": dict(data=np.tile(a, (3, 4)), tile=(16, 16)),
        "deflate.tif": dict(data=a, compression="zlib", predictor=True),
        "rgb_planar.tif": dict(data=np.stack([a // 256] * 3).astype(np.uint8),
                               photometric="rgb", planarconfig="separate"),
        "rgb.tif": dict(data=np.dstack([a // 256] * 3).astype(np.uint8), photometric="rgb"),
        "strips.tif": dict(data=a, rowsperstrip=2),
    }
    for name, kw in cases.items():
        b = io.BytesIO()
        data = kw.pop("data")
        tifffile.imwrite(b, data, **kw)
        put("tiff", name, b.getvalue())
    b = io.BytesIO()
    Image.fromarray(a).save(b, "TIFF", compression="tiff_lzw")  # Pillow via libtiff
    put("tiff", "lzw.tif", b.getvalue())
    b = io.BytesIO()
    Image.fromarray((a // 256).astype(np.uint8)).save(b, "TIFF", compression="packbits")
    put("tiff", "packbits.tif", b.getvalue())
    b = io.BytesIO()
    with tifffile.TiffWriter(b) as w:
        w.write(a)
        w.write(a[:3, :2])
    put("tiff", "pages.tif", b.getvalue())


def text_seeds():
    specs = {
        "psf_gauss": b"\x00gaussian:sigma=1.5",
        "psf_airy": b"\x00airy:na=1.4,wavelength=0.52,pixel=0.1",
        "psf_file": b"\x00file:/tmp/bead.tif",
        "noise_g": b"\x01gaussian",
        "noise_gs": b"\x01gaussian:sigma=2",
        "noise_p": b"\x01poisson:gain=2,offset=100",
        "noise_c": b"\x01camera:gain=2,offset=100,read=1.5",
        "prior_1": b"\x02gmrf1",
        "prior_2": b"\x02gmrf2:delta=0.5",
        "prior_m": b"\x02matern:range=4,nu=1,mean=2,delta=auto",
    }
    for name, data in specs.items():
        put("spec", name, data)
    cli = {
        "min": [b"f.tif", b"--psf", b"gaussian:sigma=1", b"-o", b"out"],
        "full": [b"f.png", b"--psf=airy:na=1,wavelength=0.5,pixel=0.1", b"-oout",
                 b"--noise", b"camera:gain=2,offset=1,read=1", b"--prior", b"gmrf2",
                 b"--chains", b"4", b"--iters", b"100", b"--burn", b"10", b"--thin", b"2",
                 b"--seed", b"18446744073709551615", b"--level", b"0.9",
                 b"--hyper-lambda", b"1,0.5", b"--hyper-delta=0,0", b"--boundary", b"pad",
                 b"--channel", b"luma", b"--max-pixels", b"1000", b"--threads", b"0",
                 b"--progress", b"plain", b"--strict", b"--sampler", b"gibbs"],
        "quiet": [b"f.tif", b"--psf", b"file:b.tif", b"-o", b"o", b"--quiet",
                  b"--wisdom", b"w.fftw", b"--", b"-x"],
        "help": [b"--help"],
    }
    for name, args in cli.items():
        put("cli", name, b"\x00".join(args))


if __name__ == "__main__":
    png_seeds()
    tiff_seeds()
    text_seeds()
