"""Simulated camera frames for the calibration checks (tests/ref_calibrate_frame.py,
tests/ref_noise_auto.py, bench/calib_frame.py).

camera(): EMVA 1288's linear camera model (release 3.1): Poisson photo-
electrons plus Gaussian read noise (electrons), times the gain K (ADU per
electron), plus the offset, rounded to integers and clipped to 16 bits.
scene(): intensities in photons per pixel, from smooth gradients, Gaussian
blobs, or real photographs and micrographs that scikit-image ships (Debian
python3-skimage, skimage.data), each blurred by a Gaussian PSF (scipy.ndimage)
as a microscope frame is, and stretched between lo and hi photons (1st and
99th percentiles).
"""
import numpy as np

IMAGES = ["camera", "moon", "coins", "cell", "astronaut", "brick"]
KINDS = ["gradient", "blobs"] + IMAGES
# Unblurred (sharp) scenes: more of skimage.data's photographs and textures.
# SHARP_DEV: the kinds the single-frame fit was developed on
# (bench/calib_frame.py); SHARP_HELD: kinds kept back, looked at only once the
# method was fixed (the README's held-back row).
SHARP_DEV = KINDS + ["text", "grass", "gravel", "hubble_deep_field", "chelsea", "coffee"]
SHARP_HELD = ["rocket", "clock", "page", "immunohistochemistry", "retina", "face"]


def camera(x, K, O, R, rng):
    e = rng.poisson(x) + rng.normal(0, R, x.shape)
    return np.clip(np.round(O + K * e), 0, 65535).astype(np.uint16)


def scene(kind, n, rng, lo, hi, blur=1.5):
    from scipy import ndimage
    yy, xx = np.mgrid[0:n, 0:n] / n
    if kind == "gradient":
        t = 0.6 * xx + 0.4 * yy + 0.3 * (xx - 0.5) ** 2
    elif kind == "blobs":
        t = np.zeros((n, n))
        for _ in range(12):
            cx, cy = rng.uniform(0, 1, 2)
            s = rng.uniform(0.03, 0.12)
            t += rng.uniform(0.2, 1) * np.exp(-((xx - cx) ** 2 + (yy - cy) ** 2) / (2 * s * s))
    else:
        img = photograph(kind)
        r0 = rng.integers(0, img.shape[0] - n + 1)
        c0 = rng.integers(0, img.shape[1] - n + 1)
        t = img[r0:r0 + n, c0:c0 + n]
    if blur:
        t = ndimage.gaussian_filter(t, blur, mode="nearest")
    p1, p99 = np.percentile(t, [1, 99])
    t = np.clip((t - p1) / max(p99 - p1, 1e-12), 0, 1)
    return lo + (hi - lo) * t


def photograph(kind):
    """skimage.data's image of that name (scipy.misc's for "face"), grey,
    as float; images smaller than 256 on a side mirrored out to 256."""
    if kind == "face":
        import warnings
        import scipy.misc
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            img = scipy.misc.face()
    else:
        import skimage.data
        img = getattr(skimage.data, kind)()
    img = img.astype(float)
    if img.ndim == 3:
        img = img[..., :3].mean(axis=2)
    short = [max(0, 256 - s) for s in img.shape]
    if any(short):
        img = np.pad(img, [(0, short[0]), (0, short[1])], mode="symmetric")
    return img


def draw_camera(rng):
    """A camera and a light range: gain K U(0.5, 4) ADU/e-, offset U(100, 500)
    ADU, read noise U(1, 3) e-, darkest U(2, 20) and brightest U(300, 3000)
    photons per pixel."""
    return (rng.uniform(0.5, 4), rng.uniform(100, 500), rng.uniform(1, 3),
            rng.uniform(2, 20), rng.uniform(300, 3000))
