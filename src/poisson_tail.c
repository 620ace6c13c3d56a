/* pixpost — log P(Y >= a | mu) of a Poisson count (see poisson_tail.h). */
#include "poisson_tail.h"

#include <float.h>
#include <math.h>

#define TAIL_EPS 1e-16
#define TAIL_MAX 100000

/* log of the series part: log sum_n x^n / ((a+1)..(a+n)) (terms positive) */
static double log_series(double a, double x)
{
    double term = 1.0, sum = 1.0;
    for (int n = 1; n < TAIL_MAX; n++) {
        term *= x / (a + n);
        sum += term;
        if (term < sum * TAIL_EPS)
            break;
    }
    return log(sum);
}

/* log of the continued fraction part of Q(a, x) = e^-x x^a / Gamma(a) * cf */
static double log_cf(double a, double x)
{
    const double tiny = DBL_MIN / DBL_EPSILON;
    double b = x + 1.0 - a, c = 1.0 / tiny, d = 1.0 / b, h = d;
    for (int i = 1; i < TAIL_MAX; i++) {
        double an = -i * (i - a);
        b += 2.0;
        d = an * d + b;
        if (fabs(d) < tiny)
            d = tiny;
        c = b + an / c;
        if (fabs(c) < tiny)
            c = tiny;
        d = 1.0 / d;
        double del = d * c;
        h *= del;
        if (fabs(del - 1.0) < TAIL_EPS)
            break;
    }
    return log(h);
}

/* log(x^a e^-x / Gamma(a + 1)). For a >= 10 as a (log1p(t) - t)
 * - log sqrt(2 pi a) - S(a), t = x / a - 1, S the Stirling series of
 * lgamma(a + 1) (A & S 6.1.41): the direct a log x - x - lgamma(a + 1)
 * cancels terms of size a log a and would lose ~1e-10 at a = 1e5. */
static double log_prefactor(double a, double x)
{
    if (a < 10.0)
        return a * log(x) - x - lgamma(a + 1.0);
    double t = (x - a) / a, r = 1.0 / a, r2 = r * r;
    double st = r * (1.0 / 12 - r2 * (1.0 / 360 - r2 * (1.0 / 1260 - r2 / 1680)));
    return a * (log1p(t) - t) - 0.5 * log(2.0 * 3.14159265358979323846 * a) - st;
}

double pp_poisson_logtail(double a, double x, double *dlog)
{
    if (!(a > 0)) {
        if (dlog)
            *dlog = 0.0;
        return 0.0;
    }
    double pre = log_prefactor(a, x); /* x^a e^-x / Gamma(a + 1) */
    if (x < a + 1.0) { /* P = pre S: the slope (a / x) pre / P = (a / x) / S */
        double ls = log_series(a, x);
        if (dlog)
            *dlog = (a / x) * exp(-ls);
        return pre + ls;
    }
    /* Q = x^a e^-x / Gamma(a) cf = a x^a e^-x / Gamma(a + 1) cf */
    double lp = log1p(-exp(pre + log(a) + log_cf(a, x)));
    if (dlog) /* x^(a-1) e^-x / Gamma(a) = (a / x) x^a e^-x / Gamma(a + 1) */
        *dlog = exp(pre + log(a / x) - lp);
    return lp;
}
