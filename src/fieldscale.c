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

struct pp_fieldscale {
    size_t h, w, bs, r, k; /* grid, block side, kernel radius and side */
    double *ker;                   /* k x k: the PSF on the grid around pixel (0, 0) */
    double *g;                     /* window (bs + 2r)^2: A v */
};

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
    *f = (pp_fieldscale){h, w, block, r, k, NULL, NULL};
    size_t wn = (block + 2 * r) * (block + 2 * r), gm = h * (w / 2 + 1);
    f->ker = malloc(k * k * sizeof *f->ker);
    f->g = malloc(wn * sizeof *f->g);
    pp_complex *spec = pp_fft_alloc_complex(gm);
    double *grid = pp_fft_alloc_real(h * w);
    if (!f->ker || !f->g || !spec || !grid) {
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
    free(f->ker);
    free(f->g);
    free(f);
}

/* Σ w' d'² − w d² over the increments that cross block B's edge (one
 * endpoint in B: its values scaled about m by e, its weights — those of
 * increments starting in B — by ws). */
static double edge_dquad(const pp_fieldscale *f, const double *x, const double *wh,
                         const double *wv, size_t r0, size_t r1, size_t c0, size_t c1, double m,
                         double e, double ws)
{
    const size_t h = f->h, w = f->w;
    const size_t cl = (c0 + w - 1) % w, cr = c1 % w, ru = (r0 + h - 1) % h, rd = r1 % h;
    double dq = 0;
    for (size_t i = r0; i < r1; i++) {
        /* left: (i, cl) -> (i, c0), starts outside */
        double xo = x[i * w + cl], xi = x[i * w + c0], xn = m + e * (xi - m);
        double wt = wh[i * w + cl];
        dq += wt * ((xn - xo) * (xn - xo) - (xi - xo) * (xi - xo));
        /* right: (i, c1 - 1) -> (i, cr), starts inside */
        xi = x[i * w + c1 - 1], xo = x[i * w + cr], xn = m + e * (xi - m);
        wt = wh[i * w + c1 - 1];
        dq += wt * (ws * (xo - xn) * (xo - xn) - (xo - xi) * (xo - xi));
    }
    for (size_t j = c0; j < c1; j++) {
        double xo = x[ru * w + j], xi = x[r0 * w + j], xn = m + e * (xi - m);
        double wt = wv[ru * w + j];
        dq += wt * ((xn - xo) * (xn - xo) - (xi - xo) * (xi - xo));
        xi = x[(r1 - 1) * w + j], xo = x[rd * w + j], xn = m + e * (xi - m);
        wt = wv[(r1 - 1) * w + j];
        dq += wt * (ws * (xo - xn) * (xo - xn) - (xo - xi) * (xo - xi));
    }
    return dq;
}

/* One move of block b (fieldscale.h). Returns 1 when accepted. */
static int block_move(pp_fieldscale *f, pp_adapt *a, size_t b, size_t mw, double *x,
                      double *ax, double *y, double *wh, double *wv, double lambda,
                      const unsigned char *obs, pp_rng *rng, double *ss_obs)
{
    const size_t h = f->h, w = f->w, bs = f->bs, r = f->r, k = f->k;
    size_t r0 = (b / mw) * bs, c0 = (b % mw) * bs;
    size_t r1 = r0 + bs < h ? r0 + bs : h, c1 = c0 + bs < w ? c0 + bs : w;
    size_t nb = (r1 - r0) * (c1 - c0), ww = (c1 - c0) + 2 * r, wn = ((r1 - r0) + 2 * r) * ww;
    double m = 0;
    for (size_t i = r0; i < r1; i++)
        for (size_t j = c0; j < c1; j++)
            m += x[i * w + j];
    m /= (double)nb;
    double rho = RHO_SD * pp_rng_normal(rng), e = exp(rho), em = e - 1;
    double la = (double)(nb - 1) * rho + pp_adapt_block_dlogp(a, b, -2 * rho) -
                0.5 * edge_dquad(f, x, wh, wv, r0, r1, c0, c1, m, e, exp(-2 * rho));
    if (!isfinite(la))
        return 0;
    /* A v over the window: rows r0 - r ... r1 - 1 + r, columns likewise */
    memset(f->g, 0, wn * sizeof *f->g);
    for (size_t i = r0; i < r1; i++)
        for (size_t j = c0; j < c1; j++) {
            double v = x[i * w + j] - m;
            if (v == 0)
                continue;
            double *go = f->g + (i - r0) * ww + (j - c0);
            for (size_t di = 0; di < k; di++) {
                const double *kr = f->ker + di * k;
                double *gr = go + di * ww;
                for (size_t dj = 0; dj < k; dj++)
                    gr[dj] += kr[dj] * v;
            }
        }
    double g1 = 0, g2 = 0;
    for (size_t u = 0; u < wn / ww; u++) {
        size_t gi = (r0 + h + u - r) % h;
        for (size_t t = 0; t < ww; t++) {
            size_t gj = (c0 + w + t - r) % w;
            if (obs && !obs[gi * w + gj])
                continue;
            double gv = f->g[u * ww + t];
            g1 += gv * (ax[gi * w + gj] - y[gi * w + gj]);
            g2 += gv * gv;
        }
    }
    double dss = 2 * em * g1 + em * em * g2;
    la -= 0.5 * lambda * dss;
    if (!(log(pp_rng_uniform(rng)) < la))
        return 0;
    for (size_t i = r0; i < r1; i++)
        for (size_t j = c0; j < c1; j++)
            x[i * w + j] = m + e * (x[i * w + j] - m);
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
                             const unsigned char *obs, pp_rng *rng, double *ss_obs)
{
    if (!f)
        return 0;
    size_t bs, mh, mw;
    pp_adapt_geometry(a, &bs, &mh, &mw);
    unsigned acc = 0;
    for (size_t b = 0; b < mh * mw; b++)
        acc += (unsigned)block_move(f, a, b, mw, x, ax, y, wh, wv, lambda, obs, rng, ss_obs);
    return acc;
}
