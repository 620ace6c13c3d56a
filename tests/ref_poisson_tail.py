"""Reference checks of src/poisson_tail.c (the censored likelihood of a
saturated pixel under the photon models) against scipy (Debian
python3-scipy), through tests/probe_poisson_tail.

1. log P(Y >= a | mu) and its slope d/dmu log P = gamma pdf / P over a
   from 0.3 to 1e5 (whole and not) and mu from 1e-3 a to 10 a (tails down
   to log P ~ -6e4): against mpmath (Debian python3-mpmath, 50 digits:
   the series and the upper gammainc, the density from mpmath.loggamma) to
   1e-12 relative; against scipy (scipy.special.gammainc, log1p of
   gammaincc where P is near 1, scipy.stats.gamma.logpdf, and for whole a
   scipy.stats.poisson.logsf(a - 1, mu)) to 1e-10 relative for a <= 4095
   (beyond, scipy's logpdf is itself ~1e-10 off: its a log x - x - lgamma a
   cancels terms of 1e5-1e6; measured against mpmath).
2. The slope against a central finite difference of the probe's own log P
   (step 1e-5 mu: truncation ~1e-10, rounding ~1e-11 of the slope;
   tolerance 1e-6 relative, common practice for a difference check).
3. a <= 0: log P = 0 and slope 0 (no information).
"""
import mpmath
import numpy as np
import scipy.special as sp
import scipy.stats as st

import pptest

pairs = []
for a in [1.0, 2.0, 7.0, 7.5, 30.0, 255.0, 1000.0, 4095.0, 65535.0, 1e5, 0.3, 12.25]:
    for f in [1e-3, 0.05, 0.3, 0.8, 0.97, 1.0, 1.03, 1.2, 2.0, 10.0]:
        mu = a * f
        if mu > 0:
            pairs.append((a, mu))


def probe(pp):
    args = []
    for a, mu in pp:
        args += [repr(a), repr(mu)]
    out = pptest.probe("poisson_tail", args).split()
    return np.array(out, dtype=float).reshape(-1, 2)


got = probe(pairs)
mpmath.mp.dps = 50
bad, worst, worst_d, worst_s, worst_sd = [], 0.0, 0.0, 0.0, 0.0
for (a, mu), (lp, dl) in zip(pairs, got):
    am, xm = mpmath.mpf(a), mpmath.mpf(mu)
    # P by the confluent hypergeometric series (A & S 6.5.12; mpmath's
    # gammainc gives up on it at a = 1e5) below the mode, 1 - Q above
    # (mpmath's upper gammainc, log1p keeping Q's digits)
    if xm <= am:
        Pm = xm ** am * mpmath.exp(-xm) / mpmath.gamma(am + 1) * mpmath.hyp1f1(1, am + 1, xm, maxterms=10**7)
        lPm = mpmath.log(Pm)
    else:
        lPm = mpmath.log1p(-mpmath.gammainc(am, xm, mpmath.inf, regularized=True))
    want = float(lPm)
    dwant = float(mpmath.exp((am - 1) * mpmath.log(xm) - xm - mpmath.loggamma(am) - lPm))
    e = abs(lp - want) / max(abs(want), 1e-300)
    ed = abs(dl - dwant) / max(abs(dwant), 1e-300)
    worst, worst_d = max(worst, e), max(worst_d, ed)
    if e > 1e-12 or ed > 1e-12:
        bad.append("a=%g mu=%g: log P %.17g vs mpmath %.17g (%.2g), slope %.17g vs %.17g (%.2g)"
                   % (a, mu, lp, want, e, dl, dwant, ed))
    # scipy: gammainc / gammaincc (log1p where P is near 1), gamma.logpdf;
    # whole a also poisson.logsf. Up to a = 4095: beyond, scipy's logpdf
    # (a log x - x - lgamma a, terms ~1e5) is itself off by ~1e-10.
    if a <= 4095:
        P = sp.gammainc(a, mu)
        ws = np.log(P) if P < 0.5 else np.log1p(-sp.gammaincc(a, mu))
        dws = np.exp(st.gamma(a).logpdf(mu) - ws)
        es, eds = abs(lp - ws) / max(abs(ws), 1e-300), abs(dl - dws) / max(abs(dws), 1e-300)
        if a == int(a) and P < 0.5:  # (logsf of an sf near 1 loses the digits)
            es = max(es, abs(lp - st.poisson.logsf(a - 1, mu)) / abs(ws))
        worst_s, worst_sd = max(worst_s, es), max(worst_sd, eds)
        if es > 1e-10 or eds > 1e-10:
            bad.append("a=%g mu=%g: log P %.17g vs scipy %.17g (%.2g), slope %.2g off"
                       % (a, mu, lp, ws, es, eds))
pptest.check(not bad, "log P(a, mu) and its slope over %d pairs: vs mpmath (50 digits) worst relative error "
             "%.2g, %.2g (tolerance 1e-12); vs scipy (a <= 4095) %.2g, %.2g (tolerance 1e-10)%s"
             % (len(pairs), worst, worst_d, worst_s, worst_sd, ("; " + "; ".join(bad[:4])) if bad else ""))

# finite differences of the probe's own log P
fd_bad, fd_worst = [], 0.0
for a, mu in pairs:
    h = 1e-5 * mu
    (l1, _), (l2, _), (_, d0) = probe([(a, mu + h), (a, mu - h), (a, mu)])
    fd = (l1 - l2) / (2 * h)
    e = abs(fd - d0) / max(abs(d0), 1e-300)
    if abs(d0) > 1e-250 and abs(l1) > 1e-12:  # a slope not lost in the log's rounding
        fd_worst = max(fd_worst, e)
        if e > 1e-6:
            fd_bad.append("a=%g mu=%g: %.10g vs %.10g" % (a, mu, fd, d0))
pptest.check(not fd_bad, "slope vs central differences: worst relative error %.2g%s"
             % (fd_worst, ("; " + "; ".join(fd_bad[:4])) if fd_bad else ""))

z = probe([(0.0, 5.0), (-3.0, 5.0)])
pptest.check(np.all(z == 0), "a <= 0: log P = 0, slope 0 (%s)" % z.tolist())
pptest.done()
