/* Unit tests of src/incr.c (weighted first-order periodic increments) on
 * frames (d = 1) and volumes (d > 1):
 * Dᵀ W D and Dᵀ(√w ⊙ ξ) against a direct scatter over the 2N (3N)
 * increments (each increment e = x[b] - x[a] adds w e to voxel b and
 * subtracts it from voxel a: the adjoint written the other way round),
 * Dᵀ W D against a dense N x N matrix assembled increment by increment
 * (M[a][a] += w, M[b][b] += w, M[a][b] -= w, M[b][a] -= w) applied to a
 * field, its diagonal and xᵀMx; symmetry ⟨u, DᵀWD v⟩ = ⟨DᵀWD u, v⟩, the
 * quadratic form against ⟨x, DᵀWD x⟩, the constant field in the null
 * space, and the diagonal against DᵀWD applied to unit vectors. Grids:
 * non-square, the smallest sides (2), depths 2 and 4 (2: the two z
 * increments of a column join the same pair). Tolerances: rounding of sums
 * of at most 6 terms of weights up to 1e3 (1e-13 relative to that scale). */
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

/* The voxel an increment of axis ax (0 z, 1 y, 2 x) starting at p ends at. */
static size_t next_of(size_t d, size_t h, size_t w, size_t p, int ax)
{
    size_t k = p / (h * w), i = p / w % h, j = p % w;
    if (ax == 0)
        k = (k + 1) % d;
    else if (ax == 1)
        i = (i + 1) % h;
    else
        j = (j + 1) % w;
    return (k * h + i) * w + j;
}

/* out = Dᵀ(gz, gh, gv) by scattering each increment to its two voxels
 * (gz not read when d = 1). */
static void scatter(size_t d, size_t h, size_t w, const double *gz, const double *gh,
                    const double *gv, double *out)
{
    size_t n = d * h * w;
    for (size_t i = 0; i < n; i++)
        out[i] = 0.0;
    for (size_t a = 0; a < n; a++) {
        size_t bh = next_of(d, h, w, a, 2), bv = next_of(d, h, w, a, 1);
        out[bh] += gh[a], out[a] -= gh[a];
        out[bv] += gv[a], out[a] -= gv[a];
        if (d > 1) {
            size_t bz = next_of(d, h, w, a, 0);
            out[bz] += gz[a], out[a] -= gz[a];
        }
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

/* The dense M = Dᵀ W D, assembled increment by increment. */
static double *dense(size_t d, size_t h, size_t w, const double *wz, const double *wh,
                     const double *wv)
{
    size_t n = d * h * w;
    double *m = calloc(n * n, sizeof *m);
    for (size_t a = 0; a < n; a++)
        for (int ax = d > 1 ? 0 : 1; ax < 3; ax++) {
            size_t b = next_of(d, h, w, a, ax);
            double wt = ax == 0 ? wz[a] : ax == 1 ? wv[a] : wh[a];
            m[a * n + a] += wt, m[b * n + b] += wt;
            m[a * n + b] -= wt, m[b * n + a] -= wt;
        }
    return m;
}

static void check_grid(size_t d, size_t h, size_t w)
{
    size_t n = d * h * w;
    double *wh = malloc(n * sizeof *wh), *wv = malloc(n * sizeof *wv), *wz = malloc(n * sizeof *wz);
    double *x = malloc(n * sizeof *x), *u = malloc(n * sizeof *u), *xz = malloc(n * sizeof *xz);
    double *gh = malloc(n * sizeof *gh), *gv = malloc(n * sizeof *gv), *gz = malloc(n * sizeof *gz);
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b), *c = malloc(n * sizeof *c);
    unsigned long long s = 7 + 1000 * d + 100 * h + w;
    for (size_t i = 0; i < n; i++) {
        wh[i] = pow(10.0, 3.0 * lcg(&s)), wv[i] = pow(10.0, 3.0 * lcg(&s)); /* 6 decades */
        wz[i] = pow(10.0, 3.0 * lcg(&s));
        x[i] = lcg(&s), u[i] = lcg(&s);
    }
    /* a frame's functions must not read wz: pass NULL */
    const double *wzp = d > 1 ? wz : NULL;
    /* weighted increments of x, formed directly */
    for (size_t p = 0; p < n; p++) {
        gh[p] = wh[p] * (x[next_of(d, h, w, p, 2)] - x[p]);
        gv[p] = wv[p] * (x[next_of(d, h, w, p, 1)] - x[p]);
        gz[p] = wz[p] * (x[next_of(d, h, w, p, 0)] - x[p]);
    }
    scatter(d, h, w, gz, gh, gv, a);
    pp_incr_apply(d, h, w, wzp, wh, wv, x, b);
    double scale = 1e3 * 12; /* largest weight x largest |increment| x 6 terms */
    CHECK(maxdiff(a, b, n) <= 1e-13 * scale, "%zux%zux%zu apply vs scatter: %g", d, h, w,
          maxdiff(a, b, n));
    /* against the dense matrix: M x, diag(M), xᵀMx */
    double *m = dense(d, h, w, wz, wh, wv);
    double dmx = 0.0, ddg = 0.0;
    pp_incr_diag(d, h, w, wzp, wh, wv, c);
    for (size_t i = 0; i < n; i++) {
        double r = 0.0;
        for (size_t k = 0; k < n; k++)
            r += m[i * n + k] * x[k];
        dmx = fmax(dmx, fabs(r - b[i]));
        ddg = fmax(ddg, fabs(m[i * n + i] - c[i]) / m[i * n + i]);
        a[i] = r;
    }
    CHECK(dmx <= 1e-13 * scale, "%zux%zux%zu apply vs dense M x: %g", d, h, w, dmx);
    CHECK(ddg <= 1e-15, "%zux%zux%zu diag vs dense diag(M): %g", d, h, w, ddg);
    double qd = dot(x, a, n), q = pp_incr_quad(d, h, w, wzp, wh, wv, x);
    CHECK(fabs(q - qd) <= 1e-12 * fabs(qd), "%zux%zux%zu quad %.17g vs dense xᵀMx %.17g", d, h, w,
          q, qd);
    free(m);
    /* apply_add: the same sums added to what out holds (u as the prior content) */
    for (size_t i = 0; i < n; i++)
        c[i] = u[i];
    pp_incr_apply_add(d, h, w, wzp, wh, wv, x, c);
    double addmax = 0.0;
    for (size_t i = 0; i < n; i++)
        addmax = fmax(addmax, fabs(c[i] - (u[i] + b[i])));
    CHECK(addmax <= 1e-13 * scale, "%zux%zux%zu apply_add vs u + apply: %g", d, h, w, addmax);
    double quad = pp_incr_quad(d, h, w, wzp, wh, wv, x), xpx = dot(x, b, n);
    CHECK(fabs(quad - xpx) <= 1e-12 * fabs(quad), "%zux%zux%zu quad %.17g vs <x,DWDx> %.17g", d,
          h, w, quad, xpx);
    CHECK(quad > 0, "%zux%zux%zu quad of a non-constant field is positive", d, h, w);
    pp_incr_apply(d, h, w, wzp, wh, wv, u, c);
    double l = dot(u, b, n), r = dot(c, x, n);
    CHECK(fabs(l - r) <= 1e-12 * (fabs(l) + fabs(r)), "%zux%zux%zu symmetry %.17g vs %.17g", d,
          h, w, l, r);
    /* the constant field: D of it is zero */
    for (size_t i = 0; i < n; i++)
        u[i] = 3.25;
    pp_incr_apply(d, h, w, wzp, wh, wv, u, c);
    double cmax = 0.0;
    for (size_t i = 0; i < n; i++)
        cmax = fmax(cmax, fabs(c[i]));
    CHECK(cmax == 0.0, "%zux%zux%zu constant in the null space: max |DWD 1| %g", d, h, w, cmax);
    CHECK(pp_incr_quad(d, h, w, wzp, wh, wv, u) == 0.0, "%zux%zux%zu quad of a constant is 0", d,
          h, w);
    /* perturbation: Dᵀ(√w ⊙ ξ) against the scatter of √w ξ */
    for (size_t i = 0; i < n; i++)
        u[i] = lcg(&s), x[i] = lcg(&s), xz[i] = lcg(&s); /* ξh, ξv, ξz */
    for (size_t i = 0; i < n; i++)
        gh[i] = sqrt(wh[i]) * u[i], gv[i] = sqrt(wv[i]) * x[i], gz[i] = sqrt(wz[i]) * xz[i];
    scatter(d, h, w, gz, gh, gv, a);
    pp_incr_perturb(d, h, w, wzp, wh, wv, d > 1 ? xz : NULL, u, x, b);
    CHECK(maxdiff(a, b, n) <= 1e-13 * 6 * sqrt(1e3), "%zux%zux%zu perturb vs scatter: %g", d, h,
          w, maxdiff(a, b, n));
    /* diagonal against e_iᵀ DᵀWD e_i */
    pp_incr_diag(d, h, w, wzp, wh, wv, a);
    double dmax = 0.0;
    for (size_t i = 0; i < n; i++) {
        for (size_t k = 0; k < n; k++)
            u[k] = k == i;
        pp_incr_apply(d, h, w, wzp, wh, wv, u, c);
        dmax = fmax(dmax, fabs(c[i] - a[i]) / a[i]);
    }
    CHECK(dmax <= 1e-15, "%zux%zux%zu diag vs unit vectors: %g", d, h, w, dmax);
    free(wh), free(wv), free(wz), free(x), free(u), free(xz), free(gh), free(gv), free(gz);
    free(a), free(b), free(c);
}

int main(void)
{
    check_grid(1, 5, 7);
    check_grid(1, 8, 8);
    check_grid(1, 2, 3);
    check_grid(1, 3, 2);
    check_grid(4, 5, 6);
    check_grid(2, 3, 2);
    check_grid(3, 2, 4);
    return pp_test_done();
}
