/* pixpost — the weighted straight-line fit behind both camera calibrations
 * (photon transfer and the single-frame fit). Closed form of the 2 x 2
 * normal equations, centred at the weighted mean of x for accuracy. Cost:
 * two passes over the points. */
#include "calib_internal.h"
#include <math.h>

int pp_line_fit(const double *x, const double *y, const double *w, size_t n, double *slope,
                double *icept, double cov[3], double *chi2)
{
    double sw = 0, swx = 0, swy = 0;
    for (size_t i = 0; i < n; i++) {
        sw += w[i];
        swx += w[i] * x[i];
        swy += w[i] * y[i];
    }
    double xm = swx / sw, ym = swy / sw, sxx = 0, sxy = 0;
    for (size_t i = 0; i < n; i++) {
        sxx += w[i] * (x[i] - xm) * (x[i] - xm);
        sxy += w[i] * (x[i] - xm) * (y[i] - ym);
    }
    if (!(sxx > 0))
        return -1;
    *slope = sxy / sxx;
    *icept = ym - *slope * xm;
    cov[0] = 1.0 / sxx;
    cov[1] = -xm / sxx;
    cov[2] = 1.0 / sw + xm * xm / sxx;
    double c = 0;
    for (size_t i = 0; i < n; i++) {
        double r = y[i] - (*slope * x[i] + *icept);
        c += w[i] * r * r;
    }
    *chi2 = c;
    return 0;
}
