"""The forward model on volumes (src/model.c pp_model_blur with x->depth > 1)
against scipy, through tests/probe_model blur3.

Sources: scipy.ndimage.convolve (mode='wrap' is circular convolution on every
axis, our periodic; mode='constant', cval=0 takes the volume as zero outside,
our pad) and scipy.signal.fftconvolve(mode='same') (linear convolution
cropped to the volume, centred for odd kernels: our pad again, by a
different algorithm).

Kernels are asymmetric on all three axes (distinct random values, sides
3 x 5 x 7 and their permutations, most of the mass moved off the centre
voxel), so an axis flip, a swapped axis or a centre off by one voxel
changes the answer; the check shows that it does (the flipped and shifted
kernels must miss by far more than the tolerance). Volumes have odd and
even sides on every axis, a kernel deeper than the volume (pad only;
periodic refuses it), a one-slice kernel on a volume (each slice blurred
on its own: scipy with a 1 x h x w kernel and scipy.signal.convolve2d per
slice) and a frame (depth 1) that must keep the 2-D path.

Tolerance: 1e-12 of the largest |value| (the FFT in double precision;
float32 would give ~6e-8), as tests/ref_model.py uses for frames.
"""
import numpy as np
import scipy.ndimage
import scipy.signal

import pptest

rng = np.random.default_rng(20261204)
TOL = 1e-12


def floats(text):
    return np.array([float(t) for t in text.split()])


def blur3(x, k, boundary, check=True):
    data = "%d %d %d\n%s\n%d %d %d\n%s\n" % (x.shape + (" ".join(map(repr, x.ravel())),)
                                             + k.shape + (" ".join(map(repr, k.ravel())),))
    return floats(pptest.probe("model", ["blur3", boundary], stdin=data)).reshape(x.shape)


def asym_kernel(shape):
    """Distinct positive values, normalised, with extra mass at a voxel
    off the centre on every axis (and not mirrored)."""
    k = rng.random(shape) + 0.1
    off = tuple(min(n - 1, n // 2 + 1) for n in shape)
    k[off] += 3.0
    k[tuple(0 for _ in shape)] += 1.5
    return k / k.sum()


def rel(a, b):
    return np.abs(a - b).max() / np.abs(b).max()


worst = {"periodic": 0.0, "pad": 0.0}
cases = [
    ((9, 12, 15), (3, 5, 7)),
    ((8, 10, 6), (7, 3, 5)),
    ((16, 9, 11), (5, 7, 3)),
    ((6, 7, 8), (3, 5, 7)),
    ((5, 14, 13), (7, 5, 3)),   # kernel deeper than the volume: pad only
    ((12, 11, 10), (1, 5, 7)),  # one-slice kernel on a volume
]
for shape, ks in cases:
    x = rng.random(shape) * 100
    k = asym_kernel(ks)
    fits = all(a <= b for a, b in zip(ks, shape))
    # the two scipy references agree with each other (pad)
    ref_pad = scipy.ndimage.convolve(x, k, mode="constant", cval=0.0)
    ref_fft = scipy.signal.fftconvolve(x, k, mode="same")
    pptest.check(rel(ref_fft, ref_pad) < 1e-12, "scipy fftconvolve same == ndimage.convolve "
                 "constant for %s * %s (%.1e)" % (shape, ks, rel(ref_fft, ref_pad)))
    got = blur3(x, k, "pad")
    for name, ref in (("ndimage.convolve constant cval=0", ref_pad),
                      ("signal.fftconvolve same", ref_fft)):
        e = rel(got, ref)
        worst["pad"] = max(worst["pad"], np.abs(got - ref).max())
        pptest.check(e < TOL, "pad %s psf %s == scipy %s (rel err %.1e, max abs %.1e)"
                     % (shape, ks, name, e, np.abs(got - ref).max()))
    if fits:
        ref = scipy.ndimage.convolve(x, k, mode="wrap")
        got = blur3(x, k, "periodic")
        e = rel(got, ref)
        worst["periodic"] = max(worst["periodic"], np.abs(got - ref).max())
        pptest.check(e < TOL, "periodic %s psf %s == scipy ndimage.convolve wrap "
                     "(rel err %.1e, max abs %.1e)" % (shape, ks, e, np.abs(got - ref).max()))
        # the check can fail: a flipped axis or a one-voxel shift misses by far
        for ax in range(3):
            if ks[ax] == 1:
                continue
            flipped = scipy.ndimage.convolve(x, np.flip(k, ax), mode="wrap")
            shifted = scipy.ndimage.convolve(x, np.roll(k, 1, ax), mode="wrap")
            pptest.check(min(rel(flipped, ref), rel(shifted, ref)) > 1e3 * TOL,
                         "axis %d of psf %s: a flipped (%.1e) or shifted (%.1e) kernel "
                         "would be caught" % (ax, ks, rel(flipped, ref), rel(shifted, ref)))
    else:
        p = None
        try:
            blur3(x, k, "periodic")
        except AssertionError as err:
            p = str(err)
        pptest.check(p is not None and "larger than" in p and "volume" in p,
                     "periodic refuses psf %s on %s: %s" % (ks, shape, (p or "").strip()))
    if ks[0] == 1:
        # a one-slice kernel blurs each slice alone: scipy convolve2d per slice
        per = np.stack([scipy.signal.convolve2d(s, k[0], mode="same", boundary="fill")
                        for s in x])
        e = rel(blur3(x, k, "pad"), per)
        pptest.check(e < TOL, "one-slice psf on %s == convolve2d per slice (rel err %.1e)"
                     % (shape, e))

# a frame (depth 1) keeps the frame path: equals convolve2d
x = rng.random((1, 13, 10)) * 100
k = asym_kernel((1, 5, 3))
for ours, theirs in (("pad", "fill"), ("periodic", "wrap")):
    ref = scipy.signal.convolve2d(x[0], k[0], mode="same", boundary=theirs)
    e = rel(blur3(x, k, ours)[0], ref)
    pptest.check(e < TOL, "frame with a non-square psf, %s == convolve2d boundary=%s (%.1e)"
                 % (ours, theirs, e))
# a 3-D kernel on a frame is refused
try:
    blur3(x, asym_kernel((3, 3, 3)), "pad")
    msg = None
except AssertionError as err:
    msg = str(err)
pptest.check(msg is not None and "3-D" in msg, "a 3-D psf on one frame is refused: %s"
             % (msg or "").strip())

print("max abs error vs scipy (values 0..100): periodic %.2e, pad %.2e"
      % (worst["periodic"], worst["pad"]))
pptest.done()
