/* pixpost — streaming tail quantiles (see quantiles.h). */
#include "quantiles.h"

#include "internal.h"
#include "sampler_internal.h"
#include "stats.h"

#include <math.h>
#include <stdlib.h>

void pp_squant_law_init(pp_squant_law *law, double level)
{
    law->plo = 0.5 * (1.0 - level);
    law->zq = pp_norm_quantile(1.0 - law->plo);
    law->phi_z = exp(-0.5 * law->zq * law->zq) / sqrt(2 * PP_PI);
}

pp_status pp_squant_alloc(pp_squant *q, size_t n)
{
    q->qlo = malloc(n * sizeof(double));
    q->qhi = malloc(n * sizeof(double));
    if (q->qlo && q->qhi)
        return PP_OK;
    pp_squant_free(q);
    return pp_fail(PP_ERR_NOMEM, "out of memory for the credible bounds");
}

void pp_squant_free(pp_squant *q)
{
    free(q->qlo);
    free(q->qhi);
    q->qlo = q->qhi = NULL;
}

void pp_squant_add(const pp_squant_law *law, pp_squant *q, const double *v, size_t rows,
                   size_t cols, size_t stride, const struct pp_moments *m)
{
    pp_squant_add_box(law, q, v, 1, rows, cols, stride, 0, m);
}

void pp_squant_add_box(const pp_squant_law *law, pp_squant *q, const double *v, size_t slices,
                       size_t rows, size_t cols, size_t stride, size_t slice_stride,
                       const struct pp_moments *m)
{
    double t = (double)m->count, zq = law->zq;
    for (size_t r = 0; r < slices * rows; r++)
        for (size_t col = 0; col < cols; col++) {
            size_t i = r * cols + col;
            double zv = v[r / rows * slice_stride + r % rows * stride + col];
            double sd = t > 1 ? sqrt(m->m2[i] / (t - 1)) : 0.0, mu = m->mean[i];
            if (t <= PP_SQUANT_WARM) {
                q->qlo[i] = mu - zq * sd;
                q->qhi[i] = mu + zq * sd;
                continue;
            }
            double g = sd / (law->phi_z * t);
            q->qlo[i] += g * (law->plo - (zv <= q->qlo[i]));
            q->qhi[i] += g * (1.0 - law->plo - (zv <= q->qhi[i]));
        }
}

void pp_squant_pool(const struct pp_chain *chains, unsigned nchains, size_t n, int exp_map,
                    double *lo, double *hi)
{
    double kc = (double)nchains;
    for (size_t i = 0; i < n; i++) {
        double l = 0, h = 0;
        for (unsigned j = 0; j < nchains; j++) {
            const pp_squant *q = chains[j].kstate;
            l += q->qlo[i] / kc;
            h += q->qhi[i] / kc;
        }
        lo[i] = exp_map ? exp(l) : l;
        hi[i] = exp_map ? exp(h) : h;
    }
}

pp_status pp_squant_plan_chains(struct pp_chain *chains, unsigned nchains, size_t n)
{
    for (unsigned i = 0; i < nchains; i++) {
        pp_squant *q = calloc(1, sizeof *q);
        if (!q)
            return pp_fail(PP_ERR_NOMEM, "out of memory for the credible bounds");
        chains[i].kstate = q;
        pp_status st = pp_squant_alloc(q, n);
        if (st != PP_OK)
            return st;
    }
    return PP_OK;
}

void pp_squant_release_chains(struct pp_chain *chains, unsigned nchains)
{
    for (unsigned i = 0; chains && i < nchains; i++) {
        pp_squant *q = chains[i].kstate;
        if (q)
            pp_squant_free(q);
        free(q);
        chains[i].kstate = NULL;
    }
}
