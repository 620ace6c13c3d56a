/* Probe for tests/ref_po_dense.py: runs src/po_solve.c's pp_po_draw on a
 * problem written by Python and writes what the draws did.
 *
 *   probe_po [rj ALPHA] IN OUT [D CZ CY CX]
 *
 * With "rj ALPHA": pp_po_draw_rj with relaxation ALPHA and eps = the
 * header's tol, the draws a Markov chain started at x0 (each move from the
 * last state), and a fourth number per draw in OUT (1 when accepted).
 *
 * IN (float64, native order): H W lambda delta tol cap ndraw seed keep,
 * then y (H*W), otf (H*(W/2+1) complex as re, im pairs), wh (H*W),
 * wv (H*W), x0 (H*W). With D (a volume of D slices of H x W, the grid
 * rank 3; tests/ref_adaptive_volume_dense.py) every H*W above reads
 * D*H*W, the otf D*H*(W/2+1), and wz (D*H*W) follows x0; CZ CY CX are the
 * axes' weight factors given to pp_po_create (the preconditioner's).
 * Every draw starts from x0 (independent draws) and
 * uses one rng, pp_rng_seed(seed, 0), in sequence.
 * OUT (float64): per draw (iterations, final relative residual, status),
 * then the pixel means (H*W) and variances (H*W, divisor ndraw - 1), then
 * every draw (ndraw x H*W) when keep != 0. Exit 0 unless a draw failed
 * with something other than PP_ERR_LIMIT (the cap), or on bad input.
 * Cost: ndraw draws; memory O(ndraw * H*W) only when keep != 0.
 */
#include "po_solve.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
    int rj = argc >= 3 && strcmp(argv[1], "rj") == 0;
    double ralpha = rj ? strtod(argv[2], NULL) : 0.0;
    if (rj)
        argc -= 2, argv += 2;
    const size_t ni = rj ? 4 : 3;
    if (argc != 3 && argc != 7) {
        fprintf(stderr, "usage: probe_po [rj ALPHA] IN OUT [D CZ CY CX]\n");
        return 1;
    }
    size_t dep = argc == 7 ? (size_t)strtoul(argv[3], NULL, 10) : 1;
    double axis[3] = {1.0, 1.0, 1.0};
    for (int a = 0; argc == 7 && a < 3; a++)
        axis[a] = strtod(argv[4 + a], NULL);
    FILE *f = fopen(argv[1], "rb");
    double hd[9];
    if (!f || fread(hd, sizeof *hd, 9, f) != 9) {
        fprintf(stderr, "probe_po: %s: cannot read the header\n", argv[1]);
        return 1;
    }
    size_t h = (size_t)hd[0], w = (size_t)hd[1], n = dep * h * w, nh = dep * h * (w / 2 + 1);
    size_t cap = (size_t)hd[5], ndraw = (size_t)hd[6], keep = hd[8] != 0;
    double *y = read_n(f, n), *otf = read_n(f, 2 * nh), *wh = read_n(f, n), *wv = read_n(f, n);
    double *x0 = read_n(f, n), *wz = dep > 1 ? read_n(f, n) : NULL;
    fclose(f);
    if (!y || !otf || !wh || !wv || !x0 || (dep > 1 && !wz) || ndraw < 2) {
        fprintf(stderr, "probe_po: %s: short file or fewer than 2 draws\n", argv[1]);
        return 1;
    }
    pp_complex *ot = malloc(nh * sizeof *ot);
    double *x = malloc(n * sizeof *x), *mean = calloc(n, sizeof *mean);
    double *m2 = calloc(n, sizeof *m2), *info = malloc(ni * ndraw * sizeof *info);
    double *all = keep ? malloc(ndraw * n * sizeof *all) : NULL;
    pp_po *po = NULL;
    if (!ot || !x || !mean || !m2 || !info || (keep && !all) ||
        pp_po_create(dep > 1 ? &(pp_shape){3, {dep, h, w}} : &(pp_shape){2, {h, w, 1}}, axis,
                     PP_FFT_ESTIMATE, &po) != PP_OK) {
        fprintf(stderr, "probe_po: %s\n", pp_error_message());
        return 1;
    }
    for (size_t k = 0; k < nh; k++)
        ot[k] = otf[2 * k] + I * otf[2 * k + 1];
    pp_rng rng;
    pp_rng_seed(&rng, (uint64_t)hd[7], 0);
    memcpy(x, x0, n * sizeof *x);
    for (size_t d = 0; d < ndraw; d++) {
        pp_po_stats st = {0, 0.0, 0, 0.0, 0};
        pp_status s;
        if (rj)
            s = pp_po_draw_rj(po, ot, y, hd[2], hd[3], wz, wh, wv, &rng, ralpha, hd[4], cap, x,
                              &st);
        else {
            memcpy(x, x0, n * sizeof *x);
            s = pp_po_draw(po, ot, y, hd[2], hd[3], wz, wh, wv, &rng, hd[4], cap, x, &st);
        }
        if (s != PP_OK && s != PP_ERR_LIMIT) {
            fprintf(stderr, "probe_po: draw %zu: %s\n", d, pp_error_message());
            return 1;
        }
        info[ni * d] = (double)st.iters, info[ni * d + 1] = st.relres, info[ni * d + 2] = (double)s;
        if (rj)
            info[ni * d + 3] = (double)st.accepted;
        for (size_t i = 0; i < n; i++) { /* Welford's running mean and M2 */
            double e = x[i] - mean[i];
            mean[i] += e / (double)(d + 1);
            m2[i] += e * (x[i] - mean[i]);
        }
        if (keep)
            memcpy(all + d * n, x, n * sizeof *x);
    }
    for (size_t i = 0; i < n; i++)
        m2[i] /= (double)(ndraw - 1);
    FILE *o = fopen(argv[2], "wb");
    if (!o || fwrite(info, sizeof *info, ni * ndraw, o) != ni * ndraw ||
        fwrite(mean, sizeof *mean, n, o) != n || fwrite(m2, sizeof *m2, n, o) != n ||
        (keep && fwrite(all, sizeof *all, ndraw * n, o) != ndraw * n) || fclose(o) != 0) {
        fprintf(stderr, "probe_po: %s: cannot write\n", argv[2]);
        return 1;
    }
    pp_po_free(po);
    free(ot), free(x), free(mean), free(m2), free(info), free(all);
    free(y), free(otf), free(wh), free(wv), free(x0), free(wz);
    return 0;
}
