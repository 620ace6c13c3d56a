/* Allocation-failure sweep (issue 20, item 4): for each of a few small
 * sample runs through the library API (frame and PSF built, sampler
 * created and run, result taken, outputs written to a folder, everything
 * freed), first count the allocations N the run makes, then run it again
 * N times with the n-th allocation failing (n = 1..N; tests/alloc_fault.h
 * says what is counted). Each failing run must:
 *   - reach the n-th allocation (the run is deterministic on one thread),
 *   - return PP_ERR_NOMEM with a message (pp_error_message not ""), or,
 *     where the code can do without the allocation (a realloc that only
 *     shrinks a block), PP_OK with outputs byte-identical to the fault-free
 *     run's (all but summary.json and report.html, which hold timings),
 *   - free everything it allocated: the wrappers' count of live blocks is
 *     back where it was, and, in the sanitizer build, LeakSanitizer finds
 *     nothing (__lsan_do_recoverable_leak_check after every run),
 *   - leave no partial output: output.h's contract is that every output is
 *     staged and renamed into place only when all were written, the marker
 *     first; so the folder holds nothing but (possibly) the marker.
 * And the fault-free run must leave live blocks unchanged and write the
 * full set of outputs.
 * Runs are small (16x16 frames, 5x12x12 volume, a few dozen iterations)
 * so the sweep of a few thousand runs stays short, also under ASan. */
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include "alloc_fault.h"
#include "pixpost/output.h"
#include "pixpost/pixpost.h"
#include "pixpost/rng.h"
#include "testutil.h"

#if defined(__SANITIZE_ADDRESS__)
#include <sanitizer/lsan_interface.h>
#define LEAK_CHECK() __lsan_do_recoverable_leak_check()
#else
#define LEAK_CHECK() 0
#endif

typedef struct scenario {
    const char *name;
    const char *noise, *prior;
    pp_sampler_kind kind;
    pp_boundary boundary;
    size_t depth;  /* 1: a 16x16 frame; else a depth x 12 x 12 volume */
    int iters_auto;
    int missing;   /* one NaN pixel */
} scenario;

static const scenario scenarios[] = {
    {"gibbs pad gmrf1 (auto length, a NaN pixel)", "gaussian", "gmrf1", PP_SAMPLER_GIBBS,
     PP_BOUNDARY_PAD, 1, 1, 1},
    {"gibbs periodic gmrf1", "gaussian", "gmrf1", PP_SAMPLER_GIBBS, PP_BOUNDARY_PERIODIC, 1, 0, 0},
    {"mtc periodic gmrf2", "gaussian", "gmrf2", PP_SAMPLER_MTC, PP_BOUNDARY_PERIODIC, 1, 0, 0},
    {"mtc pad matern", "gaussian", "matern:range=3", PP_SAMPLER_MTC, PP_BOUNDARY_PAD, 1, 0, 0},
    {"adaptive gibbs pad", "gaussian", "adaptive", PP_SAMPLER_GIBBS, PP_BOUNDARY_PAD, 1, 0, 0},
    {"hmc poisson pad", "poisson:gain=1,offset=0", "gmrf1", PP_SAMPLER_HMC, PP_BOUNDARY_PAD, 1, 0, 0},
    {"pcn camera periodic", "camera:gain=2,offset=10,read=1.5", "gmrf1", PP_SAMPLER_PCN,
     PP_BOUNDARY_PERIODIC, 1, 0, 0},
    {"volume gibbs pad gmrf1", "gaussian", "gmrf1", PP_SAMPLER_GIBBS, PP_BOUNDARY_PAD, 5, 0, 0},
};
#define NSCEN (sizeof scenarios / sizeof scenarios[0])

/* Names in dir (not . or ..), each appended to list (size cap); the count. */
static int list_dir(const char *dir, char list[][256], int cap)
{
    DIR *d = opendir(dir);
    if (!d)
        return -1;
    int n = 0;
    struct dirent *e;
    while ((e = readdir(d)))
        if (strcmp(e->d_name, ".") && strcmp(e->d_name, "..")) {
            if (n < cap)
                snprintf(list[n], 256, "%s", e->d_name);
            n++;
        }
    closedir(d);
    return n;
}

static void empty_dir(const char *dir)
{
    char names[64][256], path[4400];
    int n = list_dir(dir, names, 64);
    for (int i = 0; i < n && i < 64; i++) {
        if (snprintf(path, sizeof path, "%s/%s", dir, names[i]) < (int)sizeof path)
            remove(path);
    }
}

/* One whole run; frees everything it made on every path. */
static pp_status run(const scenario *c, const char *dir)
{
    pp_image *frame = NULL, *psf = NULL;
    pp_sampler *s = NULL;
    pp_result r = {0};
    pp_psf_spec ps;
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    pp_status st = c->depth > 1 ? pp_image_create3(c->depth, 12, 12, &frame)
                                : pp_image_create(16, 16, &frame);
    if (st != PP_OK)
        goto done;
    size_t n = c->depth * (c->depth > 1 ? 144 : 256), w = c->depth > 1 ? 12 : 16;
    pp_rng g;
    pp_rng_seed(&g, 11, 0);
    for (size_t i = 0; i < n; i++)
        frame->data[i] = round(20 + 8 * sin((double)(i % w) / 3) * cos((double)(i / w) / 4) +
                               2 * pp_rng_normal(&g));
    if (c->missing)
        frame->data[37] = NAN;
    if ((st = pp_psf_parse("gaussian:sigma=1", NULL, &ps)) != PP_OK ||
        (st = pp_psf_make(&ps, 5, &psf)) != PP_OK ||
        (st = pp_noise_parse(c->noise, NULL, &cfg.noise)) != PP_OK ||
        (st = pp_prior_parse(c->prior, NULL, &cfg.prior)) != PP_OK)
        goto done;
    cfg.kind = c->kind;
    cfg.boundary = c->boundary;
    cfg.chains = 2;
    cfg.threads = 1;
    cfg.burn = 20;
    cfg.iters = c->iters_auto ? 100 : 30;
    cfg.iters_auto = c->iters_auto;
    cfg.max_iters = 320;
    cfg.seed = 5;
    double above[1] = {20};
    cfg.above = above;
    cfg.nabove = 1;
    if ((st = pp_sampler_create(&cfg, frame, psf, &s)) != PP_OK ||
        (st = pp_sampler_run(s)) != PP_OK || (st = pp_sampler_result(s, &r)) != PP_OK)
        goto done;
    pp_run_info info = {.input_path = "synthetic", .psf_spec = "gaussian:sigma=1",
                        .noise_spec = c->noise, .prior_spec = c->prior,
                        .command_line = "test_alloc_sweep"};
    st = pp_output_write(dir, &r, frame, &info);
done:
    pp_result_free(&r);
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(frame);
    return st;
}

int main(int argc, char **argv);

/* The distinct code addresses the failed allocations would have returned
 * to: the allocation sites (call sites in the library) the sweep reached. */
static void *sites[4096];
static size_t nsites;

static void note_site(void *p)
{
    for (size_t i = 0; i < nsites; i++)
        if (sites[i] == p)
            return;
    if (nsites < sizeof sites / sizeof sites[0])
        sites[nsites++] = p;
}

/* 1 when every file in dir but summary.json and report.html equals the
 * file of that name in ref, and both hold the same names. */
static int same_outputs(const char *dir, const char *ref)
{
    char a[64][256], b[64][256], pa[4400], pb[4400];
    int na = list_dir(dir, a, 64), nb = list_dir(ref, b, 64);
    if (na != nb || na < 0 || na > 64)
        return 0;
    for (int i = 0; i < na; i++) {
        if (!strcmp(a[i], "summary.json") || !strcmp(a[i], "report.html"))
            continue;
        if (snprintf(pa, sizeof pa, "%s/%s", dir, a[i]) >= (int)sizeof pa ||
            snprintf(pb, sizeof pb, "%s/%s", ref, a[i]) >= (int)sizeof pb)
            return 0;
        FILE *fa = fopen(pa, "rb"), *fb = fopen(pb, "rb");
        int same = fa && fb;
        while (same) { /* both files read to the end: equal bytes, equal lengths */
            int ca = getc(fa), cb = getc(fb);
            same = ca == cb;
            if (ca == EOF)
                break;
        }
        if (fa)
            fclose(fa);
        if (fb)
            fclose(fb);
        if (!same)
            return 0;
    }
    return 1;
}

static void sweep(const scenario *c, const char *dir, const char *ref, unsigned long only)
{
    empty_dir(ref);
    empty_dir(dir);
    long live0 = pp_fault_live();
    pp_fault_arm(0);
    pp_status st = run(c, dir);
    unsigned long total = pp_fault_disarm();
    char names[64][256];
    int files = list_dir(dir, names, 64);
    CHECK(st == PP_OK, "%s: fault-free run: %s", c->name, pp_error_message());
    CHECK(pp_fault_live() == live0, "%s: fault-free run leaves %ld blocks", c->name,
          pp_fault_live() - live0);
    CHECK(files >= 9, "%s: fault-free run wrote %d files", c->name, files);
    CHECK(!LEAK_CHECK(), "%s: fault-free run leaks (LeakSanitizer)", c->name);
    for (int i = 0; i < files && i < 64; i++) {
        char from[4400], to[4400];
        if (snprintf(from, sizeof from, "%s/%s", dir, names[i]) < (int)sizeof from &&
            snprintf(to, sizeof to, "%s/%s", ref, names[i]) < (int)sizeof to)
            CHECK(rename(from, to) == 0, "keep %s", from);
    }
    unsigned long bad = 0, spared = 0;
    for (unsigned long k = 1; k <= total; k++) {
        if (only && k != only)
            continue;
        empty_dir(dir);
        live0 = pp_fault_live();
        pp_fault_arm(k);
        st = run(c, dir);
        pp_fault_disarm();
        files = list_dir(dir, names, 64);
        int ok_files = files == 0 || (files == 1 && !strcmp(names[0], PP_OUTPUT_MARKER));
        const char *msg = pp_error_message();
        note_site(pp_fault_site());
        int done_anyway = st == PP_OK && same_outputs(dir, ref);
        spared += done_anyway;
        int ok = pp_fault_fired() && pp_fault_live() == live0 &&
                 ((st == PP_ERR_NOMEM && msg[0] && ok_files) || done_anyway);
        int leak = LEAK_CHECK();
        CHECK(ok && !leak,
              "%s: allocation %lu of %lu failing: fired %d, status %s, message \"%s\", "
              "%ld blocks left, %d files (first %s)%s; site main%+td",
              c->name, k, total, pp_fault_fired(), pp_status_name(st), msg,
              pp_fault_live() - live0, files, files > 0 ? names[0] : "-",
              leak ? ", LeakSanitizer: leak" : "",
              pp_fault_site() ? (char *)pp_fault_site() - (char *)(void *)main : 0);
        bad += !(ok && !leak);
    }
    printf("%-45s %5lu allocations: %lu failing runs bad, %lu done anyway (same outputs)\n",
           c->name, total, bad, spared);
}

int main(int argc, char **argv)
{
    /* argv: [scenario index [allocation]] to rerun one case */
    const char *tmp = pp_test_tmpdir();
    char dir[4200], ref[4200];
    snprintf(dir, sizeof dir, "%s/out", tmp);
    snprintf(ref, sizeof ref, "%s/ref", tmp);
    if (mkdir(dir, 0777) != 0 || mkdir(ref, 0777) != 0) {
        fprintf(stderr, "cannot make %s and %s\n", dir, ref);
        return 1;
    }
    int one = argc > 1 ? atoi(argv[1]) : -1;
    unsigned long only = argc > 2 ? strtoul(argv[2], NULL, 10) : 0;
    for (size_t i = 0; i < NSCEN; i++)
        if (one < 0 || (size_t)one == i)
            sweep(&scenarios[i], dir, ref, only);
    printf("distinct allocation sites reached (call sites in the code): %zu\n", nsites);
    return pp_test_done();
}
