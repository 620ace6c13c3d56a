/* pixpost command line — `pixpost batch`: sample every frame of a folder,
 * fault-isolated (each frame in its own worker process), resumable (a
 * ".done" marker written last in each frame folder), sharded for job
 * arrays (--shard K/N, manifests joined by --merge) and, in an MPI build
 * under mpirun, spread over ranks by a dispatcher on rank 0.
 *
 * Reproducibility contract: a frame's seed is pp_hash_string(--seed, its
 * relative path [+ "#p<page>"]), its thread count does not change results,
 * and the command recorded in its summary.json leaves out the options that
 * only steer the run (--jobs, --shard, --resume, --overwrite, --strict,
 * --threads, --quiet, --progress). So a frame's outputs are byte-identical (timings aside)
 * whatever the order, jobs, shards, ranks or interruptions.
 *
 * Cost: listing (one readdir per folder) and one manifest rewrite per
 * finished frame; the frames themselves cost what `pixpost sample` costs.
 */
#include "batch.h"
#include "pixpost/output.h"
#include "pixpost/output_extra.h"
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static const cli_opt batch_table[] = {
    {"jobs", 0, 1, "N",
     "Frames sampled at the same time, each in its own process. Default: min(frames to do, "
     "cores); each frame then gets max(1, cores / jobs) threads, where cores is --threads "
     "if given (the total for the whole batch) or the number of online CPUs."},
    {"shard", 0, 1, "K/N",
     "Do only the K-th of N slices: frame i of the sorted list (pages counted, from 0) goes "
     "to shard (i mod N) + 1. Writes index.shard-K-of-N.csv/json instead of index.csv/json."},
    {"resume", 0, 0, "",
     "Skip frames whose folder holds a completion marker made with the same settings and "
     "input; redo the others (leftover temporary files are removed). Finished frames made "
     "with other settings or from a changed input are replaced only with --overwrite."},
    {"recursive", 0, 0, "", "Also take frames from subfolders (outputs keep the tree)."},
    {"pattern", 0, 1, "GLOB",
     "Only frames whose file name matches GLOB (fnmatch; matched against the path relative "
     "to INDIR when GLOB contains '/'). Only .png, .tif and .tiff names are ever taken."},
    {"merge", 0, 1, "OUTDIR",
     "Join OUTDIR/index.shard-K-of-N.csv for K = 1..N into OUTDIR/index.csv and index.json, "
     "then exit (no other option is needed)."},
    {NULL, 0, 0, NULL, NULL},
};

static void batch_help(FILE *fp)
{
    const cli_opt *tables[] = {batch_table, cli_sample_table(), NULL};
    fputs("Usage: pixpost batch INDIR -o OUTDIR --psf SPEC [sample options] [--jobs N]\n"
          "                     [--shard K/N] [--resume] [--overwrite] [--strict]\n"
          "                     [--recursive] [--pattern GLOB]\n"
          "       pixpost batch --merge OUTDIR\n"
          "       mpirun -n R pixpost batch ...   (MPI builds: rank 0 hands frames out)\n\n"
          "Samples every PNG/TIFF frame of INDIR (sorted by path; a multi-page TIFF whose pages\n"
          "are time points, by --pages t or its OME metadata, gives one frame per page, named\n"
          "<stem>_p<page> with pages counted from 1; one whose pages are channels, by --pages c\n"
          "or its OME metadata, one frame per channel named <stem>_c<k> (from 0) with the k-th\n"
          "--psf when several are given; one whose pages are z-slices, by --pages z or its OME\n"
          "metadata, is one volume, named <stem>; other multi-page TIFFs are refused) into\n"
          "OUTDIR/<relative stem>/, exactly as 'pixpost sample' writes it, then writes the\n"
          "completion marker .done last. Each frame's seed is a hash of --seed and its\n"
          "relative path, so results do not depend on order, jobs, shards or ranks.\n"
          "OUTDIR/index.csv and index.json list every frame (path, page, output, status\n"
          "done/failed/failed-strict/skipped/pending, seconds, lambda and delta means, worst\n"
          "R-hat and lowest bulk-ESS over the trace columns, the number of convergence\n"
          "warnings, converged true/false, the part that failed (hyperparameters, pixels,\n"
          "hyperparameters and pixels, or other), the suggested --iters, message) and are\n"
          "rewritten atomically as frames finish. A frame that cannot be read or crashes is\n"
          "recorded as failed and the others go on; with --strict a frame with convergence\n"
          "warnings is failed-strict (its outputs are written). Entries of INDIR that are not\n"
          "PNG/TIFF frames (and subfolders without --recursive) are named once at the start.\n"
          "Each frame prints a progress line per 10 % (unless --quiet or --progress none) and\n"
          "a last line 'done, N warnings, converged' or 'done, N warnings, not converged\n"
          "(<part>): run about K iterations: --iters K'. A frame folder finished with other\n"
          "settings is replaced only with --overwrite (otherwise nothing is done). --threads\n"
          "is the total thread budget of the batch. SIGINT/SIGTERM: running frames stop\n"
          "without writing, the manifest is updated, and the command to resume is printed.\n"
          "OUTDIR may not be inside INDIR; nothing is ever written into INDIR. Under mpirun,\n"
          "--jobs is not used: each worker rank runs one frame at a time with --threads\n"
          "threads (default: cores / ranks on the node).\n\nOptions:\n",
          fp);
    cli_print_options(fp, tables, cli_sample_default, NULL);
    fprintf(fp,
            "\nMPI support in this build: %s.\n"
            "Exit status: 0 all frames done or skipped; 1 bad usage or input; 2 some frames "
            "failed;\n3 no frame failed but some had convergence warnings under --strict;\n"
            "128+signal when stopped by SIGINT/SIGTERM (rerun with --resume).\n",
            cli_mpi_support());
}

/* The options that steer the run but not its results, left out of the
 * recorded command line. */
static int steering_option(const char *arg, int *with_value)
{
    static const char *const valued[] = {"--jobs", "--shard", "--threads", "--progress",
                                         "--memory-limit"};
    *with_value = 0;
    if (strcmp(arg, "--resume") == 0 || strcmp(arg, "--quiet") == 0 ||
        strcmp(arg, "--overwrite") == 0 || strcmp(arg, "--strict") == 0)
        return 1;
    for (size_t k = 0; k < sizeof valued / sizeof *valued; k++) {
        size_t n = strlen(valued[k]);
        if (strncmp(arg, valued[k], n) == 0 && (arg[n] == '\0' || arg[n] == '=')) {
            *with_value = arg[n] == '\0';
            return 1;
        }
    }
    return 0;
}

static void recorded_command(int argc, char **argv, char *buf, size_t len)
{
    size_t used = (size_t)snprintf(buf, len, "pixpost");
    for (int i = 0; i < argc && used < len; i++) {
        int with_value;
        if (i > 0 && steering_option(argv[i], &with_value)) {
            i += with_value;
            continue;
        }
        used += (size_t)snprintf(buf + used, len - used, " %s", argv[i]);
    }
}

/* What decides a frame's result, as text (hashed into each .done marker):
 * the version, the resolved configuration, and every sample option given
 * (table order, so canonical) except those that only steer the run. */
static void settings_text(const cli_args *a, const cli_sample_opts *o, char *buf, size_t len)
{
    static const char *const steering[] = {"output", "quiet",     "progress",    "threads",
                                           "strict", "overwrite", "memory-limit"};
    const pp_sampler_config *c = &o->cfg;
    char noise[256], prior[256];
    pp_noise_format(&c->noise, noise, sizeof noise);
    if (o->noise_auto) /* estimated per frame: the setting is "auto" */
        snprintf(noise, sizeof noise, "auto");
    pp_prior_format(&c->prior, prior, sizeof prior);
    size_t used = (size_t)snprintf(
        buf, len,
        "pixpost %s\npsf %s\nnoise %s\nprior %s\nsampler %s\nchains %u\nburn %lu\n"
        "iters %lu\nthin %lu\nseed %llu\nboundary %s\nlevel %.17g\nhl %.17g %.17g\n"
        "hd %.17g %.17g\nchannel %d\nmax_pixels %zu\nfft %d\nauto %d %.17g %lu\n",
        pp_version(), o->psf_text, noise, prior, pp_sampler_kind_name(c->kind), c->chains,
        c->burn, c->iters, c->thin, (unsigned long long)c->seed, pp_boundary_name(c->boundary),
        c->level, c->hyper_lambda[0], c->hyper_lambda[1], c->hyper_delta[0], c->hyper_delta[1],
        (int)o->read.channel, o->read.max_pixels, c->fft_effort, c->iters_auto, c->max_seconds,
        c->max_iters);
    for (const cli_opt *t = cli_sample_table(); t->name && used < len; t++) {
        int skip = !cli_given(a, t->name);
        for (size_t k = 0; k < sizeof steering / sizeof *steering; k++)
            skip |= strcmp(t->name, steering[k]) == 0;
        if (!skip)
            used +=
                (size_t)snprintf(buf + used, len - used, "--%s=%s\n", t->name, cli_str(a, t->name));
    }
    for (size_t k = 1; k < o->npsf && used < len; k++) /* one PSF per channel */
        used += (size_t)snprintf(buf + used, len - used, "psf%zu %s\n", k, o->psf_texts[k]);
    static const char *const more[] = {"compare", "above", "profile"}; /* repeatable */
    for (size_t m = 0; m < sizeof more / sizeof *more; m++) {
        const char *v[CLI_MAX_REPEAT + 1];
        size_t n = cli_strs(a, more[m], v, CLI_MAX_REPEAT + 1);
        for (size_t k = 1; k < n && used < len; k++) /* the first is among the options above */
            used += (size_t)snprintf(buf + used, len - used, "--%s=%s\n", more[m], v[k]);
    }
    if (o->regions && used < len) { /* labels edited in place change every frame's regions */
        struct stat sb;
        memset(&sb, 0, sizeof sb);
        stat(o->regions, &sb);
        used += (size_t)snprintf(buf + used, len - used, "regions %llu %lld.%09ld\n",
                                 (unsigned long long)sb.st_size, (long long)sb.st_mtim.tv_sec,
                                 (long)sb.st_mtim.tv_nsec);
    }
    if (o->mask && used < len) { /* a mask edited in place changes every frame's result */
        struct stat sb;
        memset(&sb, 0, sizeof sb);
        stat(o->mask, &sb);
        snprintf(buf + used, len - used, "mask %llu %lld.%09ld\n", (unsigned long long)sb.st_size,
                 (long long)sb.st_mtim.tv_sec, (long)sb.st_mtim.tv_nsec);
    }
}

static int online_cores(void)
{
    long n = sysconf(_SC_NPROCESSORS_ONLN);
    return n > 0 ? (int)n : 1;
}

/* ---- the run's state, updated as frames finish ---- */

typedef struct batch_state {
    batch_ctx *c;
    const char *base;  /* manifest name without extension */
    const char *shard; /* "K/N" or NULL */
    batch_row *rows;   /* one per selected frame */
    size_t *sel;       /* selected frame indices, sorted */
    size_t nsel, finished, ntodo;
    size_t replaced; /* finished frames made with other settings, to redo */
    int quiet;
    struct timespec last_write; /* of the manifest */
} batch_state;

static size_t row_of(const batch_state *s, size_t idx)
{
    size_t lo = 0, hi = s->nsel;
    while (hi - lo > 1) {
        size_t mid = (lo + hi) / 2;
        if (s->sel[mid] <= idx)
            lo = mid;
        else
            hi = mid;
    }
    return lo;
}

static void on_done(void *ctx, size_t idx, const batch_row *row)
{
    batch_state *s = ctx;
    s->rows[row_of(s, idx)] = *row;
    if (row->status == BATCH_PENDING)
        return; /* interrupted: it stays as it was */
    s->finished++;
    /* Every frame for up to 2000 rows; beyond that at most once a second, so
     * rewriting stays O(frames) per second rather than O(frames^2) in all. */
    if (s->nsel <= 2000 || cli_since(&s->last_write) >= 1.0) {
        batch_write_manifest(s->c->outdir, s->base, s->rows, s->nsel, s->c->indir, s->shard);
        clock_gettime(CLOCK_MONOTONIC, &s->last_write);
    }
    char warn[512];
    batch_row_verdict(row, warn, sizeof warn);
    if (!s->quiet && row->status == BATCH_DONE)
        fprintf(stderr, "pixpost: [%zu/%zu] %s: done, %s (%.1f s)\n", s->finished, s->ntodo,
                row->output, warn, row->seconds);
    else if (!s->quiet && row->status == BATCH_FAILED_STRICT)
        fprintf(stderr, "pixpost: [%zu/%zu] %s: FAILED under --strict: done, %s (%.1f s)\n",
                s->finished, s->ntodo, row->output, warn, row->seconds);
    else if (!s->quiet)
        fprintf(stderr, "pixpost: [%zu/%zu] %s: FAILED: %s\n", s->finished, s->ntodo, row->output,
                row->message);
}

/* Removes leftover temporaries of this run's manifest files in OUTDIR. */
static void clean_manifest_temps(const char *outdir, const char *base)
{
    DIR *d = opendir(outdir);
    if (!d)
        return;
    char pre[2][256];
    snprintf(pre[0], sizeof pre[0], ".%s.csv.tmp.", base);
    snprintf(pre[1], sizeof pre[1], ".%s.json.tmp.", base);
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        for (int k = 0; k < 2; k++)
            if (strncmp(e->d_name, pre[k], strlen(pre[k])) == 0) {
                char path[BATCH_PATH * 2];
                snprintf(path, sizeof path, "%s/%s", outdir, e->d_name);
                remove(path);
            }
    closedir(d);
}

/* Selects this shard's frames; with --resume marks complete ones skipped.
 * Fills s->rows/sel and the to-do list (malloc'ed). */
static int plan(batch_state *s, unsigned k, unsigned n, int resume, size_t **todo)
{
    batch_ctx *c = s->c;
    s->rows = calloc(c->nframes ? c->nframes : 1, sizeof *s->rows);
    s->sel = calloc(c->nframes ? c->nframes : 1, sizeof *s->sel);
    *todo = calloc(c->nframes ? c->nframes : 1, sizeof **todo);
    if (!s->rows || !s->sel || !*todo)
        return cli_error("batch: out of memory (%zu frames)", c->nframes);
    for (size_t i = 0; i < c->nframes; i++) {
        if (i % n != k - 1)
            continue;
        batch_row *r = &s->rows[s->nsel];
        s->sel[s->nsel++] = i;
        batch_row_init(r, &c->frames[i]);
        batch_marker m =
            c->frames[i].clash[0] ? BATCH_MARKER_NONE : batch_marker_state(c, &c->frames[i]);
        s->replaced += m == BATCH_MARKER_OTHER;
        if (resume && m == BATCH_MARKER_SAME) {
            char dir[BATCH_PATH * 2];
            snprintf(dir, sizeof dir, "%s/%s", c->outdir, c->frames[i].stem);
            r->status = BATCH_SKIPPED;
            batch_read_summary(dir, 1, r);
            batch_apply_strict(c, r);
        } else {
            (*todo)[s->ntodo++] = i;
        }
    }
    return 0;
}

static int verdict(const batch_state *s, int argc, char **argv)
{
    size_t count[BATCH_NSTATUS] = {0};
    for (size_t i = 0; i < s->nsel; i++)
        count[s->rows[i].status]++;
    int sig = (int)*cli_stop_flag();
    if (!s->quiet || sig)
        fprintf(stderr,
                "pixpost: batch %s%s%s: %zu done, %zu skipped, %zu failed, %zu failed under "
                "--strict, %zu not done; manifest %s/%s.csv\n",
                s->c->outdir, s->shard ? " shard " : "", s->shard ? s->shard : "",
                count[BATCH_DONE], count[BATCH_SKIPPED], count[BATCH_FAILED],
                count[BATCH_FAILED_STRICT], count[BATCH_PENDING], s->c->outdir, s->base);
    if (sig || count[BATCH_PENDING]) {
        char cmd[8192];
        size_t used = (size_t)snprintf(cmd, sizeof cmd, "pixpost");
        for (int i = 0; i < argc && used < sizeof cmd; i++)
            if (strcmp(argv[i], "--resume") != 0)
                used += (size_t)snprintf(cmd + used, sizeof cmd - used, " %s", argv[i]);
        fprintf(stderr, "pixpost: stopped before the end; finish with:\n  %s --resume\n", cmd);
        return sig ? 128 + sig : CLI_EXIT_USAGE;
    }
    return count[BATCH_FAILED]          ? CLI_EXIT_BATCH
           : count[BATCH_FAILED_STRICT] ? CLI_EXIT_STRICT
                                        : CLI_EXIT_OK;
}

/* ---- setup ---- */

typedef struct batch_run_opts {
    unsigned long jobs;
    unsigned shard_k, shard_n;
    int resume, recursive, jobs_given;
    const char *pattern;
} batch_run_opts;

static int parse_run_opts(const cli_args *a, batch_run_opts *r)
{
    memset(r, 0, sizeof *r);
    r->shard_k = r->shard_n = 1;
    int rc = cli_get_ulong(a, "jobs", 1, 4096, &r->jobs);
    rc = rc ? rc : cli_get_shard(a, "shard", &r->shard_k, &r->shard_n);
    r->jobs_given = cli_given(a, "jobs");
    r->resume = cli_given(a, "resume");
    r->recursive = cli_given(a, "recursive");
    r->pattern = cli_str(a, "pattern");
    if (!rc && r->pattern && !r->pattern[0])
        rc = cli_opt_error("pattern", "empty pattern (expected --pattern GLOB, e.g. '*.tif')");
    return rc;
}

static int choose_jobs(const batch_run_opts *ro, cli_sample_opts *o, size_t ntodo,
                       int *threads_per_frame)
{
    int cores = o->cfg.threads > 0 ? o->cfg.threads : online_cores();
    size_t jobs = ro->jobs_given ? ro->jobs : (ntodo < (size_t)cores ? ntodo : (size_t)cores);
    if (jobs < 1)
        jobs = 1;
    *threads_per_frame = cores / (int)jobs > 1 ? cores / (int)jobs : 1;
    /* frames run at once: each one's memory check counts them all */
    o->memory_frames = (unsigned)(jobs < ntodo ? jobs : ntodo); /* 0 (nothing to do): one */
    return (int)jobs;
}

/* Threads of one frame on an MPI worker rank. */
static int mpi_threads(const cli_sample_opts *o)
{
    if (o->cfg.threads > 0)
        return o->cfg.threads;
    const char *ls = getenv("OMPI_COMM_WORLD_LOCAL_SIZE");
    int local = ls ? atoi(ls) : 1, cores = online_cores();
    return local > 0 && cores / local > 1 ? cores / local : 1;
}

static int merge(const char *outdir);

/* Before anything is written: what the listing left out, and finished
 * frames made with other settings, which only --overwrite replaces. */
static int announce(const batch_state *s)
{
    const batch_ctx *c = s->c;
    if (s->replaced && !c->opts->overwrite)
        return cli_error("%s: %zu finished frame%s made with other settings or from a changed "
                         "input; add --overwrite to replace %s (or choose another -o)",
                         c->outdir, s->replaced, s->replaced == 1 ? " was" : "s were",
                         s->replaced == 1 ? "it" : "them");
    if (s->quiet)
        return 0;
    if (c->skipped.count)
        fprintf(stderr, "pixpost: %s: skipping %zu entr%s that %s not PNG/TIFF frames: %s\n",
                c->indir, c->skipped.count, c->skipped.count == 1 ? "y" : "ies",
                c->skipped.count == 1 ? "is" : "are", c->skipped.names);
    if (s->replaced)
        fprintf(stderr,
                "pixpost: %s: redoing %zu finished frame%s made with other settings or from a "
                "changed input (--overwrite)\n",
                c->outdir, s->replaced, s->replaced == 1 ? "" : "s");
    return 0;
}

/* mpi, rank, size: batch_mpi_active's answer (cli_cmd_batch). */
static int run_batch(batch_ctx *c, const batch_run_opts *ro, int argc, char **argv, int mpi,
                     int rank, int size)
{
    int rc = 0, dispatched = 0;
    if (mpi && size > 1 && rank > 0) {
        c->threads_per_frame = mpi_threads(c->opts);
        batch_mpi_worker(c);
        return 0;
    }
    char base[64], shard[32];
    int sharded = ro->shard_n > 1;
    snprintf(base, sizeof base, sharded ? "index.shard-%u-of-%u" : "index", ro->shard_k,
             ro->shard_n);
    snprintf(shard, sizeof shard, "%u/%u", ro->shard_k, ro->shard_n);
    batch_state s;
    memset(&s, 0, sizeof s);
    s.c = c;
    s.base = base;
    s.shard = sharded ? shard : NULL;
    s.quiet = c->opts->quiet;
    clock_gettime(CLOCK_MONOTONIC, &s.last_write);
    size_t *todo = NULL;
    rc = plan(&s, ro->shard_k, ro->shard_n, ro->resume, &todo);
    if (!rc)
        rc = announce(&s);
    if (!rc) {
        clean_manifest_temps(c->outdir, base);
        int jobs = choose_jobs(ro, c->opts, s.ntodo, &c->threads_per_frame);
        rc = batch_write_manifest(c->outdir, base, s.rows, s.nsel, c->indir, s.shard);
        if (!rc && !c->opts->quiet)
            fprintf(stderr, "pixpost: batch of %zu frames (%zu to do) with %s%d %s x %d threads\n",
                    s.nsel, s.ntodo, mpi && size > 1 ? "MPI, " : "",
                    mpi && size > 1 ? size - 1 : jobs, mpi && size > 1 ? "worker ranks" : "jobs",
                    mpi && size > 1 ? mpi_threads(c->opts) : c->threads_per_frame);
        cli_stop_install(0);
        dispatched = !rc;
        if (!rc && mpi && size > 1)
            batch_mpi_manager(c, todo, s.ntodo, on_done, &s, size);
        else if (!rc)
            batch_run_local(c, todo, s.ntodo, jobs, on_done, &s);
        if (!rc)
            rc = batch_write_manifest(c->outdir, base, s.rows, s.nsel, c->indir, s.shard);
        if (!rc)
            rc = verdict(&s, argc, argv);
        cli_stop_uninstall();
    }
    if (mpi && size > 1 && !dispatched)
        batch_mpi_manager(c, todo, 0, on_done, &s, size); /* refused: release the workers */
    free(todo);
    free(s.rows);
    free(s.sel);
    return rc;
}

/* worker: an MPI worker rank (rank > 0), which leaves OUTDIR to rank 0:
 * checking, creating and marking it from every rank at once raced (a rank
 * could find the folder half-marked by another, refuse it and exit 1,
 * and mpirun then killed the whole job before rank 0 wrote its manifest:
 * the likely cause of an empty --strict folder seen once in four runs of
 * tests/ref_batch_mpi.py; 0 in 6 runs since). Rank 0 hands out the
 * first frame only after OUTDIR and its manifest exist. */
static int prepare(const cli_args *a, cli_sample_opts *o, batch_ctx *c, const batch_run_opts *ro,
                   int argc, char **argv, int worker)
{
    int rc = cli_positionals(a, 1, "INDIR");
    rc = rc ? rc : cli_sample_opts_from_args(a, o);
    rc = rc ? rc : batch_check_outdir(a->pos[0], o->outdir);
    if (rc)
        return rc;
    if (o->plane >= 0 || o->channel_all)
        return cli_error("batch: %s is for pixpost sample (batch takes --pages t: each page of "
                         "a multi-page TIFF a frame, --pages c: each page a channel, or --pages "
                         "z: each file one volume)",
                         o->plane >= 0 ? "--plane" : "--channel all");
    char msg[BATCH_MSG];
    if (!worker && cli_check_outdir(o->outdir, o->overwrite, msg, sizeof msg) != 0)
        return cli_error("%s", msg);
    /* A frame's progress is shown unless asked not to (sample's default
     * shows it only on a terminal): a line per 10 % naming the frame. */
    if (!o->quiet && !cli_given(a, "progress"))
        o->progress = CLI_PROGRESS_PLAIN;
    memset(c, 0, sizeof *c);
    c->opts = o;
    c->indir = a->pos[0];
    c->outdir = o->outdir;
    recorded_command(argc, argv, c->command_line, sizeof c->command_line);
    settings_text(a, o, c->settings, sizeof c->settings);
    if ((rc = batch_list(c->indir, ro->recursive, ro->pattern, o->pages, o->npsf, o->cfg.seed,
                         &c->frames, &c->nframes, &c->skipped)) != 0)
        return rc;
    if (c->nframes == 0)
        return cli_error("%s: no PNG or TIFF frames found%s%s%s%s%s", c->indir,
                         ro->pattern ? " matching " : "", ro->pattern ? ro->pattern : "",
                         ro->recursive ? "" : " (add --recursive for subfolders)",
                         c->skipped.count ? "; not frames: " : "", c->skipped.names);
    if (worker)
        return 0;
    if (cli_make_dirs(c->outdir, msg, sizeof msg) != 0)
        return cli_error("%s", msg);
    /* The folder is pixpost's from now on (cli_check_outdir): marked before
     * any frame folder or manifest is written in it. An existing marker is
     * left as it is, so a later refusal (frames made with other settings)
     * leaves the folder unchanged. */
    if (pp_output_is_marked(c->outdir))
        return 0;
    pp_status st = pp_output_mark(c->outdir, c->command_line);
    return st == PP_OK ? 0 : cli_fail(st);
}

int cli_cmd_batch(int argc, char **argv)
{
    const cli_opt *tables[] = {batch_table, cli_sample_table(), NULL};
    cli_args a;
    int rc = cli_parse(&a, "batch", tables, argc, argv);
    if (rc == CLI_HELP) {
        batch_help(stdout);
        return CLI_EXIT_OK;
    }
    if (rc)
        return rc;
    if (cli_given(&a, "merge")) {
        if (a.npos > 0)
            return cli_error("batch: --merge takes only OUTDIR (unexpected '%s')", a.pos[0]);
        return merge(cli_str(&a, "merge"));
    }
    batch_run_opts ro;
    cli_sample_opts o;
    batch_ctx c;
    memset(&c, 0, sizeof c);
    if ((rc = parse_run_opts(&a, &ro)) != 0)
        return rc;
    int rank = 0, size = 1, mpi = batch_mpi_active(&rank, &size);
    rc = prepare(&a, &o, &c, &ro, argc, argv, mpi && size > 1 && rank > 0);
    if (!rc)
        rc = run_batch(&c, &ro, argc, argv, mpi, rank, size);
    free(c.frames);
    batch_mpi_finish();
    return rc;
}

/* ---- --merge ---- */

static int cmp_row(const void *a, const void *b)
{
    const batch_row *x = a, *y = b;
    int d = strcmp(x->path, y->path);
    return d ? d : (x->page > y->page) - (x->page < y->page);
}

/* The N of the first index.shard-K-of-N.csv in outdir, or 0. */
static unsigned find_shard_count(const char *outdir)
{
    DIR *d = opendir(outdir);
    unsigned k, n = 0;
    if (!d)
        return 0;
    struct dirent *e;
    while (n == 0 && (e = readdir(d)) != NULL) {
        char tail[8];
        if (sscanf(e->d_name, "index.shard-%u-of-%u.cs%1s", &k, &n, tail) != 3 ||
            strcmp(tail, "v") != 0)
            n = 0;
    }
    closedir(d);
    return n;
}

static int merge(const char *outdir)
{
    unsigned n = find_shard_count(outdir);
    if (n == 0)
        return cli_error("%s: no shard manifests (index.shard-K-of-N.csv) to merge", outdir);
    batch_row *rows = NULL;
    size_t nrows = 0;
    int rc = 0;
    for (unsigned k = 1; k <= n && !rc; k++) {
        char path[BATCH_PATH];
        snprintf(path, sizeof path, "%s/index.shard-%u-of-%u.csv", outdir, k, n);
        if (access(path, R_OK) != 0)
            rc = cli_error("%s: missing (run shard %u/%u first, then merge again)", path, k, n);
        else
            rc = batch_read_csv(path, &rows, &nrows);
    }
    size_t count[BATCH_NSTATUS] = {0};
    if (!rc) {
        qsort(rows, nrows, sizeof *rows, cmp_row);
        for (size_t i = 0; i < nrows; i++)
            count[rows[i].status]++;
        rc = batch_write_manifest(outdir, "index", rows, nrows, NULL, NULL);
    }
    if (!rc)
        fprintf(stderr,
                "pixpost: merged %u shard manifests into %s/index.csv: %zu frames (%zu "
                "done, %zu skipped, %zu failed, %zu failed under --strict, %zu not done)\n",
                n, outdir, nrows, count[BATCH_DONE], count[BATCH_SKIPPED], count[BATCH_FAILED],
                count[BATCH_FAILED_STRICT], count[BATCH_PENDING]);
    free(rows);
    if (rc)
        return rc;
    return count[BATCH_FAILED] || count[BATCH_PENDING] ? CLI_EXIT_BATCH
           : count[BATCH_FAILED_STRICT]                ? CLI_EXIT_STRICT
                                                       : CLI_EXIT_OK;
}
