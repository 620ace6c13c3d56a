/* Probe for tests/ref_diag_posterior.py: reads draws of one scalar, chain by
 * chain (chains rows of n numbers, whitespace separated, from FILE), runs
 * pp_diag_compute and prints one "name value" line per field (%.17g; NaN
 * as "nan"). Cost: that of pp_diag_compute, O(S log S).
 * The pixel form treats the rows as NHALVES half-chains of M draws of one
 * pixel, streams them through pp_moments (Welford, as the sampler does) and
 * prints pp_diag_pixel_maps' rhat, mcse and ess for that pixel.
 *
 *   probe_diag CHAINS N FILE
 *   probe_diag pixel NHALVES M FILE
 */
#include "stats.h"
#include "pixpost/diag.h"
#include "pixpost/diag_extra.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int fail(const char *msg, const char *path)
{
    fprintf(stderr, "probe_diag: %s: %s\n", path, msg);
    return 1;
}

static int read_draws(const char *path, double *x, size_t total)
{
    FILE *fp = fopen(path, "r");
    if (!fp)
        return fail("cannot open", path);
    size_t i = 0;
    while (i < total && fscanf(fp, "%lf", &x[i]) == 1)
        i++;
    double extra;
    int more = fscanf(fp, "%lf", &extra) == 1;
    fclose(fp);
    if (i < total)
        return fail("fewer numbers than CHAINS * N", path);
    if (more)
        return fail("more numbers than CHAINS * N", path);
    return 0;
}

/* Moments of each half-chain row, then the pixel maps of that one pixel. */
static int pixel(const double *x, size_t k, size_t m, const char *path)
{
    double *mean = malloc(k * sizeof *mean), *m2 = malloc(k * sizeof *m2);
    const double **pm = malloc(k * sizeof *pm), **p2 = malloc(k * sizeof *p2);
    int rc = !mean || !m2 || !pm || !p2;
    for (size_t j = 0; j < k && !rc; j++) {
        pp_moments mo;
        rc = pp_moments_init(&mo, 1) != PP_OK;
        for (size_t i = 0; i < m && !rc; i++)
            pp_moments_add(&mo, x + j * m + i);
        if (!rc) {
            mean[j] = mo.mean[0];
            m2[j] = mo.m2[0];
            pm[j] = mean + j;
            p2[j] = m2 + j;
            pp_moments_free(&mo);
        }
    }
    double rhat, mcse, ess;
    if (!rc && pp_diag_pixel_maps(pm, p2, k, m, 1, 0.0, &rhat, &mcse, &ess) != PP_OK)
        rc = fail(pp_error_message(), path);
    if (!rc)
        printf("rhat %.17g\nmcse %.17g\ness %.17g\n", rhat, mcse, ess);
    free(mean);
    free(m2);
    free(pm);
    free(p2);
    return rc;
}

static int scalar(const double *x, size_t chains, size_t n, const char *path)
{
    pp_diag_scalar d;
    if (pp_diag_compute(x, chains, n, &d) != PP_OK)
        return fail(pp_error_message(), path);
    printf("rhat %.17g\nrhat_bulk %.17g\nrhat_tail %.17g\n", d.rhat, d.rhat_bulk, d.rhat_tail);
    printf("ess_bulk %.17g\ness_tail %.17g\ness_basic %.17g\n", d.ess_bulk, d.ess_tail,
           d.ess_basic);
    printf("mcse_mean %.17g\nmean %.17g\nsd %.17g\n", d.mcse_mean, d.mean, d.sd);
    return 0;
}

int main(int argc, char **argv)
{
    int is_pixel = argc == 5 && strcmp(argv[1], "pixel") == 0;
    if (argc != 4 && !is_pixel) {
        fprintf(stderr, "usage: probe_diag CHAINS N FILE | probe_diag pixel NHALVES M FILE\n");
        return 1;
    }
    char **a = argv + is_pixel;
    size_t rows = strtoul(a[1], NULL, 10), n = strtoul(a[2], NULL, 10);
    if (rows == 0 || n == 0 || rows > 1000000 || n > 100000000 / rows)
        return fail("the row count and length must be positive and not huge", a[3]);
    double *x = malloc(rows * n * sizeof *x);
    if (!x)
        return fail("out of memory", a[3]);
    int rc = read_draws(a[3], x, rows * n);
    if (!rc)
        rc = is_pixel ? pixel(x, rows, n, a[3]) : scalar(x, rows, n, a[3]);
    free(x);
    return rc;
}
