/* pixpost — weighted first-order increments on a periodic grid.
 *
 * Dᵀ diag(wz, wh, wv) D and its companions (see incr.h for the layout).
 * Cost: each function is one pass over the N voxels reading x (or ξ) and
 * the weight arrays once, about 10 flops per voxel on a frame, 15 on a
 * volume; nothing is allocated. The wrap-around slice, row and column are
 * handled by index arithmetic on the neighbouring slice, row and column,
 * so the inner loop has no branch except at j = 0 and j = w-1 (and the
 * volume's z terms, a test the branch predictor settles).
 */
#include "incr.h"

#include <math.h>

/* Dᵀ(gz, gh, gv)[k][i][j] = gh[k][i][j-1] - gh[k][i][j] + gv[k][i-1][j] - gv[k][i][j]
 * + gz[k-1][i][j] - gz[k][i][j] (wrapping). apply writes Dᵀ(w ⊙ D x) per voxel
 * from the increments that touch it; perturb writes Dᵀ(sqrt(w) ⊙ ξ) the same
 * way. */
/* out = Dᵀ W D x (add = 0) or out += Dᵀ W D x (add = 1); one body for both
 * (the flag is a constant at each call below, so each inlines to its own
 * loop). */
static inline void apply_rows(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                              const double *wv, const double *x, double *out, int add)
{
    const size_t np = h * w;
    for (size_t k = 0; k < d; k++) {
        const size_t o0 = k * np, zu = ((k + d - 1) % d) * np, zd = ((k + 1) % d) * np;
        for (size_t i = 0; i < h; i++) {
            size_t up = (i + h - 1) % h, dn = (i + 1) % h;
            const double *xr = x + o0 + i * w, *xu = x + o0 + up * w, *xd = x + o0 + dn * w;
            const double *whr = wh + o0 + i * w, *wvr = wv + o0 + i * w,
                         *wvu = wv + o0 + up * w;
            /* the volume's z neighbours of this row (NULL on a frame) */
            const double *xzd = d > 1 ? x + zd + i * w : NULL, *xzu = x + zu + i * w;
            const double *wzr = d > 1 ? wz + o0 + i * w : NULL, *wzu = d > 1 ? wz + zu + i * w : NULL;
            double *o = out + o0 + i * w;
            for (size_t j = 0; j < w; j++) {
                size_t l = j ? j - 1 : w - 1, r = j + 1 < w ? j + 1 : 0;
                double c = xr[j];
                /* own increments (weight at this voxel) minus incoming ones */
                double v = whr[j] * (c - xr[r]) + whr[l] * (c - xr[l]) + wvr[j] * (c - xd[j]) +
                           wvu[j] * (c - xu[j]);
                if (xzd)
                    v += wzr[j] * (c - xzd[j]) + wzu[j] * (c - xzu[j]);
                o[j] = add ? o[j] + v : v;
            }
        }
    }
}

void pp_incr_apply(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                   const double *wv, const double *x, double *out)
{
    apply_rows(d, h, w, wz, wh, wv, x, out, 0);
}

void pp_incr_apply_add(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                       const double *wv, const double *x, double *out)
{
    apply_rows(d, h, w, wz, wh, wv, x, out, 1);
}

double pp_incr_quad(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                    const double *wv, const double *x)
{
    const size_t np = h * w;
    double s = 0.0;
    for (size_t k = 0; k < d; k++) {
        const size_t o0 = k * np;
        for (size_t i = 0; i < h; i++) {
            const double *xr = x + o0 + i * w, *xd = x + o0 + ((i + 1) % h) * w;
            const double *whr = wh + o0 + i * w, *wvr = wv + o0 + i * w;
            const double *xzd = d > 1 ? x + ((k + 1) % d) * np + i * w : NULL;
            const double *wzr = d > 1 ? wz + o0 + i * w : NULL;
            for (size_t j = 0; j < w; j++) {
                double dh = xr[j + 1 < w ? j + 1 : 0] - xr[j], dv = xd[j] - xr[j];
                double t = whr[j] * dh * dh + wvr[j] * dv * dv;
                if (xzd) {
                    double dz = xzd[j] - xr[j];
                    t += wzr[j] * dz * dz;
                }
                s += t;
            }
        }
    }
    return s;
}

void pp_incr_perturb(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                     const double *wv, const double *xi_z, const double *xi_h,
                     const double *xi_v, double *out)
{
    const size_t np = h * w;
    for (size_t k = 0; k < d; k++) {
        const size_t o0 = k * np, zu = ((k + d - 1) % d) * np;
        for (size_t i = 0; i < h; i++) {
            size_t up = (i + h - 1) % h;
            const double *gh = xi_h + o0 + i * w, *gv = xi_v + o0 + i * w,
                         *gvu = xi_v + o0 + up * w;
            const double *whr = wh + o0 + i * w, *wvr = wv + o0 + i * w,
                         *wvu = wv + o0 + up * w;
            const double *gz = d > 1 ? xi_z + o0 + i * w : NULL, *gzu = d > 1 ? xi_z + zu + i * w : NULL;
            const double *wzr = d > 1 ? wz + o0 + i * w : NULL, *wzu = d > 1 ? wz + zu + i * w : NULL;
            double *o = out + o0 + i * w;
            for (size_t j = 0; j < w; j++) {
                size_t l = j ? j - 1 : w - 1;
                double v = sqrt(whr[l]) * gh[l] - sqrt(whr[j]) * gh[j] + sqrt(wvu[j]) * gvu[j] -
                           sqrt(wvr[j]) * gv[j];
                if (gz)
                    v += sqrt(wzu[j]) * gzu[j] - sqrt(wzr[j]) * gz[j];
                o[j] = v;
            }
        }
    }
}

void pp_incr_diag(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                  const double *wv, double *out)
{
    const size_t np = h * w;
    for (size_t k = 0; k < d; k++) {
        const size_t o0 = k * np, zu = ((k + d - 1) % d) * np;
        for (size_t i = 0; i < h; i++) {
            const double *whr = wh + o0 + i * w, *wvr = wv + o0 + i * w,
                         *wvu = wv + o0 + ((i + h - 1) % h) * w;
            const double *wzr = d > 1 ? wz + o0 + i * w : NULL, *wzu = d > 1 ? wz + zu + i * w : NULL;
            double *o = out + o0 + i * w;
            for (size_t j = 0; j < w; j++) {
                double v = whr[j] + whr[j ? j - 1 : w - 1] + wvr[j] + wvu[j];
                if (wzr)
                    v += wzr[j] + wzu[j];
                o[j] = v;
            }
        }
    }
}
