/* pixpost — the adaptive prior's conditionals (see adaptive.h for the
 * model). Cost per update: one pass over the grid for τ and the block sums
 * (2N Gamma(3/2) draws: 2N normals in bulk, 2N uniforms and logs), one for
 * the weights after s moves, and 8 Newton steps per block. */
#include "adaptive.h"

#include <math.h>
#include <stdlib.h>
#include "internal.h"
#include "sampler_internal.h"

#define KAPPA_SHAPE 1.0
#define KAPPA_RATE 0.5 /* κ ~ Gamma(1, 0.5): mean 2 (bench/adaptive/NOTES.md §5) */
#define W_MIN 1e-250
#define W_MAX 1e250
#define NEWTON_STEPS 8
#define CHUNK 512

struct pp_adapt {
    size_t h, w, bs, mh, mw, nb;
    size_t fmh, fmw; /* blocks holding frame pixels: the top-left fmh x fmw */
    double nu;
    double *s;     /* nb block log-precisions */
    double *half;  /* nb: n_B / 2 */
    double *r;     /* nb: R_B scratch */
    double *tb;    /* nb: T_B = Σ_{e in B} τ_e scratch */
    double *es;    /* nb scratch of pp_adapt_update, in turn: e^{s_B} for the τ draws, s_B
                    * after the scale moves, the factor e^{s_new - s_old} */
    double kappa;
    double ha, hb;   /* Gamma(ha, hb) hyperprior on the level e^{L}, L = the mean
                      * of s over the frame's blocks (what pp_adapt_level reports) */
    double ssum;     /* Σ s_B over the frame's blocks (kept in step with s) */
    size_t nf;       /* the frame's blocks */
    unsigned long long acc, tried;
};

/* log p(L) of the level L = mean s under the Gamma(ha, hb) hyperprior on
 * δ = e^{L} (with the Jacobian dδ/dL = δ): ha L − hb e^{L}. */
/* Σ s_B over the blocks that hold frame pixels. */
static double frame_sum(const pp_adapt *a)
{
    double m = 0;
    for (size_t bi = 0; bi < a->fmh; bi++)
        for (size_t bj = 0; bj < a->fmw; bj++)
            m += a->s[bi * a->mw + bj];
    return m;
}

static double level_logp(const pp_adapt *a, double L)
{
    return a->ha * L - a->hb * exp(L);
}

/* log p(L + dl) − log p(L) at the current L. */
static double level_dlogp(const pp_adapt *a, double dl)
{
    double L = a->ssum / (double)a->nf;
    return level_logp(a, L + dl) - level_logp(a, L);
}

double pp_adapt_level_dlogp(const pp_adapt *a, double dl) { return level_dlogp(a, dl); }

/* 1/nf when block b holds frame pixels (a change of s_B moves L by that
 * share), else 0. */
static double frame_share(const pp_adapt *a, size_t b)
{
    return (b / a->mw < a->fmh && b % a->mw < a->fmw) ? 1.0 / (double)a->nf : 0.0;
}

pp_status pp_adapt_create(size_t h, size_t w, size_t fh, size_t fw, size_t block, double nu,
                          const double hyper[2], pp_adapt **out)
{
    *out = NULL;
    if (h < 2 || w < 2 || block < 1 || !(nu > 0 && isfinite(nu)) || fh < 1 || fh > h ||
        fw < 1 || fw > w || !(hyper[0] >= 0 && hyper[1] >= 0))
        return pp_fail(PP_ERR_ARG, "adaptive prior: grid %zux%zu, block %zu, nu %g out of range",
                       w, h, block, nu);
    pp_adapt *a = calloc(1, sizeof *a);
    if (!a)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior");
    a->h = h, a->w = w, a->bs = block, a->nu = nu, a->ha = hyper[0], a->hb = hyper[1];
    a->mh = (h + block - 1) / block, a->mw = (w + block - 1) / block;
    a->nb = a->mh * a->mw;
    a->fmh = (fh + block - 1) / block, a->fmw = (fw + block - 1) / block;
    a->nf = a->fmh * a->fmw;
    a->s = malloc(a->nb * sizeof *a->s);
    a->half = calloc(a->nb, sizeof *a->half);
    a->r = malloc(a->nb * sizeof *a->r);
    a->es = malloc(a->nb * sizeof *a->es);
    a->tb = malloc(a->nb * sizeof *a->tb);
    if (!a->s || !a->half || !a->r || !a->es || !a->tb) {
        pp_adapt_free(a);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior");
    }
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++)
            a->half[(i / block) * a->mw + j / block] += 0.5;
    *out = a;
    return PP_OK;
}

void pp_adapt_free(pp_adapt *a)
{
    if (!a)
        return;
    free(a->s);
    free(a->half);
    free(a->r);
    free(a->es);
    free(a->tb);
    free(a);
}

void pp_adapt_start(pp_adapt *a, double delta)
{
    double l = log(delta);
    for (size_t b = 0; b < a->nb; b++)
        a->s[b] = l;
    a->ssum = l * (double)a->nf;
    a->kappa = KAPPA_SHAPE / KAPPA_RATE;
    a->acc = a->tried = 0;
}

static double clampw(double v)
{
    return v < W_MIN ? W_MIN : v > W_MAX ? W_MAX : v;
}

/* τ | x, s for one row (both directions), weights e^{s} τ into wh, wv and
 * the block sums Σ τ d² into a->r. ν = 2: Gamma(3/2, rate) = (E + Z²/2)/rate. */
static double tau_row(pp_adapt *a, const double *x, size_t i, double *wh, double *wv, pp_rng *rng,
                      double *z)
{
    double tsum = 0, *tbr = a->tb + (i / a->bs) * a->mw;
    const size_t w = a->w;
    const double *xr = x + i * w, *xd = x + ((i + 1) % a->h) * w;
    const double *er = a->es + (i / a->bs) * a->mw;
    double *rr = a->r + (i / a->bs) * a->mw;
    const double hn = 0.5 * a->nu, shape = hn + 0.5;
    const int fast = a->nu == 2.0;
    for (size_t j0 = 0; j0 < w; j0 += CHUNK) {
        size_t m = w - j0 < CHUNK ? w - j0 : CHUNK;
        if (fast)
            pp_rng_normals(rng, z, 2 * m);
        for (size_t k = 0; k < m; k++) {
            size_t j = j0 + k, jb = j / a->bs;
            double es = er[jb];
            double dh = xr[j + 1 < w ? j + 1 : 0] - xr[j], dv = xd[j] - xr[j];
            double rh = hn + 0.5 * es * dh * dh, rv = hn + 0.5 * es * dv * dv, th, tv;
            if (fast) {
                th = (-log(pp_rng_uniform(rng)) + 0.5 * z[2 * k] * z[2 * k]) / rh;
                tv = (-log(pp_rng_uniform(rng)) + 0.5 * z[2 * k + 1] * z[2 * k + 1]) / rv;
            } else {
                th = pp_rng_gamma(rng, shape, rh);
                tv = pp_rng_gamma(rng, shape, rv);
            }
            rr[jb] += th * dh * dh + tv * dv * dv;
            tsum += th + tv;
            tbr[jb] += th + tv;
            wh[i * w + j] = clampw(es * th);
            wv[i * w + j] = clampw(es * tv);
        }
    }
    return tsum;
}

/* log of the block's conditional density at t (up to a constant). */
static double block_logf(double t, double half, double R, double prec, double mean)
{
    return half * t - 0.5 * exp(t) * R - 0.5 * prec * (t - mean) * (t - mean);
}

/* Neighbour count and mean of block b's s (free edges). */
static size_t block_nbrs(const pp_adapt *a, size_t b, double *mean)
{
    size_t bi = b / a->mw, bj = b % a->mw, m = 0;
    double sum = 0;
    if (bi > 0)
        sum += a->s[b - a->mw], m++;
    if (bi + 1 < a->mh)
        sum += a->s[b + a->mw], m++;
    if (bj > 0)
        sum += a->s[b - 1], m++;
    if (bj + 1 < a->mw)
        sum += a->s[b + 1], m++;
    *mean = m ? sum / (double)m : 0.0;
    return m;
}

/* The per-block scale move (see pp_adapt_update). */
static void block_scale(pp_adapt *a, size_t b, pp_rng *rng)
{
    if (!(a->tb[b] > 0))
        return;
    double mean, prec = a->kappa * (double)block_nbrs(a, b, &mean);
    double u = pp_rng_gamma(rng, 2.0 * a->half[b] * (a->nu + 0.5), 0.5 * a->nu * a->tb[b]);
    if (!(isfinite(u) && u > 0))
        return;
    double t0 = a->s[b] - mean, t1 = t0 - log(u);
    double la = -0.5 * prec * (t1 * t1 - t0 * t0) + level_dlogp(a, -log(u) * frame_share(a, b));
    if (log(pp_rng_uniform(rng)) < la) {
        a->s[b] -= log(u);
        a->ssum -= log(u) * frame_share(a, b) * (double)a->nf;
        a->r[b] *= u;
        a->tb[b] *= u;
    }
}

/* One independence Metropolis move of block b. */
static void block_move(pp_adapt *a, size_t b, pp_rng *rng)
{
    double mean, prec = a->kappa * (double)block_nbrs(a, b, &mean);
    double R = a->r[b], half = a->half[b];
    if (!(R > 0) && !(prec > 0))
        return; /* improper: nothing to move against */
    double t = a->s[b];
    for (int k = 0; k < NEWTON_STEPS; k++) {
        double e = 0.5 * exp(t) * R;
        double f1 = half - e - prec * (t - mean), f2 = -e - prec;
        double step = f1 / f2;
        t -= step > 3 ? 3 : step < -3 ? -3 : step; /* concave: damped Newton */
    }
    double sd = 1.0 / sqrt(0.5 * exp(t) * R + prec);
    double prop = t + sd * pp_rng_normal(rng);
    double cur = a->s[b], zc = (cur - t) / sd, zp = (prop - t) / sd;
    double la = block_logf(prop, half, R, prec, mean) - block_logf(cur, half, R, prec, mean) +
                level_dlogp(a, (prop - cur) * frame_share(a, b)) +
                0.5 * (zp * zp - zc * zc);
    a->tried++;
    if (log(pp_rng_uniform(rng)) < la && isfinite(prop)) {
        a->ssum += (prop - cur) * frame_share(a, b) * (double)a->nf;
        a->s[b] = prop;
        a->acc++;
    }
}

void pp_adapt_update(pp_adapt *a, const double *x, double *wh, double *wv, pp_rng *rng)
{
    double z[2 * CHUNK];
    a->ssum = frame_sum(a); /* afresh: no drift by rounding */
    for (size_t b = 0; b < a->nb; b++) {
        a->r[b] = a->tb[b] = 0;
        a->es[b] = exp(a->s[b]);
    }
    double tsum = 0;
    for (size_t i = 0; i < a->h; i++)
        tsum += tau_row(a, x, i, wh, wv, rng, z);
    /* Scale move along the ridge W = e^{s} τ (W, hence x, unchanged): τ → uτ,
     * s → s − log u, u from its exact conditional under the group of
     * scalings (Liu & Sabatti, Biometrika 2000): with Σ n_B/2 = N/2 and the
     * 2N factors τ^{ν/2 − 1/2} e^{−ντ/2} of the joint, u ~ Gamma(N(ν + 1/2),
     * (ν/2) Σ τ). Without it the level of s trades against the mean of τ
     * one Gibbs step at a time. */
    double nn = (double)(a->h * a->w);
    double u = pp_rng_gamma(rng, nn * (a->nu + 0.5), 0.5 * a->nu * tsum);
    /* ... proposed from that Gamma and accepted with the level's hyperprior
     * ratio (independence Metropolis; always accepted when hb = ha = 0) */
    if (isfinite(u) && u > 0 && log(pp_rng_uniform(rng)) < level_dlogp(a, -log(u))) {
        a->ssum -= log(u) * (double)a->nf;
        for (size_t b = 0; b < a->nb; b++) {
            a->s[b] -= log(u);
            a->r[b] *= u;
            a->tb[b] *= u;
        }
    }
    /* The same ridge within each block: τ_B → uτ_B, s_B → s_B − log u with u
     * proposed from the block's share of that Gamma, Gamma(n_B(ν + 1/2),
     * (ν/2) T_B), and accepted with the ratio of the block field's GMRF
     * prior (independence Metropolis on the group; the other factors are
     * the proposal). Checkerboard colours as below. */
    for (int colour = 0; colour < 2; colour++)
        for (size_t b = 0; b < a->nb; b++)
            if ((int)((b / a->mw + b % a->mw) % 2) == colour)
                block_scale(a, b, rng);
    /* the weights hold e^{s} τ at this s; keep it in es */
    for (size_t b = 0; b < a->nb; b++)
        a->es[b] = a->s[b];
    for (int colour = 0; colour < 2; colour++)
        for (size_t b = 0; b < a->nb; b++)
            if ((int)((b / a->mw + b % a->mw) % 2) == colour)
                block_move(a, b, rng);
    double qs = 0;
    for (size_t b = 0; b < a->nb; b++) {
        size_t bi = b / a->mw, bj = b % a->mw;
        if (bi + 1 < a->mh)
            qs += (a->s[b + a->mw] - a->s[b]) * (a->s[b + a->mw] - a->s[b]);
        if (bj + 1 < a->mw)
            qs += (a->s[b + 1] - a->s[b]) * (a->s[b + 1] - a->s[b]);
    }
    a->kappa = pp_rng_gamma(rng, KAPPA_SHAPE + 0.5 * (double)(a->nb - 1), KAPPA_RATE + 0.5 * qs);
    /* rescale the weights by e^{s_new - s_old} per block (moved blocks only) */
    for (size_t b = 0; b < a->nb; b++)
        a->es[b] = a->s[b] == a->es[b] ? 1.0 : exp(a->s[b] - a->es[b]);
    for (size_t i = 0; i < a->h; i++) {
        const double *fr = a->es + (i / a->bs) * a->mw;
        for (size_t j = 0; j < a->w; j++) {
            double f = fr[j / a->bs];
            if (f != 1.0) {
                wh[i * a->w + j] = clampw(wh[i * a->w + j] * f);
                wv[i * a->w + j] = clampw(wv[i * a->w + j] * f);
            }
        }
    }
}

void pp_adapt_shift(pp_adapt *a, double dl, double *wh, double *wv)
{
    double f = exp(dl);
    for (size_t b = 0; b < a->nb; b++)
        a->s[b] += dl;
    a->ssum += dl * (double)a->nf;
    for (size_t i = 0; i < a->h * a->w; i++) {
        wh[i] = clampw(wh[i] * f);
        wv[i] = clampw(wv[i] * f);
    }
}

double pp_adapt_level(const pp_adapt *a)
{
    return exp(frame_sum(a) / (double)a->nf); /* summed afresh: ssum drifts by rounding */
}

double pp_adapt_kappa(const pp_adapt *a) { return a->kappa; }

void pp_adapt_geometry(const pp_adapt *a, size_t *side, size_t *mh, size_t *mw)
{
    *side = a->bs, *mh = a->mh, *mw = a->mw;
}

double pp_adapt_block_dlogp(const pp_adapt *a, size_t b, double ds)
{
    double mean, m = (double)block_nbrs(a, b, &mean), t0 = a->s[b] - mean, t1 = t0 + ds;
    /* Σ_nbrs (s − s_n)² = m (s − s̄)² + const in s */
    return a->half[b] * ds - 0.5 * a->kappa * m * (t1 * t1 - t0 * t0) +
           level_dlogp(a, ds * frame_share(a, b));
}

void pp_adapt_block_shift(pp_adapt *a, size_t b, double ds, double *wh, double *wv)
{
    a->s[b] += ds;
    a->ssum += ds * frame_share(a, b) * (double)a->nf;
    double f = exp(ds);
    size_t r0 = (b / a->mw) * a->bs, c0 = (b % a->mw) * a->bs;
    size_t r1 = r0 + a->bs < a->h ? r0 + a->bs : a->h, c1 = c0 + a->bs < a->w ? c0 + a->bs : a->w;
    for (size_t i = r0; i < r1; i++)
        for (size_t j = c0; j < c1; j++) {
            wh[i * a->w + j] = clampw(wh[i * a->w + j] * f);
            wv[i * a->w + j] = clampw(wv[i * a->w + j] * f);
        }
}

void pp_adapt_acceptance(const pp_adapt *a, unsigned long long *accepted,
                         unsigned long long *tried)
{
    *accepted = a->acc;
    *tried = a->tried;
}

size_t pp_adapt_state(pp_adapt *a, pp_region *out)
{
    out[0] = (pp_region){a->s, a->nb * sizeof *a->s};
    out[1] = (pp_region){&a->kappa, sizeof a->kappa};
    out[2] = (pp_region){&a->ssum, sizeof a->ssum};
    out[3] = (pp_region){&a->acc, sizeof a->acc};
    out[4] = (pp_region){&a->tried, sizeof a->tried};
    return 5;
}
