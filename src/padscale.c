/* pixpost — the padding scale move (see padscale.h for the move and why it
 * leaves the posterior invariant). */
#include "padscale.h"
#include "internal.h"
#include "sampler_internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Random-walk steps per iteration and their sd in ρ, in units of the
 * conditional sd of ρ when the frame's increments alone pin it,
 * 1/√(2 n_F) (log δ given n_F − 1 increments has sd √(2/n_F), ρ half of
 * it); 2.4 is the usual 1-D random-walk scale (Roberts, Gelman & Gilks,
 * Ann. Appl. Probab. 7, 1997; common practice). */
#define STEPS 4
#define STEP_SCALE 2.4

struct pp_padscale {
    double *x0;  /* grid: x on the frame, c_P on the padding */
    double *g;   /* grid: d, then A d */
    pp_complex *spec;
    double a0, a1, a2; /* Σ a_e², Σ a_e b_e, Σ b_e² over the 2N increments */
    double dsum;       /* Σ d over the grid */
    int ready;
};

pp_status pp_padscale_create(const pp_sampler *s, pp_padscale **out)
{
    *out = NULL;
    pp_padscale *p = calloc(1, sizeof *p);
    if (!p)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the padding scale move");
    p->x0 = pp_fft_alloc_real(s->gn);
    p->g = pp_fft_alloc_real(s->gn);
    p->spec = pp_fft_alloc_complex(s->gm);
    if (!p->x0 || !p->g || !p->spec) {
        pp_padscale_free(p);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the padding scale move");
    }
    *out = p;
    return PP_OK;
}

void pp_padscale_free(pp_padscale *p)
{
    if (!p)
        return;
    pp_fft_free_buffer(p->x0);
    pp_fft_free_buffer(p->g);
    pp_fft_free_buffer(p->spec);
    free(p);
}

/* The frame index (row or column) nearest to grid index i around a period
 * of n whose first m indices are the frame. */
static size_t nearest(size_t i, size_t m, size_t n)
{
    if (i < m)
        return i;
    return i - (m - 1) <= n - i ? m - 1 : 0;
}

void pp_padscale_prepare(pp_padscale *p, const pp_sampler *s, const pp_chain *c,
                         const pp_complex *xhat)
{
    const size_t gh = s->gh, gw = s->gw;
    const double invn = 1.0 / (double)s->gn;
    memcpy(p->spec, xhat, s->gm * sizeof *p->spec);
    pp_fft_inverse(s->fft, p->spec, p->x0);
    for (size_t i = 0; i < s->gn; i++)
        p->x0[i] *= invn;
    /* c_P from the frame's edge (read before any padding value is replaced:
     * nearest() only points into the frame) */
    double dsum = 0;
    for (size_t r = 0; r < gh; r++)
        for (size_t col = 0; col < gw; col++) {
            size_t i = r * gw + col;
            if (r < s->height && col < s->width) {
                p->g[i] = 0;
                continue;
            }
            double anchor = p->x0[nearest(r, s->height, gh) * gw + nearest(col, s->width, gw)];
            p->g[i] = p->x0[i] - anchor;
            p->x0[i] = anchor;
            dsum += p->g[i];
        }
    double a0 = 0, a1 = 0, a2 = 0;
    for (size_t r = 0; r < gh; r++) {
        const double *x = p->x0 + r * gw, *xd = p->x0 + ((r + 1) % gh) * gw;
        const double *d = p->g + r * gw, *dd = p->g + ((r + 1) % gh) * gw;
        for (size_t col = 0; col < gw; col++) {
            size_t cr = col + 1 < gw ? col + 1 : 0;
            double ah = x[cr] - x[col], bh = d[cr] - d[col];
            double av = xd[col] - x[col], bv = dd[col] - d[col];
            a0 += ah * ah + av * av;
            a1 += ah * bh + av * bv;
            a2 += bh * bh + bv * bv;
        }
    }
    p->a0 = a0, p->a1 = a1, p->a2 = a2, p->dsum = dsum;
    /* A d on the grid */
    pp_fft_forward(s->fft, p->g, p->spec);
    for (size_t i = 0; i < s->gm; i++)
        p->spec[i] *= c->otf[i] * invn;
    pp_fft_inverse(s->fft, p->spec, p->g);
    p->ready = 1;
}

/* log f(ρ) − the terms constant in ρ (padscale.h). */
static double log_f(const pp_padscale *p, double rho, double k, double hb, double del,
                    double lam, double g1, double g2)
{
    double e = exp(rho), dp = del / (e * e), em = e - 1;
    double quad = p->a0 + 2 * e * p->a1 + e * e * p->a2;
    return -rho * k - hb * dp - 0.5 * dp * quad - 0.5 * lam * (2 * em * g1 + em * em * g2);
}

int pp_padscale_move(pp_padscale *p, const pp_sampler *s, pp_chain *c, double *ss_obs,
                     double *ss, double *xsum)
{
    if (!p->ready)
        return 0;
    p->ready = 0;
    const size_t gw = s->gw;
    /* np: the padding pixels (whose x is scaled); nobs: the observed ones
     * (the frame's pixels but missing ones, NaN, whose data are latent and
     * move with x like the padding's, their noise held) */
    const double invn = 1.0 / (double)s->gn, nobs = (double)s->nobs;
    const double np = (double)s->gn - (double)s->height * (double)s->width;
    double g1 = 0, g2 = 0;
    for (size_t r = 0; r < s->height; r++)
        for (size_t col = 0; col < s->width; col++) {
            size_t i = r * gw + col;
            if (!s->obs[i])
                continue;
            g1 += p->g[i] * (c->rbuf[i] * invn - s->ygrid[i]);
            g2 += p->g[i] * p->g[i];
        }
    const double k = 2 * s->cfg.hyper_delta[0] + s->rank - np, hb = s->cfg.hyper_delta[1];
    const double sd = STEP_SCALE / sqrt(2 * nobs);
    double rho = 0, cur = log_f(p, 0, k, hb, c->delta, c->lambda, g1, g2);
    int acc = 0;
    for (int t = 0; t < STEPS; t++) {
        double prop = rho + sd * pp_rng_normal(&c->rng);
        double lf = log_f(p, prop, k, hb, c->delta, c->lambda, g1, g2);
        if (log(pp_rng_uniform(&c->rng)) < lf - cur && isfinite(lf)) {
            rho = prop, cur = lf;
            acc++;
        }
    }
    if (rho == 0)
        return acc;
    double em = exp(rho) - 1, fn = em * (double)s->gn;
    c->delta *= exp(-2 * rho);
    for (size_t r = 0; r < s->gh; r++)
        for (size_t col = 0; col < gw; col++) {
            size_t i = r * gw + col;
            c->rbuf[i] += fn * p->g[i];
            if (!s->obs[i])
                c->yaug[i] += em * p->g[i];
        }
    double d_obs = 2 * em * g1 + em * em * g2;
    *ss_obs += d_obs;
    *ss += d_obs;
    *xsum += em * p->dsum;
    return acc;
}
