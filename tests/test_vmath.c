/* Unit tests of src/vmath.h, pixpost's vectorisable exp, log and log1p,
 * against glibc's long-double expl, logl and log1pl (an outside reference
 * with ~11 more bits than double).
 *
 * Bars: exp's relative error and log's error relative to 1 + |log x| stay
 * under 4e-16 (two double ulps: the polynomials' rounding, not their
 * truncation, which is < 4e-18); measured 2.1e-16 and 4.5e-17 when
 * written. log1p's relative error stays under 6e-16 (the log's rounding
 * plus the correction's division and product; measured 3.4e-16). The edges are exact by construction: inf above 709.78, 0 below
 * -708, NaN through. */
#include <math.h>
#include <stdio.h>
#include "testutil.h"
#include "vmath.h"

/* pp_vexp's relative error at x against expl, kept in *worst / *wx. */
static void exp_err(double x, double *worst, double *wx)
{
    long double ex = expl((long double)x);
    double e = (double)fabsl(((long double)pp_vexp(x) - ex) / ex);
    if (e > *worst) {
        *worst = e;
        *wx = x;
    }
}

static void test_exp(void)
{
    double worst = 0, wx = 0;
    /* -708 .. 709.7 on an uneven grid, then every multiple of ln 2 / 2 in
     * range (the reduction's seams) */
    for (long i = 0; i <= 2000000; i++) {
        double x = -708.0 + 1417.7 * ((double)i / 2000000.0) + 1e-7 * (double)(i % 7);
        if (x <= 709.7)
            exp_err(x, &worst, &wx);
    }
    for (int k = -2040; k <= 2040; k++) {
        double x = k * 0.34657359027997264; /* k ln2 / 2 */
        if (x >= -708.0 && x <= 709.7)
            exp_err(x, &worst, &wx);
    }
    printf("pp_vexp: max relative error %.3g (at x = %.6g)\n", worst, wx);
    CHECK(worst < 4e-16, "pp_vexp vs expl: max relative error %.3g at %g", worst, wx);
    CHECK(pp_vexp(0.0) == 1.0, "exp(0) = 1 exactly");
    CHECK(isinf(pp_vexp(709.79)) && pp_vexp(709.79) > 0, "exp above 709.78 is +inf");
    CHECK(pp_vexp(-708.5) == 0.0 && pp_vexp(-1e300) == 0.0, "exp below -708 is 0");
    CHECK(isfinite(pp_vexp(709.78)) && pp_vexp(709.78) > 1.79e308, "exp(709.78) finite");
    CHECK(isnan(pp_vexp(NAN)), "exp(NaN) is NaN");
}

/* The largest err(x) over 2e6 + 1 points x = exp(t), t evenly spaced in
 * [t0, t0 + span]; its x in *wx. */
static double sweep_log_grid(double t0, double span, double (*err)(double), double *wx)
{
    double worst = 0;
    for (long i = 0; i <= 2000000; i++) {
        double x = exp(t0 + span * ((double)i / 2000000.0)), e = err(x);
        if (e > worst) {
            worst = e;
            *wx = x;
        }
    }
    return worst;
}

/* pp_vlog's error relative to 1 + |log x| */
static double log_err(double x)
{
    long double lx = logl((long double)x);
    return (double)(fabsl((long double)pp_vlog(x) - lx) / (1.0L + fabsl(lx)));
}

/* pp_vlog1p's relative error */
static double log1p_err(double x)
{
    long double l = log1pl((long double)x);
    return (double)fabsl(((long double)pp_vlog1p(x) - l) / l);
}

static void test_log(void)
{
    double wx = 0, worst = sweep_log_grid(-700.0, 1400.0, log_err, &wx);
    printf("pp_vlog: max error / (1 + |log x|) %.3g (at x = %.6g)\n", worst, wx);
    CHECK(worst < 4e-16, "pp_vlog vs logl: max error %.3g at %g", worst, wx);
    CHECK(pp_vlog(1.0) == 0.0, "log(1) = 0 exactly");
    CHECK(fabs(pp_vlog(1e-300) - log(1e-300)) < 1e-12, "log(1e-300), the likelihood's floor");
}

/* log1p's relative error over x in [1e-300, 1e15] (mtc's rho a_k span
 * many decades; 0 where the PSF's transfer function vanishes), densest
 * where 1 + x rounds, and the lanes sums against plain summation. */
static void test_log1p_lanes(void)
{
    double wx = 0, worst = sweep_log_grid(-690.0, 724.5, log1p_err, &wx);
    printf("pp_vlog1p: max relative error %.3g (at x = %.6g)\n", worst, wx);
    CHECK(worst < 6e-16, "pp_vlog1p vs log1pl: max relative error %.3g at %g", worst, wx);
    CHECK(pp_vlog1p(0.0) == 0.0, "log1p(0) = 0 exactly");
    double v[21], acc[PP_LANES] = {0}, plain = 0;
    for (int j = 0; j < 21; j++)
        plain += v[j] = (double)(j + 1); /* integers: every order is exact */
    pp_lanes_add(acc, v, 21);
    CHECK(pp_lanes_total(acc) == plain && acc[0] == 1 + 9 + 17 + 18 + 19 + 20 + 21,
          "lane sums: total %g, lane 0 %g", pp_lanes_total(acc), acc[0]);
}

int main(void)
{
    test_exp();
    test_log();
    test_log1p_lanes();
    return pp_test_done();
}
