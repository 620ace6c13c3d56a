"""Reference checks of the PSF and forward model (src/psf.c, src/model.c)
against scipy / numpy / mpmath and textbook optics, through tests/probe_model.

(a) blur == scipy.signal.convolve2d(mode='same', boundary='wrap' / 'fill')
(b) pp_bessel_j1 == scipy.special.j1 and mpmath.besselj(1, x)
(c) Airy PSF: FWHM, first dark ring, Gaussian-fit sigma vs optics
(d) Gaussian PSF: numpy's sampled Gaussian and its second moment
(e) Poisson / camera noise: moments per photon level, Poisson pmf (scipy.stats)
"""
import numpy as np
import scipy.optimize
import scipy.signal
import scipy.special
import scipy.stats
import mpmath

import pptest


def floats(text):
    return np.array([float(t) for t in text.split()])


def blur(x, k, boundary):
    h, w = x.shape
    n = k.shape[0]
    data = "%d %d\n%s\n%d\n%s\n" % (h, w, " ".join(map(repr, x.ravel())), n,
                                   " ".join(map(repr, k.ravel())))
    return floats(pptest.probe("model", ["blur", boundary], stdin=data)).reshape(h, w)


def psf(spec, size=0):
    v = floats(pptest.probe("model", ["psf", spec, size]))
    n = int(v[0])
    return v[1:].reshape(n, n)


rng = np.random.default_rng(20240611)

# (a) Source: scipy.signal.convolve2d, mode='same' -- 'wrap' is circular
# convolution (our periodic), 'fill' with fillvalue 0 is linear convolution
# with the scene zero outside (our pad). Frames non-square, not powers of 2.
for (h, w, n) in [(45, 37, 9), (37, 45, 5), (10, 6, 9), (33, 50, 1)]:
    x = rng.random((h, w)) * 100
    k = rng.random((n, n))
    k /= k.sum()
    for ours, theirs in [("periodic", "wrap"), ("pad", "fill")]:
        if ours == "periodic" and (n > h or n > w):
            continue  # periodic refuses a PSF larger than the frame (unit-tested)
        ref = scipy.signal.convolve2d(x, k, mode="same", boundary=theirs)
        got = blur(x, k, ours)
        err = np.abs(got - ref).max() / np.abs(ref).max()
        # float32 precision would be ~6e-8; the FFT in double gives ~1e-15.
        pptest.check(err < 1e-12, "blur %s %dx%d psf %d == scipy convolve2d boundary=%s "
                     "(rel err %.1e)" % (ours, h, w, n, theirs, err))

# (b) Sources: scipy.special.j1 (which wraps the same Cephes routine, so this
# checks that our copy of the coefficients is exact) and mpmath.besselj at 30 digits (independent).
xs = np.linspace(0, 50, 2001)
j = floats(pptest.probe("model", ["j1"] + [repr(v) for v in xs]))
err = np.abs(j - scipy.special.j1(xs)).max()
pptest.check(err < 1e-12, "J1 == scipy.special.j1 on 0..50 (max abs err %.1e)" % err)
mpmath.mp.dps = 30
xm = xs[::10]
ref = np.array([float(mpmath.besselj(1, mpmath.mpf(repr(v)))) for v in xm])
err = np.abs(j[::10] - ref).max()
pptest.check(err < 1e-12, "J1 == mpmath.besselj(1, x) on 0..50 (max abs err %.1e)" % err)

# (c) Airy at a fine pixel (na 1.4, 520 nm, 10 nm pixels: ~23 px to the first
# ring). Textbook values (Born & Wolf, Principles of Optics; quoted from
# memory): FWHM ~ 0.51 lambda/NA, first dark ring 0.61 lambda/NA. Gaussian
# approximation sigma ~ 0.21 lambda/NA (Zhang, Zerubia & Olivo-Marin, Appl.
# Opt. 46, 2007), checked within 10 %.
na, lam, pix = 1.4, 0.52, 0.01
unit = lam / na
k = psf("airy:na=%g,wavelength=%g,pixel=%g" % (na, lam, pix))
c = k.shape[0] // 2
prof = k[c, c:] / k[c, c]
i = np.argmax(prof < 0.5)  # first sample below half max; interpolate linearly
r_half = (i - 1) + (prof[i - 1] - 0.5) / (prof[i - 1] - prof[i])
fwhm = 2 * r_half * pix / unit
pptest.check(abs(fwhm / 0.51 - 1) < 0.03, "Airy FWHM %.4f lambda/NA ~ 0.51 (Born & Wolf, "
             "textbook value from memory) within 3 %%" % fwhm)
m = np.argmin(prof[: int(0.8 * unit / pix)])  # first minimum, parabola through 3 samples
a, b, cc = prof[m - 1], prof[m], prof[m + 1]
r0 = m + 0.5 * (a - cc) / (a - 2 * b + cc)
ring = r0 * pix / unit
pptest.check(abs(ring / 0.61 - 1) < 0.02, "Airy first dark ring %.4f lambda/NA ~ 0.61 "
             "(Born & Wolf, textbook value from memory) within 2 %%" % ring)
pptest.check(prof[m] < 1e-3, "the ring is dark (%.1e of the peak)" % prof[m])
yy, xx = np.mgrid[-c:c + 1, -c:c + 1] * pix
# Encircled energy inside the n-th dark ring is 1 - J0(z_n)^2 (Rayleigh's
# formula; textbook, from memory), z_n the zeros of J1 (scipy.special.jn_zeros).
# The kernel is renormalised over its square, so compare the ratio of the
# energy inside ring 1 to that inside ring 3; the rings are dark, so the
# pixelised circle boundary costs almost nothing.
z = scipy.special.jn_zeros(1, 3)
rr = np.hypot(xx, yy) * 2 * np.pi * na / lam
ratio = k[rr <= z[0]].sum() / k[rr <= z[2]].sum()
want = (1 - scipy.special.j0(z[0]) ** 2) / (1 - scipy.special.j0(z[2]) ** 2)
pptest.check(abs(ratio / want - 1) < 0.005, "Airy encircled energy ring1/ring3 %.5f vs "
             "Rayleigh's 1 - J0^2 ratio %.5f within 0.5 %%" % (ratio, want))


def gauss(xy, amp, s):
    return amp * np.exp(-(xy[0] ** 2 + xy[1] ** 2) / (2 * s * s))


(amp, sfit), _ = scipy.optimize.curve_fit(gauss, (xx.ravel(), yy.ravel()), k.ravel(),
                                          p0=(k.max(), 0.2 * unit))
sig = abs(sfit) / unit
pptest.check(abs(sig / 0.21 - 1) < 0.10, "Airy least-squares Gaussian sigma %.4f lambda/NA ~ "
             "0.21 (Zhang, Zerubia & Olivo-Marin 2007) within 10 %%" % sig)
print("airy: fwhm %.4f, ring %.4f, gaussian sigma %.4f (units lambda/NA), side %d"
      % (fwhm, ring, sig, k.shape[0]))

# (d) Gaussian PSF sampled at pixel centres: numpy's evaluation of the same
# formula, and the second moment = sigma^2 (0.5 %: truncation at 4 sigma).
for s in (1.0, 1.6, 3.2):
    k = psf("gaussian:sigma=%g" % s)
    r = k.shape[0] // 2
    y, x = np.mgrid[-r:r + 1, -r:r + 1]
    ref = np.exp(-(x * x + y * y) / (2 * s * s))
    ref /= ref.sum()
    pptest.check(r == int(np.ceil(4 * s)) and np.abs(k - ref).max() < 1e-15,
                 "gaussian sigma=%g: radius ceil(4 sigma) and values == numpy" % s)
    m2x, m2y = (k * x * x).sum(), (k * y * y).sum()
    pptest.check(abs(m2x / s ** 2 - 1) < 0.005 and abs(m2y / s ** 2 - 1) < 0.005,
                 "gaussian sigma=%g: second moments %.5f, %.5f = sigma^2 %.5f within 0.5 %%"
                 % (s, m2x, m2y, s * s))

# (e) Noise per photon level. Theory (the model in include/pixpost/noise.h):
# mean = offset + gain*mu, var = gain^2 (mu + read^2). Tolerance 5 standard
# errors: SE(mean) = sd/sqrt(n), SE(var) = var*sqrt((2 + excess kurtosis)/n),
# excess kurtosis of Poisson + normal read noise = mu/(mu + read^2)^2.
N = 100000
cases = [("poisson:gain=2,offset=100", 2, 100, 0.0, [0.5, 5, 50]),
         ("camera:gain=0.5,offset=10,read=1.6", 0.5, 10, 1.6, [0.0, 2, 30])]
for spec, g, o, rd, levels in cases:
    for seed, mu in enumerate(levels):
        y = floats(pptest.probe("model", ["noise", spec, mu, N, 100 + seed]))
        var = g * g * (mu + rd * rd)
        kurt = mu / (mu + rd * rd) ** 2 if mu + rd * rd > 0 else 0
        if var == 0:
            pptest.check(np.all(y == o), "%s at mu=0: every pixel is the offset" % spec)
            continue
        se_m, se_v = np.sqrt(var / N), var * np.sqrt((2 + kurt) / N)
        pptest.check(abs(y.mean() - (o + g * mu)) < 5 * se_m,
                     "%s mu=%g: mean %.4f vs %.4f (5 SE %.3f)" % (spec, mu, y.mean(),
                                                                  o + g * mu, 5 * se_m))
        pptest.check(abs(y.var(ddof=1) - var) < 5 * se_v,
                     "%s mu=%g: var %.4f vs %.4f (5 SE %.3f)" % (spec, mu, y.var(ddof=1), var,
                                                                 5 * se_v))

# Poisson counts against scipy.stats.poisson's pmf: chi-square over the
# bins 0..10 plus a tail bin (expected counts >= 200), with a fixed seed;
# fail only below p = 1e-3.
mu = 3.7
y = floats(pptest.probe("model", ["noise", "poisson:gain=2,offset=100", mu, N, 7]))
counts = (y - 100) / 2
pptest.check(np.all(counts == np.round(counts)) and counts.min() >= 0,
             "poisson: (y - offset)/gain are non-negative integers")
obs = np.array([(counts == c).sum() for c in range(11)] + [(counts >= 11).sum()])
p = scipy.stats.poisson.pmf(np.arange(11), mu)
exp_ = N * np.append(p, 1 - p.sum())
chi2 = ((obs - exp_) ** 2 / exp_).sum()
pval = scipy.stats.chi2.sf(chi2, len(obs) - 1)
pptest.check(pval > 1e-3, "poisson mu=3.7 counts follow scipy.stats.poisson (chi2 %.1f, "
             "p = %.3f)" % (chi2, pval))

pptest.done()
