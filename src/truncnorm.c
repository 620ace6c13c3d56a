/* pixpost — the truncated standard normal (see truncnorm.h). */
#include "truncnorm.h"

#include <math.h>

double pp_truncnorm_tail(pp_rng *r, double a)
{
    if (a < 0.0) {
        for (;;) {
            double z = pp_rng_normal(r);
            if (z >= a)
                return z;
        }
    }
    const double alpha = 0.5 * (a + sqrt(a * a + 4.0));
    for (;;) {
        double z = a - log(pp_rng_uniform(r)) / alpha; /* uniform in (0, 1): finite */
        double d = z - alpha;
        if (log(pp_rng_uniform(r)) <= -0.5 * d * d)
            return z;
    }
}

double pp_truncnorm_above(pp_rng *r, double m, double sd, double lo)
{
    double x = m + sd * pp_truncnorm_tail(r, (lo - m) / sd);
    return x < lo ? lo : x;
}

/* Q(a) phi(a)^-1 a = 1 - 1/a^2 + 3/a^4 - 15/a^6 + 105/a^8 ... (A & S
 * 26.2.12): at a >= 30 the terms after the fifth are below 1e-14 of it. */
static double mills_series(double a)
{
    double t = 1.0 / (a * a);
    return 1.0 + t * (-1.0 + t * (3.0 + t * (-15.0 + t * (105.0 - 945.0 * t))));
}

#define LOG_SQRT_2PI 0.91893853320467274178

double pp_normal_logsf(double a)
{
    if (a < 0.0) /* Q near 1: log1p of minus the lower tail Phi(a) */
        return log1p(-0.5 * erfc(-a / sqrt(2.0)));
    if (a < 30.0)
        return log(0.5 * erfc(a / sqrt(2.0)));
    return -0.5 * a * a - log(a) - LOG_SQRT_2PI + log(mills_series(a));
}

double pp_normal_hazard(double a)
{
    if (a >= 30.0) /* phi / Q = a / series: no cancellation of a^2 / 2 terms */
        return a / mills_series(a);
    return exp(-0.5 * a * a - LOG_SQRT_2PI - pp_normal_logsf(a));
}
