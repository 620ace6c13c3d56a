/* Probe for tests/ref_adaptive_volume_dense.py: src/incr.c's operators on
 * a d x h x w grid, written out for numpy to compare with its own dense
 * increment matrix.
 *
 *   probe_incr IN OUT
 *
 * IN (float64, native order): D H W, then wz, wh, wv (N = D*H*W each; wz
 * read only when D > 1), x (N), xi_z, xi_h, xi_v (N each).
 * OUT (float64): the N x N matrix Dᵀ W D (column c = pp_incr_apply of the
 * unit vector e_c, row-major), pp_incr_diag (N), pp_incr_quad of x (1),
 * pp_incr_perturb of ξ (N). Exit 0, 1 on bad input.
 */
#include "incr.h"

#include <stdio.h>
#include <stdlib.h>

static double *read_n(FILE *f, size_t n)
{
    double *a = malloc(n * sizeof *a);
    if (a && fread(a, sizeof *a, n, f) != n) {
        free(a);
        return NULL;
    }
    return a;
}

int main(int argc, char **argv)
{
    if (argc != 3) {
        fprintf(stderr, "usage: probe_incr IN OUT\n");
        return 1;
    }
    FILE *f = fopen(argv[1], "rb");
    double hd[3];
    if (!f || fread(hd, sizeof *hd, 3, f) != 3) {
        fprintf(stderr, "probe_incr: %s: cannot read the header\n", argv[1]);
        return 1;
    }
    size_t d = (size_t)hd[0], h = (size_t)hd[1], w = (size_t)hd[2], n = d * h * w;
    double *wz = read_n(f, n), *wh = read_n(f, n), *wv = read_n(f, n), *x = read_n(f, n);
    double *gz = read_n(f, n), *gh = read_n(f, n), *gv = read_n(f, n);
    fclose(f);
    double *m = malloc(n * n * sizeof *m), *e = calloc(n, sizeof *e), *col = malloc(n * sizeof *col);
    if (!wz || !wh || !wv || !x || !gz || !gh || !gv || !m || !e || !col || h < 2 || w < 2 ||
        d < 1) {
        fprintf(stderr, "probe_incr: %s: short file or bad grid\n", argv[1]);
        return 1;
    }
    const double *wzp = d > 1 ? wz : NULL;
    for (size_t c = 0; c < n; c++) {
        e[c] = 1.0;
        pp_incr_apply(d, h, w, wzp, wh, wv, e, col);
        e[c] = 0.0;
        for (size_t r = 0; r < n; r++)
            m[r * n + c] = col[r];
    }
    FILE *o = fopen(argv[2], "wb");
    int bad = !o || fwrite(m, sizeof *m, n * n, o) != n * n;
    pp_incr_diag(d, h, w, wzp, wh, wv, col);
    bad = bad || fwrite(col, sizeof *col, n, o) != n;
    double q = pp_incr_quad(d, h, w, wzp, wh, wv, x);
    bad = bad || fwrite(&q, sizeof q, 1, o) != 1;
    pp_incr_perturb(d, h, w, wzp, wh, wv, d > 1 ? gz : NULL, gh, gv, col);
    bad = bad || fwrite(col, sizeof *col, n, o) != n;
    if (o && fclose(o) != 0)
        bad = 1;
    if (bad) {
        fprintf(stderr, "probe_incr: %s: cannot write\n", argv[2]);
        return 1;
    }
    free(wz), free(wh), free(wv), free(x), free(gz), free(gh), free(gv), free(m), free(e);
    free(col);
    return 0;
}
