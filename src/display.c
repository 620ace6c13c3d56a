/* pixpost — the robust range that maps every picture pixpost writes to
 * grey or colour (src/display.h), for levels and for spreads: the PNG outputs (src/output.c) and the
 * report's images (src/report*.c) take it from here.
 * Cost: one copy and qsort of the finite pixels per call. */
#include "display.h"
#include "internal.h"
#include <math.h>
#include <stdlib.h>

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

/* numpy's default ("linear", type 7) percentile of sorted v. */
static double percentile_sorted(const double *v, size_t n, double p)
{
    double h = (double)(n - 1) * (p / 100.0);
    size_t lo = (size_t)floor(h);
    size_t hi = lo + 1 < n ? lo + 1 : lo;
    return v[lo] + (h - (double)lo) * (v[hi] - v[lo]);
}

pp_status pp_display_percentiles(const pp_image *img, double plo, double phi, double *lo,
                                 double *hi)
{
    size_t n = pp_image_count(img), m = 0;
    double *v = malloc((n ? n : 1) * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the percentiles of an image");
    for (size_t i = 0; i < n; i++)
        if (isfinite(img->data[i]))
            v[m++] = img->data[i];
    if (m == 0) {
        free(v);
        return pp_fail(PP_ERR_NUMERIC, "an image to show has no finite pixel");
    }
    qsort(v, m, sizeof *v, cmp_double);
    *lo = percentile_sorted(v, m, plo);
    *hi = percentile_sorted(v, m, phi);
    free(v);
    return PP_OK;
}

pp_status pp_display_range(const pp_image *img, double *lo, double *hi)
{
    pp_status st = pp_display_percentiles(img, PP_DISPLAY_LO, PP_DISPLAY_HI, lo, hi);
    if (st == PP_OK && !(*hi > *lo)) {
        double d = *lo != 0 ? fabs(*lo) * 1e-3 : 1.0;
        *lo -= d;
        *hi += d;
    }
    return st;
}

pp_status pp_display_spread_range(const pp_image *img, double *lo, double *hi)
{
    double p0;
    pp_status st = pp_display_percentiles(img, PP_DISPLAY_LO, PP_DISPLAY_HI, &p0, hi);
    *lo = 0.0;
    if (st == PP_OK && !(*hi > 0.0))
        *hi = 1.0;
    return st;
}
