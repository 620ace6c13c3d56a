/* pixpost command line — `pixpost sample`: one frame in, a folder of
 * posterior summaries out (DESIGN.md section 6). Parsing lives in
 * sample_opts.c; this file reads the frame and PSF, runs the sampler with a
 * progress display, writes the outputs and prints a short verdict. */
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>
#include "cli.h"
#include "pixpost/output.h"

static volatile sig_atomic_t stop_flag;

static void on_signal(int sig)
{
    (void)sig;
    stop_flag = 1;
}

typedef struct progress_state {
    cli_progress mode;
    struct timespec t0;
    int last_decile;
} progress_state;

static double since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

static void show_progress(void *ctx, unsigned long long done, unsigned long long total)
{
    progress_state *p = ctx;
    double el = since(&p->t0), frac = (double)done / (double)total;
    double left = frac > 0 ? el * (1 - frac) / frac : 0;
    if (p->mode == CLI_PROGRESS_BAR) {
        int w = 30, fill = (int)(frac * w);
        fprintf(stderr, "\rsampling [%.*s%*s] %5.1f%%  %.0f it/s  %.0f s left ", fill,
                "##############################", w - fill, "", 100 * frac,
                el > 0 ? (double)done / el : 0.0, left);
        if (done == total)
            fputc('\n', stderr);
    } else if (p->mode == CLI_PROGRESS_PLAIN) {
        int dec = (int)(frac * 10);
        if (dec > p->last_decile) {
            p->last_decile = dec;
            fprintf(stderr, "sampling: %d%% (%llu of %llu iterations, %.1f s elapsed, %.1f s left)\n",
                    dec * 10, done, total, el, left);
        }
    }
}

/* mkdir -p for the output folder. */
static int make_dirs(const char *path)
{
    char buf[4096];
    if (snprintf(buf, sizeof buf, "%s", path) >= (int)sizeof buf)
        return cli_error("%s: path too long", path);
    for (char *p = buf + 1;; p++) {
        if (*p == '/' || *p == '\0') {
            char c = *p;
            *p = '\0';
            if (mkdir(buf, 0777) != 0 && errno != EEXIST)
                return cli_error("%s: cannot create the output folder: %s", buf, strerror(errno));
            *p = c;
            if (!c)
                break;
        }
    }
    struct stat sb;
    if (stat(path, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return cli_error("%s: not a folder (the output of sample is a folder)", path);
    return 0;
}

static void join_args(int argc, char **argv, char *buf, size_t len)
{
    size_t used = (size_t)snprintf(buf, len, "pixpost");
    for (int i = 0; i < argc && used < len; i++)
        used += (size_t)snprintf(buf + used, len - used, " %s", argv[i]);
}

static void print_verdict(const pp_sampler *s, const cli_sample_opts *o, double seconds)
{
    size_t nw = pp_sampler_warning_count(s);
    const pp_trace *t = pp_sampler_trace(s);
    fprintf(stderr, "pixpost: wrote %s/ (mean, sd, lo, hi .tif; mean, sd .png; summary.json; "
                    "trace.csv)\n",
            o->outdir);
    fprintf(stderr, "pixpost: %u chains x %zu kept draws in %.1f s; %s\n", t->chains, t->kept,
            seconds, nw ? "warnings:" : "no warnings");
    for (size_t i = 0; i < nw; i++)
        fprintf(stderr, "pixpost:   %s\n", pp_sampler_warning(s, i));
}

static int run(cli_sample_opts *o, int argc, char **argv, struct timespec *t0)
{
    pp_image *frame = NULL, *psf = NULL;
    pp_sampler *s = NULL;
    pp_read_info info;
    pp_status st = pp_image_read(o->frame, &o->read, &frame, &info);
    if (st != PP_OK)
        return cli_fail(st);
    int rc = 0;
    if (info.pages > 1 && !o->quiet)
        fprintf(stderr, "pixpost: %s: %u pages; using page %u\n", o->frame, info.pages,
                o->read.page);
    if (info.nonfinite)
        rc = cli_error("%s: %zu pixels are NaN or infinite; mask or repair them first", o->frame,
                       info.nonfinite);
    if (!rc && (st = pp_psf_make(&o->psf, 0, &psf)) != PP_OK)
        rc = cli_fail(st);
    if (!rc && o->wisdom && (st = pp_fft_wisdom_load(o->wisdom)) != PP_OK)
        rc = cli_fail(st);
    progress_state ps = {o->progress, *t0, 0};
    if (!rc) {
        if (o->quiet || o->progress == CLI_PROGRESS_NONE)
            ps.mode = CLI_PROGRESS_NONE;
        else if (o->progress == CLI_PROGRESS_AUTO)
            ps.mode = isatty(2) ? CLI_PROGRESS_BAR : CLI_PROGRESS_NONE;
        o->cfg.progress = ps.mode == CLI_PROGRESS_NONE ? NULL : show_progress;
        o->cfg.progress_ctx = &ps;
        o->cfg.stop = &stop_flag;
        if ((st = pp_sampler_create(&o->cfg, frame, psf, &s)) != PP_OK)
            rc = cli_fail(st);
    }
    if (!rc)
        rc = make_dirs(o->outdir);
    if (!rc) {
        signal(SIGINT, on_signal);
        signal(SIGTERM, on_signal);
        st = pp_sampler_run(s);
        signal(SIGINT, SIG_DFL);
        signal(SIGTERM, SIG_DFL);
        if (st == PP_ERR_INTERRUPTED)
            rc = cli_error("%s: interrupted; no outputs were written", o->frame);
        else if (st != PP_OK)
            rc = cli_fail(st);
    }
    if (!rc) {
        char cmd[8192];
        join_args(argc, argv, cmd, sizeof cmd);
        pp_run_info ri = {o->frame, o->psf_text, o->noise_text, o->prior_text, cmd, since(t0)};
        if ((st = pp_output_write(o->outdir, s, frame, &ri)) != PP_OK)
            rc = cli_fail(st);
    }
    if (!rc && o->wisdom && (st = pp_fft_wisdom_save(o->wisdom)) != PP_OK)
        rc = cli_fail(st);
    if (!rc && !o->quiet)
        print_verdict(s, o, since(t0));
    if (!rc && o->strict && pp_sampler_warning_count(s) > 0)
        rc = CLI_EXIT_STRICT;
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(frame);
    return rc;
}

int cli_cmd_sample(int argc, char **argv)
{
    struct timespec t0;
    clock_gettime(CLOCK_MONOTONIC, &t0);
    cli_sample_opts o;
    int rc = cli_sample_opts_parse(argc, argv, &o);
    if (rc == CLI_HELP)
        return CLI_EXIT_OK;
    if (rc)
        return rc;
    return run(&o, argc, argv, &t0);
}
