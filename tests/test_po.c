/* Unit tests of src/po_solve.c's refusals and bookkeeping (its sampling
 * is checked against numpy's dense posterior in tests/ref_po_dense.py):
 * a grid side below 2, a non-positive or NaN weight, a non-positive
 * lambda, delta or tolerance, and a transfer function that does not pass
 * the mean (otf[0] = 0, which leaves the constant field without
 * precision) are refused with PP_ERR_ARG, a message naming the problem
 * and x untouched; a converged draw reports its iterations and a relative
 * residual within the tolerance; the same seed gives the same draw. */
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
    pp_po_stats st = {0, -1.0}, st2 = {0, -1.0};
    CHECK(draw(po, 100.0, 2.0, 1e-9, a, &st) == PP_OK, "a draw converges: %s", pp_error_message());
    CHECK(st.iters > 0 && st.iters <= N && st.relres >= 0 && st.relres <= 1e-9,
          "stats: %zu iterations (CG on N = %d unknowns), relres %g <= 1e-9", st.iters, N,
          st.relres);
    CHECK(draw(po, 100.0, 2.0, 1e-9, b, &st2) == PP_OK && memcmp(a, b, sizeof a) == 0 &&
              st2.iters == st.iters,
          "same seed, same start: the same draw");
    pp_po_free(po);
    pp_po_free(NULL);
    return pp_test_done();
}
