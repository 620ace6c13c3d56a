/* pixpost — the padding scale move (see padscale.h for the move and why it
 * leaves the posterior invariant). */
#include "padscale.h"
#include "internal.h"
#include "sampler_internal.h"
#include "observed.h"

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
    double a0, a1, a2; /* Σ w a_e², Σ w a_e b_e, Σ w b_e² over the increments (2N on a
                        * frame, 3N on a volume), each with its axis' weight w */
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

/* The frame index (along one axis) nearest to grid index i around a
 * period of n whose first m indices are the frame. */
static size_t nearest(size_t i, size_t m, size_t n)
{
    if (i < m)
        return i;
    return i - (m - 1) <= n - i ? m - 1 : 0;
}

/* The prior's weight of the increments along each axis (z, y, x; a frame:
 * 1, 1, 1), the rule of pp_prior_eigen_shape (include/pixpost/prior.h):
 * w_a = (spacing_x / spacing_a)^2, 1 where a spacing is not known; the
 * sampler gives it cfg.voxel for volumes only (sampler.c). */
static void axis_weights(const pp_sampler *s, double w[3])
{
    for (int a = 0; a < 3; a++) {
        double sa = s->cfg.voxel[a], sx = s->cfg.voxel[2];
        w[a] = s->depth > 1 && sa > 0 && sx > 0 ? (sx / sa) * (sx / sa) : 1.0;
    }
}

void pp_padscale_prepare(pp_padscale *p, const pp_sampler *s, const pp_chain *c,
                         const pp_complex *xhat)
{
    const size_t gd = s->gd, gh = s->gh, gw = s->gw;
    const double invn = 1.0 / (double)s->gn;
    memcpy(p->spec, xhat, s->gm * sizeof *p->spec);
    pp_fft_inverse(s->fft, p->spec, p->x0);
    for (size_t i = 0; i < s->gn; i++)
        p->x0[i] *= invn;
    /* c_P from the frame's edge, the nearest frame voxel along every axis
     * (read before any padding value is replaced: nearest() only points
     * into the frame box) */
    double dsum = 0;
    for (size_t z = 0; z < gd; z++)
        for (size_t r = 0; r < gh; r++)
            for (size_t col = 0; col < gw; col++) {
                size_t i = (z * gh + r) * gw + col;
                if (z < s->depth && r < s->height && col < s->width) {
                    p->g[i] = 0;
                    continue;
                }
                size_t j = (nearest(z, s->depth, gd) * gh + nearest(r, s->height, gh)) * gw +
                           nearest(col, s->width, gw);
                double anchor = p->x0[j];
                p->g[i] = p->x0[i] - anchor;
                p->x0[i] = anchor;
                dsum += p->g[i];
            }
    /* the increments along every axis, periodic, each with its axis'
     * weight (a frame: gd = 1, so the z increment of a slice is with itself,
     * 0, and the weights are 1: the sums of the 2-D move, bit for bit) */
    double w[3];
    axis_weights(s, w);
    double a0 = 0, a1 = 0, a2 = 0;
    for (size_t z = 0; z < gd; z++)
        for (size_t r = 0; r < gh; r++) {
            size_t row = z * gh + r, rd = z * gh + (r + 1) % gh, rz = ((z + 1) % gd) * gh + r;
            const double *x = p->x0 + row * gw, *xd = p->x0 + rd * gw, *xz = p->x0 + rz * gw;
            const double *d = p->g + row * gw, *dd = p->g + rd * gw, *dz = p->g + rz * gw;
            for (size_t col = 0; col < gw; col++) {
                size_t cr = col + 1 < gw ? col + 1 : 0;
                double ah = x[cr] - x[col], bh = d[cr] - d[col];
                double av = xd[col] - x[col], bv = dd[col] - d[col];
                double az = xz[col] - x[col], bz = dz[col] - d[col];
                a0 += w[2] * ah * ah + w[1] * av * av + w[0] * az * az;
                a1 += w[2] * ah * bh + w[1] * av * bv + w[0] * az * bz;
                a2 += w[2] * bh * bh + w[1] * bv * bv + w[0] * bz * bz;
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
    /* np: the padding voxels (whose x is scaled); nobs: the observed ones
     * (the frame's voxels but missing ones, NaN, whose data are latent and
     * move with x like the padding's, their noise held) */
    const double invn = 1.0 / (double)s->gn, nobs = (double)s->nobs;
    const double np = (double)s->gn - (double)s->npix;
    double g1 = 0, g2 = 0;
    for (size_t fr = 0; fr < s->depth * s->height; fr++)
        for (size_t col = 0; col < s->width; col++) {
            size_t i = pp_frame_row(s, fr) * gw + col;
            if (!s->obs[i])
                continue;
            g1 += p->g[i] * (c->rbuf[i] * invn - s->ygrid[i]);
            g2 += p->g[i] * p->g[i];
        }
    const double k = 2 * s->cfg.hyper_delta[0] + s->rank - np, hb = s->cfg.hyper_delta[1];
    const double sd = STEP_SCALE / sqrt(2 * nobs);
    /* censored latent data move too (by em g): em must keep them above their
     * level, else the target is 0 (src/observed.h) */
    double em_lo, em_hi;
    pp_censored_range(s, c->yaug, p->g, 1.0, 0.0, &em_lo, &em_hi);
    double rho = 0, cur = log_f(p, 0, k, hb, c->delta, c->lambda, g1, g2);
    int acc = 0;
    for (int t = 0; t < STEPS; t++) {
        double prop = rho + sd * pp_rng_normal(&c->rng);
        double lf = log_f(p, prop, k, hb, c->delta, c->lambda, g1, g2);
        if (s->cens && !(exp(prop) - 1 >= em_lo && exp(prop) - 1 <= em_hi))
            lf = -INFINITY;
        if (log(pp_rng_uniform(&c->rng)) < lf - cur && isfinite(lf)) {
            rho = prop, cur = lf;
            acc++;
        }
    }
    if (rho == 0)
        return acc;
    double em = exp(rho) - 1, fn = em * (double)s->gn;
    c->delta *= exp(-2 * rho);
    for (size_t i = 0; i < s->gn; i++) {
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
