/* pixpost command line — `pixpost sample`: one frame in, a folder of
 * posterior summaries out (DESIGN.md section 6). Parsing lives in
 * sample_opts.c; reading the frame and PSF, running the sampler with a
 * progress display and writing the outputs live in run_frame.c (shared with
 * batch); this file prints the result and a short verdict. */
#include "cli.h"
#include "pixpost/diag.h"
#include "pixpost/output.h"
#include "pixpost/output_extra.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdlib.h>
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
static void print_verdict(const pp_sampler *s, const char *outdir, int volume, int residual,
                          double seconds)
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
            "pixpost: wrote %s/ (mean, sd, lo, hi, rhat, mcse%s .tif; %s .png; "
            "summary.json; trace.csv; report.html)\n",
            outdir,
            volume ? (residual ? ", residual, multi-page" : ", multi-page")
                   : (residual ? ", residual" : ""),
            volume ? "mean_mip, sd_mip (maximum over z)" : "mean, sd");
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

/* Samples one unit of the input (units.c) into outdir, prints its verdict
 * and keeps it in *u for the index. */
static int run_unit(const cli_sample_opts *o, const cli_units *us, cli_unit *u,
                    const char *outdir, const char *cmd, const struct timespec *t0)
{
    static const char *const colour[] = {"r", "g", "b"};
    char part[64];
    cli_frame_run r;
    memset(&r, 0, sizeof r);
    r.frame = o->frame;
    r.page = u->page;
    r.volume = u->volume;
    r.vol_c = u->c;
    r.vol_t = u->t;
    r.outdir = outdir;
    r.psf = &o->psfs[u->psf];
    r.psf_text = o->psf_texts[u->psf];
    r.channel_set = u->channel_set;
    r.channel = u->channel;
    if (u->channel_set)
        snprintf(part, sizeof part, "channel %s", colour[(size_t)(u - us->unit) % 3]);
    else if (u->volume)
        snprintf(part, sizeof part, "%s %u (its z-slices)", us->role == 'c' ? "channel" : "time point",
                 us->role == 'c' ? u->c : u->t);
    else
        snprintf(part, sizeof part, "page %u", u->page);
    r.part = (us->pages > 1 && !(u->volume && !us->role)) || u->channel_set ? part : NULL;
    r.voxel_um = us->have_voxel ? us->voxel : NULL;
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
        print_verdict(r.sampler, outdir, u->volume, r.predictive != NULL, cli_since(t0));
    if (!rc && !o->quiet)
        print_checks(&r);
    if (!rc) {
        pp_convergence cv;
        pp_sampler_convergence(r.sampler, &cv);
        pp_convergence_verdict(&cv, u->verdict, sizeof u->verdict);
        u->rhat_max = cv.rhat_max;
        u->warnings = pp_sampler_warning_count(r.sampler);
    }
    if (!rc && o->strict && u->warnings > 0)
        rc = CLI_EXIT_STRICT;
    pp_sampler_free(r.sampler);
    pp_ppcheck_free(r.predictive);
    return rc;
}

/* Several units (channels, time points): each into OUTDIR/<sub>/, the
 * index after the last. Every folder is checked before any sampling; the
 * first failure stops the run (the folders written so far are complete),
 * and the index is written only when every unit ran. */
static int run_units(const cli_sample_opts *o, cli_units *us, const char *cmd,
                     const struct timespec *t0)
{
    char dirs[CLI_MAX_UNITS][4200], msg[1024];
    for (size_t k = 0; k < us->n; k++) {
        snprintf(dirs[k], sizeof dirs[k], "%s/%s", o->outdir, us->unit[k].sub);
        if (cli_check_outdir(dirs[k], o->overwrite, msg, sizeof msg))
            return cli_error("%s", msg);
    }
    if (cli_make_dirs(o->outdir, msg, sizeof msg))
        return cli_error("%s", msg);
    if (pp_output_mark(o->outdir, cmd) != PP_OK)
        return cli_fail(PP_ERR_IO);
    if (!o->quiet)
        fprintf(stderr, "pixpost: %s: %zu %s, sampled one after another into %s/%s0 .. %s%zu\n",
                o->frame, us->n, us->role == 'c' ? "channels" : "time points", o->outdir,
                us->unit[0].sub[0] == 'c' ? "c" : "t", us->unit[0].sub[0] == 'c' ? "c" : "t",
                us->n - 1);
    int rc = 0, strict = 0;
    for (size_t k = 0; k < us->n && (!rc || rc == CLI_EXIT_STRICT); k++) {
        strict |= rc == CLI_EXIT_STRICT;
        rc = run_unit(o, us, &us->unit[k], dirs[k], cmd, t0);
    }
    strict |= rc == CLI_EXIT_STRICT;
    if (rc && rc != CLI_EXIT_STRICT)
        return rc;
    if (cli_units_write_index(o, us, o->frame, msg, sizeof msg))
        return cli_error("%s", msg);
    return strict ? CLI_EXIT_STRICT : 0;
}

static int run(cli_sample_opts *o, int argc, char **argv, const struct timespec *t0)
{
    char cmd[8192], msg[1024];
    join_args(argc, argv, cmd, sizeof cmd);
    if (cli_check_outdir(o->outdir, o->overwrite, msg, sizeof msg))
        return cli_error("%s", msg);
    cli_units *us = malloc(sizeof *us);
    if (!us)
        return cli_error("out of memory");
    int rc = cli_units_plan(o, o->frame, us, msg, sizeof msg);
    if (rc)
        cli_error("%s", msg);
    else if (us->n == 1 && !us->unit[0].sub[0])
        rc = run_unit(o, us, &us->unit[0], o->outdir, cmd, t0);
    else
        rc = run_units(o, us, cmd, t0);
    free(us);
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
