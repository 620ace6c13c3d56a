/* pixpost — internals of the calibration files (src/calib_*.c). */
#ifndef PIXPOST_CALIB_INTERNAL_H
#define PIXPOST_CALIB_INTERNAL_H

#include <stddef.h>

/* Weighted least squares of y = slope * x + icept over n >= 2 points with
 * weights w > 0 (1 / variance of y). Sets the estimates, their covariance
 * from the inverse normal matrix (cov[0] var(slope), cov[1] cov(slope,
 * icept), cov[2] var(icept)) and chi^2 = sum w r^2. Returns 0, or -1 when
 * the x are all equal (no slope). */
int pp_line_fit(const double *x, const double *y, const double *w, size_t n, double *slope,
                double *icept, double cov[3], double *chi2);

#endif
