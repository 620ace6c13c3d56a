/* pixpost command line — `pixpost sample`: one frame in, a folder of
 * posterior summaries out (DESIGN.md section 6). Parsing lives in
 * sample_opts.c; reading the frame and PSF, running the sampler with a
 * progress display and writing the outputs live in run_frame.c (shared with
 * batch); this file prints the result and a short verdict. */
#include "cli.h"
#include "pixpost/diag.h"
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <time.h>

static void join_args(int argc, char **argv, char *buf, size_t len)
{
    size_t used = (size_t)snprintf(buf, len, "pixpost");
    for (int i = 0; i < argc && used < len; i++)
        used += (size_t)snprintf(buf + used, len - used, " %s", argv[i]);
}

/* The summary lines: outputs, headline figures, the verdict sentence
 * (pp_convergence_verdict: which part failed, the --iters to ask for),
 * then each warning and note. */
static void print_verdict(const pp_sampler *s, const cli_sample_opts *o, double seconds)
{
    size_t nw = pp_sampler_warning_count(s);
    const pp_trace *t = pp_sampler_trace(s);
    pp_convergence cv;
    char verdict[PP_VERDICT_MAX], count[160] = "no convergence warnings";
    pp_sampler_convergence(s, &cv);
    pp_convergence_verdict(&cv, verdict, sizeof verdict);
    if (nw)
        snprintf(count, sizeof count,
                 "%zu warning%s (%zu on hyperparameters, %zu on pixels, %zu other) below", nw,
                 nw == 1 ? "" : "s", cv.hyper_warnings, cv.pixel_warnings,
                 nw - cv.hyper_warnings - cv.pixel_warnings);
    fprintf(stderr,
            "pixpost: wrote %s/ (mean, sd, lo, hi, rhat, mcse, residual .tif; mean, sd .png; "
            "summary.json; trace.csv; report.html)\n",
            o->outdir);
    fprintf(stderr, "pixpost: %u chains x %zu kept draws in %.1f s; worst R-hat %.3f, lowest "
                    "bulk-ESS %.0f: %s\n",
            t->chains, t->kept, seconds, cv.rhat_max, cv.ess_bulk_min, count);
    fprintf(stderr, "pixpost: verdict: %s\n", verdict);
    const pp_run_length *L = pp_sampler_run_length(s);
    if (L->stop == PP_STOP_FIXED)
        fprintf(stderr, "pixpost: run length: burn-in %lu + %lu iterations (fixed by --iters)\n",
                L->burn, L->iters);
    else if (L->stop == PP_STOP_CONVERGED)
        fprintf(stderr,
                "pixpost: run length: burn-in %lu + %lu iterations in %u round%s: "
                "converged\n",
                L->burn, L->iters, L->rounds, L->rounds == 1 ? "" : "s");
    else if (L->iters_needed)
        fprintf(stderr,
                "pixpost: run length: burn-in %lu + %lu iterations in %u round%s: "
                "stopped at --%s, not converged (%s; about %lu iterations after "
                "burn-in would be needed)\n",
                L->burn, L->iters, L->rounds, L->rounds == 1 ? "" : "s",
                pp_stop_reason_name(L->stop), L->failed, L->iters_needed);
    else
        fprintf(stderr,
                "pixpost: run length: burn-in %lu + %lu iterations in %u round%s: "
                "stopped at --%s, not converged (%s)\n",
                L->burn, L->iters, L->rounds, L->rounds == 1 ? "" : "s",
                pp_stop_reason_name(L->stop), L->failed);
    for (size_t i = 0; i < nw; i++)
        fprintf(stderr, "pixpost:   %s\n", pp_sampler_warning(s, i));
    for (size_t i = 0; i < pp_sampler_note_count(s); i++)
        fprintf(stderr, "pixpost: note: %s\n", pp_sampler_note(s, i));
}

/* The checks' warnings (data before sampling, the fit after it): model
 * warnings, not convergence ones, so --strict does not count them. */
static void print_checks(const cli_frame_run *r)
{
    for (size_t i = 0; i < r->checks.count; i++)
        fprintf(stderr, "pixpost: warning: data check: %s\n", r->checks.finding[i].text);
    if (r->predictive)
        for (size_t i = 0; i < r->predictive->nwarnings; i++)
            fprintf(stderr, "pixpost: warning: %s\n", r->predictive->warning[i]);
    else
        fprintf(stderr, "pixpost: note: %s\n", r->predictive_note);
}

static int run(cli_sample_opts *o, int argc, char **argv, const struct timespec *t0)
{
    char cmd[8192];
    join_args(argc, argv, cmd, sizeof cmd);
    cli_frame_run r;
    memset(&r, 0, sizeof r);
    if (cli_check_outdir(o->outdir, o->overwrite, r.message, sizeof r.message))
        return cli_error("%s", r.message);
    r.frame = o->frame;
    r.page = o->read.page;
    r.outdir = o->outdir;
    r.seed = o->cfg.seed;
    r.threads = o->cfg.threads;
    r.command_line = cmd;
    r.progress = o->progress;
    r.stop = cli_stop_flag();
    r.announce_pages = !o->quiet;
    r.install_signals = 1;
    r.t0 = *t0;
    int rc = cli_run_frame(o, &r);
    if (rc)
        cli_error("%s", r.message);
    if (rc && r.interrupted && *r.stop)
        rc = 128 + (int)*r.stop; /* as a process killed by the signal (and as batch) */
    if (!rc && !o->quiet)
        print_verdict(r.sampler, o, cli_since(t0));
    if (!rc && !o->quiet)
        print_checks(&r);
    if (!rc && o->strict && pp_sampler_warning_count(r.sampler) > 0)
        rc = CLI_EXIT_STRICT;
    pp_sampler_free(r.sampler);
    pp_ppcheck_free(r.predictive);
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
