/* pixpost tests — runs in rounds (--iters auto) against one run.
 *
 * 1. Extendable moments: a run split into rounds of doubling length
 *    (pp_sampler_run_schedule, 10 + 10 + 20 kept draws) gives the same
 *    bytes as one run of the same total length (40) and seed, for every
 *    kernel (gibbs, mtc, adaptive gibbs, hmc, pcn, gpcn) and both boundaries,
 *    with 4 chains on 1 and on 2 threads: so a
 *    chain resumed after another chain used its slot continues exactly
 *    (the park stores), the split-R-hat maps' first half is exactly all
 *    rounds but the last, and the trace grows without moving a value.
 *    Compared: mean, sd, lo, hi, the R-hat and MCSE maps, the trace and
 *    every scalar diagnostic.
 * 2. Halves of unequal length (a last round cut by a cap): rounds ending
 *    at 20 and 33 kept draws make the R-hat and MCSE maps from halves of
 *    20 and 13 draws. At the probe pixels, whose draws the trace holds
 *    (hmc and the adaptive gibbs record the draws themselves, no
 *    Rao-Blackwellisation), the maps are recomputed here from the trace
 *    with the formula sampler_diag.c states: the classic split-R-hat
 *    (BDA3, Gelman et al. 2013, section 11.4) with m the harmonic mean
 *    2 n1 n2 / (n1 + n2) and W pooled over n1 + n2 - 2 degrees of freedom
 *    per chain. Tolerance 1e-5 relative: the maps keep the first half's
 *    mean in single precision (6e-8 relative), amplified by the spread of
 *    the half means. A fixed run (halves 16 and 17 of 33) must give other
 *    maps, which shows the check can fail.
 */
#include "sampler_internal.h"
#include "pixpost/diag.h"
#include "pixpost/psf.h"
#include "pixpost/rng.h"
#include "testutil.h"
#include "pixpost/image_extra.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* w x h: a smooth pattern plus unit noise (gaussian) or Poisson-like
 * counts around 30 (photon models; rounded, so whole photons). */
static pp_image *frame(size_t w, size_t h, int photons)
{
    pp_image *img;
    pp_image_create(h, w, &img);
    pp_rng r;
    pp_rng_seed(&r, 5, 0);
    for (size_t i = 0; i < w * h; i++) {
        double v = 30 + 10 * sin((double)(i % w) / 3) * cos((double)(i / w) / 4);
        img->data[i] = photons ? floor(v + sqrt(v) * pp_rng_normal(&r) + 0.5)
                               : 10 + 3 * sin((double)(i % w) / 4) + pp_rng_normal(&r);
    }
    return img;
}

typedef struct result {
    pp_image *img[6]; /* mean, sd, lo, hi, rhat, mcse */
    double *trace;
    size_t tn;
    pp_diag_scalar *diag;
    size_t ncols;
} result;

static void take(const pp_sampler *s, result *r)
{
    const pp_image *src[6] = {pp_sampler_mean(s), pp_sampler_sd(s),       pp_sampler_lo(s),
                              pp_sampler_hi(s),   pp_sampler_rhat_map(s), pp_sampler_mcse_map(s)};
    for (int i = 0; i < 6; i++) {
        r->img[i] = NULL;
        if (src[i])
            pp_image_clone(src[i], &r->img[i]);
    }
    const pp_trace *t = pp_sampler_trace(s);
    r->tn = t->chains * t->kept * t->ncols;
    r->trace = malloc(r->tn * sizeof(double) + 1);
    memcpy(r->trace, t->values, r->tn * sizeof(double));
    r->ncols = t->ncols;
    r->diag = malloc(t->ncols * sizeof *r->diag);
    memcpy(r->diag, pp_sampler_diagnostics(s), t->ncols * sizeof *r->diag);
}

static void drop(result *r)
{
    for (int i = 0; i < 6; i++)
        pp_image_free(r->img[i]);
    free(r->trace);
    free(r->diag);
}

/* ends: NULL for one run of cfg->iters, else the schedule. */
static int run(const pp_sampler_config *cfg, const pp_image *y, const pp_image *psf,
               const unsigned long *ends, size_t n, result *r)
{
    pp_sampler *s;
    pp_status st = pp_sampler_create(cfg, y, psf, &s);
    CHECK(st == PP_OK, "create: %s", pp_error_message());
    if (st != PP_OK)
        return 0;
    st = ends ? pp_sampler_run_schedule(s, ends, n) : pp_sampler_run(s);
    CHECK(st == PP_OK, "run: %s", pp_error_message());
    if (st == PP_OK)
        take(s, r);
    pp_sampler_free(s);
    return st == PP_OK;
}

static int same_image(const pp_image *a, const pp_image *b)
{
    if (!a || !b)
        return a == b;
    return a->width == b->width && a->height == b->height &&
           memcmp(a->data, b->data, a->width * a->height * sizeof(double)) == 0;
}

static void rounds_equal_one_run(const char *name, pp_sampler_config cfg, const pp_image *y,
                                 const pp_image *psf)
{
    static const char *const what[6] = {"mean", "sd", "lo", "hi", "rhat map", "mcse map"};
    static const unsigned long ends[3] = {10, 20, 40};
    cfg.iters_auto = 0;
    cfg.chains = 4;
    cfg.burn = 30;
    cfg.iters = 40;
    for (int th = 1; th <= 2; th++) {
        cfg.threads = th;
        result one, rounds;
        if (!run(&cfg, y, psf, NULL, 0, &one))
            continue;
        if (!run(&cfg, y, psf, ends, 3, &rounds)) {
            drop(&one);
            continue;
        }
        for (int i = 0; i < 6; i++)
            CHECK(one.img[i] && same_image(one.img[i], rounds.img[i]),
                  "%s, %d thread(s): %s of 3 rounds = that of one run", name, th, what[i]);
        CHECK(one.tn == rounds.tn && memcmp(one.trace, rounds.trace, one.tn * sizeof(double)) == 0,
              "%s, %d thread(s): trace of 3 rounds = that of one run", name, th);
        CHECK(memcmp(one.diag, rounds.diag, one.ncols * sizeof *one.diag) == 0,
              "%s, %d thread(s): scalar diagnostics of 3 rounds = those of one run", name, th);
        drop(&one);
        drop(&rounds);
    }
}

static void extendable(void)
{
    pp_image *y = frame(24, 20, 0), *yp = frame(24, 20, 1), *psf;
    pp_psf_spec ps;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &ps);
    pp_psf_make(&ps, 0, &psf);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    pp_prior_parse("gmrf1", NULL, &cfg.prior);
    cfg.kind = PP_SAMPLER_GIBBS;
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    rounds_equal_one_run("gibbs periodic", cfg, y, psf);
    cfg.boundary = PP_BOUNDARY_PAD;
    rounds_equal_one_run("gibbs pad", cfg, y, psf);
    cfg.kind = PP_SAMPLER_MTC;
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    rounds_equal_one_run("mtc", cfg, y, psf);
    pp_sampler_defaults(&cfg); /* the default prior: adaptive gibbs, pad */
    rounds_equal_one_run("adaptive gibbs pad", cfg, y, psf);
    cfg.thin = 2;
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    rounds_equal_one_run("adaptive gibbs periodic thin 2", cfg, y, psf);
    pp_sampler_defaults(&cfg);
    pp_noise_parse("poisson:gain=1,offset=0", NULL, &cfg.noise);
    pp_prior_parse("adaptive", NULL, &cfg.prior); /* (the default for photons is matern) */
    rounds_equal_one_run("hmc adaptive", cfg, yp, psf);
    pp_prior_parse("gmrf1", NULL, &cfg.prior);
    rounds_equal_one_run("hmc gmrf1", cfg, yp, psf);
    cfg.kind = PP_SAMPLER_PCN;
    rounds_equal_one_run("pcn gmrf1", cfg, yp, psf);
    cfg.kind = PP_SAMPLER_GPCN;
    rounds_equal_one_run("gpcn gmrf1", cfg, yp, psf);
    pp_image_free(y);
    pp_image_free(yp);
    pp_image_free(psf);
}

/* The probe pixels' R-hat and MCSE from the trace, halves n1 and n - n1. */
static void probe_maps(const pp_trace *t, size_t col, size_t n1, double *rhat, double *mcse)
{
    size_t n = t->kept, n2 = n - n1, nc = t->chains, k2 = 2 * nc;
    double hm[64], w = 0, mean = 0, bm = 0;
    for (size_t c = 0; c < nc; c++)
        for (int h = 0; h < 2; h++) {
            size_t i0 = h ? n1 : 0, len = h ? n2 : n1;
            double s = 0, ss = 0;
            for (size_t i = i0; i < i0 + len; i++)
                s += t->values[(c * n + i) * t->ncols + col];
            s /= (double)len;
            for (size_t i = i0; i < i0 + len; i++) {
                double d = t->values[(c * n + i) * t->ncols + col] - s;
                ss += d * d;
            }
            hm[2 * c + h] = s;
            w += ss;
            mean += s;
        }
    mean /= (double)k2;
    for (size_t j = 0; j < k2; j++)
        bm += (hm[j] - mean) * (hm[j] - mean);
    bm /= (double)(k2 - 1);
    w /= (double)(nc * (n - 2));
    double m = 2.0 * (double)n1 * (double)n2 / (double)n, vp = (m - 1) / m * w + bm;
    *rhat = sqrt(vp / w);
    *mcse = sqrt(fmax(bm / (double)k2, vp / ((double)k2 * m)));
}

static void unequal_halves(const char *name, pp_sampler_config cfg, const pp_image *y,
                           const pp_image *psf)
{
    static const unsigned long ends[2] = {20, 33};
    cfg.iters_auto = 0;
    cfg.chains = 3;
    cfg.burn = 30;
    cfg.iters = 33;
    cfg.threads = 1;
    for (int cut = 1; cut >= 0; cut--) {
        pp_sampler *s;
        if (pp_sampler_create(&cfg, y, psf, &s) != PP_OK) {
            CHECK(0, "%s: create: %s", name, pp_error_message());
            return;
        }
        pp_status st = cut ? pp_sampler_run_schedule(s, ends, 2) : pp_sampler_run(s);
        CHECK(st == PP_OK, "%s: run: %s", name, pp_error_message());
        const pp_trace *t = pp_sampler_trace(s);
        const pp_image *rm = pp_sampler_rhat_map(s), *mm = pp_sampler_mcse_map(s);
        size_t worst = 0, nprobe = 0;
        double err = 0;
        for (size_t j = 0; st == PP_OK && rm && mm && j < t->ncols; j++) {
            size_t r, c;
            if (sscanf(t->names[j], "p_%zu_%zu", &r, &c) != 2)
                continue;
            double rh, mc;
            probe_maps(t, j, 20, &rh, &mc);
            double e1 = fabs(rm->data[r * y->width + c] - rh) / rh;
            double e2 = fabs(mm->data[r * y->width + c] - mc) / mc;
            if (fmax(e1, e2) > err)
                err = fmax(e1, e2), worst = j;
            nprobe++;
        }
        if (cut)
            CHECK(rm && nprobe == 9 && err < 1e-5,
                  "%s: maps of halves 20 + 13 = the formula at the %zu probes (worst %s, %.2g)",
                  name, nprobe, t->names[worst], err);
        else
            CHECK(rm && err > 1e-3,
                  "%s: a fixed run's halves (16 + 17) differ from 20 + 13 "
                  "(%.2g): the check can fail",
                  name, err);
        pp_sampler_free(s);
    }
}

int main(void)
{
    extendable();
    pp_image *y = frame(24, 20, 0), *yp = frame(24, 20, 1), *psf;
    pp_psf_spec ps;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &ps);
    pp_psf_make(&ps, 0, &psf);
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg); /* adaptive gibbs: records the draws x */
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    unequal_halves("adaptive gibbs", cfg, y, psf);
    pp_noise_parse("poisson:gain=1,offset=0", NULL, &cfg.noise);
    pp_prior_parse("gmrf1", NULL, &cfg.prior);
    cfg.positivity = PP_POSITIVITY_NONE; /* x = z: the moments are of the probes' values */
    cfg.kind = PP_SAMPLER_HMC;
    unequal_halves("hmc", cfg, yp, psf);
    pp_image_free(y);
    pp_image_free(yp);
    pp_image_free(psf);
    return pp_test_done();
}
