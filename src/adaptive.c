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
    size_t d, h, w, bs, bz, md, mh, mw, nb; /* grid, block side and z extent, block grid */
    size_t fmd, fmh, fmw; /* blocks holding frame voxels: the first fmd x fmh x fmw */
    double ca[3];         /* the axes' weight factors {z, y, x} (adaptive.h) */
    double kinc;          /* increments per voxel: 2 (frame) or 3 (volume) */
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
    for (size_t bk = 0; bk < a->fmd; bk++)
        for (size_t bi = 0; bi < a->fmh; bi++)
            for (size_t bj = 0; bj < a->fmw; bj++)
                m += a->s[(bk * a->mh + bi) * a->mw + bj];
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
    size_t bk = b / (a->mh * a->mw), bi = b / a->mw % a->mh, bj = b % a->mw;
    return (bk < a->fmd && bi < a->fmh && bj < a->fmw) ? 1.0 / (double)a->nf : 0.0;
}

/* The blocks' z extent: about the in-plane side's physical length,
 * round(block · spacing_x / spacing_z) = round(block · sqrt(ca_z)) slices,
 * at least 1 and at most the grid's depth (a frame: 1). */
static size_t block_depth(size_t d, size_t block, double caz)
{
    if (d < 2)
        return 1;
    double bz = floor((double)block * sqrt(caz) + 0.5);
    return bz < 1 ? 1 : bz > (double)d ? d : (size_t)bz;
}

pp_status pp_adapt_create(const pp_shape *grid, const pp_shape *frame, size_t block,
                          const double axis[3], double nu, const double hyper[2], pp_adapt **out)
{
    *out = NULL;
    int r = grid->rank;
    size_t d = r == 3 ? grid->n[0] : 1, h = grid->n[r - 2], w = grid->n[r - 1];
    size_t fd = r == 3 ? frame->n[0] : 1, fh = frame->n[r - 2], fw = frame->n[r - 1];
    double ca[3] = {1.0, 1.0, 1.0};
    for (int i = 0; axis && i < 3; i++)
        ca[i] = axis[i];
    if ((r != 2 && r != 3) || frame->rank != r || h < 2 || w < 2 || d < 1 || block < 1 ||
        !(nu > 0 && isfinite(nu)) || fh < 1 || fh > h || fw < 1 || fw > w || fd < 1 || fd > d ||
        !(hyper[0] >= 0 && hyper[1] >= 0) ||
        !(ca[0] > 0 && ca[1] > 0 && ca[2] > 0 && isfinite(ca[0]) && isfinite(ca[1]) &&
          isfinite(ca[2])))
        return pp_fail(PP_ERR_ARG,
                       "adaptive prior: grid %zux%zux%zu, block %zu, nu %g or axis weights out "
                       "of range",
                       w, h, d, block, nu);
    pp_adapt *a = calloc(1, sizeof *a);
    if (!a)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior");
    a->d = d, a->h = h, a->w = w, a->bs = block, a->nu = nu, a->ha = hyper[0], a->hb = hyper[1];
    a->ca[0] = ca[0], a->ca[1] = ca[1], a->ca[2] = ca[2];
    a->kinc = d > 1 ? 3.0 : 2.0;
    a->bz = block_depth(d, block, ca[0]);
    a->md = (d + a->bz - 1) / a->bz;
    a->mh = (h + block - 1) / block, a->mw = (w + block - 1) / block;
    a->nb = a->md * a->mh * a->mw;
    a->fmd = (fd + a->bz - 1) / a->bz;
    a->fmh = (fh + block - 1) / block, a->fmw = (fw + block - 1) / block;
    a->nf = a->fmd * a->fmh * a->fmw;
    a->s = malloc(a->nb * sizeof *a->s);
    a->half = calloc(a->nb, sizeof *a->half);
    a->r = malloc(a->nb * sizeof *a->r);
    a->es = malloc(a->nb * sizeof *a->es);
    a->tb = malloc(a->nb * sizeof *a->tb);
    if (!a->s || !a->half || !a->r || !a->es || !a->tb) {
        pp_adapt_free(a);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the adaptive prior");
    }
    for (size_t k = 0; k < d; k++)
        for (size_t i = 0; i < h; i++)
            for (size_t j = 0; j < w; j++)
                a->half[((k / a->bz) * a->mh + i / block) * a->mw + j / block] += 0.5;
    *out = a;
    return PP_OK;
}

void pp_adapt_axis_weights(size_t depth, const double voxel[3], double ca[3])
{
    for (int a = 0; a < 3; a++) {
        double sa = voxel[a], sx = voxel[2];
        ca[a] = depth > 1 && sa > 0 && sx > 0 ? (sx / sa) * (sx / sa) : 1.0;
    }
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

/* τ | x, s for row i of slice k (every direction), weights c_a e^{s} τ into
 * wz, wh, wv and the block sums Σ τ c_a d² into a->r. ν = 2: Gamma(3/2,
 * rate) = (E + Z²/2)/rate. On a frame (c_a = 1, no z) the arithmetic and
 * the draws are those of before volumes existed: a product by c = 1 is
 * exact. */
static double tau_row(pp_adapt *a, const double *x, size_t k, size_t i, double *wz, double *wh,
                      double *wv, pp_rng *rng, double *z)
{
    const size_t w = a->w, np = a->h * w, o0 = k * np + i * w;
    const size_t bro = ((k / a->bz) * a->mh + i / a->bs) * a->mw; /* the row's first block */
    double tsum = 0, *tbr = a->tb + bro;
    const double *xr = x + o0, *xd = x + k * np + ((i + 1) % a->h) * w;
    const double *xz = a->d > 1 ? x + ((k + 1) % a->d) * np + i * w : NULL;
    const double *er = a->es + bro;
    const double cz = a->ca[0], cy = a->ca[1], cx = a->ca[2];
    double *rr = a->r + bro;
    const double hn = 0.5 * a->nu, shape = hn + 0.5;
    const int fast = a->nu == 2.0;
    const size_t kz = xz ? 3 : 2; /* normals per voxel */
    for (size_t j0 = 0; j0 < w; j0 += CHUNK) {
        size_t m = w - j0 < CHUNK ? w - j0 : CHUNK;
        if (fast)
            pp_rng_normals(rng, z, kz * m);
        for (size_t q = 0; q < m; q++) {
            size_t j = j0 + q, jb = j / a->bs;
            double es = er[jb];
            double dh = xr[j + 1 < w ? j + 1 : 0] - xr[j], dv = xd[j] - xr[j];
            double rh = hn + 0.5 * es * dh * dh * cx, rv = hn + 0.5 * es * dv * dv * cy, th, tv;
            if (fast) {
                th = (-log(pp_rng_uniform(rng)) + 0.5 * z[kz * q] * z[kz * q]) / rh;
                tv = (-log(pp_rng_uniform(rng)) + 0.5 * z[kz * q + 1] * z[kz * q + 1]) / rv;
            } else {
                th = pp_rng_gamma(rng, shape, rh);
                tv = pp_rng_gamma(rng, shape, rv);
            }
            double rs = th * dh * dh * cx + tv * dv * dv * cy, ts = th + tv;
            wh[o0 + j] = clampw(es * th * cx);
            wv[o0 + j] = clampw(es * tv * cy);
            if (xz) {
                double dz = xz[j] - xr[j], rz = hn + 0.5 * es * dz * dz * cz, tz;
                if (fast)
                    tz = (-log(pp_rng_uniform(rng)) + 0.5 * z[kz * q + 2] * z[kz * q + 2]) / rz;
                else
                    tz = pp_rng_gamma(rng, shape, rz);
                rs += tz * dz * dz * cz;
                ts += tz;
                wz[o0 + j] = clampw(es * tz * cz);
            }
            rr[jb] += rs;
            tsum += ts;
            tbr[jb] += ts;
        }
    }
    return tsum;
}

/* log of the block's conditional density at t (up to a constant). */
static double block_logf(double t, double half, double R, double prec, double mean)
{
    return half * t - 0.5 * exp(t) * R - 0.5 * prec * (t - mean) * (t - mean);
}

/* Neighbour count and mean of block b's s (free edges; 4 neighbours in a
 * frame's block grid, 6 in a volume's). */
static size_t block_nbrs(const pp_adapt *a, size_t b, double *mean)
{
    const size_t mp = a->mh * a->mw;
    size_t bk = b / mp, bi = b / a->mw % a->mh, bj = b % a->mw, m = 0;
    double sum = 0;
    if (bi > 0)
        sum += a->s[b - a->mw], m++;
    if (bi + 1 < a->mh)
        sum += a->s[b + a->mw], m++;
    if (bj > 0)
        sum += a->s[b - 1], m++;
    if (bj + 1 < a->mw)
        sum += a->s[b + 1], m++;
    if (bk > 0)
        sum += a->s[b - mp], m++;
    if (bk + 1 < a->md)
        sum += a->s[b + mp], m++;
    *mean = m ? sum / (double)m : 0.0;
    return m;
}

/* The ridge move's Gamma shape per voxel (pp_adapt_update): with k
 * increments per voxel, u^{k(ν+1)/2 − 1/2} from the k factors τ^{ν/2 − 1/2}
 * and the k Jacobian factors u per voxel and e^{n_B s/2}: (kν + k − 1)/2, on a
 * frame ν + 1/2 to the last bit (2ν + 1 rounds to twice ν + 1/2). */
static double ridge_shape(const pp_adapt *a)
{
    return 0.5 * (a->kinc * a->nu + (a->kinc - 1.0));
}

/* Block b's checkerboard colour (0 or 1; on a frame that of the block row
 * and column alone). */
static int colour_of(const pp_adapt *a, size_t b)
{
    size_t mp = a->mh * a->mw;
    return (int)((b / mp + b / a->mw % a->mh + b % a->mw) % 2);
}

/* The per-block scale move (see pp_adapt_update). */
static void block_scale(pp_adapt *a, size_t b, pp_rng *rng)
{
    if (!(a->tb[b] > 0))
        return;
    double mean, prec = a->kappa * (double)block_nbrs(a, b, &mean);
    double u = pp_rng_gamma(rng, 2.0 * a->half[b] * ridge_shape(a), 0.5 * a->nu * a->tb[b]);
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

/* κ and the block field together, in the field's non-centred form (the
 * ASIS idea of Yu & Meng, JCGS 2011, for a precision and the field it
 * governs): log κ' = log κ + ε, ε ~ N(0, σ²), and every block's deviation
 * from the frame's level L scaled by g = e^{−ε/2}, s'_B = L + g (s_B − L).
 * L (the frame blocks' mean) is unchanged, so p(L) is; κ' Σ (s'_B −
 * s'_B')² = κ Σ (s_B − s_B')², so the block field's GMRF density ratio,
 * (κ'/κ)^{(nb − 1)/2}, cancels the map's Jacobian g^{nb − 1} (the map fixes
 * the constant vector and scales the nb − 1 directions of zero frame mean).
 * What is left is κ's hyperprior (with the Jacobian of log κ) and the
 * factors of x | W that hold s: Σ_B n_B s_B / 2 − e^{s_B} R_B / 2, O(blocks)
 * with R_B = Σ_{e in B} τ_e c_a d_e² (a->r). Without it κ | s is pinned by
 * the blocks while the weakly informed blocks' s follow κ (a funnel:
 * bench/NOTES.md, 2026-12-04). Steps on log κ of several sizes in turn
 * (each a symmetric random walk). */
static void kappa_scale(pp_adapt *a, pp_rng *rng)
{
    static const double steps[] = {0.1, 0.3, 1.0, 0.3};
    const double L = frame_sum(a) / (double)a->nf;
    for (size_t k = 0; k < sizeof steps / sizeof steps[0]; k++) {
        double eps = steps[k] * pp_rng_normal(rng), g = exp(-0.5 * eps);
        double la = KAPPA_SHAPE * eps - KAPPA_RATE * a->kappa * expm1(eps);
        for (size_t b = 0; b < a->nb; b++) {
            double t = L + g * (a->s[b] - L);
            la += a->half[b] * (t - a->s[b]) - 0.5 * (exp(t) - exp(a->s[b])) * a->r[b];
        }
        if (isfinite(la) && log(pp_rng_uniform(rng)) < la) {
            for (size_t b = 0; b < a->nb; b++)
                a->s[b] = L + g * (a->s[b] - L);
            a->kappa *= exp(eps);
        }
    }
    a->ssum = frame_sum(a);
}

void pp_adapt_update(pp_adapt *a, const double *x, double *wz, double *wh, double *wv,
                     pp_rng *rng)
{
    double z[3 * CHUNK];
    a->ssum = frame_sum(a); /* afresh: no drift by rounding */
    for (size_t b = 0; b < a->nb; b++) {
        a->r[b] = a->tb[b] = 0;
        a->es[b] = exp(a->s[b]);
    }
    double tsum = 0;
    for (size_t k = 0; k < a->d; k++)
        for (size_t i = 0; i < a->h; i++)
            tsum += tau_row(a, x, k, i, wz, wh, wv, rng, z);
    /* Scale move along the ridge W = e^{s} τ (W, hence x, unchanged): τ → uτ,
     * s → s − log u, u from its exact conditional under the group of
     * scalings (Liu & Sabatti, Biometrika 2000): with Σ n_B/2 = N/2 and the
     * kN factors τ^{ν/2 − 1/2} e^{−ντ/2} of the joint (k = 2 on a frame, 3
     * on a volume), u ~ Gamma(N(kν + k − 1)/2, (ν/2) Σ τ) (frame: N(ν + 1/2)).
     * Without it the level of s trades against the mean of τ
     * one Gibbs step at a time. */
    double nn = (double)(a->d * a->h * a->w);
    double u = pp_rng_gamma(rng, nn * ridge_shape(a), 0.5 * a->nu * tsum);
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
     * proposed from the block's share of that Gamma, Gamma(n_B(kν + k − 1)/2,
     * (ν/2) T_B), and accepted with the ratio of the block field's GMRF
     * prior (independence Metropolis on the group; the other factors are
     * the proposal). Checkerboard colours as below. */
    for (int colour = 0; colour < 2; colour++)
        for (size_t b = 0; b < a->nb; b++)
            if (colour_of(a, b) == colour)
                block_scale(a, b, rng);
    /* the weights hold e^{s} τ at this s; keep it in es */
    for (size_t b = 0; b < a->nb; b++)
        a->es[b] = a->s[b];
    for (int colour = 0; colour < 2; colour++)
        for (size_t b = 0; b < a->nb; b++)
            if (colour_of(a, b) == colour)
                block_move(a, b, rng);
    double qs = 0;
    const size_t mp = a->mh * a->mw;
    for (size_t b = 0; b < a->nb; b++) {
        size_t bk = b / mp, bi = b / a->mw % a->mh, bj = b % a->mw;
        if (bi + 1 < a->mh)
            qs += (a->s[b + a->mw] - a->s[b]) * (a->s[b + a->mw] - a->s[b]);
        if (bj + 1 < a->mw)
            qs += (a->s[b + 1] - a->s[b]) * (a->s[b + 1] - a->s[b]);
        if (bk + 1 < a->md)
            qs += (a->s[b + mp] - a->s[b]) * (a->s[b + mp] - a->s[b]);
    }
    a->kappa = pp_rng_gamma(rng, KAPPA_SHAPE + 0.5 * (double)(a->nb - 1), KAPPA_RATE + 0.5 * qs);
    kappa_scale(a, rng);
    /* rescale the weights by e^{s_new - s_old} per block (moved blocks only) */
    for (size_t b = 0; b < a->nb; b++)
        a->es[b] = a->s[b] == a->es[b] ? 1.0 : exp(a->s[b] - a->es[b]);
    for (size_t k = 0; k < a->d; k++)
        for (size_t i = 0; i < a->h; i++) {
            const double *fr = a->es + ((k / a->bz) * a->mh + i / a->bs) * a->mw;
            const size_t o0 = (k * a->h + i) * a->w;
            for (size_t j = 0; j < a->w; j++) {
                double f = fr[j / a->bs];
                if (f != 1.0) {
                    wh[o0 + j] = clampw(wh[o0 + j] * f);
                    wv[o0 + j] = clampw(wv[o0 + j] * f);
                    if (a->d > 1)
                        wz[o0 + j] = clampw(wz[o0 + j] * f);
                }
            }
        }
}

void pp_adapt_shift(pp_adapt *a, double dl, double *wz, double *wh, double *wv)
{
    double f = exp(dl);
    for (size_t b = 0; b < a->nb; b++)
        a->s[b] += dl;
    a->ssum += dl * (double)a->nf;
    const size_t n = a->d * a->h * a->w;
    for (size_t i = 0; i < n; i++) {
        wh[i] = clampw(wh[i] * f);
        wv[i] = clampw(wv[i] * f);
    }
    for (size_t i = 0; a->d > 1 && i < n; i++)
        wz[i] = clampw(wz[i] * f);
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

void pp_adapt_block_shift(pp_adapt *a, size_t b, double ds, double *wz, double *wh, double *wv)
{
    a->s[b] += ds;
    a->ssum += ds * frame_share(a, b) * (double)a->nf;
    double f = exp(ds);
    size_t z0 = b / (a->mh * a->mw) * a->bz, r0 = (b / a->mw % a->mh) * a->bs,
           c0 = (b % a->mw) * a->bs;
    size_t z1 = z0 + a->bz < a->d ? z0 + a->bz : a->d;
    size_t r1 = r0 + a->bs < a->h ? r0 + a->bs : a->h, c1 = c0 + a->bs < a->w ? c0 + a->bs : a->w;
    for (size_t k = z0; k < z1; k++)
        for (size_t i = r0; i < r1; i++)
            for (size_t j = c0; j < c1; j++) {
                size_t p = (k * a->h + i) * a->w + j;
                wh[p] = clampw(wh[p] * f);
                wv[p] = clampw(wv[p] * f);
                if (a->d > 1)
                    wz[p] = clampw(wz[p] * f);
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
