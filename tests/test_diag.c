/* Unit tests of src/diag.c: ESS of AR(1) chains against the textbook value,
 * R-hat on mixed / shifted / rescaled chains, the split, rank and cap rules,
 * the NaN policy, refusals, and the per-pixel maps against a direct
 * computation from the draws. (Exact agreement with R posterior is
 * tests/ref_diag_posterior.py.)
 *
 * Statistical tolerances: the spread of ESS / truth for AR(1) chains was
 * measured on this very setup (4 chains, pp_rng, other seeds): over 2000,
 * 1000 and 500 seeds its 0.1 % and 99.9 % quantiles were [0.859, 1.063]
 * (iid, n = 2500), [0.873, 1.104] (rho = 0.5, n = 5000) and [0.864, 1.132]
 * (rho = 0.9, n = 20000); the distribution is skewed low (Geyer's
 * truncation). The tolerance +-15 % covers all three ranges. Seeds are
 * fixed (and were not chosen by looking at the results). */
#include "pixpost/diag.h"
#include "pixpost/rng.h"
#include "testutil.h"
#include "pixpost/diag_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* chains AR(1) chains x_t = rho x_{t-1} + sqrt(1 - rho^2) e_t, stationary
 * N(0, 1) start, plus offset[c] (NULL: none) times scale[c] (NULL: 1). */
static void ar1(uint64_t seed, double rho, size_t chains, size_t n, const double *offset,
                const double *scale, double *x)
{
    pp_rng r;
    pp_rng_seed(&r, seed, 0);
    double s = sqrt(1 - rho * rho);
    for (size_t c = 0; c < chains; c++) {
        double v = pp_rng_normal(&r);
        for (size_t i = 0; i < n; i++) {
            if (i)
                v = rho * v + s * pp_rng_normal(&r);
            x[c * n + i] = v * (scale ? scale[c] : 1) + (offset ? offset[c] : 0);
        }
    }
}

static int rel_close(double a, double b, double tol)
{
    return fabs(a - b) <= tol * fabs(b);
}

/* Textbook AR(1) integrated autocorrelation time: (1 + rho) / (1 - rho),
 * so ESS = N (1 - rho) / (1 + rho). */
static void test_ar1_ess(double *x)
{
    static const struct {
        double rho;
        size_t n;
        double tol;
    } cases[] = {{0.0, 2500, 0.15}, {0.5, 5000, 0.15}, {0.9, 20000, 0.15}};
    for (size_t k = 0; k < 3; k++) {
        size_t n = cases[k].n, total = 4 * n;
        double rho = cases[k].rho, want = (double)total * (1 - rho) / (1 + rho);
        ar1(11 + k, rho, 4, n, NULL, NULL, x);
        pp_diag_scalar d;
        CHECK(pp_diag_compute(x, 4, n, &d) == PP_OK, "compute AR(1) rho %g", rho);
        CHECK(rel_close(d.ess_basic, want, cases[k].tol), "rho %g: ess_basic %.1f vs %.1f +-%g%%",
              rho, d.ess_basic, want, 100 * cases[k].tol);
        CHECK(rel_close(d.ess_bulk, want, cases[k].tol), "rho %g: ess_bulk %.1f vs %.1f", rho,
              d.ess_bulk, want);
        /* mcse = sd / sqrt(ess): about half the relative error of the ESS,
         * plus the error of the sd (small). */
        double mcse_want = sqrt((1 + rho) / (1 - rho) / (double)total);
        CHECK(rel_close(d.mcse_mean, mcse_want, cases[k].tol / 2 + 0.02),
              "rho %g: mcse %.5f vs %.5f", rho, d.mcse_mean, mcse_want);
        CHECK(d.rhat < 1.01 && d.rhat > 0.99, "rho %g: well mixed chains rhat %.4f", rho, d.rhat);
        CHECK(d.rhat == fmax(d.rhat_bulk, d.rhat_tail), "rhat is the max of bulk and tail");
        double cap = (double)total * log10((double)total);
        CHECK(d.ess_tail > 0 && d.ess_tail <= cap, "rho %g: ess_tail %.1f within (0, cap]", rho,
              d.ess_tail);
        if (rho == 0) /* an indicator of iid draws is iid: ESS ~ N (min of two: low bias) */
            CHECK(rel_close(d.ess_tail, want, 0.15), "iid ess_tail %.1f vs %.1f", d.ess_tail, want);
    }
}

static void test_rhat_detects(double *x)
{
    size_t n = 1000;
    pp_diag_scalar d;
    const double shift[4] = {0, 0, 0, 2};
    ar1(21, 0.3, 4, n, shift, NULL, x);
    CHECK(pp_diag_compute(x, 4, n, &d) == PP_OK, "compute shifted");
    CHECK(d.rhat_bulk > 1.1 && d.rhat > 1.1, "one chain shifted by 2 sd: rhat %.3f >> 1.01",
          d.rhat);
    /* Same mean, one chain 3x wider: the bulk barely sees it, folding does. */
    const double wide[4] = {1, 1, 1, 3};
    ar1(22, 0.0, 4, n, NULL, wide, x);
    CHECK(pp_diag_compute(x, 4, n, &d) == PP_OK, "compute rescaled");
    CHECK(d.rhat_tail > 1.05 && d.rhat_tail > d.rhat_bulk,
          "one chain 3x wider: tail rhat %.3f > 1.05 and > bulk %.3f", d.rhat_tail, d.rhat_bulk);
    /* A trend inside each chain: split halves disagree. */
    ar1(23, 0.0, 4, n, NULL, NULL, x);
    for (size_t c = 0; c < 4; c++)
        for (size_t i = 0; i < n; i++)
            x[c * n + i] += 3.0 * (double)i / (double)n;
    CHECK(pp_diag_compute(x, 4, n, &d) == PP_OK && d.rhat > 1.1,
          "trend within chains: split rhat %.3f >> 1.01", d.rhat);
    /* Many iid draws: rhat within 1.01 (its excess is O(1/n)). */
    ar1(24, 0.0, 4, 10000, NULL, NULL, x);
    CHECK(pp_diag_compute(x, 4, 10000, &d) == PP_OK && d.rhat < 1.01 && d.rhat > 0.99,
          "iid 4 x 10000: rhat %.5f within 1.01", d.rhat);
}

/* Rank-based quantities ignore monotone transforms; the odd middle draw
 * is not in any split quantity; the ESS cap S log10 S binds for antithetic
 * chains. */
static void test_rules(double *x, double *y)
{
    size_t n = 201, h = 100;
    ar1(31, 0.6, 3, n, NULL, NULL, x);
    pp_diag_scalar a, b;
    for (size_t i = 0; i < 3 * n; i++)
        y[i] = exp(x[i]);
    CHECK(pp_diag_compute(x, 3, n, &a) == PP_OK && pp_diag_compute(y, 3, n, &b) == PP_OK,
          "compute x and exp(x)");
    CHECK(rel_close(a.rhat_bulk, b.rhat_bulk, 1e-12) && rel_close(a.ess_bulk, b.ess_bulk, 1e-12) &&
              rel_close(a.ess_tail, b.ess_tail, 1e-12),
          "bulk rhat, bulk and tail ESS unchanged by exp()");
    CHECK(!rel_close(a.ess_basic, b.ess_basic, 1e-6), "basic ESS does change under exp()");
    for (size_t c = 0; c < 3; c++) { /* drop each chain's middle draw */
        memcpy(y + c * 2 * h, x + c * n, h * sizeof *y);
        memcpy(y + c * 2 * h + h, x + c * n + h + 1, h * sizeof *y);
    }
    CHECK(pp_diag_compute(y, 3, 2 * h, &b) == PP_OK, "compute without middles");
    CHECK(rel_close(a.ess_basic, b.ess_basic, 1e-12) && rel_close(a.ess_bulk, b.ess_bulk, 1e-12) &&
              rel_close(a.rhat_bulk, b.rhat_bulk, 1e-12),
          "odd n: the middle draw is left out of the split (ess_basic %.6f vs %.6f)", a.ess_basic,
          b.ess_basic);
    ar1(32, -0.95, 4, 1000, NULL, NULL, x);
    CHECK(pp_diag_compute(x, 4, 1000, &a) == PP_OK, "compute antithetic");
    CHECK(rel_close(a.ess_basic, 4000 * log10(4000.0), 1e-12),
          "antithetic chains: ESS capped at S log10 S (%.3f)", a.ess_basic);
}

static void test_nan_policy(double *x)
{
    pp_diag_scalar d;
    for (size_t i = 0; i < 200; i++)
        x[i] = 2.5;
    CHECK(pp_diag_compute(x, 4, 50, &d) == PP_OK, "constant draws are not an error");
    CHECK(isnan(d.rhat) && isnan(d.rhat_bulk) && isnan(d.rhat_tail) && isnan(d.ess_bulk) &&
              isnan(d.ess_tail) && isnan(d.ess_basic) && isnan(d.mcse_mean),
          "constant draws: every diagnostic NaN");
    CHECK(d.mean == 2.5 && d.sd == 0, "constant draws: mean %g, sd %g", d.mean, d.sd);
    ar1(41, 0.0, 4, 50, NULL, NULL, x);
    x[77] = INFINITY;
    CHECK(pp_diag_compute(x, 4, 50, &d) == PP_OK && isnan(d.rhat) && isnan(d.ess_bulk) &&
              isnan(d.mean) && isnan(d.mcse_mean),
          "an Inf draw: every field NaN");
    x[77] = NAN;
    CHECK(pp_diag_compute(x, 4, 50, &d) == PP_OK && isnan(d.ess_tail) && isnan(d.sd),
          "a NaN draw: every field NaN");
    ar1(42, 0.0, 2, 5, NULL, NULL, x);
    CHECK(pp_diag_compute(x, 2, 5, &d) == PP_OK && isfinite(d.rhat) && isnan(d.ess_bulk) &&
              isnan(d.mcse_mean),
          "n = 5: rhat defined, ESS NaN (half-chains of 2)");
    CHECK(pp_diag_compute(x, 2, 3, &d) == PP_OK && isnan(d.rhat) && isfinite(d.mean),
          "n = 3: rhat NaN, mean still given");
    CHECK(pp_diag_compute(x, 1, 1, &d) == PP_OK && isnan(d.sd) && d.mean == x[0],
          "one draw: sd NaN, mean = the draw");
}

static void test_refusals(double *x)
{
    pp_diag_scalar d = {.rhat = 42};
    CHECK(pp_diag_compute(NULL, 4, 10, &d) == PP_ERR_ARG && d.rhat == 42 &&
              strlen(pp_error_message()) > 0,
          "NULL draws refused, output untouched: %s", pp_error_message());
    CHECK(pp_diag_compute(x, 0, 10, &d) == PP_ERR_ARG, "zero chains refused");
    CHECK(pp_diag_compute(x, 4, 0, &d) == PP_ERR_ARG, "zero draws refused");
    CHECK(pp_diag_compute(x, 4, 10, NULL) == PP_ERR_ARG, "NULL output refused");
    CHECK(pp_diag_compute(x, (size_t)-1 / 2, 4, &d) == PP_ERR_LIMIT, "overflowing size refused");
}

#define NH 8
#define NPIX 200
#define M 2000

/* Moments per (half, pixel) from draws x[(j * NPIX + p) * M + i] by a plain
 * two-pass computation. */
static void moments(const double *x, double hm[NH][NPIX], double h2[NH][NPIX])
{
    for (size_t j = 0; j < NH; j++)
        for (size_t p = 0; p < NPIX; p++) {
            const double *v = x + (j * NPIX + p) * M;
            double s = 0, ss = 0;
            for (size_t i = 0; i < M; i++)
                s += v[i];
            s /= M;
            for (size_t i = 0; i < M; i++)
                ss += (v[i] - s) * (v[i] - s);
            hm[j][p] = s;
            h2[j][p] = ss;
        }
}

/* BDA3 split-R-hat of pixel p straight from the draws (pooled variance
 * decomposition: W from the draws of each half, B from their means). */
static double direct_rhat(const double *x, size_t p)
{
    double means[NH], w = 0, grand = 0, b = 0;
    for (size_t j = 0; j < NH; j++) {
        const double *v = x + (j * NPIX + p) * M;
        double s = 0, ss = 0;
        for (size_t i = 0; i < M; i++)
            s += v[i];
        means[j] = s / M;
        for (size_t i = 0; i < M; i++)
            ss += (v[i] - means[j]) * (v[i] - means[j]);
        w += ss / (M - 1) / NH;
        grand += means[j] / NH;
    }
    for (size_t j = 0; j < NH; j++)
        b += M * (means[j] - grand) * (means[j] - grand) / (NH - 1);
    return sqrt(((M - 1.0) / M * w + b / M) / w);
}

static void test_pixel_maps(double *x)
{
    static double hm[NH][NPIX], h2[NH][NPIX], rhat[NPIX], mcse[NPIX], ess[NPIX];
    const double *pm[NH], *p2[NH];
    double rho = 0.9, tau = (1 + rho) / (1 - rho);
    ar1(51, rho, NH * NPIX, M, NULL, NULL, x); /* half-chain j of pixel p: row j*NPIX+p */
    for (size_t j = 4; j < NH; j++)            /* pixel 1: half-chains 4..7 shifted by 1 sd */
        for (size_t i = 0; i < M; i++)
            x[(j * NPIX + 1) * M + i] += 1.0;
    moments(x, hm, h2);
    for (size_t j = 0; j < NH; j++) {
        pm[j] = hm[j];
        p2[j] = h2[j];
    }
    CHECK(pp_diag_pixel_maps(pm, p2, NH, M, NPIX, 0.0, rhat, mcse, ess) == PP_OK, "pixel maps");
    int all_close = 1;
    for (size_t p = 0; p < NPIX; p++)
        all_close &= rel_close(rhat[p], direct_rhat(x, p), 1e-12);
    CHECK(all_close, "pixel-map rhat equals the direct computation from the draws");
    CHECK(rhat[1] > 1.1, "shifted pixel: rhat %.3f >> 1.01", rhat[1]);
    /* MCSE^2 against the AR(1) truth tau / N (sd 1), averaged over the pixels
     * (not pixel 1): per pixel var(half means) has 7 degrees of freedom
     * (relative sd 0.53), over 199 pixels 0.038; tolerance 0.15 ~ 4 sd. */
    double avg = 0, ess_max = 0;
    for (size_t p = 0; p < NPIX; p++) {
        if (p != 1)
            avg += mcse[p] * mcse[p] / (tau / (NH * M)) / (NPIX - 1);
        ess_max = fmax(ess_max, ess[p]);
    }
    CHECK(fabs(avg - 1) < 0.15, "mean MCSE^2 / (tau/N) = %.3f (AR(1) rho 0.9)", avg);
    CHECK(ess_max <= NH * M, "pixel ESS capped at the draw count (max %.1f)", ess_max);

    /* Constant and non-finite pixels; NULL outputs skipped; refusals. */
    hm[0][0] = hm[1][0] = 3;
    h2[0][0] = h2[1][0] = 0;
    h2[1][2] = INFINITY;
    double r2[3], m2v[3], e2[3];
    CHECK(pp_diag_pixel_maps(pm, p2, 2, M, 3, 0.0, r2, m2v, e2) == PP_OK, "two halves");
    CHECK(isnan(r2[0]) && m2v[0] == 0 && isnan(e2[0]), "constant pixel: rhat NaN, mcse 0, ess NaN");
    CHECK(isnan(r2[2]) && isnan(m2v[2]) && isnan(e2[2]), "Inf moment: NaN");
    CHECK(pp_diag_pixel_maps(pm, p2, 2, M, 3, 0.0, NULL, m2v, NULL) == PP_OK, "NULL outputs allowed");
    /* within_add raises W for rhat only: rhat moves towards 1, mcse stays. */
    double r3[3], m3[3];
    CHECK(pp_diag_pixel_maps(pm, p2, 2, M, 3, 5.0, r3, m3, NULL) == PP_OK, "within_add");
    CHECK(r3[1] < r2[1] && m3[1] == m2v[1],
          "within_add: rhat %g < %g, mcse unchanged", r3[1], r2[1]);
    CHECK(pp_diag_pixel_maps(pm, p2, 1, M, 3, 0.0, r2, m2v, e2) == PP_ERR_ARG &&
              strstr(pp_error_message(), "half-chains"),
          "one half-chain refused: %s", pp_error_message());
    CHECK(pp_diag_pixel_maps(pm, p2, 2, 1, 3, 0.0, r2, m2v, e2) == PP_ERR_ARG, "m = 1 refused");
    CHECK(pp_diag_pixel_maps(NULL, p2, 2, M, 3, 0.0, r2, m2v, e2) == PP_ERR_ARG, "NULL refused");
}

int main(void)
{
    size_t big = (size_t)NH * NPIX * M; /* 3.2 M doubles, the largest case */
    double *x = malloc(big * sizeof *x), *y = malloc(1000 * sizeof *y);
    CHECK(x && y, "scratch");
    if (!x || !y)
        return pp_test_done();
    test_ar1_ess(x);
    test_rhat_detects(x);
    test_rules(x, y);
    test_nan_policy(x);
    test_refusals(x);
    test_pixel_maps(x);
    free(x);
    free(y);
    return pp_test_done();
}
