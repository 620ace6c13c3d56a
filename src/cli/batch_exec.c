/* pixpost command line — running batch frames: one frame in this process
 * (batch_do_frame, the worker side), and the local scheduler that runs each
 * frame in a forked child process, up to --jobs at a time.
 *
 * Why processes and not threads: a frame that crashes (a bug in a decoder, a
 * failed allocation that aborts, a stack overflow) takes only its child with
 * it, and is recorded as failed with the signal's name; memory of a frame
 * is returned to the system when its child exits; and kill -9 of the process
 * group stops everything at once with nothing but atomic renames to worry
 * about. The child reports its manifest row through a pipe (one write of a
 * fixed-size struct, below the pipe buffer) and leaves with _exit().
 * The parent never runs OpenMP or FFTW itself, so forking is safe.
 *
 * Cost: one fork per frame (about a millisecond), negligible next to
 * sampling.
 */
#include "batch.h"
#include "pixpost/stack.h"
#include "pixpost/sampler_extra.h"
#include <errno.h>
#include <math.h>
#include <signal.h>
#include <stdlib.h>
#include <string.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

static double now(void)
{
    struct timespec t;
    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

void batch_do_frame(const batch_ctx *c, size_t i, batch_row *r)
{
    const batch_frame *f = &c->frames[i];
    batch_row_init(r, f);
    r->status = BATCH_FAILED;
    if (f->clash[0]) {
        snprintf(r->message, sizeof r->message, "%s", f->clash);
        return;
    }
    char in[BATCH_PATH * 2], out[BATCH_PATH * 2];
    snprintf(in, sizeof in, "%s/%s", c->indir, f->rel);
    snprintf(out, sizeof out, "%s/%s", c->outdir, f->stem);
    batch_clean_folder(out); /* marker first: a kill from here on leaves it absent */
    cli_frame_run fr;
    memset(&fr, 0, sizeof fr);
    fr.frame = in;
    fr.page = f->page;
    fr.volume = f->kind == 'z';
    fr.psf = &c->opts->psfs[f->psf];
    fr.psf_text = c->opts->psf_texts[f->psf];
    /* the voxel size as sample finds it (units.c): summary.json and the prior */
    double voxel[3];
    int known = 0;
    pp_ome_meta ome;
    unsigned npages;
    if (pp_stack_probe(in, &npages, &ome) != PP_OK)
        ome.present = 0; /* the read below says what is wrong */
    if (cli_voxel_resolve(c->opts, &ome, fr.volume ? fr.psf : NULL, in, voxel, &known,
                          r->message, sizeof r->message))
        return;
    fr.voxel_um = known ? voxel : NULL;
    fr.outdir = out;
    fr.seed = f->seed;
    fr.threads = c->threads_per_frame;
    fr.command_line = c->command_line;
    /* A frame's own progress: a line per 10 % naming it (bars of several
     * processes would overwrite each other). */
    fr.progress = c->opts->progress == CLI_PROGRESS_NONE ? CLI_PROGRESS_NONE : CLI_PROGRESS_PLAIN;
    fr.label = f->stem;
    fr.stop = cli_stop_flag();
    clock_gettime(CLOCK_MONOTONIC, &fr.t0);
    int rc = cli_run_frame(c->opts, &fr);
    pp_convergence cv;
    if (!rc) {
        pp_sampler_convergence(fr.sampler, &cv); /* the figures summary.json holds */
        batch_row_checks(r, &fr.checks, fr.predictive);
    }
    pp_sampler_free(fr.sampler);
    pp_ppcheck_free(fr.predictive);
    if (!rc)
        rc = batch_write_marker(c, f, fr.message, sizeof fr.message);
    r->seconds = cli_since(&fr.t0);
    if (rc) {
        r->status = fr.interrupted ? BATCH_PENDING : BATCH_FAILED;
        snprintf(r->message, sizeof r->message, "%s", fr.message);
        return;
    }
    r->status = BATCH_DONE;
    batch_read_summary(out, 0, r);
    batch_row_convergence(r, &cv);
    batch_apply_strict(c, r);
}

int batch_spawn(const batch_ctx *c, size_t i, batch_child *ch)
{
    int fds[2];
    if (pipe(fds) != 0)
        return cli_error("batch: cannot create a pipe: %s", strerror(errno));
    fflush(NULL);
    pid_t pid = fork();
    if (pid < 0) {
        close(fds[0]);
        close(fds[1]);
        return cli_error("batch: cannot start a worker process: %s", strerror(errno));
    }
    if (pid == 0) {
        close(fds[0]);
        batch_row r;
        batch_do_frame(c, i, &r);
        const char *p = (const char *)&r;
        size_t left = sizeof r;
        while (left > 0) {
            ssize_t w = write(fds[1], p, left);
            if (w < 0 && errno == EINTR)
                continue;
            if (w <= 0)
                _exit(3);
            p += w;
            left -= (size_t)w;
        }
        _exit(0);
    }
    close(fds[1]);
    ch->pid = (int)pid;
    ch->fd = fds[0];
    ch->idx = i;
    ch->t0 = now();
    return 0;
}

static int read_row(int fd, batch_row *r)
{
    char *p = (char *)r;
    size_t got = 0;
    while (got < sizeof *r) {
        ssize_t n = read(fd, p + got, sizeof *r - got);
        if (n < 0 && errno == EINTR)
            continue;
        if (n <= 0)
            return -1;
        got += (size_t)n;
    }
    return 0;
}

/* The row of a child that died without reporting. */
static void lost_row(const batch_ctx *c, const batch_child *ch, int wstatus, batch_row *r)
{
    const batch_frame *f = &c->frames[ch->idx];
    batch_row_init(r, f);
    r->seconds = now() - ch->t0;
    if (WIFSIGNALED(wstatus)) {
        int sig = WTERMSIG(wstatus);
        if ((sig == SIGTERM || sig == SIGINT) && *cli_stop_flag())
            return; /* stopped on request: stays pending */
        r->status = BATCH_FAILED;
        snprintf(r->message, sizeof r->message,
                 "%.600s: the worker process crashed (signal %d, %s); the other frames are "
                 "not affected",
                 f->rel, sig, strsignal(sig));
    } else {
        r->status = BATCH_FAILED;
        snprintf(r->message, sizeof r->message,
                 "%.600s: the worker process exited with status %d without a result", f->rel,
                 WIFEXITED(wstatus) ? WEXITSTATUS(wstatus) : -1);
    }
}

int batch_reap(const batch_ctx *c, batch_child *slots, size_t n, batch_row *row)
{
    int wstatus;
    pid_t pid = waitpid(-1, &wstatus, 0);
    if (pid < 0)
        return -1;
    for (size_t k = 0; k < n; k++) {
        if (slots[k].pid != pid)
            continue;
        if (read_row(slots[k].fd, row) != 0 || !WIFEXITED(wstatus) || WEXITSTATUS(wstatus))
            lost_row(c, &slots[k], wstatus, row);
        close(slots[k].fd);
        slots[k].pid = 0;
        return (int)k;
    }
    return -2; /* not one of ours: ignore */
}

static void forward_stop(batch_child *slots, size_t n, int *forwarded)
{
    if (*forwarded)
        return;
    *forwarded = 1;
    for (size_t k = 0; k < n; k++)
        if (slots[k].pid > 0)
            kill(slots[k].pid, SIGTERM);
}

void batch_run_local(const batch_ctx *c, const size_t *todo, size_t ntodo, int jobs,
                     batch_done_fn done, void *ctx)
{
    batch_child *slots = calloc((size_t)jobs, sizeof *slots);
    if (!slots) {
        cli_error("batch: out of memory");
        return;
    }
    size_t next = 0, running = 0;
    int forwarded = 0;
    for (;;) {
        while (!*cli_stop_flag() && next < ntodo && running < (size_t)jobs) {
            size_t k = 0;
            while (slots[k].pid)
                k++;
            if (batch_spawn(c, todo[next], &slots[k]) != 0)
                break;
            next++;
            running++;
        }
        if (running == 0)
            break;
        if (*cli_stop_flag())
            forward_stop(slots, (size_t)jobs, &forwarded);
        batch_row row;
        int k = batch_reap(c, slots, (size_t)jobs, &row);
        if (k == -1 && errno == ECHILD)
            break;
        if (k < 0)
            continue;
        running--;
        done(ctx, slots[k].idx, &row);
    }
    free(slots);
}
