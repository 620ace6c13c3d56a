"""Reference check of the command line contract (DESIGN.md section 6)
through the real pixpost binary.

Bad input files are made here with Pillow and numpy (outside writers):
a truncated PNG, a text file named .png, a zero-byte .tif and a colour PNG
without --channel. Each must give exit status 1, exactly one line on stderr
naming the file, no output file, and the input unchanged. Bad options
(unknown, negative, zero, malformed, missing values, repeats, unknown spec
keys) must give exit 1 and a message naming the option. --help must exit 0
and mention every option.
"""
import hashlib
import os

import numpy as np
import tifffile
from PIL import Image

import pptest

tmp = pptest.tmpdir()
P = lambda *names: os.path.join(tmp, *names)


def digest(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def expect_fail(args, names, what):
    """Exit 1, one stderr line containing every string of names."""
    p = pptest.run(args, check=False)
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s: exit status 1 (got %d)" % (what, p.returncode))
    pptest.check(len(lines) == 1, "%s: exactly one stderr line (got %r)" % (what, p.stderr))
    for n in names:
        pptest.check(n in p.stderr, "%s: message names %r (%r)" % (what, n, p.stderr.strip()))
    return p


# ---- inputs: a good grayscale truth (tifffile) and broken ones -------------
good = P("good.tif")
tifffile.imwrite(good, np.full((32, 32), 50, np.float32))  # tifffile writes it

good_png = P("good.png")
Image.fromarray(np.arange(64 * 64, dtype=np.uint16).reshape(64, 64)).save(good_png)  # Pillow
with open(good_png, "rb") as f:
    data = f.read()
with open(P("truncated.png"), "wb") as f:  # cut mid-IDAT: the signature survives
    f.write(data[: len(data) // 2])
with open(P("text.png"), "w") as f:
    f.write("this is a text file, not an image\n")
open(P("zero.tif"), "wb").close()
rgb = np.zeros((16, 16, 3), np.uint8)
rgb[..., 0] = 200
Image.fromarray(rgb, "RGB").save(P("colour.png"))  # Pillow, 8-bit RGB

bad_inputs = {
    "truncated.png": "truncated PNG",
    "text.png": "text file named .png",
    "zero.tif": "zero-byte .tif",
    "colour.png": "colour PNG without --channel",
}
for name, what in bad_inputs.items():
    src = P(name)
    before = digest(src)
    out = P("out_" + name.replace(".", "_") + ".tif")
    expect_fail(["simulate", src, "--psf", "gaussian:sigma=1", "--noise", "none", "-o", out],
                [name], "simulate with " + what)
    pptest.check(not os.path.exists(out), "simulate with %s: no output file created" % what)
    pptest.check(digest(src) == before, "simulate with %s: input unchanged" % what)
    leftovers = [f for f in os.listdir(tmp) if ".tmp." in f]
    pptest.check(not leftovers, "simulate with %s: no temporary files left (%r)" % (what, leftovers))

# A colour PNG is accepted once a channel is chosen (the red channel: 200).
out = P("colour_r.tif")
p = pptest.run(["simulate", P("colour.png"), "--channel", "r", "--psf", "gaussian:sigma=1",
                "--noise", "none", "--boundary", "periodic", "-o", out], check=False)
pptest.check(p.returncode == 0, "colour PNG with --channel r: exit 0 (%s)" % p.stderr.strip())
if p.returncode == 0:
    y = tifffile.imread(out)
    # a flat field blurred periodically stays flat (PSF sums to 1)
    pptest.check(np.allclose(y, 200, rtol=1e-5), "colour PNG --channel r: flat 200 (max dev %g)"
                 % np.abs(y - 200).max())

# The output must never overwrite the input.
before = digest(good)
expect_fail(["simulate", good, "--psf", "gaussian:sigma=1", "--noise", "none", "-o", good],
            ["good.tif"], "simulate -o onto its own input")
pptest.check(digest(good) == before, "simulate -o onto its input: input unchanged")

# Unknown output type is refused before computing: nothing written.
expect_fail(["simulate", good, "--psf", "gaussian:sigma=1", "--noise", "none", "-o", P("x.jpg")],
            ["x.jpg"], "simulate to .jpg")
pptest.check(not os.path.exists(P("x.jpg")), "simulate to .jpg: nothing written")

# ---- bad usage ---------------------------------------------------------------
sim = ["simulate", good, "--psf", "gaussian:sigma=1", "--noise", "none", "-o", P("o.tif")]
smp = ["sample", good, "--psf", "gaussian:sigma=1", "-o", P("outdir")]
cases = [
    (["frobnicate"], ["frobnicate", "--help"], "unknown command"),
    (["--frob"], ["--frob"], "unknown option before the command"),
    (sim + ["--bogus", "3"], ["--bogus", "simulate --help"], "unknown option (simulate)"),
    (smp + ["--bogus"], ["--bogus", "sample --help"], "unknown option (sample)"),
    (smp + ["--chains", "-2"], ["--chains", "-2"], "negative --chains"),
    (smp + ["--chains", "0"], ["--chains", "0"], "zero --chains"),
    (smp + ["--iters", "0"], ["--iters"], "zero --iters"),
    (smp + ["--iters", "12x"], ["--iters", "12x"], "malformed --iters"),
    (smp + ["--iters", "1.5"], ["--iters", "1.5"], "fractional --iters"),
    (smp + ["--iters", "99999999999999999999999"], ["--iters", "too large"], "overflowing --iters"),
    (smp + ["--thin", "0"], ["--thin"], "zero --thin"),
    (smp + ["--iters", "10", "--thin", "11"], ["--thin", "--iters"], "--thin larger than --iters"),
    (smp + ["--burn", "-1"], ["--burn"], "negative --burn"),
    (smp + ["--seed", "-1"], ["--seed"], "negative --seed"),
    (smp + ["--seed", "18446744073709551616"], ["--seed"], "--seed beyond 2^64-1"),
    (smp + ["--threads", "x"], ["--threads"], "malformed --threads"),
    (smp + ["--level", "1.5"], ["--level", "1.5"], "--level out of (0,1)"),
    (smp + ["--level", "0"], ["--level"], "--level 0"),
    (smp + ["--level", "nan"], ["--level"], "--level nan"),
    (smp + ["--hyper-lambda", "1"], ["--hyper-lambda", "A,B"], "--hyper-lambda without a pair"),
    (smp + ["--hyper-delta", "1,-1"], ["--hyper-delta"], "negative --hyper-delta rate"),
    (smp + ["--max-pixels", "0"], ["--max-pixels"], "zero --max-pixels"),
    (smp + ["--progress", "fancy"], ["--progress", "fancy"], "unknown --progress"),
    (smp + ["--quiet", "--progress", "bar"], ["--quiet", "--progress"], "conflicting --quiet/--progress"),
    (smp + ["--quiet=yes"], ["--quiet"], "a value given to a flag"),
    (smp + ["--iters"], ["--iters", "needs a value"], "missing value at the end"),
    (smp + ["--iters", "--burn", "3"], ["--iters", "needs a value"], "missing value before an option"),
    (smp + ["--chains", "2", "--chains=3"], ["--chains", "twice"], "duplicate option"),
    (smp + ["--sampler", "nuts"], ["--sampler", "nuts"], "unknown sampler"),
    (smp + ["--boundary", "mirror"], ["--boundary", "mirror"], "unknown boundary"),
    (smp + ["--channel", "alpha"], ["--channel", "alpha"], "unknown channel"),
    (smp + ["--noise", "none"], ["--noise", "none"], "sample with --noise none"),
    (["sample", good, "-o", P("outdir")], ["--psf"], "sample without --psf"),
    (["sample", good, "--psf", "gaussian:sigma=1"], ["-o"], "sample without -o"),
    (["sample", "--psf", "gaussian:sigma=1", "-o", P("d")], ["FRAME"], "sample without FRAME"),
    (["sample", good, good, "--psf", "gaussian:sigma=1", "-o", P("d")], ["unexpected"],
     "sample with two frames"),
    (smp[:3] + ["gaussian:sigma=1,width=3"] + smp[4:], ["--psf", "width"], "unknown --psf key"),
    (smp[:3] + ["lorentz:gamma=1"] + smp[4:], ["--psf", "lorentz"], "unknown --psf model"),
    (smp + ["--noise", "poisson:gain=1,bias=3"], ["--noise", "bias"], "unknown --noise key"),
    (smp + ["--prior", "matern:range=3,smooth=1"], ["--prior", "smooth"], "unknown --prior key"),
    (smp + ["--prior", "gmrf1:delta=abc"], ["--prior", "abc"], "malformed number in --prior"),
    (["simulate", good, "--psf", "gaussian:sigma=1", "-o", P("o.tif")], ["--noise"],
     "simulate without --noise"),
    (sim + ["--seed", "1e3"], ["--seed", "1e3"], "malformed --seed (simulate)"),
    (sim + ["--noise", "none"], ["--noise", "twice"], "duplicate --noise (simulate)"),
    (["psf", "gaussian:sigma=1", "--size", "8", "-o", P("k.tif")], ["--size", "odd"], "even --size"),
    (["psf", "gaussian:sigma=1", "--size", "0", "-o", P("k.tif")], ["--size"], "zero --size"),
    (["psf", "gaussian:sigma=1", "-o", P("k.png")], ["k.png", ".tif"], "psf to .png"),
    (["psf", "gaussian:sigma=-1", "-o", P("k.tif")], ["--psf", "sigma"], "negative PSF sigma"),
    (["demo", "--bogus"], ["--bogus"], "unknown demo option"),
]
for args, names, what in cases:
    expect_fail(args, names, what)
pptest.check(not os.path.exists(P("o.tif")), "no simulate output after the usage errors")
pptest.check(not os.path.exists(P("k.tif")), "no psf output after the usage errors")

# ---- help and version --------------------------------------------------------
options = {
    "simulate": ["--psf", "--noise", "--seed", "--boundary", "--channel", "--max-pixels",
                 "--output", "-o", "--quiet", "--overwrite"],
    "sample": ["--psf", "--noise", "--prior", "--sampler", "--chains", "--iters", "--burn",
               "--thin", "--seed", "--boundary", "--threads", "--level", "--hyper-lambda",
               "--hyper-delta", "--channel", "--max-pixels", "--wisdom", "--quiet",
               "--progress", "--strict", "--overwrite", "--output", "-o"],
    "psf": ["--size", "--output", "-o", "--overwrite"],
    "demo": ["--output", "-o", "--images", "--overwrite"],
}
for cmd, opts in options.items():
    p = pptest.run([cmd, "--help"], check=False)
    pptest.check(p.returncode == 0 and p.stderr == "", "%s --help: exit 0, quiet stderr" % cmd)
    missing = [o for o in opts if o not in p.stdout]
    pptest.check(not missing, "%s --help mentions every option (missing %r)" % (cmd, missing))
    pptest.check("Usage: pixpost " + cmd in p.stdout, "%s --help starts with a usage line" % cmd)
# every option of sample states its default or that it is required
p = pptest.run(["sample", "--help"])
blocks = p.stdout.split("\n  -")[1:]
undocumented = [b.split()[0] for b in blocks if "Default:" not in b and "Required." not in b]
pptest.check(not undocumented, "sample --help: every option states a default (%r)" % undocumented)
p = pptest.run(["--help"])
for cmd in ["simulate", "sample", "batch", "psf", "demo"]:
    pptest.check(cmd in p.stdout, "pixpost --help lists the %s command" % cmd)
p = pptest.run(["--version"])
pptest.check(p.stdout.startswith("pixpost 0.1.0"), "--version prints the version (%r)" % p.stdout)
p = pptest.run([], check=False)
pptest.check(p.returncode == 1 and "Usage" in p.stderr, "no command: exit 1 with usage on stderr")

# ---- what works: psf and simulate write what they say -----------------------
p = pptest.run(["psf", "gaussian:sigma=1.5", "--size", "11", "-o", P("k11.tif")], check=False)
pptest.check(p.returncode == 0, "psf --size 11: exit 0 (%s)" % p.stderr.strip())
if p.returncode == 0:
    k = tifffile.imread(P("k11.tif"))
    pptest.check(k.shape == (11, 11) and k.dtype == np.float32, "psf --size 11: 11x11 float32")
    pptest.check(abs(float(k.astype(np.float64).sum()) - 1) < 1e-5, "psf kernel sums to 1 (%g)" % k.sum())
    pptest.check(np.unravel_index(np.argmax(k), k.shape) == (5, 5), "psf kernel peaks at its centre")

# PNG output: whole camera counts stored as they are (Pillow reads it back)
truth = np.full((24, 24), 1000.0, np.float32)
tifffile.imwrite(P("flat1000.tif"), truth)
p = pptest.run(["simulate", P("flat1000.tif"), "--psf", "gaussian:sigma=1", "--noise",
                "poisson:gain=2,offset=100", "--boundary", "periodic", "-o", P("y.png")], check=False)
pptest.check(p.returncode == 0, "simulate to .png: exit 0 (%s)" % p.stderr.strip())
if p.returncode == 0:
    y = np.asarray(Image.open(P("y.png"))).astype(np.float64)
    with open(P("y.png"), "rb") as f:
        ihdr = f.read(26)  # PNG spec: IHDR bit depth at byte 24, colour type at 25
    # mean ADU = 100 + 2 * 1000 = 2100; sd = 2 * sqrt(1000) = 63 per pixel;
    # the 576-pixel mean has se 2.6, so 5 se = 13
    pptest.check(ihdr[24] == 16 and ihdr[25] == 0, "simulate .png is 16-bit grayscale")
    pptest.check(abs(y.mean() - 2100) < 13,
                 "simulate .png holds ADU as stored counts (mean %.1f, expect 2100 +- 13)" % y.mean())

pptest.done()
