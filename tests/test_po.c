/* Unit tests of src/po_solve.c's refusals and bookkeeping (its sampling
 * is checked against numpy's dense posterior in tests/ref_po_dense.py):
 * a grid side below 2, a non-positive or NaN weight, a non-positive
 * lambda, delta or tolerance, and a transfer function that does not pass
 * the mean (otf[0] = 0, which leaves the constant field without
 * precision) are refused with PP_ERR_ARG, a message naming the problem
 * and x untouched; a converged draw reports its iterations and a relative
 * residual within the tolerance; the same seed gives the same draw.
 * pp_po_draw_rj: relaxation 0 or 2 refused with x untouched; at a tight
 * eps the move is accepted with a log ratio near 0 and x' = G − x is the
 * exact over-relaxed draw (α = 1: the same as pp_po_draw's with the same
 * noise, up to the solves' errors); at cap 1 it returns PP_ERR_LIMIT and
 * x is either the old state (rejected) or G − x (accepted), never a
 * half-updated field. */
#include "po_solve.h"
#include "testutil.h"
#include <complex.h>
#include <math.h>
#include <string.h>

#define H 6
#define W 5
#define N (H * W)
#define NH (H * (W / 2 + 1))

static pp_complex otf[NH];
static double y[N], wh[N], wv[N];

/* The transfer function of a 3-tap horizontal blur (0.25, 0.5, 0.25). */
static void setup(void)
{
    for (size_t k1 = 0; k1 < H; k1++)
        for (size_t k2 = 0; k2 < W / 2 + 1; k2++)
            otf[k1 * (W / 2 + 1) + k2] = 0.5 + 0.5 * cos(6.283185307179586 * (double)k2 / W);
    for (size_t i = 0; i < N; i++)
        y[i] = (double)(i % 7) / 7.0, wh[i] = 1.0 + (double)(i % 3), wv[i] = 10.0;
}

static pp_status draw(pp_po *po, double lam, double delta, double tol, double *x, pp_po_stats *st)
{
    pp_rng rng;
    pp_rng_seed(&rng, 15, 0);
    return pp_po_draw(po, otf, y, lam, delta, NULL, wh, wv, &rng, tol, 500, x, st);
}

static void refused(pp_po *po, double lam, double delta, double tol, const char *word,
                    const char *what)
{
    double x[N];
    for (size_t i = 0; i < N; i++)
        x[i] = 0.125;
    pp_status s = draw(po, lam, delta, tol, x, NULL);
    int same = 1;
    for (size_t i = 0; i < N; i++)
        same = same && x[i] == 0.125;
    CHECK(s == PP_ERR_ARG, "%s: refused (status %d)", what, (int)s);
    CHECK(strstr(pp_error_message(), word) != NULL, "%s: message names '%s': %s", what, word,
          pp_error_message());
    CHECK(same, "%s: x untouched", what);
}

int main(void)
{
    setup();
    pp_po *po = NULL;
    pp_shape thin = pp_shape_2d(1, 8), grid = pp_shape_2d(H, W);
    CHECK(pp_po_create(&thin, NULL, PP_FFT_ESTIMATE, &po) == PP_ERR_ARG && po == NULL,
          "a 8x1 grid is refused");
    CHECK(strstr(pp_error_message(), "at least 2") != NULL, "message: %s", pp_error_message());
    CHECK(pp_po_create(&grid, NULL, PP_FFT_ESTIMATE, &po) == PP_OK && po, "create %dx%d", W, H);
    if (!po)
        return pp_test_done();
    refused(po, 0.0, 1.0, 1e-8, "lambda", "lambda 0");
    refused(po, 1.0, -1.0, 1e-8, "delta", "delta -1");
    refused(po, 1.0, 1.0, 0.0, "tolerance", "tol 0");
    wh[7] = 0.0;
    refused(po, 1.0, 1.0, 1e-8, "weight at pixel 7", "weight 0");
    wh[7] = NAN;
    refused(po, 1.0, 1.0, 1e-8, "weight at pixel 7", "weight NaN");
    wh[7] = 1.0;
    pp_complex dc = otf[0];
    otf[0] = 0.0;
    refused(po, 1.0, 1.0, 1e-8, "otf[0]", "otf[0] = 0");
    otf[0] = dc;
    double a[N] = {0}, b[N] = {0};
    pp_po_stats st = {0, -1.0, 0, 0.0, 0}, st2 = {0, -1.0, 0, 0.0, 0};
    CHECK(draw(po, 100.0, 2.0, 1e-9, a, &st) == PP_OK, "a draw converges: %s", pp_error_message());
    CHECK(st.iters > 0 && st.iters <= N && st.relres >= 0 && st.relres <= 1e-9,
          "stats: %zu iterations (CG on N = %d unknowns), relres %g <= 1e-9", st.iters, N,
          st.relres);
    CHECK(draw(po, 100.0, 2.0, 1e-9, b, &st2) == PP_OK && memcmp(a, b, sizeof a) == 0 &&
              st2.iters == st.iters,
          "same seed, same start: the same draw");
    /* reversible-jump move */
    double xr[N], x0[N];
    for (size_t i = 0; i < N; i++)
        xr[i] = x0[i] = 0.125;
    pp_rng rng;
    pp_rng_seed(&rng, 15, 0);
    for (int bad = 0; bad < 2; bad++) {
        pp_status s = pp_po_draw_rj(po, otf, y, 100.0, 2.0, NULL, wh, wv, &rng, bad ? 2.0 : 0.0,
                                    0.1, 500, xr, NULL);
        CHECK(s == PP_ERR_ARG && memcmp(xr, x0, sizeof xr) == 0 &&
                  strstr(pp_error_message(), "relaxation") != NULL,
              "rj: relaxation %g refused, x untouched (%s)", bad ? 2.0 : 0.0, pp_error_message());
    }
    pp_rng_seed(&rng, 15, 0);
    pp_po_stats sr = {0, -1.0, -1, 1.0, -1};
    CHECK(pp_po_draw_rj(po, otf, y, 100.0, 2.0, NULL, wh, wv, &rng, 1.0, 1e-9, 500, xr, &sr) ==
              PP_OK,
          "rj: a tight move converges: %s", pp_error_message());
    double dmax = 0.0;
    for (size_t i = 0; i < N; i++) /* same seed: the same ε as draw() above */
        dmax = fmax(dmax, fabs(xr[i] - a[i]));
    CHECK(sr.accepted == 1 && fabs(sr.logratio) < 1e-6 && dmax < 1e-6,
          "rj at eps 1e-9: accepted (%d), log ratio %.2e, x' within %.2e of pp_po_draw's draw "
          "with the same noise",
          sr.accepted, sr.logratio, dmax);
    for (size_t i = 0; i < N; i++)
        x0[i] = xr[i];
    CHECK(pp_po_draw_rj(po, otf, y, 100.0, 2.0, NULL, wh, wv, &rng, 1.0, 1e-9, 1, xr, &sr) ==
              PP_ERR_LIMIT && sr.iters == 1,
          "rj at cap 1: PP_ERR_LIMIT after 1 iteration (accepted %d, log ratio %.3g)",
          sr.accepted, sr.logratio);
    int same = memcmp(xr, x0, sizeof xr) == 0;
    CHECK(sr.accepted ? !same : same, "rj at cap 1: x moved iff accepted (accepted %d)",
          sr.accepted);
    pp_po_free(po);
    pp_po_free(NULL);
    return pp_test_done();
}
