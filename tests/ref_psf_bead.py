"""A file: PSF must be one compact bead (issue 14, item 4; criterion in
src/psf_bead.c), checked both ways through the binary.

Must pass (`pixpost psf file:...` exit 0): pixpost's own `pixpost psf`
kernels (gaussian sigma 0.5, 1.2, 3 and 15 px; airy at 65 nm and 30 nm
pixels, na 0.5 at 100 nm) turned into bead images: scaled to a peak of
SNR x 5 above an offset of 100 ADU, plus Gaussian noise of sd 5
(numpy.random.default_rng, fixed seed) at SNR 8, 20 and 100, also padded
with 30 px of background and placed off-centre in a larger image.

Must fail (exit 1, one stderr line naming the file and what was measured):
real micrographs shipped with Debian's python3-skimage 0.19.3, written as
TIFF with tifffile: data.cell() (one round cell, too wide) and the
hematoxylin and DAB channels of data.immunohistochemistry()
(skimage.color.rgb2hed: many nuclei, many spots); two beads in one image.
data.human_mitosis() and data.cells3d() are not in Debian's package (they
are downloaded on first use, which needs pooch and a network), so they are
not used here.
"""
import os

import numpy as np
import skimage.color
import skimage.data
import tifffile

import pptest

tmp = pptest.tmpdir()
P = lambda *n: os.path.join(tmp, *n)
rng = np.random.default_rng(1414)


def kernel(spec, size=None):
    """pixpost's own kernel for spec, read back with tifffile."""
    out = P("k.tif")
    pptest.run(["psf", spec, "-o", out, "--quiet", "--overwrite"] + (["--size", str(size)] if size else []))
    return tifffile.imread(out).astype(np.float64)


def psf_file(name, image):
    path = P(name)
    tifffile.imwrite(path, np.asarray(image, np.float32))
    return pptest.run(["psf", "file:" + path, "-o", P("out_" + name), "--quiet", "--overwrite"],
                      check=False)


# ---- bead images that must pass ----------------------------------------------
specs = ["gaussian:sigma=0.5", "gaussian:sigma=1.2", "gaussian:sigma=3", "gaussian:sigma=15",
         "airy:na=1.4,wavelength=0.52,pixel=0.065", "airy:na=1.4,wavelength=0.52,pixel=0.03",
         "airy:na=0.5,wavelength=0.6,pixel=0.1"]
n_pass = 0
for i, spec in enumerate(specs):
    k = kernel(spec)
    k /= k.max()
    beads = {}
    for snr in (8, 20, 100):
        beads["snr%d" % snr] = 100 + snr * 5 * k + 5 * rng.standard_normal(k.shape)
    padded = np.pad(k, 30)
    beads["padded"] = 100 + 500 * padded + 5 * rng.standard_normal(padded.shape)
    off = np.zeros((k.shape[0] + 40, k.shape[1] + 40))
    off[5:5 + k.shape[0], 30:30 + k.shape[1]] = k  # off the middle
    beads["offcentre"] = 100 + 500 * off + 5 * rng.standard_normal(off.shape)
    for what, image in beads.items():
        p = psf_file("bead%d_%s.tif" % (i, what), image)
        pptest.check(p.returncode == 0, "%s as a %s bead image is accepted (%r)"
                     % (spec, what, p.stderr.strip()))
        n_pass += p.returncode == 0
print("%d bead images accepted" % n_pass)

# A noisy bead gives back the kernel it was made from. The background's
# noise must not survive as a skirt: clipping negatives alone kept the
# positive half of the noise, which on this 91 x 91 crop at peak / noise sd
# 100 held about 60 % of the kernel's sum (L1 distance 1.16 from the truth;
# 1.72 at 20). The bound 0.15 (0.30 at SNR 20) is about twice what the
# support cut of src/psf_bead.c gives (0.065 and 0.16): the noise left
# inside the support is of that size. The truth is pixpost's own kernel;
# the sums are numpy's.
truth = kernel("gaussian:sigma=2", size=91)
for snr, bound in ((20, 0.30), (100, 0.15), (1000, 0.03)):
    image = 100 + snr * 5 * truth / truth.max() + 5 * rng.standard_normal(truth.shape)
    p = psf_file("noisy%d.tif" % snr, image)
    got = tifffile.imread(P("out_noisy%d.tif" % snr)).astype(np.float64)
    l1 = np.abs(got - truth).sum() if got.shape == truth.shape else np.inf
    pptest.check(l1 <= bound, "bead at peak / noise %d: kernel within L1 %.2f of the truth "
                 "(got %.3f)" % (snr, bound, l1))
# an Airy bead at high SNR keeps its first bright ring (1.75 % of the peak,
# a textbook value) beyond the first dark ring: the support is cut after
# the last ring with light, not at the first dark one
airy = kernel("airy:na=1.4,wavelength=0.52,pixel=0.03", size=61)
image = 100 + 1e5 * airy / airy.max() + 5 * rng.standard_normal(airy.shape)
psf_file("airy_bead.tif", image)
got = tifffile.imread(P("out_airy_bead.tif")).astype(np.float64)
yy, xx = np.mgrid[0:61, 0:61] - 30
ring = (np.hypot(yy, xx) * 0.03 > 0.61 * 0.52 / 1.4) & (np.hypot(yy, xx) * 0.03 < 1.12 * 0.52 / 1.4)
pptest.check(abs(got[ring].sum() / airy[ring].sum() - 1) < 0.05,
             "Airy bead keeps its first bright ring (ring light %.4f vs %.4f)"
             % (got[ring].sum(), airy[ring].sum()))

# the kernel of an off-centre bead is re-centred on it
p = psf_file("off.tif", beads["offcentre"])
k = tifffile.imread(P("out_off.tif")).astype(np.float64)
r = k.shape[0] // 2
yy, xx = np.mgrid[0:k.shape[0], 0:k.shape[1]] - r
cy, cx = (k * yy).sum() / k.sum(), (k * xx).sum() / k.sum()
# noise sd 5 against a peak of 500: noise left inside the bead's support
# pulls the centroid by well under a pixel; 0.5 px is the centring's own
# resolution
pptest.check(abs(cy) <= 0.5 and abs(cx) <= 0.5, "off-centre bead's kernel centred on it "
             "(centroid %.2f, %.2f px)" % (cy, cx))


# ---- images that must fail ---------------------------------------------------
def expect_refused(name, image, words):
    p = psf_file(name, image)
    lines = p.stderr.splitlines()
    pptest.check(p.returncode == 1, "%s refused with exit 1 (got %d: %r)"
                 % (name, p.returncode, p.stderr))
    pptest.check(len(lines) == 1, "%s: one stderr line (%r)" % (name, p.stderr))
    for w in [name] + words:
        pptest.check(w in p.stderr, "%s: message has %r (%r)" % (name, w, p.stderr.strip()))


ihc_hed = skimage.color.rgb2hed(skimage.data.immunohistochemistry())
expect_refused("cell.tif", skimage.data.cell(), ["pixels across at half its peak",
                                                  "at most 47", "one bead"])
expect_refused("ihc_hematoxylin.tif", ihc_hed[..., 0], ["not one bead", "separate spots"])
expect_refused("ihc_dab.tif", ihc_hed[..., 2], ["not one bead", "separate spots"])
g = kernel("gaussian:sigma=1.5", size=41)
g /= g.max()
two = np.zeros((41, 81))
two[:, :41] += g
two[:, 40:] += 0.8 * g
expect_refused("two_beads.tif", 100 + 500 * two + 5 * rng.standard_normal(two.shape),
               ["not one bead", "2 separate spots", "brightest pixel"])

# the same refusal through sample: exit 1, nothing written
frame = P("frame.tif")
tifffile.imwrite(frame, (100 + 5 * rng.standard_normal((64, 64))).astype(np.float32))
p = pptest.run(["sample", frame, "-o", P("post"), "--psf", "file:" + P("two_beads.tif")],
               check=False)
pptest.check(p.returncode == 1 and "not one bead" in p.stderr and not os.path.exists(P("post")),
             "sample refuses the two-bead PSF with exit 1 and writes nothing (%r)" % p.stderr)

pptest.done()
