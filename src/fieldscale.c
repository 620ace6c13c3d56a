/* pixpost — the adaptive prior's block field-scale move (see fieldscale.h
 * for the move and why it leaves the posterior invariant). */
#include "fieldscale.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"

/* sd of ρ: half the spread of s_B given its neighbours on the flat blocks
 * measured (1/√(4κ) ≈ 0.6 at κ ≈ 0.7 on 128² photographs; ρ moves s_B by
 * 2ρ). A rule of thumb, not tuned per frame. */
#define RHO_SD 0.3
/* A block's DCT mode (u, v) is held (left out of the scaled detail) where
 * the PSF passes its frequency (π u / rows, π v / columns) with |OTF| at
 * least this share of the DC's: there the data pin the block's content and
 * scaling it would be rejected. A rule of thumb (bench/NOTES.md,
 * 2026-12-05 stop 33), not tuned per frame. */
#define FS_HELD_OTF 0.25

/* The held modes of one block shape (rows x columns): nk orthonormal basis
 * images (2-D DCT-II products, row-major over the block), mode (0, 0)
 * first. */
typedef struct {
    size_t nr, nc, nk;
    double *phi; /* nk x nr nc */
} fs_shape;

struct pp_fieldscale {
    size_t h, w, bs, r, k; /* grid, block side, kernel radius and side */
    double *ker;                   /* k x k: the PSF on the grid around pixel (0, 0) */
    double *g;                     /* window (bs + 2r)^2: A v */
    double *v;                     /* bs^2: the block's scaled detail */
    fs_shape shape[4];             /* full, short rows, short columns, both */
};

/* |OTF| relative to the DC's at the grid frequency nearest to (π u / nr,
 * π v / nc) rad/px (the half spectrum covers column frequencies 0 ... w/2). */
static double otf_share(const pp_complex *otf, size_t h, size_t w, size_t u, size_t nr,
                        size_t v, size_t nc)
{
    size_t ky = (size_t)floor((double)u * (double)h / (2.0 * (double)nr) + 0.5);
    size_t kx = (size_t)floor((double)v * (double)w / (2.0 * (double)nc) + 0.5);
    ky = ky > h / 2 ? h / 2 : ky, kx = kx > w / 2 ? w / 2 : kx;
    double a0 = cabs(otf[0]);
    return a0 > 0 ? cabs(otf[ky * (w / 2 + 1) + kx]) / a0 : 0.0;
}

static double dct_basis(size_t u, size_t i, size_t n)
{
    double a = u == 0 ? sqrt(1.0 / (double)n) : sqrt(2.0 / (double)n);
    return a * cos(PP_PI * ((double)i + 0.5) * (double)u / (double)n);
}

static pp_status shape_init(fs_shape *sh, size_t nr, size_t nc, const pp_complex *otf, size_t h,
                            size_t w)
{
    size_t nk = 0, nb = nr * nc;
    *sh = (fs_shape){nr, nc, 0, NULL};
    if (nr == 0 || nc == 0)
        return PP_OK;
    for (int pass = 0; pass < 2; pass++) { /* count the held modes, then fill */
        if (pass && !(sh->phi = malloc(nk * nb * sizeof *sh->phi)))
            return PP_ERR_NOMEM;
        nk = 0;
        for (size_t u = 0; u < nr; u++)
            for (size_t v = 0; v < nc; v++) {
                if ((u || v) && otf_share(otf, h, w, u, nr, v, nc) < FS_HELD_OTF)
                    continue;
                if (!pass) {
                    nk++;
                    continue;
                }
                double *p = sh->phi + nk++ * nb;
                for (size_t i = 0; i < nr; i++)
                    for (size_t j = 0; j < nc; j++)
                        p[i * nc + j] = dct_basis(u, i, nr) * dct_basis(v, j, nc);
            }
    }
    sh->nk = nk;
    return PP_OK;
}

pp_status pp_fieldscale_create(size_t h, size_t w, size_t ksize,
                               size_t block, const pp_complex *otf, const pp_fft *fft,
                               pp_fieldscale **out)
{
    *out = NULL;
    size_t r = ksize / 2 + 1, k = 2 * r + 1;
    if (block + 2 * r > h || block + 2 * r > w || block + 2 > h || block + 2 > w)
        return PP_OK; /* too small: the windows would wrap onto themselves */
    pp_fieldscale *f = calloc(1, sizeof *f);
    if (!f)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the field-scale move");
    f->h = h, f->w = w, f->bs = block, f->r = r, f->k = k;
    size_t wn = (block + 2 * r) * (block + 2 * r), gm = h * (w / 2 + 1);
    size_t rows[2] = {block, h % block}, cols[2] = {block, w % block};
    f->ker = malloc(k * k * sizeof *f->ker);
    f->g = malloc(wn * sizeof *f->g);
    f->v = malloc(block * block * sizeof *f->v);
    pp_complex *spec = pp_fft_alloc_complex(gm);
    double *grid = pp_fft_alloc_real(h * w);
    int bad = !f->ker || !f->g || !f->v || !spec || !grid;
    for (int q = 0; q < 4 && !bad; q++)
        bad = shape_init(&f->shape[q], rows[q / 2], cols[q % 2], otf, h, w) != PP_OK;
    if (bad) {
        pp_fft_free_buffer(spec);
        pp_fft_free_buffer(grid);
        pp_fieldscale_free(f);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the field-scale move");
    }
    /* the PSF on the grid: c2r(otf) / N (FFTW's unnormalised transforms);
     * it is zero (to rounding) beyond the kernel's half side */
    memcpy(spec, otf, gm * sizeof *spec);
    pp_fft_inverse(fft, spec, grid);
    for (size_t di = 0; di < k; di++)
        for (size_t dj = 0; dj < k; dj++) {
            size_t gi = (di + h - r) % h, gj = (dj + w - r) % w;
            f->ker[di * k + dj] = grid[gi * w + gj] / (double)(h * w);
        }
    pp_fft_free_buffer(spec);
    pp_fft_free_buffer(grid);
    *out = f;
    return PP_OK;
}

void pp_fieldscale_free(pp_fieldscale *f)
{
    if (!f)
        return;
    for (int q = 0; q < 4; q++)
        free(f->shape[q].phi);
    free(f->ker);
    free(f->g);
    free(f->v);
    free(f);
}

/* Σ w' d'² − w d² over the increments with an end in block B (rows r0 ...
 * r1 − 1, columns c0 ... c1 − 1): x' = x + em v on B (v row-major over the
 * block), the weights of the increments that start in B times ws. */
static double block_dquad(const pp_fieldscale *f, const double *x, const double *wh,
                          const double *wv, size_t r0, size_t r1, size_t c0, size_t c1,
                          const double *v, double em, double ws)
{
    const size_t h = f->h, w = f->w, nc = c1 - c0;
    const size_t cl = (c0 + w - 1) % w, ru = (r0 + h - 1) % h;
    double dq = 0;
    for (size_t i = r0; i < r1; i++) {
        const double *vr = v + (i - r0) * nc;
        /* from the left neighbour outside: weight held */
        double xo = x[i * w + cl], xi = x[i * w + c0], xn = xi + em * vr[0];
        dq += wh[i * w + cl] * ((xn - xo) * (xn - xo) - (xi - xo) * (xi - xo));
        const size_t id = (i + 1) % h;
        for (size_t j = c0; j < c1; j++) {
            size_t p = i * w + j, jr = (j + 1) % w;
            double xp = x[p], xpn = xp + em * vr[j - c0];
            double xq = x[i * w + jr], xqn = j + 1 < c1 ? xq + em * vr[j + 1 - c0] : xq;
            dq += wh[p] * (ws * (xqn - xpn) * (xqn - xpn) - (xq - xp) * (xq - xp));
            xq = x[id * w + j];
            xqn = i + 1 < r1 ? xq + em * v[(i + 1 - r0) * nc + (j - c0)] : xq;
            dq += wv[p] * (ws * (xqn - xpn) * (xqn - xpn) - (xq - xp) * (xq - xp));
        }
    }
    for (size_t j = c0; j < c1; j++) { /* from the neighbour above */
        double xo = x[ru * w + j], xi = x[r0 * w + j], xn = xi + em * v[j - c0];
        dq += wv[ru * w + j] * ((xn - xo) * (xn - xo) - (xi - xo) * (xi - xo));
    }
    return dq;
}

/* v = the block's content less its held modes (an orthogonal projection). */
static void block_detail(const fs_shape *sh, const double *x, size_t w, size_t r0, size_t c0,
                         double *v)
{
    const size_t nr = sh->nr, nc = sh->nc, nb = nr * nc;
    for (size_t i = 0; i < nr; i++)
        for (size_t j = 0; j < nc; j++)
            v[i * nc + j] = x[(r0 + i) * w + c0 + j];
    for (size_t q = 0; q < sh->nk; q++) {
        const double *p = sh->phi + q * nb;
        double c = 0;
        for (size_t t = 0; t < nb; t++)
            c += p[t] * v[t];
        for (size_t t = 0; t < nb; t++)
            v[t] -= c * p[t];
    }
}

/* One move of block b (fieldscale.h). Returns 1 when accepted. */
static int block_move(pp_fieldscale *f, pp_adapt *a, size_t b, size_t mw, double *x,
                      double *ax, double *y, double *wh, double *wv, double lambda,
                      const unsigned char *obs, const unsigned char *cens, double level,
                      pp_rng *rng, double *ss_obs)
{
    const size_t h = f->h, w = f->w, bs = f->bs, r = f->r, k = f->k;
    size_t r0 = (b / mw) * bs, c0 = (b % mw) * bs;
    size_t r1 = r0 + bs < h ? r0 + bs : h, c1 = c0 + bs < w ? c0 + bs : w;
    size_t nr = r1 - r0, nc = c1 - c0, nb = nr * nc, ww = nc + 2 * r, wn = (nr + 2 * r) * ww;
    const fs_shape *sh = &f->shape[(nr < bs ? 2 : 0) + (nc < bs ? 1 : 0)];
    double *v = f->v;
    block_detail(sh, x, w, r0, c0, v);
    double rho = RHO_SD * pp_rng_normal(rng), e = exp(rho), em = e - 1;
    double la = (double)(nb - sh->nk) * rho + pp_adapt_block_dlogp(a, b, -2 * rho) -
                0.5 * block_dquad(f, x, wh, wv, r0, r1, c0, c1, v, em, exp(-2 * rho));
    if (!isfinite(la))
        return 0;
    /* A v over the window: rows r0 - r ... r1 - 1 + r, columns likewise */
    memset(f->g, 0, wn * sizeof *f->g);
    for (size_t i = 0; i < nr; i++)
        for (size_t j = 0; j < nc; j++) {
            double vv = v[i * nc + j];
            if (vv == 0)
                continue;
            double *go = f->g + i * ww + j;
            for (size_t di = 0; di < k; di++) {
                const double *kr = f->ker + di * k;
                double *gr = go + di * ww;
                for (size_t dj = 0; dj < k; dj++)
                    gr[dj] += kr[dj] * vv;
            }
        }
    double g1 = 0, g2 = 0;
    for (size_t u = 0; u < wn / ww; u++) {
        size_t gi = (r0 + h + u - r) % h;
        for (size_t t = 0; t < ww; t++) {
            size_t gj = (c0 + w + t - r) % w;
            double gv = f->g[u * ww + t];
            if (obs && !obs[gi * w + gj]) {
                size_t i = gi * w + gj;
                /* a censored latent datum below its level: the window's
                 * part of pp_censored_range's test (observed.h) */
                if (cens && cens[i] && em * gv < 0 && y[i] + em * gv < level)
                    return 0;
                continue;
            }
            g1 += gv * (ax[gi * w + gj] - y[gi * w + gj]);
            g2 += gv * gv;
        }
    }
    double dss = 2 * em * g1 + em * em * g2;
    la -= 0.5 * lambda * dss;
    if (!(log(pp_rng_uniform(rng)) < la))
        return 0;
    for (size_t i = 0; i < nr; i++)
        for (size_t j = 0; j < nc; j++)
            x[(r0 + i) * w + c0 + j] += em * v[i * nc + j];
    for (size_t u = 0; u < wn / ww; u++) {
        size_t gi = (r0 + h + u - r) % h;
        for (size_t t = 0; t < ww; t++) {
            size_t gj = (c0 + w + t - r) % w, i = gi * w + gj;
            double d = em * f->g[u * ww + t];
            ax[i] += d;
            if (obs && !obs[i])
                y[i] += d; /* the latent pixels' noise e held */
        }
    }
    *ss_obs += dss;
    pp_adapt_block_shift(a, b, -2 * rho, NULL, wh, wv); /* frames only: no wz */
    return 1;
}

unsigned pp_fieldscale_sweep(pp_fieldscale *f, pp_adapt *a, double *x, double *ax, double *y,
                             double *wh, double *wv, double lambda,
                             const unsigned char *obs, const unsigned char *cens,
                             double level, pp_rng *rng, double *ss_obs)
{
    if (!f)
        return 0;
    size_t bs, mh, mw;
    pp_adapt_geometry(a, &bs, &mh, &mw);
    unsigned acc = 0;
    for (size_t b = 0; b < mh * mw; b++)
        acc += (unsigned)block_move(f, a, b, mw, x, ax, y, wh, wv, lambda, obs, cens, level, rng,
                                    ss_obs);
    return acc;
}
