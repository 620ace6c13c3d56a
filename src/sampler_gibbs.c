/* pixpost — hierarchical Gibbs sampler for the linear-Gaussian model
 * (Bardsley, SIAM J. Sci. Comput. 34, 2012), all in Fourier space.
 *
 * One iteration, given (lambda, delta) and the data spectrum y-hat:
 *   1. x | lambda, delta, y ~ N(mu, P^-1), P = lambda A'A + delta Q, which is
 *      diagonal in Fourier space: p(k) = lambda |A(k)|^2 + delta q(k),
 *      mu(k) = lambda conj(A(k)) y(k) / p(k) and x(k) = mu(k) + w(k)/sqrt p(k)
 *      with w the DFT of real white noise drawn straight into the half
 *      spectrum (exact, independent draw; no inner solver): the edge
 *      columns first (edge_noise), then the interior row by row.
 *   2. lambda | x, y ~ Gamma(a + N/2, b + ||Ax - y||^2 / 2)
 *   3. delta | x ~ Gamma(a + rank/2, b + x'Qx / 2)
 *   3b. interweaving (ASIS; Yu & Meng, JCGS 20, 2011): delta again, now
 *      given the non-centred field u = delta^1/2 (x - m) and the data, with
 *      x = m + delta^-1/2 u moving along (an exact independence Metropolis
 *      step, asis_delta). The centred step 3 alone mixes slowly when the
 *      frame is large (Agapiou et al. 2014); the two together mix better
 *      than either. With pad the padding's noise is held fixed too, so the
 *      padding moves with x (asis_delta_pad, one grid pass).
 * The sums of steps 2-3 are half-spectrum sums (Parseval), fused with
 * step 1 into one pass. Measured on the demo frame (192 x 160, pad, 4 x 1000
 * draws): bulk-ESS of delta 43 without step 3b, 238 with it.
 *
 * --boundary pad (data augmentation, DESIGN.md section 3): the grid is larger
 * than the frame; padding pixels are unobserved and redrawn every iteration
 * from N(Ax, 1/lambda), which keeps step 1 Fourier-diagonal. Missing frame
 * pixels (NaN, src/observed.h) are latent the same way, with either
 * boundary: "pad" below means any latent pixel (s->augment).
 *
 * Estimates (kept draws only): the Rao-Blackwellised mean (the average of
 * mu) and the law of total variance, Var x_i = E[v] + Var(mu_i), where the
 * conditional variance v = (1/N) sum_k 1/p(k) is the same for every pixel
 * given (lambda, delta, padding). Probe pixels of the draw x come from
 * direct half-spectrum sums (no transform).
 *
 * Cost per iteration (grid N pixels, half spectrum M ~ N/2):
 *   periodic: no transform; 1 pass over the half spectrum (the noise is
 *             drawn block by block inside the fused update and never
 *             stored; mu is stored for kept draws only) + a kept draw's
 *             one c2r (of mu) and one pass of moments. Its probe sums (3
 *             complex multiply-adds per entry, one per probe column) are
 *             taken inside the pass, from the draw in L1, so x-hat is never
 *             stored (with width sampling or pad it is, and the probes are
 *             summed from it). The pass's elementwise part is vectorised
 *             (AVX-512/AVX2 clones), its sums taken afterwards in a fixed
 *             order; at 1024^2 a thinned-out iteration is then ~60 %
 *             normals (bench/NOTES.md).
 *   pad:      + one c2r (A x) and one r2c (augmented data), one grid pass.
 * Uncertain PSF width (sigma=auto / na=auto, src/psfwidth.c): after step 1
 * a random-walk Metropolis step on the width given x and lambda, on
 * -lambda/2 ||A_w x - y||^2 (one half-spectrum pass using x-hat); each
 * proposal costs a kernel rebuild and one r2c. Pad then always keeps x-hat
 * and forms A x-hat with the accepted width.
 * Memory: per thread 2 half spectra (16N bytes) and one real grid (8N), pad
 * adding a real grid and a half spectrum (16N); per chain the frame moments
 * (20 bytes/pixel). See src/sampler.c. Periodic without width sampling
 * never writes the second half spectrum (cbuf2), so its pages are never
 * resident (8N bytes per thread less in practice).
 */
#include <math.h>
#include "internal.h"
#include "grid.h"
#include "observed.h"
#include "pp_assert.h"
#include "padscale.h"
#include "psfwidth.h"
#include "sampler_gibbs.h"
#include "sampler_internal.h"
#include "spectral.h"
#include "vmath.h"

typedef pp_fused_sums fused_sums;

/* Row partial sums of the fused pass (unweighted). */
typedef struct {
    double ss, qf, cv, v0, c0;
} row_sums;

/* One half-spectrum entry i of step 1 (real arithmetic: gcc's complex
 * multiply carries a NaN-recovery branch that stops vectorisation). One
 * sqrt and one division per entry: rs = 1/sqrt(p), 1/p = rs^2. m is the
 * prior mean spectrum at this entry (non-zero at i = 0 only). */
static inline void fused_entry(const pp_sampler *s, const pp_chain *c, size_t i, double m,
                               int want_ax, double invn, row_sums *acc, double xo[2])
{
    const double lam = c->lambda, del = c->delta;
    const double *ot = (const double *)(c->otf + i), *y = (const double *)(c->yhat + i);
    double *w = (double *)(c->cbuf + i), *o = (double *)(c->cbuf2 + i);
    double qq = s->q[i], p = lam * c->otf2[i] + del * qq;
    double rs = 1.0 / sqrt(p), ip = rs * rs;
    /* mu = (lam conj(A) y + del q m) / p */
    double mr = (lam * (ot[0] * y[0] + ot[1] * y[1]) + del * qq * m) * ip;
    double mi = lam * (ot[0] * y[1] - ot[1] * y[0]) * ip;
    double xr = mr + w[0] * rs, xi = mi + w[1] * rs;
    double ar = ot[0] * xr - ot[1] * xi, ai = ot[0] * xi + ot[1] * xr;
    double rr = ar - y[0], ri = ai - y[1], dr = xr - m;
    /* A (x - m) and y - A m, for the interweaving step (only where q > 0:
     * a zero-eigenvalue level is not rescaled) */
    double on = qq > 0 ? 1.0 : 0.0, er = ar - ot[0] * m, ei = ai - ot[1] * m;
    acc->ss += rr * rr + ri * ri;
    acc->qf += qq * (dr * dr + xi * xi);
    acc->cv += ip;
    acc->v0 += on * (er * er + ei * ei);
    acc->c0 += on * (er * (y[0] - ot[0] * m) + ei * (y[1] - ot[1] * m));
    w[0] = mr * invn;
    w[1] = mi * invn;
    if (want_ax >= 0) {
        o[0] = want_ax ? ar : xr;
        o[1] = want_ax ? ai : xi;
    }
    xo[0] = xr;
    xo[1] = xi;
}

/* Probe values summed inside the pass (kept draws that need x-hat for
 * nothing else): per row, for each distinct probe column u the sum over
 * the row of x-hat times that column's twiddles (tw_col, which carry the
 * half-spectrum weight and 1/N), then each probe adds the real part of its
 * column's sum times its row twiddle, as probes_fast does from a stored
 * x-hat. */
typedef struct probe_acc {
    size_t nu, ucol[PP_MAX_PROBES], which[PP_MAX_PROBES];
    double re[PP_MAX_PROBES], im[PP_MAX_PROBES]; /* this row's column sums */
    double acc[PP_MAX_PROBES];
} probe_acc;

static void probe_setup(const pp_sampler *s, probe_acc *pa)
{
    pa->nu = 0;
    for (size_t p = 0; p < s->nprobe; p++) {
        size_t u = 0;
        while (u < pa->nu && s->probe_c[pa->ucol[u]] != s->probe_c[p])
            u++;
        if (u == pa->nu)
            pa->ucol[pa->nu++] = p;
        pa->which[p] = u;
        pa->acc[p] = 0;
    }
    for (size_t u = 0; u < pa->nu; u++)
        pa->re[u] = pa->im[u] = 0;
}

/* One entry (column col of the current row) into the column sums. */
static inline void probe_entry(const pp_sampler *s, probe_acc *pa, size_t col, const double x[2])
{
    for (size_t u = 0; u < pa->nu; u++) {
        const double *tc = (const double *)(s->tw_col + pa->ucol[u] * s->gwh + col);
        pa->re[u] += x[0] * tc[0] - x[1] * tc[1];
        pa->im[u] += x[0] * tc[1] + x[1] * tc[0];
    }
}

/* End of row k1: each probe takes its column's sum times its row twiddle. */
static void probe_row_end(const pp_sampler *s, probe_acc *pa, size_t k1)
{
    for (size_t p = 0; p < s->nprobe; p++) {
        const double *tr = (const double *)(s->tw_row + p * s->grows + k1);
        pa->acc[p] += pa->re[pa->which[p]] * tr[0] - pa->im[pa->which[p]] * tr[1];
    }
    for (size_t u = 0; u < pa->nu; u++)
        pa->re[u] = pa->im[u] = 0;
}

/* Entries [i0, i0 + n) of one row whose prior mean is 0 (the bulk of the
 * pass; n <= NOISE_BLOCK), noise g (scaled by gs). Two loops: an
 * elementwise one that the compiler vectorises (no reductions: strict
 * ISO floating point forbids reordering sums), writing the five per-entry
 * terms of the sums to small arrays in L1, then the sums in index order,
 * FUSED_LANES partial sums per term. Cloned for AVX-512 and AVX2 like the
 * bulk normals (src/rng.c). */
#define NOISE_BLOCK 256
#define FUSED_LANES 8
PP_VECTOR_CLONES static void fused_block(const pp_sampler *s, const pp_chain *c, size_t i0,
                                      size_t n, const double *restrict g, double gs, int want_ax,
                                      int want_mu, double invn, row_sums *acc, probe_acc *pa)
{
    const double lam = c->lambda, del = c->delta;
    const double *restrict ot = (const double *)(c->otf + i0);
    const double *restrict y = (const double *)(c->yhat + i0);
    const double *restrict q = s->q + i0, *restrict o2 = c->otf2 + i0;
    double *restrict w = (double *)(c->cbuf + i0), *restrict o = (double *)(c->cbuf2 + i0);
    double tss[NOISE_BLOCK], tqf[NOISE_BLOCK], tcv[NOISE_BLOCK], tv0[NOISE_BLOCK],
        tc0[NOISE_BLOCK], txr[NOISE_BLOCK], txi[NOISE_BLOCK], tmr[NOISE_BLOCK], tmi[NOISE_BLOCK];
    const int ax = want_ax > 0;
    for (size_t j = 0; j < n; j++) {
        double qq = q[j], p = lam * o2[j] + del * qq;
        double rs = 1.0 / sqrt(p), ip = rs * rs;
        double a0 = ot[2 * j], a1 = ot[2 * j + 1], y0 = y[2 * j], y1 = y[2 * j + 1];
        double mr = lam * (a0 * y0 + a1 * y1) * ip, mi = lam * (a0 * y1 - a1 * y0) * ip;
        double xr = mr + g[2 * j] * (gs * rs), xi = mi + g[2 * j + 1] * (gs * rs);
        double ar = a0 * xr - a1 * xi, ai = a0 * xi + a1 * xr;
        double rr = ar - y0, ri = ai - y1, on = qq > 0 ? 1.0 : 0.0;
        tss[j] = rr * rr + ri * ri;
        tqf[j] = qq * (xr * xr + xi * xi);
        tcv[j] = ip;
        tv0[j] = on * (ar * ar + ai * ai);
        tc0[j] = on * (ar * y0 + ai * y1);
        txr[j] = ax ? ar : xr;
        txi[j] = ax ? ai : xi;
        tmr[j] = mr * invn;
        tmi[j] = mi * invn;
    }
    if (want_mu)
        for (size_t j = 0; j < n; j++) {
            w[2 * j] = tmr[j];
            w[2 * j + 1] = tmi[j];
        }
    if (want_ax >= 0)
        for (size_t j = 0; j < n; j++) {
            o[2 * j] = txr[j];
            o[2 * j + 1] = txi[j];
        }
    /* x-hat against each distinct probe column's twiddles (txr, txi hold x
     * when want_ax < 1), in lanes like the sums below */
    for (size_t u = 0; pa && u < pa->nu; u++) {
        const double *restrict tc = (const double *)(s->tw_col + pa->ucol[u] * s->gwh +
                                                     i0 % s->gwh);
        double sr[FUSED_LANES] = {0}, si[FUSED_LANES] = {0};
        size_t nb = n - n % FUSED_LANES;
        for (size_t b = 0; b < nb; b += FUSED_LANES)
            for (size_t l = 0; l < FUSED_LANES; l++) {
                size_t k = b + l;
                sr[l] += txr[k] * tc[2 * k] - txi[k] * tc[2 * k + 1];
                si[l] += txr[k] * tc[2 * k + 1] + txi[k] * tc[2 * k];
            }
        for (size_t k = nb; k < n; k++) {
            sr[0] += txr[k] * tc[2 * k] - txi[k] * tc[2 * k + 1];
            si[0] += txr[k] * tc[2 * k + 1] + txi[k] * tc[2 * k];
        }
        pa->re[u] += pp_lanes_total(sr);
        pa->im[u] += pp_lanes_total(si);
    }
    double ss[FUSED_LANES] = {0}, qf[FUSED_LANES] = {0}, cv[FUSED_LANES] = {0};
    double v0[FUSED_LANES] = {0}, c0[FUSED_LANES] = {0};
    size_t nb = n - n % FUSED_LANES;
    for (size_t b = 0; b < nb; b += FUSED_LANES)
        for (size_t l = 0; l < FUSED_LANES; l++) {
            ss[l] += tss[b + l];
            qf[l] += tqf[b + l];
            cv[l] += tcv[b + l];
            v0[l] += tv0[b + l];
            c0[l] += tc0[b + l];
        }
    for (size_t j = nb; j < n; j++) {
        ss[0] += tss[j];
        qf[0] += tqf[j];
        cv[0] += tcv[j];
        v0[0] += tv0[j];
        c0[0] += tc0[j];
    }
    for (size_t l = 0; l < FUSED_LANES; l++) {
        acc->ss += ss[l];
        acc->qf += qf[l];
        acc->cv += cv[l];
        acc->v0 += v0[l];
        acc->c0 += c0[l];
    }
}

/* The edge columns' noise (0 and, W even, W/2: row k1 pairs with row H-k1
 * as complex conjugates; rows 0 and H/2 are real with variance N; in a
 * volume row (kz, k1) pairs with (-kz, -k1)), into cbuf, exactly as
 * pp_half_noise draws them for a frame (src/spectral.c; the pairing is
 * pp_grid_hermitian_column, src/grid.h, any rank). */
static void edge_noise(const pp_sampler *s, pp_chain *c, size_t ncol)
{
    const size_t h = s->grows, wh = s->gwh;
    const double sc = sqrt((double)s->gn / 2.0);
    const pp_shape gs = s->gshape;
    double g[2 * NOISE_BLOCK];
    for (size_t e = 0; e < ncol; e++) {
        size_t col = e == 0 ? 0 : wh - 1;
        for (size_t k0 = 0; k0 < h; k0 += NOISE_BLOCK) {
            size_t m = h - k0 < NOISE_BLOCK ? h - k0 : NOISE_BLOCK;
            pp_rng_normals(&c->rng, g, 2 * m);
            for (size_t k = 0; k < m; k++)
                c->cbuf[(k0 + k) * wh + col] = sc * (g[2 * k] + I * g[2 * k + 1]);
        }
        pp_grid_hermitian_column(c->cbuf, &gs, col);
    }
}

/* Step 1 plus the sums (internal.h), drawing its own white noise: the edge
 * columns first (edge_noise), then the interior row by row in blocks of
 * NOISE_BLOCK entries generated into a stack buffer and used at once (the
 * noise never goes through memory as a half spectrum). cbuf receives mu/N (want_mu; the edge
 * entries always), cbuf2 x-hat (want_ax = 0) or A x-hat (1), or is left
 * alone (-1: a thinned-out iteration that needs neither saves one write
 * stream). Uses the chain's transfer function c->otf (it changes when the
 * width is sampled). Columns 0 and (W even) W/2 have half-spectrum weight
 * 1, the rest 2; each row is one run over the weight-2 interior and one or
 * two edge entries. */
fused_sums pp_gibbs_fused_pass(const pp_sampler *s, pp_chain *c, int want_ax, int want_mu,
                               double *probes)
{
    const double invn = 1.0 / (double)s->gn, gs = sqrt((double)s->gn / 2.0);
    const size_t wh = s->gwh, last = (s->gw % 2 == 0 && wh > 1) ? wh - 1 : wh;
    double g[2 * NOISE_BLOCK], x[2], x00 = 0;
    probe_acc pacc, *pa = probes ? &pacc : NULL;
    if (pa)
        probe_setup(s, pa);
    edge_noise(s, c, last < wh ? 2 : 1);
    row_sums edge = {0, 0, 0, 0, 0}, in = {0, 0, 0, 0, 0};
    for (size_t k1 = 0; k1 < s->grows; k1++) {
        size_t i = k1 * wh;
        fused_entry(s, c, i, k1 == 0 ? s->mean_dc : 0.0, want_ax, invn, &edge, x);
        if (k1 == 0)
            x00 = x[0];
        if (pa)
            probe_entry(s, pa, 0, x);
        for (size_t j0 = 1; j0 < last; j0 += NOISE_BLOCK) {
            size_t m = last - j0 < NOISE_BLOCK ? last - j0 : NOISE_BLOCK;
            pp_rng_normals(&c->rng, g, 2 * m);
            fused_block(s, c, i + j0, m, g, gs, want_ax, want_mu, invn, &in, pa);
        }
        if (last < wh) {
            fused_entry(s, c, i + last, 0.0, want_ax, invn, &edge, x);
            if (pa)
                probe_entry(s, pa, last, x);
        }
        if (pa)
            probe_row_end(s, pa, k1);
    }
    for (size_t p = 0; pa && p < s->nprobe; p++)
        probes[p] = pa->acc[p];
    return (fused_sums){(edge.ss + 2 * in.ss) * invn, (edge.qf + 2 * in.qf) * invn,
                        (edge.cv + 2 * in.cv) * invn, (edge.v0 + 2 * in.v0) * invn,
                        (edge.c0 + 2 * in.c0) * invn, x00};
}

/* sum_k row[k] tc[k] over n complex entries into (*re, *im), with
 * FUSED_LANES partial sums combined in a fixed order (vectorisable). */
PP_VECTOR_CLONES static void row_dot(const double *restrict row, const double *restrict tc, size_t n,
                                  double *re, double *im)
{
    double sr[FUSED_LANES] = {0}, si[FUSED_LANES] = {0};
    size_t nb = n - n % FUSED_LANES;
    for (size_t b = 0; b < nb; b += FUSED_LANES)
        for (size_t l = 0; l < FUSED_LANES; l++) {
            size_t k = b + l;
            sr[l] += row[2 * k] * tc[2 * k] - row[2 * k + 1] * tc[2 * k + 1];
            si[l] += row[2 * k] * tc[2 * k + 1] + row[2 * k + 1] * tc[2 * k];
        }
    for (size_t k = nb; k < n; k++) {
        sr[0] += row[2 * k] * tc[2 * k] - row[2 * k + 1] * tc[2 * k + 1];
        si[0] += row[2 * k] * tc[2 * k + 1] + row[2 * k + 1] * tc[2 * k];
    }
    double r = 0, i = 0;
    for (size_t l = 0; l < FUSED_LANES; l++) {
        r += sr[l];
        i += si[l];
    }
    *re = r;
    *im = i;
}

/* Probe values of the field whose half spectrum is xh: the inverse DFT at
 * each probe as a direct half-spectrum sum, with the twiddle tables that
 * sampler.c plans. The probes sit on a few distinct columns (3 for the
 * 3 x 3 spread), so each row's inner sum is made once per distinct column
 * and combined with each probe's row twiddle: ncol instead of nprobe
 * complex multiply-adds per entry, one read of xh. */
static void probes_fast(const pp_sampler *s, const pp_complex *xh, double *out)
{
    probe_acc pa;
    probe_setup(s, &pa);
    for (size_t k1 = 0; k1 < s->grows; k1++) {
        const double *row = (const double *)(xh + k1 * s->gwh);
        for (size_t u = 0; u < pa.nu; u++)
            row_dot(row, (const double *)(s->tw_col + pa.ucol[u] * s->gwh), s->gwh, &pa.re[u],
                    &pa.im[u]);
        probe_row_end(s, &pa, k1);
    }
    for (size_t p = 0; p < s->nprobe; p++)
        out[p] = pa.acc[p];
}

/* Pad: from A x (rbuf, times N) redraw the latent pixels of yaug (padding,
 * missing pixels; censored ones from the normal truncated at their level,
 * src/observed.h); returns the observed residual sum of squares in *ss_obs
 * and the latent one in *ss_pad. */
static void augment(const pp_sampler *s, pp_chain *c, double *ss_obs, double *ss_pad)
{
    const double invn = 1.0 / (double)s->gn, sd = 1.0 / sqrt(c->lambda);
    /* The c2r just consumed cbuf2, which holds 2 gm >= gn doubles: draw the
     * padding's normals there in one bulk call. */
    double *e = (double *)c->cbuf2;
    pp_rng_normals(&c->rng, e, s->gn - s->nobs);
    double so = 0, sp = 0;
    size_t k = 0;
    for (size_t r = 0; r < s->grows; r++) {
        const double *ax = c->rbuf + r * s->gw, *y = s->ygrid + r * s->gw;
        const unsigned char *ob = s->obs + r * s->gw;
        double *ya = c->yaug + r * s->gw;
        for (size_t col = 0; col < s->gw; col++) {
            if (ob[col]) {
                double d = ax[col] * invn - y[col];
                so += d * d;
                continue;
            }
            double en = sd * e[k++];
            if (s->cens && s->cens[r * s->gw + col]) { /* censored: truncated at its level */
                ya[col] = pp_censored_draw(s, &c->rng, ax[col] * invn, sd);
                en = ya[col] - ax[col] * invn;
            } else {
                ya[col] = ax[col] * invn + en;
            }
            sp += en * en;
        }
    }
    *ss_obs = so;
    *ss_pad = sp;
}

/* Stores a kept draw: moments of mu, the conditional variance and the trace
 * row (whose probe columns are already filled when probes_done: by the pass,
 * or in pad mode from x-hat). */
void pp_gibbs_record(const pp_sampler *s, pp_chain *c, const fused_sums *f, double loglik,
                     int probes_done, int regions_hat)
{
    /* c2r of mu/N gives mu on the grid; keep the frame block. */
    pp_fft_inverse(s->fft, c->cbuf, c->rbuf);
    pp_chain_add_draw(s, c, c->rbuf);
    if (regions_hat && s->draw_stats) /* cbuf is free after its c2r */
        pp_chain_draw_stats_hat(s, c, c->cbuf2, c->cbuf, c->rbuf);
    c->condvar_sum += f->cvar;
    PP_ASSERT(c->kept < s->trace_cap); /* the row is inside this chain's store */
    double *row = c->trace + c->kept * s->trace.ncols;
    row[PP_COL_LAMBDA] = c->lambda;
    row[PP_COL_DELTA] = c->delta;
    row[PP_COL_LOGLIK] = loglik;
    if (s->col_width >= 0)
        row[s->col_width] = c->width;
    if (!probes_done)
        probes_fast(s, c->cbuf2, row + s->col_probe0);
    c->kept++;
}

/* Log-likelihood of the width whose transfer function is otf, given the
 * draw x (x-hat in cbuf2) and lambda: -lambda/2 ||A_w x - y||^2 as a
 * half-spectrum sum against the chain's (possibly augmented) data. */
static double cond_logp(const pp_sampler *s, const pp_chain *c, const pp_complex *otf,
                        const double *otf2, void *ctx)
{
    (void)otf2;
    (void)ctx;
    double ss = 0;
    for (size_t k1 = 0; k1 < s->grows; k1++)
        for (size_t k2 = 0; k2 < s->gwh; k2++) {
            size_t i = k1 * s->gwh + k2;
            pp_complex r = otf[i] * c->cbuf2[i] - c->yhat[i];
            ss += pp_half_weight(k2, s->gw) * (creal(r) * creal(r) + cimag(r) * cimag(r));
        }
    return -0.5 * c->lambda * ss / (double)s->gn;
}

/* The width step of one iteration t (x-hat in cbuf2): updates f->resid to
 * the accepted width's residual. */
static void width_move(const pp_sampler *s, pp_chain *c, fused_sums *f, unsigned long t)
{
    double lp = -0.5 * c->lambda * f->resid;
    unsigned long adapt = t < s->cfg.burn ? t + 1 : 0;
    if (pp_width_step(s, c, cond_logp, NULL, &lp, adapt))
        f->resid = -2.0 * lp / c->lambda;
}

/* Pad: probes of a kept draw (x-hat in cbuf2), then A x on the grid and the
 * padding redrawn; returns the observed and total residual sums. */
static void pad_step(const pp_sampler *s, pp_chain *c, int keep, int have_xhat, double *ss_obs,
                     double *ss, double *xsum)
{
    if (keep) {
        double *row = c->trace + c->kept * s->trace.ncols;
        probes_fast(s, c->cbuf2, row + s->col_probe0);
        if (s->draw_stats) { /* the draw, kept until the interweaving step has moved it */
            memcpy(c->xcopy, c->cbuf2, s->gm * sizeof *c->xcopy);
            pp_fft_inverse(s->fft, c->xcopy, c->xdraw);
        }
    }
    /* A x-hat goes to the c2r's input after the probes (the c2r destroys it). */
    if (have_xhat)
        for (size_t i = 0; i < s->gm; i++)
            c->cbuf2[i] *= c->otf[i];
    *xsum = creal(c->cbuf2[0]) / creal(c->otf[0]); /* sum of x over the grid */
    pp_fft_inverse(s->fft, c->cbuf2, c->rbuf);
    double ss_pad;
    augment(s, c, ss_obs, &ss_pad);
    *ss = *ss_obs + ss_pad;
}

/* Log density of s = delta^-1/2 under the Gamma(a, b) prior on delta:
 * delta^(a-1) e^(-b delta) |d delta / d s| ~ s^(-2a-1) e^(-b / s^2). */
static double log_prior_s(double a, double b, double sv)
{
    return -(2 * a + 1) * log(sv) - b / (sv * sv);
}

/* The interweaving step for delta (Yu & Meng, JCGS 20, 2011, ASIS): after
 * delta | x in the centred parameterisation, delta | w, y in the non-centred
 * one, x = m + s u with s = delta^-1/2 and u = delta^1/2 (x - m) held fixed
 * (w = Q^1/2 u is white noise a priori, whatever delta is). Given u the
 * augmented-data likelihood is Gaussian in s, -lambda/2 (V s^2 - 2 C s),
 * with V = ||A u||^2 and C = <A u, y - A m>; so s' is proposed from that
 * Gaussian and accepted with the ratio of the prior densities of s (an
 * independence Metropolis step, exact). x then moves to m + s' u: every
 * entry with q > 0 of x - m is scaled by s'/s. Returns that ratio (1 when
 * rejected) and updates f->resid and f->quad to the new x. Cost: a few
 * scalar operations; the caller rescales x-hat only if it needs it. */
static double asis_delta(const pp_sampler *s, pp_chain *c, fused_sums *f)
{
    const double a = s->cfg.hyper_delta[0], b = s->cfg.hyper_delta[1];
    double s1 = 1.0 / sqrt(c->delta), V = f->v0 / (s1 * s1), C = f->c0 / s1;
    if (!(V > 0) || !isfinite(V) || !isfinite(C))
        return 1.0;
    double sp = C / V + pp_rng_normal(&c->rng) / sqrt(c->lambda * V);
    double u = pp_rng_uniform(&c->rng);
    if (!(sp > 0) || !(log(u) < log_prior_s(a, b, sp) - log_prior_s(a, b, s1)))
        return 1.0;
    f->resid += (sp * sp - s1 * s1) * V - 2 * (sp - s1) * C;
    double ratio = sp / s1;
    f->quad *= ratio * ratio;
    c->delta = 1.0 / (sp * sp);
    return ratio;
}

/* The interweaving step with padding: as asis_delta, but holding fixed
 * both u and the latent pixels' noise e = sqrt(lambda) (y_pad - A x), so
 * the latent data move with x and only the observed pixels inform s: V and
 * C are sums over the observed pixels of g = A x - c and y - c, c the part of x that is not
 * rescaled (its grid mean for an intrinsic prior, the prior mean M
 * otherwise; A c = c as the PSF sums to 1). Needs A x on the grid (rbuf,
 * times N, from pad_step); updates the padding in yaug, *ss_obs and *ss,
 * and a kept draw's probe values (linear in x) and its copy in xdraw. One
 * grid pass. */
static void asis_delta_pad(const pp_sampler *s, pp_chain *c, int keep, double xsum,
                           double *ss_obs, double *ss)
{
    const double a = s->cfg.hyper_delta[0], b = s->cfg.hyper_delta[1];
    const double invn = 1.0 / (double)s->gn;
    double cst = s->q[0] > 0 ? s->mean_dc * invn : xsum * invn;
    double v0 = 0, c0 = 0;
    for (size_t i = 0; i < s->gn; i++) { /* observed pixels lie in the frame box */
        if (!s->obs[i])
            continue;
        double g = c->rbuf[i] * invn - cst;
        v0 += g * g;
        c0 += g * (s->ygrid[i] - cst);
    }
    double s1 = 1.0 / sqrt(c->delta), V = v0 / (s1 * s1), C = c0 / s1;
    if (!(V > 0) || !isfinite(V) || !isfinite(C))
        return;
    double sp = C / V + pp_rng_normal(&c->rng) / sqrt(c->lambda * V);
    double u = pp_rng_uniform(&c->rng);
    if (!(sp > 0) || !(log(u) < log_prior_s(a, b, sp) - log_prior_s(a, b, s1)))
        return;
    if (s->cens) { /* censored data must stay at or above their level: else the
                    * target is 0 there and the move is rejected */
        double lo, hi;
        pp_censored_range(s, c->yaug, c->rbuf, invn, cst, &lo, &hi);
        if (!(sp / s1 - 1 >= lo && sp / s1 - 1 <= hi))
            return;
    }
    double ratio = sp / s1, d_obs = (sp * sp - s1 * s1) * V - 2 * (sp - s1) * C;
    *ss_obs += d_obs;
    *ss += d_obs;
    c->delta = 1.0 / (sp * sp);
    for (size_t i = 0; i < s->gn; i++)
        if (!s->obs[i])
            c->yaug[i] += (ratio - 1) * (c->rbuf[i] * invn - cst);
    if (keep) {
        double *row = c->trace + c->kept * s->trace.ncols + s->col_probe0;
        for (size_t p = 0; p < s->nprobe; p++)
            row[p] = cst + (row[p] - cst) * ratio;
        if (s->draw_stats) /* the draw kept by pad_step (times N) moves too */
            for (size_t i = 0; i < s->gn; i++)
                c->xdraw[i] = cst * (double)s->gn + (c->xdraw[i] - cst * (double)s->gn) * ratio;
    }
}

/* x - m scaled by ratio in cbuf2 (x-hat, periodic): entries with q > 0
 * only; the prior mean sits at entry 0. */
static void rescale_xhat(const pp_sampler *s, pp_chain *c, double ratio)
{
    for (size_t i = 1; i < s->gm; i++)
        c->cbuf2[i] *= ratio;
    if (s->q[0] > 0)
        c->cbuf2[0] = s->mean_dc + (c->cbuf2[0] - s->mean_dc) * ratio;
}

/* The same change made to probe values summed by the pass (x00 = x-hat at
 * (0, 0), which adds x00 / N to every pixel; the rest scales by ratio). */
static void rescale_probes(const pp_sampler *s, double x00, double ratio, double *probe)
{
    const double invn = 1.0 / (double)s->gn;
    double x00n = s->q[0] > 0 ? s->mean_dc + (x00 - s->mean_dc) * ratio : x00;
    for (size_t p = 0; p < s->nprobe; p++)
        probe[p] = x00n * invn + (probe[p] - x00 * invn) * ratio;
}

static pp_status gibbs_run_chain(pp_sampler *s, pp_chain *c)
{
    const pp_sampler_config *cfg = &s->cfg;
    const int pad = s->augment, width = c->wstate != NULL;
    const int fix_l = cfg->noise.sigma_set, fix_d = cfg->prior.delta_set;
    const double shape_l = cfg->hyper_lambda[0] + 0.5 * (double)s->gn;
    const double shape_d = cfg->hyper_delta[0] + 0.5 * s->rank;
    const double nobs = (double)s->nobs;
    pp_padscale *ps = c->kwork; /* the padding scale move (gibbs_prepare), or NULL */
    for (unsigned long t = c->t; t < s->t_end; t++) {
        int keep = t >= s->keep_from && (t - s->keep_from + 1) % cfg->thin == 0;
        /* a kept periodic draw without width sampling needs x-hat only for
         * its probes: the pass sums them and x-hat is never stored */
        int direct = keep && !pad && !width && !s->draw_stats;
        int want_xhat = (keep && !direct) || width;
        int mode = pad ? !(want_xhat || ps) : want_xhat ? 0 : -1;
        double *probe = direct ? c->trace + c->kept * s->trace.ncols + s->col_probe0 : NULL;
        fused_sums f = pp_gibbs_fused_pass(s, c, mode, keep, probe);
        if (width)
            width_move(s, c, &f, t);
        if (!fix_d) {
            c->delta = pp_rng_gamma(&c->rng, shape_d, cfg->hyper_delta[1] + 0.5 * f.quad);
            double ratio = pad ? 1.0 : asis_delta(s, c, &f);
            if (ratio != 1.0 && want_xhat)
                rescale_xhat(s, c, ratio);
            if (ratio != 1.0 && direct)
                rescale_probes(s, f.x00, ratio, probe);
        }
        double ss = f.resid, ss_obs = f.resid, xsum;
        if (ps)
            pp_padscale_prepare(ps, s, c, c->cbuf2);
        if (pad) {
            pad_step(s, c, keep, want_xhat || ps, &ss_obs, &ss, &xsum);
            if (ps)
                pp_padscale_move(ps, s, c, &ss_obs, &ss, &xsum);
            if (!fix_d)
                asis_delta_pad(s, c, keep, xsum, &ss_obs, &ss);
        }
        if (!fix_l)
            c->lambda = pp_rng_gamma(&c->rng, shape_l, cfg->hyper_lambda[1] + 0.5 * ss);
        if (!(isfinite(c->lambda) && c->lambda > 0 && isfinite(c->delta) && c->delta > 0))
            return pp_fail(PP_ERR_NUMERIC,
                           "the noise or prior precision left the floating-point range at "
                           "iteration %lu (lambda=%g, delta=%g); rescale the frame or fix "
                           "one with gaussian:sigma=S or delta=D",
                           t + 1, c->lambda, c->delta);
        if (pad)
            pp_fft_forward(s->fft, c->yaug, c->yhat);
        if (keep && pad && s->draw_stats)
            pp_chain_draw_stats(s, c, c->xdraw, 1.0 / (double)s->gn);
        if (keep) {
            double n = pad ? nobs : (double)s->gn;
            double ll = 0.5 * n * log(c->lambda / (2 * PP_PI)) - 0.5 * c->lambda * ss_obs;
            pp_gibbs_record(s, c, &f, ll, pad || direct, !pad);
        }
        if (pp_sampler_tick(s))
            return pp_fail(PP_ERR_INTERRUPTED, "sampling stopped at the caller's request");
    }
    c->t = s->t_end;
    return PP_OK;
}

/* Pad with gmrf1 and delta sampled: one padding scale move per slot
 * (src/padscale.h). */
static pp_status gibbs_prepare(pp_sampler *s)
{
    const pp_sampler_config *cfg = &s->cfg;
    if (cfg->boundary != PP_BOUNDARY_PAD || cfg->prior.delta_set ||
        cfg->prior.kind != PP_PRIOR_GMRF1)
        return PP_OK;
    for (unsigned b = 0; b < s->nslots; b++) {
        pp_padscale *p;
        pp_status st = pp_padscale_create(s, &p);
        if (st != PP_OK)
            return st;
        s->slot[b].kwork = p;
    }
    return PP_OK;
}

static void gibbs_free_work(void *p) { pp_padscale_free(p); }

const pp_kernel pp_kernel_gibbs = {"gibbs", gibbs_prepare, gibbs_run_chain, NULL,
                                   NULL,    gibbs_free_work, NULL};
