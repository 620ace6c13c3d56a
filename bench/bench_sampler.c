/* pixpost bench — time, memory and effective sample size of one sampler run
 * through the library API, on a synthetic frame or volume.
 * Usage: bench_sampler KIND H W [key=value ...], keys (defaults):
 *   boundary=periodic thin=1 chains=1 threads=1 iters=50 burn=0 seed=1
 *   depth=1 (D > 1: a D x H x W volume blurred by a 3-D gaussian PSF,
 *   sigma 1.5 px, sigma_z 1 slice, cubic voxels)
 *   noise=SPEC (pp_noise_parse; default: simulated with gaussian:sigma=1,
 *   sampled with the default gaussian; e.g. poisson: the scene in photons,
 *   about 0-115 per pixel, simulated and sampled with it)
 *   prior=gmrf2 jeffreys=1 (hyperpriors Gamma(0,0), scikit-image's model)
 *   measure=0 (1: FFTW_MEASURE) frame=PATH psf=PATH (write them as TIFF)
 *   wisdom=PATH (FFTW wisdom loaded before planning, saved after, as the
 *   plan cache of the pixpost command; use with measure=1)
 *   auto=0 (1: --iters auto, in rounds; iters is then the first round)
 *   max_iters=0 (auto: the cap on iterations per chain, burn-in included)
 * Prints one line of key=value pairs:
 *   sec_iter  wall seconds x parallel lanes / (iterations x chains), i.e.
 *             seconds per iteration of one chain (burn-in included)
 *   wall      pp_sampler_seconds (the chains only, burn-in included)
 *   rss_kb    peak resident set of the process (VmHWM of /proc/self/status:
 *             getrusage's ru_maxrss would include the RSS of the process that
 *             forked us, e.g. Python's ~10 MB, which Linux carries over exec),
 *             after pp_sampler_return_memory(), as the pixpost command runs
 *   ess_<col> ess_bulk of each trace column (pp_diag_compute, the rank-
 *             normalised split-chain ESS of include/pixpost/diag.h) over
 *             the kept draws of all chains, with mean_<col> its mean;
 *             ess_pmin / ess_pmed: smallest and median over the probes;
 *   auto=1:   stop, rounds, burn_used, iters_used (pp_sampler_run_length).
 * The frame is a smooth scene blurred by a Gaussian PSF (sigma 1.5) with
 * Gaussian noise (sd 1): invented data, for timing only. A volume's slice z
 * is that scene plus 15 sin(z / 5) (so the slices differ), blurred by the
 * 3-D PSF. Cost: the run. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "pixpost/diag.h"
#include "pixpost/pixpost.h"
#include "pixpost/diag_extra.h"
#include "pixpost/io_extra.h"
#include "pixpost/sampler_extra.h"

static pp_image *scene(size_t d, size_t h, size_t w, const pp_image *psf,
                       const pp_noise_spec *ns)
{
    pp_image *x, *y;
    if (pp_image_create3(d, h, w, &x) != PP_OK)
        return NULL;
    for (size_t z = 0; z < d; z++)
        for (size_t r = 0; r < h; r++)
            for (size_t c = 0; c < w; c++)
                x->data[(z * h + r) * w + c] =
                    50 + 20 * sin((double)r / 9) * cos((double)c / 13) +
                    (((r / 16) + (c / 16)) % 3 == 0 ? 30 : 0) +
                    (d > 1 ? 15 * sin((double)z / 5) : 0);
    if (pp_model_simulate(x, psf, PP_BOUNDARY_PERIODIC, ns, 9, NULL, &y) != PP_OK)
        y = NULL;
    pp_image_free(x);
    return y;
}

/* Value of key=... among argv[first..), or def. */
static const char *opt(int argc, char **argv, const char *key, const char *def)
{
    size_t n = strlen(key);
    for (int i = 4; i < argc; i++)
        if (strncmp(argv[i], key, n) == 0 && argv[i][n] == '=')
            return argv[i] + n + 1;
    return def;
}

static void print_ess(const pp_trace *t)
{
    size_t n = t->kept, nc = t->chains;
    double *x = malloc(n * nc * sizeof *x), pe[64];
    size_t np = 0;
    for (size_t j = 0; x && j < t->ncols; j++) {
        for (size_t c = 0; c < nc; c++)
            for (size_t i = 0; i < n; i++)
                x[c * n + i] = t->values[(c * n + i) * t->ncols + j];
        pp_diag_scalar d;
        if (pp_diag_compute(x, nc, n, &d) != PP_OK)
            d.ess_bulk = NAN;
        if (strncmp(t->names[j], "p_", 2) == 0 && np < 64)
            pe[np++] = d.ess_bulk;
        else
            printf(" ess_%s=%.4g mean_%s=%.6g", t->names[j], d.ess_bulk, t->names[j], d.mean);
    }
    for (size_t a = 1; a < np; a++) /* insertion sort of the probe ESS */
        for (size_t b = a; b > 0 && pe[b] < pe[b - 1]; b--) {
            double tmp = pe[b];
            pe[b] = pe[b - 1];
            pe[b - 1] = tmp;
        }
    if (np)
        printf(" ess_pmin=%.4g ess_pmed=%.4g", pe[0], pe[np / 2]);
    free(x);
}

int main(int argc, char **argv)
{
    if (argc < 4)
        return fprintf(stderr, "usage: bench_sampler KIND H W [key=value ...]\n"), 1;
    pp_sampler_return_memory(); /* as the pixpost command does */
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    if (pp_sampler_kind_parse(argv[1], NULL, &cfg.kind) != PP_OK ||
        pp_boundary_parse(opt(argc, argv, "boundary", "periodic"), NULL, &cfg.boundary) != PP_OK ||
        pp_prior_parse(opt(argc, argv, "prior", "gmrf2"), NULL, &cfg.prior) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    size_t h = strtoul(argv[2], NULL, 10), w = strtoul(argv[3], NULL, 10);
    cfg.thin = strtoul(opt(argc, argv, "thin", "1"), NULL, 10);
    cfg.chains = (unsigned)strtoul(opt(argc, argv, "chains", "1"), NULL, 10);
    cfg.threads = atoi(opt(argc, argv, "threads", "1"));
    cfg.iters = strtoul(opt(argc, argv, "iters", "50"), NULL, 10);
    cfg.burn = strtoul(opt(argc, argv, "burn", "0"), NULL, 10);
    cfg.seed = strtoull(opt(argc, argv, "seed", "1"), NULL, 10);
    cfg.iters_auto = atoi(opt(argc, argv, "auto", "0")); /* 1: rounds, iters the first */
    cfg.max_iters = strtoul(opt(argc, argv, "max_iters", "0"), NULL, 10);
    if (atoi(opt(argc, argv, "measure", "0")))
        cfg.fft_effort = PP_FFT_MEASURE;
    if (atoi(opt(argc, argv, "jeffreys", "1")))
        cfg.hyper_lambda[0] = cfg.hyper_lambda[1] = cfg.hyper_delta[0] = cfg.hyper_delta[1] = 0;
    size_t d = strtoul(opt(argc, argv, "depth", "1"), NULL, 10);
    /* noise=SPEC: simulate with it and sample with it; default: simulate
     * with sd 1, sample with the default gaussian (lambda sampled) */
    const char *nz = opt(argc, argv, "noise", NULL);
    pp_noise_spec ns;
    if (pp_noise_parse(nz ? nz : "gaussian:sigma=1", NULL, &ns) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    if (nz)
        cfg.noise = ns;
    pp_psf_spec ps;
    pp_image *psf = NULL;
    if (d > 1) { /* a 3-D gaussian kernel (radius ceil(4 sigma) on each axis) */
        pp_shape ks;
        double *kd;
        pp_psf_parse("gaussian:sigma=1.5,sigma_z=1", NULL, &ps);
        if (pp_psf_make3(&ps, 0, 0, &ks, &kd) != PP_OK)
            return fprintf(stderr, "%s\n", pp_error_message()), 1;
        if (pp_image_create3(ks.n[0], ks.n[1], ks.n[2], &psf) == PP_OK)
            memcpy(psf->data, kd, pp_image_count(psf) * sizeof *kd);
        free(kd);
    } else {
        pp_psf_parse("gaussian:sigma=1.5", NULL, &ps);
        pp_psf_make(&ps, 0, &psf);
    }
    if (!psf)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    pp_image *y = scene(d, h, w, psf, &ns);
    const char *fp = opt(argc, argv, "frame", NULL), *pp = opt(argc, argv, "psf", NULL);
    if (!y || (fp && pp_image_write(fp, y) != PP_OK) || (pp && pp_image_write(pp, psf) != PP_OK))
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    pp_sampler *s;
    const char *wis = opt(argc, argv, "wisdom", NULL);
    if ((wis && pp_fft_wisdom_load(wis) != PP_OK) || pp_sampler_create(&cfg, y, psf, &s) != PP_OK ||
        (wis && pp_fft_wisdom_save(wis) != PP_OK) || pp_sampler_run(s) != PP_OK)
        return fprintf(stderr, "%s\n", pp_error_message()), 1;
    double wall = pp_sampler_seconds(s);
    unsigned par = cfg.threads > 0 && (unsigned)cfg.threads < cfg.chains ? (unsigned)cfg.threads
                                                                         : cfg.chains;
    long hwm = -1;
    FILE *st = fopen("/proc/self/status", "r");
    char line[256];
    while (st && fgets(line, sizeof line, st))
        if (sscanf(line, "VmHWM: %ld", &hwm) == 1)
            break;
    if (st)
        fclose(st);
    const pp_run_length *L = pp_sampler_run_length(s);
    printf("sec_iter=%.6g wall=%.6g rss_kb=%ld",
           wall * par / ((double)(L->iters + L->burn) * cfg.chains), wall, hwm);
    if (cfg.iters_auto)
        printf(" stop=%s rounds=%u burn_used=%lu iters_used=%lu", pp_stop_reason_name(L->stop),
               L->rounds, L->burn, L->iters);
    pp_solver_stats ss;
    pp_sampler_solver_stats(s, &ss);
    if (ss.draws)
        printf(" cg_mean=%.4g cg_max=%zu", (double)ss.iterations / (double)ss.draws, ss.most);
    if (pp_sampler_trace(s)->kept >= 6)
        print_ess(pp_sampler_trace(s));
    putchar('\n');
    pp_sampler_free(s);
    pp_image_free(y);
    pp_image_free(psf);
    return 0;
}
