"""Reference checks of src/truncnorm.c (the truncated normal of censored
pixels) against scipy (Debian python3-scipy), through tests/probe_truncnorm.

1. Draws of N(0, 1) given Z >= a: Kolmogorov-Smirnov test
   (scipy.stats.kstest) of 20000 draws against scipy.stats.truncnorm(a, inf)
   for a = -3, -0.5, 0 (the switch to Robert's exponential rejection), 0.3,
   1.5, 4, 8 (8 sd into the tail) and 40 (far beyond where naive rejection
   could ever accept), each at significance level 1e-3 with fixed seeds (8
   tests: a correct sampler fails one with probability ~0.8 % for a random
   seed; the seeds are fixed, so the outcome is deterministic). Every draw
   must be >= a. The sample mean must also match scipy's truncnorm mean
   within 5 standard errors (catches a shift that KS at the tail's tiny
   scale would weigh the same way; 5 sd: a false alarm ~6e-7).
2. log(1 - Phi(a)) (pp_normal_logsf) against scipy.stats.norm.logsf to
   1e-12 relative from a = -8 to 1e4 (erfc below 30, the asymptotic series
   of Abramowitz & Stegun 26.2.12 beyond; scipy's own logsf uses a
   log-space method, so the two are independent computations).
3. The hazard phi(a) / (1 - Phi(a)) (pp_normal_hazard, the slope of a
   censored pixel's log-likelihood under gaussian noise in pcn, gpcn and
   hmc) against sqrt(2 / pi) / scipy.special.erfcx(a / sqrt(2)) (1 - Phi(a)
   = erfcx(a / sqrt 2) exp(-a^2 / 2) / 2: no cancellation at any a) to
   1e-11 relative from a = -8 to 1e4 (the a^2 / 2 terms that cancel in
   pixpost's form below 30 cost up to ~450 ulp of it there).
"""
import numpy as np
import scipy.special as sp
import scipy.stats as st

import pptest

for k, a in enumerate([-3.0, -0.5, 0.0, 0.3, 1.5, 4.0, 8.0, 40.0]):
    z = np.array([float(v) for v in pptest.probe("truncnorm", ["draw", 1000 + k, 20000, repr(a)]).split()])
    ref = st.truncnorm(a, np.inf)
    p = st.kstest(z, ref.cdf).pvalue
    se = ref.std() / np.sqrt(z.size)
    pptest.check(z.size == 20000 and z.min() >= a and p > 1e-3 and abs(z.mean() - ref.mean()) < 5 * se,
                 "truncnorm a=%g: min %.6g, KS p=%.3g, mean %.8g vs scipy %.8g (%.1f se)"
                 % (a, z.min(), p, z.mean(), ref.mean(), (z.mean() - ref.mean()) / se))

a = np.concatenate([np.linspace(-8, 40, 97), [29.999, 30.0, 30.001, 55.5, 100.0, 1e3, 1e4]])
got = np.array([float(v) for v in pptest.probe("truncnorm", ["logsf"] + [repr(float(v)) for v in a]).split()])
want = st.norm.logsf(a)
rel = np.abs(got - want) / np.maximum(np.abs(want), 1e-300)
pptest.check(np.all(rel < 1e-12), "logsf vs scipy.stats.norm.logsf: worst relative error %.3g at a=%g"
             % (rel.max(), a[np.argmax(rel)]))
got = np.array([float(v) for v in pptest.probe("truncnorm", ["hazard"] + [repr(float(v)) for v in a]).split()])
want = np.sqrt(2 / np.pi) / sp.erfcx(a / np.sqrt(2))
rel = np.abs(got - want) / want
pptest.check(np.all(rel < 1e-11), "hazard vs sqrt(2/pi) / scipy.special.erfcx(a/sqrt 2): worst relative error %.3g at a=%g"
             % (rel.max(), a[np.argmax(rel)]))
pptest.done()
