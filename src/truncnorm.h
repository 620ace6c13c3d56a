/* pixpost — the standard normal truncated to [a, inf) (internal).
 *
 * Draws (pp_truncnorm_tail) are exact at any a, however far in the tail:
 *   a < 0: draw N(0, 1) until z >= a (acceptance 1 - Phi(a) > 0.5);
 *   a >= 0: the exponential rejection sampler of C. P. Robert, "Simulation
 *       of truncated normal variables", Statistics and Computing 5:121-125
 *       (1995), section 2: z = a + E / alpha, E ~ Exp(1), with his optimal
 *       rate alpha = (a + sqrt(a^2 + 4)) / 2, accepted with probability
 *       exp(-(z - alpha)^2 / 2). Its acceptance rate is
 *       alpha sqrt(2 pi) Q(a) exp(alpha a - alpha^2 / 2) (Q = 1 - Phi):
 *       0.76 at a = 0, rising towards 1 as a grows (computed from the
 *       formula; naive rejection there would accept 1 - Phi(a) <= 0.5).
 *       So the tail costs about two uniforms and a log per draw.
 * The log of the upper tail probability, log Q(a) = log(1 - Phi(a)), is
 * computed from erfc for a < 30 (as log1p(-Phi(a)) for a < 0) and from the asymptotic (Mills ratio)
 * series beyond (Abramowitz & Stegun 26.2.12), so it stays finite and
 * accurate to a few ulp far into the tail; its slope gives the hazard
 * phi(a)/Q(a) (pp_normal_hazard), used by the censored pixels of pcn, gpcn
 * and hmc under gaussian noise. Cost: O(1) per call. */
#ifndef PIXPOST_TRUNCNORM_H
#define PIXPOST_TRUNCNORM_H

#include "pixpost/rng.h"

/* One draw of Z ~ N(0, 1) conditioned on Z >= a (a finite). */
double pp_truncnorm_tail(pp_rng *r, double a);

/* One draw of N(m, sd^2) conditioned on >= lo (sd > 0, all finite); never
 * below lo (rounding of m + sd z is clamped). */
double pp_truncnorm_above(pp_rng *r, double m, double sd, double lo);

/* log(1 - Phi(a)) for finite a (the log survival function of N(0, 1)). */
double pp_normal_logsf(double a);

/* The hazard phi(a) / (1 - Phi(a)) for finite a (the inverse Mills ratio),
 * minus the slope d/da of pp_normal_logsf: from the log tail for a < 30
 * (relative error ~1e-13 there), a over the Mills series beyond. */
double pp_normal_hazard(double a);

#endif
