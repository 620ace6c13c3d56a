/* Unit tests of src/incr.c (weighted first-order periodic increments):
 * Dᵀ W D and Dᵀ(√w ⊙ ξ) against a direct scatter over the 2N increments
 * (each increment e = x[b] - x[a] adds w e to pixel b and subtracts it from
 * pixel a: the adjoint written the other way round), symmetry
 * ⟨u, DᵀWD v⟩ = ⟨DᵀWD u, v⟩, the quadratic form against ⟨x, DᵀWD x⟩, the
 * constant field in the null space, and the diagonal against DᵀWD applied
 * to unit vectors. Grids: non-square and the smallest sides (2). */
#include "incr.h"
#include "testutil.h"
#include <math.h>
#include <stdlib.h>

/* A fixed pseudo-random sequence in [-1, 1) (64-bit LCG, Knuth's MMIX). */
static double lcg(unsigned long long *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) / 4503599627370496.0 - 1.0;
}

/* out = Dᵀ(gh, gv) by scattering each increment to its two pixels. */
static void scatter(size_t h, size_t w, const double *gh, const double *gv, double *out)
{
    for (size_t i = 0; i < h * w; i++)
        out[i] = 0.0;
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++) {
            size_t a = i * w + j, bh = i * w + (j + 1) % w, bv = ((i + 1) % h) * w + j;
            out[bh] += gh[a], out[a] -= gh[a];
            out[bv] += gv[a], out[a] -= gv[a];
        }
}

static double maxdiff(const double *a, const double *b, size_t n)
{
    double m = 0.0;
    for (size_t i = 0; i < n; i++)
        m = fmax(m, fabs(a[i] - b[i]));
    return m;
}

static double dot(const double *a, const double *b, size_t n)
{
    double s = 0.0;
    for (size_t i = 0; i < n; i++)
        s += a[i] * b[i];
    return s;
}

static void check_grid(size_t h, size_t w)
{
    size_t n = h * w;
    double *wh = malloc(n * sizeof *wh), *wv = malloc(n * sizeof *wv);
    double *x = malloc(n * sizeof *x), *u = malloc(n * sizeof *u);
    double *gh = malloc(n * sizeof *gh), *gv = malloc(n * sizeof *gv);
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b), *c = malloc(n * sizeof *c);
    unsigned long long s = 7 + 100 * h + w;
    for (size_t i = 0; i < n; i++) {
        wh[i] = pow(10.0, 3.0 * lcg(&s)), wv[i] = pow(10.0, 3.0 * lcg(&s)); /* 6 decades */
        x[i] = lcg(&s), u[i] = lcg(&s);
    }
    /* weighted increments of x, formed directly */
    for (size_t i = 0; i < h; i++)
        for (size_t j = 0; j < w; j++) {
            size_t p = i * w + j;
            gh[p] = wh[p] * (x[i * w + (j + 1) % w] - x[p]);
            gv[p] = wv[p] * (x[((i + 1) % h) * w + j] - x[p]);
        }
    scatter(h, w, gh, gv, a);
    pp_incr_apply(h, w, wh, wv, x, b);
    double scale = 1e3 * 8; /* largest weight x largest |increment| x 4 terms */
    CHECK(maxdiff(a, b, n) <= 1e-13 * scale, "%zux%zu apply vs scatter: %g", h, w,
          maxdiff(a, b, n));
    /* apply_add: the same sums added to what out holds (u as the prior content) */
    for (size_t i = 0; i < n; i++)
        c[i] = u[i];
    pp_incr_apply_add(h, w, wh, wv, x, c);
    double addmax = 0.0;
    for (size_t i = 0; i < n; i++)
        addmax = fmax(addmax, fabs(c[i] - (u[i] + b[i])));
    CHECK(addmax <= 1e-13 * scale, "%zux%zu apply_add vs u + apply: %g", h, w, addmax);
    double quad = pp_incr_quad(h, w, wh, wv, x), xpx = dot(x, b, n);
    CHECK(fabs(quad - xpx) <= 1e-12 * fabs(quad), "%zux%zu quad %.17g vs <x,DWDx> %.17g", h, w,
          quad, xpx);
    CHECK(quad > 0, "%zux%zu quad of a non-constant field is positive", h, w);
    pp_incr_apply(h, w, wh, wv, u, c);
    double l = dot(u, b, n), r = dot(c, x, n);
    CHECK(fabs(l - r) <= 1e-12 * (fabs(l) + fabs(r)), "%zux%zu symmetry %.17g vs %.17g", h, w, l,
          r);
    /* the constant field: D of it is zero */
    for (size_t i = 0; i < n; i++)
        u[i] = 3.25;
    pp_incr_apply(h, w, wh, wv, u, c);
    double cmax = 0.0;
    for (size_t i = 0; i < n; i++)
        cmax = fmax(cmax, fabs(c[i]));
    CHECK(cmax == 0.0, "%zux%zu constant in the null space: max |DWD 1| %g", h, w, cmax);
    CHECK(pp_incr_quad(h, w, wh, wv, u) == 0.0, "%zux%zu quad of a constant is 0", h, w);
    /* perturbation: Dᵀ(√w ⊙ ξ) against the scatter of √w ξ */
    for (size_t i = 0; i < n; i++)
        u[i] = lcg(&s), x[i] = lcg(&s); /* u, x now hold ξh, ξv */
    for (size_t i = 0; i < n; i++)
        gh[i] = sqrt(wh[i]) * u[i], gv[i] = sqrt(wv[i]) * x[i];
    scatter(h, w, gh, gv, a);
    pp_incr_perturb(h, w, wh, wv, u, x, b);
    CHECK(maxdiff(a, b, n) <= 1e-13 * 4 * sqrt(1e3), "%zux%zu perturb vs scatter: %g", h, w,
          maxdiff(a, b, n));
    /* diagonal against e_iᵀ DᵀWD e_i */
    pp_incr_diag(h, w, wh, wv, a);
    double dmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        for (size_t k = 0; k < n; k++)
            u[k] = k == i;
        pp_incr_apply(h, w, wh, wv, u, c);
        dmax = fmax(dmax, fabs(c[i] - a[i]) / a[i]);
    }
    CHECK(dmax <= 1e-15, "%zux%zu diag vs unit vectors: %g", h, w, dmax);
    free(wh), free(wv), free(x), free(u), free(gh), free(gv), free(a), free(b), free(c);
}

int main(void)
{
    check_grid(5, 7);
    check_grid(8, 8);
    check_grid(2, 3);
    check_grid(3, 2);
    return pp_test_done();
}
