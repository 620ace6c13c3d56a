/* probe_report — the run report on the command line, for
 * tests/ref_report_chromium.py.
 *
 *   probe_report write DIR [--title T] [--kept N] [--fixed-delta] [--no-diag]
 *                          [--converged]
 *       writes DIR/report.html from a synthetic run (fixed seed): a 64x48
 *       frame of Gaussian blobs on a background of 100 plus noise, a mean,
 *       sd, lo = mean - 1.96 sd, hi = mean + 1.96 sd, and a trace of 4 AR(1)
 *       chains (lambda, delta, loglik, two probe pixels); the images are also
 *       written as DIR/{frame,mean,sd,lo,hi}.tif (32-bit float) so the check
 *       can recompute the page's pixel mapping; a verdict banner of two
 *       warnings (one on the hyperparameters, one other), or with
 *       --converged none and the quiet verdict line; 0.1 um pixels (a
 *       scale bar); prints the report path.
 *   probe_report acf MAXLAG
 *       reads numbers from stdin, prints the autocorrelation at lags
 *       0..MAXLAG (one per line, %.17g), or "constant".
 * Errors: "probe_report: <status name>: <message>" on stderr, exit 1. */
#include "pixpost/io.h"
#include "pixpost/report.h"
#include "pixpost/rng.h"
#include "report_internal.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

enum { W = 64, H = 48, NCOL = 5, CHAINS = 4 };

static int fail(pp_status st)
{
    fprintf(stderr, "probe_report: %s: %s\n", pp_status_name(st), pp_error_message());
    return 1;
}

static double blobs(double r, double c)
{
    const double br[3] = {12, 30, 20}, bc[3] = {15, 44, 34}, bs[3] = {3, 5, 2},
                 ba[3] = {80, 50, 120};
    double v = 0;
    for (int k = 0; k < 3; k++)
        v += ba[k] *
             exp(-((r - br[k]) * (r - br[k]) + (c - bc[k]) * (c - bc[k])) / (2 * bs[k] * bs[k]));
    return v;
}

/* im[0..4] = frame, mean, sd, lo, hi. */
static pp_status make_images(pp_image *im[5], pp_rng *rng)
{
    for (int i = 0; i < 5; i++) {
        pp_status st = pp_image_create(H, W, &im[i]);
        if (st != PP_OK)
            return st;
    }
    for (size_t r = 0; r < H; r++)
        for (size_t c = 0; c < W; c++) {
            size_t i = r * W + c;
            double b = blobs((double)r, (double)c);
            im[0]->data[i] = 100 + 0.8 * b + 4 * pp_rng_normal(rng);
            im[1]->data[i] = 100 + b + 0.5 * pp_rng_normal(rng);
            im[2]->data[i] = 1.5 + 3.0 * b / 120.0 + 0.1 * pp_rng_uniform(rng);
            im[3]->data[i] = im[1]->data[i] - 1.96 * im[2]->data[i];
            im[4]->data[i] = im[1]->data[i] + 1.96 * im[2]->data[i];
            for (int k = 0; k < 5; k++) /* exact in the float TIFFs the check reads */
                im[k]->data[i] = (double)(float)im[k]->data[i];
        }
    return PP_OK;
}

/* AR(1) chains with a different correlation per chain; chain 4 sits a
 * little higher, so its lambda looks unconverged. */
static void make_trace(double *v, size_t kept, pp_rng *rng, int fixed_delta)
{
    const double scale[NCOL] = {0.002, 2e-4, 20, 3, 1.5},
                 centre[NCOL] = {0.04, 2e-3, -5000, 120, 160};
    for (unsigned ch = 0; ch < CHAINS; ch++) {
        double phi = 0.3 + 0.2 * ch, a[NCOL] = {0};
        for (size_t i = 0; i < kept; i++)
            for (int k = 0; k < NCOL; k++) {
                a[k] = phi * a[k] + sqrt(1 - phi * phi) * pp_rng_normal(rng);
                double shift = (ch == 3 && k == 0) ? 1.5 : 0;
                v[((size_t)ch * kept + i) * NCOL + k] = centre[k] + scale[k] * (a[k] + shift);
                if (k == 1 && fixed_delta)
                    v[((size_t)ch * kept + i) * NCOL + k] = centre[k];
            }
    }
}

static pp_status write_tifs(const char *dir, pp_image *im[5])
{
    const char *names[5] = {"frame", "mean", "sd", "lo", "hi"};
    char path[4200];
    for (int i = 0; i < 5; i++) {
        snprintf(path, sizeof path, "%s/%s.tif", dir, names[i]);
        pp_status st = pp_tiff_write_f32(path, im[i]);
        if (st != PP_OK)
            return st;
    }
    return PP_OK;
}

static int cmd_write(int argc, char **argv)
{
    const char *title = "synthetic frame.tif";
    size_t kept = 400;
    int fixed_delta = 0, diag = 1, converged = 0;
    for (int i = 3; i < argc; i++) {
        if (strcmp(argv[i], "--title") == 0 && i + 1 < argc)
            title = argv[++i];
        else if (strcmp(argv[i], "--kept") == 0 && i + 1 < argc)
            kept = strtoul(argv[++i], NULL, 10);
        else if (strcmp(argv[i], "--fixed-delta") == 0)
            fixed_delta = 1;
        else if (strcmp(argv[i], "--no-diag") == 0)
            diag = 0;
        else if (strcmp(argv[i], "--converged") == 0)
            converged = 1; /* no warning: the quiet verdict line */
    }
    pp_rng rng;
    pp_rng_seed(&rng, 20240611, 0);
    pp_image *im[5] = {NULL};
    double *v = malloc(CHAINS * kept * NCOL * sizeof *v);
    pp_status st = v ? make_images(im, &rng) : PP_ERR_NOMEM;
    if (st == PP_OK)
        st = write_tifs(argv[2], im);
    if (st == PP_OK) {
        make_trace(v, kept, &rng, fixed_delta);
        const char *names[NCOL] = {"lambda", "delta", "loglik", "p_12_15", "p_30_44"};
        pp_trace t = {CHAINS, kept, NCOL, names, v};
        pp_report_scalar sc[3] = {{"lambda", 0.0403, 0.0021, 1.034, 95, 310, 2e-4},
                                  {"delta", 2e-3, 2e-4, 1.002, 1500, 1320, 5e-6},
                                  {"p_12_15 <x>", 164.2, 3.1, 1.004, 2200, 1800, 0.07}};
        const char *keys[3] = {"input", "sampler", "psf"};
        const char *vals[3] = {title, "gibbs", "gaussian:sigma=1.6"};
        const char *warn[2] = {"hyperparameters: R-hat of lambda is 1.034 (above 1.01): run "
                               "about 2000 iterations: --iters 2000",
                               "the acceptance of chain 2 is low"};
        const pp_warning_part parts[2] = {PP_WARN_HYPER, PP_WARN_OTHER};
        /* the banner's figures: one warning on the hyperparameters, one other */
        pp_convergence cv;
        memset(&cv, 0, sizeof cv);
        cv.rhat_max = 1.034, cv.ess_bulk_min = 95, cv.warnings = 2, cv.hyper_warnings = 1;
        cv.pixels_converged = 1, cv.iters_suggested = 2000;
        cv.iters_name = "--iters"; /* as the command line names it */
        snprintf(cv.hyper_failing, sizeof cv.hyper_failing, "lambda");
        if (converged) {
            memset(&cv, 0, sizeof cv);
            cv.converged = cv.hyper_converged = cv.pixels_converged = 1;
            cv.rhat_max = 1.004, cv.ess_bulk_min = 1500;
        }
        char verdict[PP_VERDICT_MAX];
        pp_convergence_verdict(&cv, verdict, sizeof verdict);
        pp_report_input in;
        pp_report_input_init(&in);
        in.title = title;
        in.frame = im[0], in.mean = im[1], in.sd = im[2], in.lo = im[3], in.hi = im[4];
        in.trace = &t;
        in.delta_fixed = fixed_delta;
        in.scalars = sc, in.nscalars = diag ? 3 : 0;
        in.settings_keys = keys, in.settings_values = vals, in.nsettings = 3;
        in.warnings = warn, in.nwarnings = converged ? 0 : 2, in.warning_parts = parts;
        const double pixel[3] = {0, 0, 0.1}; /* 0.1 um pixels: a scale bar */
        in.voxel = pixel;
        in.convergence = &cv, in.verdict = verdict;
        in.units = "camera units (ADU)";
        char path[4200];
        snprintf(path, sizeof path, "%s/report.html", argv[2]);
        st = pp_report_write(path, &in);
        if (st == PP_OK)
            printf("%s\n", path);
    }
    for (int i = 0; i < 5; i++)
        pp_image_free(im[i]);
    free(v);
    return st == PP_OK ? 0 : fail(st == PP_ERR_NOMEM && !v ? PP_ERR_NOMEM : st);
}

static int cmd_acf(char **argv)
{
    size_t maxlag = strtoul(argv[2], NULL, 10), n = 0, cap = 1024;
    double *y = malloc(cap * sizeof *y), x;
    while (y && scanf("%lf", &x) == 1) {
        if (n == cap) {
            double *t = realloc(y, 2 * cap * sizeof *y);
            if (!t)
                break;
            y = t;
            cap *= 2;
        }
        y[n++] = x;
    }
    double *out = malloc((maxlag + 1) * sizeof *out);
    if (!y || !out)
        return 1;
    if (!pp_report_acf(y, n, 1, maxlag, out))
        printf("constant\n");
    else
        for (size_t k = 0; k <= maxlag; k++)
            printf("%.17g\n", out[k]);
    free(y);
    free(out);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc >= 3 && strcmp(argv[1], "write") == 0)
        return cmd_write(argc, argv);
    if (argc == 3 && strcmp(argv[1], "acf") == 0)
        return cmd_acf(argv);
    fprintf(stderr, "usage: probe_report write DIR [options] | acf MAXLAG\n");
    return 2;
}
