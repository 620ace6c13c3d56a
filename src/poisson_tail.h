/* pixpost — the upper tail of the photon-count likelihood (internal): a
 * censored (saturated) pixel of the poisson and camera models contributes
 * log P(Y >= a | mu) instead of the log pmf of a value.
 *
 * For Y ~ Poisson(mu) and a whole a >= 1, P(Y >= a) = P(a, mu), the
 * regularised lower incomplete gamma function (Abramowitz & Stegun 6.5.13
 * with 26.4.21; from memory, checked against scipy.special.gammainc in
 * tests/ref_poisson_tail.py); for the camera model's shifted counts, whose
 * likelihood src/sampler_pcn.c extends to non-whole values through
 * lgamma, the same P(a, mu) at the non-whole a is the matching smooth tail.
 * a <= 0: the tail is 1 (log 0, no information).
 *   log P(a, x): the series x^a e^-x / Gamma(a + 1) sum_n x^n / ((a+1)..(a+n))
 *   for x < a + 1 (A & S 6.5.29), else log1p(-Q) with Q(a, x) from its
 *   continued fraction (A & S 6.5.31) by the modified Lentz method (the
 *   usual pair, as in Press et al., Numerical Recipes, 3rd ed., 6.2), all in
 *   log space, so P is accurate when it is as small as 1e-300 and below.
 *   d/dmu log P(a, mu) = mu^(a-1) e^-mu / Gamma(a) / P(a, mu) (the gamma
 *   density over P; for whole a the Poisson pmf at a - 1 over the tail),
 *   formed from logs too.
 * Cost: O(sqrt(a)) terms at x near a (up to ~1e3 at a = 1e5), fewer away. */
#ifndef PIXPOST_POISSON_TAIL_H
#define PIXPOST_POISSON_TAIL_H

/* log P(a, x) for x > 0 (0 when a <= 0); *dlog (if not NULL) receives
 * d/dx log P(a, x) (0 when a <= 0). */
double pp_poisson_logtail(double a, double x, double *dlog);

#endif
