/* probe_output — a hand-made run result through pp_output_write, for
 * tests/ref_output_volume.py.
 *
 *   probe_output write OUTDIR RAWDIR DEPTH HEIGHT WIDTH [--voxel Z,Y,X] [--bad-shape]
 *       builds a pp_result by hand (no sampler): the input and the mean,
 *       sd, lo, hi, rhat and mcse maps of DEPTH x HEIGHT x WIDTH (DEPTH 1:
 *       a frame, rank 2; DEPTH > 1: a volume, rank 3) from integer
 *       formulas (two blobs whose centres move with z, plus hashed
 *       "noise"; one NaN voxel in the mean), so every machine with IEEE
 *       doubles builds the same values; a trace of 2 chains x 40 kept draws
 *       of lambda, delta, loglik; fixed diagnostics and timings. Writes the
 *       outputs into OUTDIR (which must exist) and every map as raw
 *       little-endian doubles RAWDIR/<name>.f64 (input, mean, sd, lo, hi,
 *       rhat, mcse) so the check can compare the files with the values.
 *       --voxel sets config.voxel ({z, y, x} micrometres; default 0 0 0,
 *       unknown). --bad-shape: the result's frame claims one slice more
 *       than its maps have (pp_output_write must refuse it). Prints OUTDIR.
 * Errors: "probe_output: <status name>: <message>" on stderr, exit 1. */
#include "pixpost/diag.h"
#include "pixpost/output.h"
#include "pixpost/result.h"
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

enum { CHAINS = 2, KEPT = 40, NCOL = 3, NMAP = 7 };

static int fail(pp_status st)
{
    fprintf(stderr, "probe_output: %s: %s\n", pp_status_name(st), pp_error_message());
    return 1;
}

/* A hash of i in 0..65535 (integer arithmetic only). */
static double hash16(uint32_t i)
{
    uint32_t h = i * 2654435761u;
    h ^= h >> 15;
    h *= 2246822519u;
    h ^= h >> 13;
    return (double)(h & 0xffffu);
}

/* Two blobs, integer-valued, whose centres move with z. */
static double blobs(long z, long y, long x, long h, long w)
{
    long cy = h / 3 + z % 5, cx = w / 3 + z / 2, dy = y - cy, dx = x - cx;
    long a = 900 - 9 * (dy * dy + dx * dx) - 36 * (z - 3) * (z - 3);
    long cy2 = 2 * h / 3, cx2 = 2 * w / 3 - z, dy2 = y - cy2, dx2 = x - cx2;
    long b = 600 - 16 * (dy2 * dy2 + dx2 * dx2);
    return (double)(a > 0 ? a : 0) + (double)(b > 0 ? b : 0);
}

/* im[0..6] = input, mean, sd, lo, hi, rhat, mcse. */
static void fill(pp_image *im[NMAP])
{
    size_t d = im[0]->depth, h = im[0]->height, w = im[0]->width;
    for (size_t z = 0; z < d; z++)
        for (size_t y = 0; y < h; y++)
            for (size_t x = 0; x < w; x++) {
                size_t i = (z * h + y) * w + x;
                double b = blobs((long)z, (long)y, (long)x, (long)h, (long)w);
                double n1 = hash16((uint32_t)i), n2 = hash16((uint32_t)i + 7919u);
                im[1]->data[i] = 100 + b / 8 + n1 / 4096;
                im[2]->data[i] = 1 + b / 300 + n2 / 3e5; /* not float-exact */
                im[3]->data[i] = im[1]->data[i] - 1.96 * im[2]->data[i];
                im[4]->data[i] = im[1]->data[i] + 1.96 * im[2]->data[i];
                im[5]->data[i] = 1 + n1 / 6e6;
                im[6]->data[i] = im[2]->data[i] / 10;
                im[0]->data[i] = 20 + b / 12 + n2 / 2048;
            }
    im[1]->data[(d / 2 * h + h / 2) * w + 1] = NAN; /* one unobserved-looking voxel */
}

static pp_status write_raw(const char *dir, const char *name, const pp_image *im)
{
    char path[4200];
    snprintf(path, sizeof path, "%s/%s.f64", dir, name);
    FILE *f = fopen(path, "wb");
    size_t n = pp_image_count(im), k = f ? fwrite(im->data, sizeof(double), n, f) : 0;
    if (!f || fclose(f) != 0 || k != n) {
        fprintf(stderr, "probe_output: %s: cannot write\n", path);
        return PP_ERR_IO;
    }
    return PP_OK;
}

static void make_trace(double *v)
{
    for (unsigned c = 0; c < CHAINS; c++)
        for (size_t i = 0; i < KEPT; i++) {
            double *row = v + ((size_t)c * KEPT + i) * NCOL;
            double u = hash16((uint32_t)(c * 1000 + i)) / 65536.0 - 0.5;
            row[0] = 0.04 + u / 256;
            row[1] = 0.002 + u / 4096 + c / 8192.0;
            row[2] = -5000 + 16 * u;
        }
}

int main(int argc, char **argv)
{
    if (argc < 7 || strcmp(argv[1], "write") != 0) {
        fprintf(stderr, "usage: probe_output write OUTDIR RAWDIR DEPTH HEIGHT WIDTH "
                        "[--voxel Z,Y,X] [--bad-shape]\n");
        return 2;
    }
    size_t d = strtoul(argv[4], NULL, 10), h = strtoul(argv[5], NULL, 10),
           w = strtoul(argv[6], NULL, 10);
    pp_sampler_config c;
    pp_sampler_defaults(&c);
    pp_prior_resolve(&c.prior, &c.noise); /* as pp_sampler_create does: the result
                                            * records the prior that ran */
    c.kind = PP_SAMPLER_GIBBS;
    c.chains = CHAINS;
    c.burn = 20;
    c.iters = KEPT;
    c.thin = 1;
    c.seed = 7;
    int bad_shape = 0;
    for (int i = 7; i < argc; i++) {
        if (strcmp(argv[i], "--bad-shape") == 0) {
            bad_shape = 1;
        } else if (!(strcmp(argv[i], "--voxel") == 0 && i + 1 < argc &&
                     sscanf(argv[++i], "%lf,%lf,%lf", &c.voxel[0], &c.voxel[1], &c.voxel[2]) ==
                         3)) {
            fprintf(stderr, "probe_output: bad option '%s'\n", argv[i]);
            return 2;
        }
    }
    pp_image *im[NMAP] = {NULL};
    pp_status st = PP_OK;
    for (int k = 0; k < NMAP && st == PP_OK; k++)
        st = pp_image_create3(d, h, w, &im[k]);
    if (st != PP_OK)
        return fail(st);
    fill(im);
    static const char *const names[NMAP] = {"input", "mean", "sd", "lo", "hi", "rhat", "mcse"};
    for (int k = 0; k < NMAP && st == PP_OK; k++)
        st = write_raw(argv[3], names[k], im[k]);
    if (st != PP_OK)
        return 1;

    double tv[CHAINS * KEPT * NCOL];
    make_trace(tv);
    static const char *const cols[NCOL] = {"lambda", "delta", "loglik"};
    pp_diag_scalar dg[NCOL];
    memset(dg, 0, sizeof dg);
    for (int j = 0; j < NCOL; j++)
        dg[j] = (pp_diag_scalar){1.002 + j / 1000.0, 1.001, 1.002,         310 - 20 * j, 280, 300,
                                 1e-4 * (j + 1),     tv[j], 0.01 * (j + 1)};
    pp_chain_moves moves[CHAINS] = {{0, 0}, {0, 0}};
    pp_result r;
    memset(&r, 0, sizeof r);
    r.config = c;
    r.frame = d > 1 ? pp_shape_3d(d + (size_t)bad_shape, h, w) : pp_shape_2d(h, w);
    r.grid = d > 1 ? pp_shape_3d(d + 4, h + 8, w + 8) : pp_shape_2d(h + 8, w + 8);
    r.mean = im[1], r.sd = im[2], r.lo = im[3], r.hi = im[4];
    r.rhat_map = im[5], r.mcse_map = im[6];
    r.trace = (pp_trace){CHAINS, KEPT, NCOL, cols, tv};
    r.diag = dg;
    r.col_width = r.col_kappa = r.col_level = -1;
    r.chain = moves;
    r.length.burn = 20, r.length.iters = KEPT, r.length.kept = KEPT, r.length.rounds = 1;
    r.convergence.rhat_max = 1.004, r.convergence.ess_bulk_min = 270;
    r.convergence.converged = r.convergence.hyper_converged = 1;
    r.convergence.pixels_converged = 1;
    r.observed = d * h * w - 1, r.unobserved = 1;
    r.seconds = 2.5;
    r.bound_method = "a hand-made bound method";
    r.likelihood = "";
    static const char *const notes[1] = {"a hand-made note"};
    r.notes = notes, r.nnotes = 1;
    pp_run_info info;
    memset(&info, 0, sizeof info);
    info.input_path = "hand-made input.tif";
    info.psf_spec = "gaussian:sigma=1.5";
    info.command_line = "probe_output";
    info.seconds_total = 3.0;
    info.fft_plans = "estimated";
    if (st == PP_OK)
        st = pp_output_write(argv[2], &r, im[0], &info);
    for (int k = 0; k < NMAP; k++)
        pp_image_free(im[k]);
    if (st != PP_OK)
        return fail(st);
    printf("%s\n", argv[2]);
    return 0;
}
