/* pixpost — weighted first-order increments on a periodic grid.
 *
 * Dᵀ diag(wh, wv) D and its companions (see incr.h for the layout). Cost:
 * each function is one pass over the N pixels reading x (or ξ) and the two
 * weight arrays once, about 10 flops per pixel; nothing is allocated. The
 * wrap-around row and column are handled by index arithmetic on the row
 * above/below and the column left/right, so the inner loop has no branch
 * except at j = 0 and j = W-1.
 */
#include "incr.h"

#include <math.h>

/* Dᵀ(gh, gv)[i][j] = gh[i][j-1] - gh[i][j] + gv[i-1][j] - gv[i][j] (wrapping).
 * apply writes Dᵀ(wh dh, wv dv) per pixel from the four increments that
 * touch it; perturb writes Dᵀ(sqrt(wh) ξh, sqrt(wv) ξv) the same way. */
/* out = Dᵀ W D x (add = 0) or out += Dᵀ W D x (add = 1); one body for both
 * (the flag is a constant at each call below, so each inlines to its own
 * loop). */
static inline void apply_rows(size_t h, size_t w, const double *wh, const double *wv,
                              const double *x, double *out, int add)
{
    for (size_t i = 0; i < h; i++) {
        size_t up = (i + h - 1) % h, dn = (i + 1) % h;
        const double *xr = x + i * w, *xu = x + up * w, *xd = x + dn * w;
        const double *whr = wh + i * w, *wvr = wv + i * w, *wvu = wv + up * w;
        double *o = out + i * w;
        for (size_t j = 0; j < w; j++) {
            size_t l = j ? j - 1 : w - 1, r = j + 1 < w ? j + 1 : 0;
            double c = xr[j];
            /* own increments (weight at this pixel) minus incoming ones */
            double v = whr[j] * (c - xr[r]) + whr[l] * (c - xr[l]) + wvr[j] * (c - xd[j]) +
                       wvu[j] * (c - xu[j]);
            o[j] = add ? o[j] + v : v;
        }
    }
}

void pp_incr_apply(size_t h, size_t w, const double *wh, const double *wv, const double *x,
                   double *out)
{
    apply_rows(h, w, wh, wv, x, out, 0);
}

void pp_incr_apply_add(size_t h, size_t w, const double *wh, const double *wv, const double *x,
                       double *out)
{
    apply_rows(h, w, wh, wv, x, out, 1);
}

double pp_incr_quad(size_t h, size_t w, const double *wh, const double *wv, const double *x)
{
    double s = 0.0;
    for (size_t i = 0; i < h; i++) {
        const double *xr = x + i * w, *xd = x + ((i + 1) % h) * w;
        const double *whr = wh + i * w, *wvr = wv + i * w;
        for (size_t j = 0; j < w; j++) {
            double dh = xr[j + 1 < w ? j + 1 : 0] - xr[j], dv = xd[j] - xr[j];
            s += whr[j] * dh * dh + wvr[j] * dv * dv;
        }
    }
    return s;
}

void pp_incr_perturb(size_t h, size_t w, const double *wh, const double *wv, const double *xi_h,
                     const double *xi_v, double *out)
{
    for (size_t i = 0; i < h; i++) {
        size_t up = (i + h - 1) % h;
        const double *gh = xi_h + i * w, *gv = xi_v + i * w, *gvu = xi_v + up * w;
        const double *whr = wh + i * w, *wvr = wv + i * w, *wvu = wv + up * w;
        double *o = out + i * w;
        for (size_t j = 0; j < w; j++) {
            size_t l = j ? j - 1 : w - 1;
            o[j] = sqrt(whr[l]) * gh[l] - sqrt(whr[j]) * gh[j] + sqrt(wvu[j]) * gvu[j] -
                   sqrt(wvr[j]) * gv[j];
        }
    }
}

void pp_incr_diag(size_t h, size_t w, const double *wh, const double *wv, double *d)
{
    for (size_t i = 0; i < h; i++) {
        const double *whr = wh + i * w, *wvr = wv + i * w, *wvu = wv + ((i + h - 1) % h) * w;
        for (size_t j = 0; j < w; j++)
            d[i * w + j] = whr[j] + whr[j ? j - 1 : w - 1] + wvr[j] + wvu[j];
    }
}
