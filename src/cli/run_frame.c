/* pixpost command line — sample one frame into a folder: read the frame (a
 * chosen page; or every z-slice as one volume, blurred by a 3-D PSF, a bead
 * stack or a 2-D PSF that blurs each slice alone), mark its masked and
 * saturated pixels unobserved (NaN; unobserved.c), make the PSF, create and
 * run the sampler (with an optional progress display and a stop flag),
 * write the outputs with pp_output_write.
 * Before the sampler is made the data are checked against the model
 * (datacheck.h: an error stops the frame), after the run the fit is
 * (ppcheck.h: warnings and residual.tif).
 * Used by `pixpost sample` (one frame) and by `pixpost batch` (each frame, in
 * a worker process). Errors are returned as one sentence in r->message, not
 * printed, so batch can record them in its manifest.
 *
 * The stop flag set by cli_stop_install()'s SIGINT/SIGTERM handler is the one
 * writable static of the front end: a signal handler can only talk through a
 * volatile sig_atomic_t. Cost: that of the sampler; the rest is one read of
 * the frame and a handful of small files written.
 */
#include "cli.h"
#include "pixpost/output.h"
#include "pixpost/report.h"
#include "pixpost/spots.h"
#include "pixpost/stack.h"
#include <errno.h>
#include <signal.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

static volatile sig_atomic_t stop_flag;

static void on_signal(int sig)
{
    stop_flag = sig;
}

const volatile sig_atomic_t *cli_stop_flag(void)
{
    return &stop_flag;
}

void cli_stop_install(int restart)
{
    struct sigaction sa;
    memset(&sa, 0, sizeof sa);
    sa.sa_handler = on_signal;
    sigemptyset(&sa.sa_mask);
    sa.sa_flags = restart ? SA_RESTART : 0;
    sigaction(SIGINT, &sa, NULL);
    sigaction(SIGTERM, &sa, NULL);
}

void cli_stop_uninstall(void)
{
    signal(SIGINT, SIG_DFL);
    signal(SIGTERM, SIG_DFL);
}

double cli_since(const struct timespec *t0)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)(t.tv_sec - t0->tv_sec) + 1e-9 * (double)(t.tv_nsec - t0->tv_nsec);
}

typedef struct progress_state {
    cli_progress mode;
    struct timespec t0;
    int last_decile;
    unsigned long long total; /* grows with each round of --iters auto */
    unsigned chains; /* iterations are counted over all chains */
    const char *label; /* plain lines start "pixpost: <label>: " when set */
} progress_state;

static void show_progress(void *ctx, unsigned long long done, unsigned long long total)
{
    progress_state *p = ctx;
    double el = cli_since(&p->t0), frac = (double)done / (double)total;
    if (total != p->total) { /* a new round: count tenths of the longer run from here */
        p->total = total;
        p->last_decile = (int)(frac * 10);
    }
    double left = frac > 0 ? el * (1 - frac) / frac : 0;
    if (p->mode == CLI_PROGRESS_BAR) {
        int w = 30, fill = (int)(frac * w);
        unsigned c = p->chains ? p->chains : 1;
        fprintf(stderr,
                "\rsampling %u chains [%.*s%*s] %5.1f%%  iteration %llu/%llu  %.0f it/s  "
                "%.0f s left ",
                c, fill, "##############################", w - fill, "", 100 * frac, done / c,
                total / c, el > 0 ? (double)done / el / c : 0.0, left);
        if (done == total)
            fputc('\n', stderr);
    } else if (p->mode == CLI_PROGRESS_PLAIN) {
        int dec = (int)(frac * 10);
        if (dec > p->last_decile) {
            p->last_decile = dec;
            fprintf(stderr,
                    "%s%s%ssampling: %d%% (%llu of %llu iterations, %.1f s elapsed, %.1f s "
                    "left)\n",
                    p->label ? "pixpost: " : "", p->label ? p->label : "", p->label ? ": " : "",
                    dec * 10, done, total, el, left);
        }
    }
}

/* Records a failure: the message into r, returns CLI_EXIT_USAGE. */
static int fail_msg(cli_frame_run *r, const char *fmt, ...) CLI_PRINTF(2, 3);
static int fail_msg(cli_frame_run *r, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(r->message, sizeof r->message, fmt, ap);
    va_end(ap);
    return CLI_EXIT_USAGE;
}

static int fail_lib(cli_frame_run *r, pp_status st)
{
    const char *m = pp_error_message();
    return fail_msg(r, "%s", m && m[0] ? m : pp_status_name(st));
}

/* A library failure about the frame's content (sampler set-up or run):
 * the message gets the frame's path in front, as every error line names its
 * file. */
static int fail_frame(cli_frame_run *r, pp_status st)
{
    const char *m = pp_error_message();
    return fail_msg(r, "%s: %s", r->frame, m && m[0] ? m : pp_status_name(st));
}

int cli_make_dirs(const char *path, char *msg, size_t len)
{
    char buf[4096];
    if (snprintf(buf, sizeof buf, "%s", path) >= (int)sizeof buf) {
        snprintf(msg, len, "%s: path too long", path);
        return CLI_EXIT_USAGE;
    }
    for (char *p = buf + 1;; p++) {
        if (*p == '/' || *p == '\0') {
            char c = *p;
            *p = '\0';
            if (mkdir(buf, 0777) != 0 && errno != EEXIST) {
                snprintf(msg, len, "%s: cannot create the output folder: %s", buf, strerror(errno));
                return CLI_EXIT_USAGE;
            }
            *p = c;
            if (!c)
                break;
        }
    }
    struct stat sb;
    if (stat(path, &sb) != 0 || !S_ISDIR(sb.st_mode)) {
        snprintf(msg, len, "%s: not a folder (the output of sample is a folder)", path);
        return CLI_EXIT_USAGE;
    }
    return 0;
}

/* The z-slices of r->frame as one volume: every page, or with OME metadata
 * of several channels or time points the slices of channel vol_c at time
 * point vol_t (pp_ome_page). --max-pixels counts voxels, checked on the
 * first page's size before the stack is read (so page 0 is read twice, a
 * small cost beside the stack's). Peak memory: the stack and the volume. */
static int read_volume(const cli_sample_opts *o, cli_frame_run *r, pp_image **out)
{
    pp_read_options ro = o->read;
    ro.page = 0;
    if (r->channel_set)
        ro.channel = r->channel;
    pp_image *first = NULL;
    pp_ome_meta ome;
    unsigned pages;
    pp_status st = pp_stack_probe(r->frame, &pages, &ome);
    if (st == PP_OK)
        st = pp_image_read(r->frame, &ro, &first, &r->info);
    if (st != PP_OK)
        return fail_lib(r, st);
    size_t h = first->height, w = first->width, nz = ome.present ? ome.nz : pages;
    pp_image_free(first);
    if (nz < 2)
        return fail_msg(r, "%s: one z-slice only, not a volume; sample it as a frame (drop "
                           "--pages z)", r->frame);
    if (h * w > o->read.max_pixels / nz)
        return fail_msg(r, "%s: a volume of %zu z-slices of %zux%zu pixels, more voxels than "
                           "--max-pixels %zu; raise --max-pixels, or sample one slice with "
                           "--plane K",
                        r->frame, nz, w, h, o->read.max_pixels);
    if ((st = pp_volume_read(r->frame, &ro, ome.present ? r->vol_c : 0,
                             ome.present ? r->vol_t : 0, out, NULL, &r->info)) != PP_OK)
        return fail_lib(r, st);
    if (r->announce_pages)
        fprintf(stderr, "pixpost: %s: %zu z-slices of %zux%zu, sampled as one volume\n",
                r->frame, nz, w, h);
    return 0;
}

static int read_frame(const cli_sample_opts *o, cli_frame_run *r, pp_image **frame)
{
    pp_status st;
    if (r->volume) {
        int rc = read_volume(o, r, frame);
        if (rc)
            return rc;
    } else {
        pp_read_options ro = o->read;
        ro.page = r->page;
        if (r->channel_set)
            ro.channel = r->channel;
        if ((st = pp_image_read(r->frame, &ro, frame, &r->info)) != PP_OK)
            return fail_lib(r, st);
        if (r->info.pages > 1 && r->announce_pages)
            fprintf(stderr, "pixpost: %s: %u pages; using page %u\n", r->frame, r->info.pages,
                    r->page);
    }
    if (r->info.nonfinite)
        return fail_msg(r, "%s: %zu pixels are NaN or infinite; repair them, or mark them "
                           "with --mask FILE (nonzero = ignore) after setting them to a number",
                        r->frame, r->info.nonfinite);
    int rc = cli_mark_unobserved(o, r, *frame);
    if (rc)
        return rc;
    char line[512];
    cli_unobserved_line(r, pp_image_count(*frame), line, sizeof line);
    if (line[0] && r->announce_pages && !o->quiet)
        fprintf(stderr, "pixpost: %s: note: %s\n", r->frame, line);
    return 0;
}

/* The kernel for the frame: a 2-D spec as always (for a volume: one slice
 * deep, no blur across z); for a volume a 3-D spec or a file: (a bead
 * stack, or one page: one slice deep) by pp_psf_make3. A 3-D spec for a
 * frame is refused here, naming both ways on. */
static int make_psf(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame,
                    pp_image **psf)
{
    const pp_psf_spec *spec = r->psf ? r->psf : &o->psf;
    const char *text = r->psf_text ? r->psf_text : o->psf_text;
    pp_status st;
    if (frame->depth == 1 && pp_psf_is_3d(spec))
        return fail_msg(r, "--psf %s: a 3-D PSF, and %s is sampled as one frame; a 3-D PSF "
                           "blurs a volume: sample a z-stack as a volume (--pages z) or give a "
                           "2-D PSF (gaussian:sigma=S, airy:..., file: of one bead image)",
                        text, r->frame);
    if (frame->depth == 1 || (!pp_psf_is_3d(spec) && spec->kind != PP_PSF_FILE)) {
        st = pp_psf_make(spec, 0, psf);
        return st == PP_OK ? 0 : fail_lib(r, st);
    }
    pp_shape sh;
    double *k = NULL;
    if ((st = pp_psf_make3(spec, 0, 0, &sh, &k)) != PP_OK)
        return fail_lib(r, st);
    size_t nz = sh.rank == 3 ? sh.n[0] : 1;
    st = pp_image_create3(nz, sh.n[sh.rank - 2], sh.n[sh.rank - 1], psf);
    if (st == PP_OK)
        memcpy((*psf)->data, k, pp_image_count(*psf) * sizeof *k);
    free(k);
    return st == PP_OK ? 0 : fail_lib(r, st);
}

/* The checks of the data before sampling (src/pixpost/datacheck.h):
 * an error fails the frame before anything is written; warnings stay in
 * r->checks for the summary, the report and the end-of-run lines. */
static int check_data(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame,
                      const pp_image *psf, const cli_noise_auto *na)
{
    pp_sampler_config cfg = o->cfg; /* with --noise auto, the model chosen */
    cli_noise_auto_apply(na, &cfg);
    pp_status st = pp_datacheck_run(frame, &cfg.noise, psf, cfg.boundary, cli_flag_names,
                                    &r->checks);
    if (st != PP_OK)
        return fail_frame(r, st);
    if (r->checks.errors)
        return fail_msg(r, "%s: data check: %s", r->frame, r->checks.finding[0].text);
    return 0;
}

static int make_sampler(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame,
                        const pp_image *psf, progress_state *ps, int fft_effort,
                        const cli_noise_auto *na)
{
    pp_sampler_config cfg = o->cfg;
    cli_noise_auto_apply(na, &cfg);
    cfg.fft_effort = fft_effort;
    cfg.seed = r->seed;
    cfg.threads = r->threads;
    ps->mode = r->progress;
    ps->t0 = r->t0;
    ps->last_decile = 0;
    ps->chains = cfg.chains;
    ps->label = r->label;
    if (o->quiet || ps->mode == CLI_PROGRESS_AUTO)
        ps->mode = o->quiet || !isatty(2) ? CLI_PROGRESS_NONE : CLI_PROGRESS_BAR;
    cfg.progress = ps->mode == CLI_PROGRESS_NONE ? NULL : show_progress;
    cfg.progress_ctx = ps;
    cfg.stop = r->stop;
    if (r->psf)
        cfg.psf = *r->psf;
    cfg.regions = r->regions;
    cfg.profiles = r->profiles;
    cfg.spots = r->spots;
    cfg.above = o->above;
    cfg.nabove = o->nabove;
    cfg.censored = r->censored;
    cfg.censor_level = r->sat.level;
    for (int i = 0; i < 3; i++) /* {z, y, x} micrometres; 0 unknown (NaN here) */
        cfg.voxel[i] = r->voxel_um && r->voxel_um[i] > 0 ? r->voxel_um[i] : 0.0;
    pp_status st = pp_sampler_create(&cfg, frame, psf, &r->sampler);
    return st == PP_OK ? 0 : fail_frame(r, st);
}

static int sample_and_write(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame,
                            const pp_image *psf, const progress_state *ps,
                            const cli_plans *plans, const cli_noise_auto *na)
{
    int rc = cli_make_dirs(r->outdir, r->message, sizeof r->message);
    if (rc)
        return rc;
    if (r->install_signals)
        cli_stop_install(1);
    pp_status st = pp_sampler_run(r->sampler);
    if (r->install_signals)
        cli_stop_uninstall();
    if (st != PP_OK && ps->mode == CLI_PROGRESS_BAR)
        fputc('\n', stderr); /* end the unfinished bar: the message gets its own line */
    if (st == PP_ERR_INTERRUPTED) {
        r->interrupted = 1;
        return fail_msg(r, "%s: interrupted by %s; no outputs were written", r->frame,
                        r->stop && *r->stop == SIGTERM ? "SIGTERM" : "SIGINT");
    }
    if (st != PP_OK)
        return fail_frame(r, st);
    /* the check of the fit (ppcheck.h); a run it cannot judge (too few
     * pixels away from the edges, a sampled PSF width) is written without
     * it, and the reason becomes a note */
    if (pp_ppcheck_sampler(r->sampler, frame, psf, &r->predictive) != PP_OK) {
        r->predictive = NULL;
        snprintf(r->predictive_note, sizeof r->predictive_note, "%s", pp_error_message());
    }
    pp_run_info ri = {.input_path = r->frame, .psf_spec = r->psf_text ? r->psf_text : o->psf_text,
                      .input_part = r->part, .voxel_um = r->voxel_um,
                      .noise_spec = o->noise_text,
                      .prior_spec = o->prior_text,
                      .command_line = r->command_line, .seconds_total = cli_since(&r->t0),
                      .fft_plans = plans->summary,
                      .masked = r->masked, .saturated = r->sat.count,
                      .saturation_level = r->sat.level, .saturation_rule = r->sat.rule,
                      .data_checks = &r->checks, .predictive = r->predictive,
                      .saturated_as = o->keep_saturated      ? "data"
                                      : o->saturated_missing ? "missing"
                                                             : "censored"};
    if (na->used) { /* --noise auto: the estimate and the sentence saying what was chosen */
        ri.noise_estimate = &na->fit;
        ri.noise_chosen = &na->spec;
        ri.noise_note = na->note;
        ri.noise_spec = na->noise_text;
        if (na->prior_text[0])
            ri.prior_spec = na->prior_text;
    }
    pp_report_regions rg = {.regions = r->regions, .pairs = o->compare,
                            .npairs = r->regions ? o->ncompare : 0, .profiles = r->profiles,
                            .spots = r->spots};
    if (r->regions || r->profiles || r->spots) { /* the report shows them (report_regions.c) */
        const pp_trace *tr = pp_sampler_trace(r->sampler);
        rg.draws = pp_sampler_region_draws(r->sampler, &rg.cap, &rg.stride);
        rg.chains = tr->chains;
        rg.kept = tr->kept;
        ri.regions = &rg;
    }
    pp_result res;
    if ((st = pp_sampler_result(r->sampler, &res)) == PP_OK)
        st = pp_output_write(r->outdir, &res, frame, &ri);
    pp_result_free(&res);
    if (st != PP_OK)
        return fail_lib(r, st);
    rc = cli_regions_write(o, r);
    if (!rc)
        rc = cli_profiles_write(r);
    if (!rc)
        rc = cli_spots_write(r);
    return rc ? rc : cli_maps_write(o, r);
}

int cli_run_frame(const cli_sample_opts *o, cli_frame_run *r)
{
    pp_image *frame = NULL, *psf = NULL;
    r->sampler = NULL;
    r->predictive = NULL;
    r->predictive_note[0] = '\0';
    memset(&r->checks, 0, sizeof r->checks);
    r->message[0] = '\0';
    r->interrupted = 0;
    memset(&r->info, 0, sizeof r->info);
    progress_state ps;
    cli_plans plans;
    cli_noise_auto na;
    r->regions = NULL;
    r->profiles = NULL;
    r->spots = NULL;
    r->censored = NULL;
    int rc = read_frame(o, r, &frame);
    if (!rc)
        rc = cli_regions_load(o, r, frame);
    if (!rc)
        rc = cli_profiles_load(o, r, frame);
    if (!rc)
        rc = cli_spots_load(o, r, frame);
    if (!rc)
        rc = cli_noise_auto_run(o, r->frame, frame, &r->info, &na, r->message, sizeof r->message);
    if (!rc)
        rc = make_psf(o, r, frame, &psf);
    if (!rc)
        rc = check_data(o, r, frame, psf, &na);
    if (!rc)
        rc = cli_plans_load(o, &plans, r->message, sizeof r->message);
    if (!rc)
        rc = make_sampler(o, r, frame, psf, &ps, plans.effort, &na);
    if (!rc)
        rc = cli_memory_check(o, r);
    if (!rc)
        rc = cli_plans_save(o, &plans, r->sampler, r->message, sizeof r->message);
    if (!rc)
        rc = sample_and_write(o, r, frame, psf, &ps, &plans, &na);
    pp_image_free(psf);
    pp_image_free(frame);
    pp_regions_free(r->regions); /* the sampler has run: it reads them no more */
    pp_profiles_free(r->profiles);
    pp_spots_free(r->spots);
    free(r->censored); /* read by pp_sampler_create only */
    r->regions = NULL;
    r->profiles = NULL;
    r->spots = NULL;
    r->censored = NULL;
    return rc;
}
