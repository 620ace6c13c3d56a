"""Reference check of multi-page TIFF stacks and OME-TIFF metadata against
tifffile.

Files written by tifffile 2023.2.3 (Debian python3-tifffile) as OME-TIFF
with axes ZYX, CZYX and TZYX must read in pixpost (tests/probe_stack) as
the same array, page order and sizes, with the physical sizes converted to
micrometres; pixpost's own multi-page float32 OME-TIFF must read back in
tifffile as one OME series with axes ZYX, the right shape and PhysicalSize
values. Hostile metadata (malformed OME-XML, sizes that disagree with the
pages) must fail with a message naming the file. numpy for comparisons.
"""
import os
import subprocess

import numpy as np
import tifffile

import pptest

T = pptest.tmpdir()
rng = np.random.default_rng(20261204)


def path(name):
    return os.path.join(T, name)


def pp_read(p):
    """(array of shape n0 x n1 x n2 per the rank, meta tuple, {(z,c,t): page})."""
    out = pptest.probe("stack", ["read", p]).split("\n")
    rank, n0, n1, n2 = map(int, out[0].split())
    m = out[1].split()
    meta = dict(present=int(m[0]), nx=int(m[1]), ny=int(m[2]), nz=int(m[3]), nc=int(m[4]),
                nt=int(m[5]), order=m[6], voxel=tuple(map(float, m[7:10])))
    planes = meta["nz"] * meta["nc"] * meta["nt"] if meta["present"] else 0
    pages = {tuple(map(int, l.split()[:3])): int(l.split()[3]) for l in out[2:2 + planes]}
    shape = (n0, n1, n2) if rank == 3 else (n0, n1)
    vals = np.array([float(v) for v in out[2 + planes:2 + planes + int(np.prod(shape))]])
    return vals.reshape(shape), meta, pages


def fails(args, stdin=None):
    exe = os.path.join(pptest.PROBES, "probe_stack")
    r = subprocess.run([exe] + args, input=stdin, capture_output=True, text=True)
    return r.returncode, r.stderr


# ---- tifffile's OME-TIFFs read in pixpost ---------------------------------
z = rng.integers(0, 65535, size=(5, 6, 7)).astype(np.uint16)
tifffile.imwrite(path("z.ome.tif"), z, metadata={"axes": "ZYX", "PhysicalSizeX": 0.1,
                                                 "PhysicalSizeY": 0.125, "PhysicalSizeZ": 0.5})
a, m, pages = pp_read(path("z.ome.tif"))
pptest.check(a.shape == (5, 6, 7) and np.array_equal(a, z), "ZYX uint16: same array, pages in z order")
pptest.check((m["nx"], m["ny"], m["nz"], m["nc"], m["nt"]) == (7, 6, 5, 1, 1), "ZYX: SizeX/Y/Z/C/T")
pptest.check(np.allclose(m["voxel"], (0.5, 0.125, 0.1), rtol=1e-12), "ZYX: PhysicalSizeZ/Y/X in um (z, y, x)")
pptest.check(all(pages[(k, 0, 0)] == k for k in range(5)), "ZYX: plane z=k is page k")

cz = rng.standard_normal((2, 3, 4, 5)).astype(np.float32)
tifffile.imwrite(path("cz.ome.tif"), cz, metadata={"axes": "CZYX", "PhysicalSizeZ": 300,
                                                   "PhysicalSizeZUnit": "nm"})
a, m, pages = pp_read(path("cz.ome.tif"))
flat = cz.reshape(6, 4, 5)  # tifffile's page order: C slowest, Z fastest
pptest.check(np.array_equal(a, flat.astype(np.float64)), "CZYX float32: same values page by page")
pptest.check((m["nz"], m["nc"], m["nt"]) == (3, 2, 1), "CZYX: SizeZ 3, SizeC 2")
pptest.check(all(np.array_equal(a[pages[(k, c, 0)]], cz[c, k]) for c in range(2) for k in range(3)),
             "CZYX: pp_ome_page maps (z, c) to tifffile's plane cz[c, z] (DimensionOrder %s)" % m["order"])
pptest.check(abs(m["voxel"][0] - 0.3) < 1e-12 and m["voxel"][1] == 0 and m["voxel"][2] == 0,
             "CZYX: 300 nm becomes 0.3 um; absent X/Y sizes are 0")

tz = rng.integers(0, 255, size=(4, 2, 3, 5)).astype(np.uint8)
tifffile.imwrite(path("tz.ome.tif"), tz, metadata={"axes": "TZYX"})
a, m, pages = pp_read(path("tz.ome.tif"))
pptest.check((m["nz"], m["nc"], m["nt"]) == (2, 1, 4), "TZYX: SizeZ 2, SizeT 4")
pptest.check(all(np.array_equal(a[pages[(k, 0, t)]], tz[t, k]) for t in range(4) for k in range(2)),
             "TZYX uint8: plane (z, t) is tifffile's tz[t, z]")



def pp_volume(p, c, t):
    """pp_volume_read (the public API's one-call z-stack reader): (volume, voxel, nonfinite)."""
    out = pptest.probe("stack", ["volume", p, str(c), str(t)]).split("\n")
    shape = tuple(map(int, out[0].split()))
    voxel = tuple(map(float, out[1].split()))
    vals = np.array([float(v) for v in out[3:3 + int(np.prod(shape))]])
    return vals.reshape(shape), voxel, int(out[2])


for c in range(2):
    v, vox, nf = pp_volume(path("cz.ome.tif"), c, 0)
    pptest.check(v.shape == (3, 4, 5) and np.array_equal(v, cz[c].astype(np.float64))
                 and abs(vox[0] - 0.3) < 1e-12 and nf == 0,
                 "pp_volume_read CZYX channel %d: tifffile's cz[%d] as a 3 x 4 x 5 volume, "
                 "voxel z 0.3 um" % (c, c))
v, vox, _ = pp_volume(path("tz.ome.tif"), 0, 3)
pptest.check(np.array_equal(v, tz[3].astype(np.float64)),
             "pp_volume_read TZYX time point 3: tifffile's tz[3]")
v, vox, _ = pp_volume(path("z.ome.tif"), 0, 0)
pptest.check(np.array_equal(v, z) and np.allclose(vox, (0.5, 0.125, 0.1), rtol=1e-12),
             "pp_volume_read ZYX: the whole stack, voxel (0.5, 0.125, 0.1) um")
rc, err = fails(["volume", path("cz.ome.tif"), "2", "0"])
pptest.check(rc == 1 and "cz.ome.tif" in err and "2 channel(s)" in err,
             "pp_volume_read: a channel past SizeC is refused naming the file: %s" % err.strip())

plain = rng.integers(0, 4000, size=(3, 4, 6)).astype(np.uint32)
tifffile.imwrite(path("plain.tif"), plain, photometric="minisblack")  # no OME: tifffile's JSON description
a, m, _ = pp_read(path("plain.tif"))
pptest.check(m["present"] == 0 and np.array_equal(a, plain), "multi-page uint32 without OME: pages read, no metadata")
v, vox, _ = pp_volume(path("plain.tif"), 0, 0)
pptest.check(np.array_equal(v, plain) and vox == (0.0, 0.0, 0.0),
             "pp_volume_read without OME: every page a slice, voxel size unknown (0)")
rc, err = fails(["volume", path("plain.tif"), "1", "0"])
pptest.check(rc == 1 and "no OME metadata" in err,
             "pp_volume_read without OME: channel 1 refused: %s" % err.strip())

# ---- pixpost's OME-TIFF read in tifffile ------------------------------------
out = path("written.ome.tif")
pptest.probe("stack", ["copy", path("z.ome.tif"), out])
with tifffile.TiffFile(out) as tf:
    s = tf.series[0]
    pptest.check(tf.is_ome and s.axes == "ZYX" and s.shape == (5, 6, 7),
                 "written: tifffile sees one OME series ZYX of 5 x 6 x 7 (got %s %s)" % (s.axes, s.shape))
    pptest.check(s.dtype == np.float32 and np.array_equal(s.asarray(), z.astype(np.float32)),
                 "written: float32 planes equal the input")
    px = tifffile.xml2dict(tf.ome_metadata)["OME"]["Image"]["Pixels"]
    pptest.check(abs(px["PhysicalSizeX"] - 0.1) < 1e-12 and abs(px["PhysicalSizeY"] - 0.125) < 1e-12
                 and abs(px["PhysicalSizeZ"] - 0.5) < 1e-12, "written: PhysicalSizeX/Y/Z 0.1, 0.125, 0.5")
    pptest.check(px["PhysicalSizeZUnit"] == "\u00b5m", "written: unit micrometre")
one = path("one.ome.tif")
tifffile.imwrite(path("one.tif"), z[0])
pptest.probe("stack", ["copy", path("one.tif"), one, "0", "0.2", "0.2"])
with tifffile.TiffFile(one) as tf:
    pptest.check(tf.is_ome and tf.series[0].shape == (6, 7) and len(tf.pages) == 1,
                 "written single page: an OME series of 6 x 7 (got %s)" % (tf.series[0].shape,))

# ---- hostile metadata ------------------------------------------------------
good = tifffile.TiffFile(path("z.ome.tif")).pages[0].description
cases = {
    "unclosed.tif": (good.replace("</OME>", ""), "never closed"),
    "mismatch.tif": (good.replace("</Image>", "</Imag>"), "closes"),
    "nosizex.tif": (good.replace('SizeX="7"', ""), "SizeX is missing"),
    "badsize.tif": (good.replace('SizeZ="5"', 'SizeZ="five"'), "SizeZ"),
    "badunit.tif": (good.replace('PhysicalSizeX="0.1"', 'PhysicalSizeX="0.1" PhysicalSizeXUnit="furlong"'),
                    "PhysicalSizeXUnit"),
    "badorder.tif": (good.replace('DimensionOrder="XYCZT"', 'DimensionOrder="ZYX"'), "DimensionOrder"),
    "pagecount.tif": (good.replace('SizeZ="5"', 'SizeZ="4"'), "5 page(s)"),
}
for name, (desc, word) in cases.items():
    p = path(name)
    tifffile.imwrite(p, z, description=desc, metadata=None)
    before = open(p, "rb").read()
    rc, err = fails(["read", p])
    pptest.check(rc == 1 and p in err and word in err and err.count("\n") == 1,
                 "%s: refused, one line naming the file and '%s' (%s)" % (name, word, err.strip()))
    pptest.check(open(p, "rb").read() == before, "%s: input unchanged" % name)

# pages of different sizes cannot make one stack
p = path("ragged.tif")
tifffile.imwrite(p, z[0], photometric="minisblack")
tifffile.imwrite(p, z[0, :5, :6], photometric="minisblack", append=True)
rc, err = fails(["read", p])
pptest.check(rc == 1 and p in err and "page 1 is 6x5" in err, "pages of two sizes refused (%s)" % err.strip())

# ---- the parser alone ------------------------------------------------------
def parse(xml):
    out = pptest.probe("stack", ["parse"], stdin=xml).split()
    return out


px = ('<Pixels DimensionOrder="XYZTC" SizeX="2" SizeY="3" SizeZ="4" SizeC="1" SizeT="2" '
      'PhysicalSizeX="{x}" PhysicalSizeXUnit="{u}"/>')
for u, f in (("&#181;m", 1.0), ("&#x3bc;m", 1.0), ("um", 1.0), ("nm", 1e-3), ("mm", 1e3)):
    xml = '<?xml version="1.0"?><!-- c --><ome:OME xmlns:ome="x"><ome:Image>%s</ome:Image></ome:OME>' % \
        px.format(x=2, u=u).replace("<Pixels", "<ome:Pixels")
    o = parse(xml)
    pptest.check(o[0] == "1" and o[6] == "XYZTC" and abs(float(o[9]) - 2 * f) < 1e-12,
                 "parse: namespace prefix, entities, unit %s -> %g um (got %s)" % (u, 2 * f, o[9]))
o = parse("ImageJ=1.53t\nimages=5\nslices=5\n")
pptest.check(o[0] == "0", "parse: an ImageJ description is not OME (absent, not an error)")
rc, err = fails(["parse"], stdin="<OME><Image><Pixels SizeX=2 /></Image></OME>")
pptest.check(rc == 1 and "stdin" in err and "quote" in err, "parse: unquoted attribute refused (%s)" % err.strip())
rc, err = fails(["parse"], stdin="<OME><Image/></OME>")
pptest.check(rc == 1 and "no Pixels" in err, "parse: OME without Pixels refused")
two = "<OME><Image>%s</Image><Image>%s</Image></OME>" % (px.format(x=1, u="um"), px.format(x=1, u="um"))
rc, err = fails(["parse"], stdin=two)
pptest.check(rc == 1 and "2 images" in err, "parse: two images refused (%s)" % err.strip())
pptest.done()
