/* pixpost command line — internals of `pixpost batch` shared by its files
 * (cmd_batch.c orchestration and merge, batch_list.c the frame list,
 * batch_manifest.c index.csv/json and completion markers, batch_exec.c the
 * fork-per-frame scheduler, batch_mpi.c the MPI dispatcher). Not used
 * outside src/cli/batch*.c and cmd_batch.c.
 */
#ifndef PIXPOST_CLI_BATCH_H
#define PIXPOST_CLI_BATCH_H

#include "cli.h"
#include <stddef.h>
#include <stdint.h>

#define BATCH_PATH 2048
#define BATCH_MSG 1024

/* One frame of the batch: a file, one page of a multi-page TIFF of time
 * points or channels, or a multi-page TIFF of z-slices as one volume. */
typedef struct batch_frame {
    char rel[BATCH_PATH];  /* path relative to INDIR, e.g. "sub/a.tif" */
    char stem[BATCH_PATH]; /* output folder relative to OUTDIR: "sub/a" or "sub/a_p2" */
    unsigned page;         /* 0-based page read */
    unsigned pages;        /* frames of the file: its pages when they are time points or
                            * channels, else 1 (PNG, unreadable TIFFs, a volume) */
    char kind;             /* 0 a frame (page), 'c' channel `page` with PSF psf, 'z' every
                            * page: the z-slices of one volume */
    size_t psf;            /* index into opts->psfs */
    uint64_t seed;         /* pp_hash_string(--seed, rel or rel + "#p<page+1>") */
    char clash[BATCH_MSG]; /* non-empty: the frame cannot run (same output as another) */
} batch_frame;

typedef enum batch_status {
    BATCH_PENDING = 0, /* not finished (yet) */
    BATCH_DONE,
    BATCH_FAILED,
    BATCH_SKIPPED,      /* --resume found it complete with the same settings */
    BATCH_FAILED_STRICT /* outputs written, but convergence warnings under --strict */
} batch_status;
#define BATCH_NSTATUS 5

/* One manifest row. A plain struct so workers can send it through a pipe or
 * an MPI message as bytes. NaN numbers are written as empty fields. */
typedef struct batch_row {
    char path[BATCH_PATH];   /* rel */
    char output[BATCH_PATH]; /* stem */
    int page;                /* 1-based page, 0 when the file has one page */
    int status;              /* batch_status */
    double seconds, lambda_mean, delta_mean;
    double rhat_max, ess_bulk_min; /* pp_convergence of the run */
    int warnings;                  /* pp_convergence: count, -1 unknown */
    int converged;                 /* pp_convergence: 1, 0, or -1 unknown */
    char failed[32];               /* pp_convergence_failed: "" converged or unknown */
    unsigned long iters_suggested; /* pp_convergence: 0 none (or unknown) */
    char checks[192];              /* batch_row_checks: "" none (or unknown) */
    char message[BATCH_MSG];
} batch_row;

/* What the listing left out because of its type: files that are not
 * PNG/TIFF by name, and subfolders when not recursive (hidden names and
 * names that --pattern leaves out are not counted). */
typedef struct batch_skipped {
    size_t count;
    char names[BATCH_MSG]; /* "a.jpg, notes.txt, sub/, and 4 more" (sorted) */
} batch_skipped;

/* Everything a worker needs to run a frame; identical on every rank. */
typedef struct batch_ctx {
    cli_sample_opts *opts;
    const char *indir, *outdir;
    batch_frame *frames; /* sorted by rel, then page */
    size_t nframes;
    int threads_per_frame;
    char command_line[8192]; /* recorded in every summary.json */
    char settings[4096];     /* canonical text of the result-changing options */
    batch_skipped skipped;   /* entries of indir that are not frames */
} batch_ctx;

/* ---- batch_list.c ---- */
/* Lists the frames of indir (sorted; recursive; pattern NULL = all PNG/TIFF
 * names; a multi-page TIFF gives one frame per page when its pages are time
 * points or channels (<stem>_c<k>, the k-th PSF when npsf > 1): pages ==
 * 't' or 'c' (--pages) or its OME metadata; one volume when they are
 * z-slices: pages == 'z' or the metadata; else it is an error).
 * *out is malloc'ed (caller frees); *skipped says what was left out by type.
 * Returns 0 or CLI_EXIT_USAGE (printed). */
int batch_list(const char *indir, int recursive, const char *pattern, char pages, size_t npsf,
               uint64_t seed, batch_frame **out, size_t *n, batch_skipped *skipped);
/* Refuses an outdir that is indir or inside it (symlinks resolved). */
int batch_check_outdir(const char *indir, const char *outdir);

/* ---- batch_manifest.c ---- */
const char *batch_status_name(int status);
/* The hash of the settings text, the frame's key and its input file's size
 * and modification time: what the .done marker holds. */
uint64_t batch_settings_hash(const batch_ctx *c, const batch_frame *f);
/* What OUTDIR/<stem>/.done says about the frame. */
typedef enum batch_marker {
    BATCH_MARKER_NONE = 0, /* no marker: not finished */
    BATCH_MARKER_SAME,     /* finished with these settings and this input */
    BATCH_MARKER_OTHER     /* finished, with other settings or another input */
} batch_marker;
batch_marker batch_marker_state(const batch_ctx *c, const batch_frame *f);
/* Writes the marker (atomically). 0 or CLI_EXIT_USAGE with msg. */
int batch_write_marker(const batch_ctx *c, const batch_frame *f, char *msg, size_t len);
/* Removes the marker and leftover ".*.tmp.*" files of the frame's folder. */
void batch_clean_folder(const char *dir);
/* Fills the lambda and delta means (and seconds when NaN) from dir's
 * summary.json; with convergence != 0 also the run's headline figures from
 * its "convergence" key (pp_convergence, written by pp_output_write); NaN
 * or -1 where absent. */
void batch_read_summary(const char *dir, int convergence, batch_row *r);
/* Fills the row's convergence fields from the run's figures. */
void batch_row_convergence(batch_row *r, const pp_convergence *cv);
/* Names the checks' warnings in the row: "data checks: gain, dark_level;
 * predictive check: 2 warnings" (either part left out when it has none;
 * d or p may be NULL). */
void batch_row_checks(batch_row *r, const pp_datacheck *d, const pp_ppcheck *p);
/* The per-frame line's verdict: "N warnings, converged", or "N warnings,
 * not converged (<part>): run about K iterations: --iters K"; just the
 * warnings when unknown; then "; " and the row's checks when any. */
void batch_row_verdict(const batch_row *r, char *buf, size_t len);
/* --strict: a complete row (done or skipped) that is not converged becomes
 * BATCH_FAILED_STRICT with a message saying so. No-op otherwise. */
void batch_apply_strict(const batch_ctx *c, batch_row *r);
/* Writes base.csv and base.json in outdir (each atomically). */
int batch_write_manifest(const char *outdir, const char *base, const batch_row *rows, size_t n,
                         const char *indir, const char *shard);
/* Reads a manifest CSV; appends to *rows (realloc'ed). */
int batch_read_csv(const char *path, batch_row **rows, size_t *n);
/* Initialises a row for frame f as pending. */
void batch_row_init(batch_row *r, const batch_frame *f);

/* ---- batch_exec.c ---- */
/* Runs frame i in this process (the worker side): cleans its folder, samples
 * it, writes the marker, fills r. Never exits. */
void batch_do_frame(const batch_ctx *c, size_t i, batch_row *r);
/* Runs frame i in a forked child; the parent later calls batch_reap. */
typedef struct batch_child {
    int pid;    /* 0: free slot */
    int fd;     /* read end of the result pipe */
    size_t idx; /* frame */
    double t0;
} batch_child;
int batch_spawn(const batch_ctx *c, size_t i, batch_child *ch);
/* Waits for any child of slots[0..n); fills *row and returns its slot index,
 * or -1 when interrupted by a signal (errno EINTR) or no child is left. */
int batch_reap(const batch_ctx *c, batch_child *slots, size_t n, batch_row *row);
/* Runs todo[0..ntodo) with up to jobs children at a time; calls done(row)
 * after each. Stops launching when the stop flag is set, forwards SIGTERM
 * to running children and waits for them. */
typedef void (*batch_done_fn)(void *ctx, size_t idx, const batch_row *row);
void batch_run_local(const batch_ctx *c, const size_t *todo, size_t ntodo, int jobs,
                     batch_done_fn done, void *ctx);

/* ---- batch_mpi.c (only with -DPIXPOST_MPI) ---- */
/* 1 when launched by mpirun with more than one rank (MPI initialised). */
int batch_mpi_active(int *rank, int *size);
void batch_mpi_finish(void);
/* Rank 0: hands todo out to ranks 1..size-1 dynamically, calls done(). */
void batch_mpi_manager(const batch_ctx *c, const size_t *todo, size_t ntodo, batch_done_fn done,
                       void *ctx, int size);
/* Ranks >= 1: runs what rank 0 sends until told to stop. */
void batch_mpi_worker(const batch_ctx *c);

#endif
