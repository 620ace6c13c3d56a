/* pixpost command line — shared declarations of the front end (src/cli only).
 *
 * The only part of pixpost that talks to the terminal. Each command is a
 * function int cli_cmd_<name>(int argc, char **argv) where argv[0] is the
 * command name ("sample") and the options follow, like a small main(); it
 * returns the process exit status (DESIGN.md section 6):
 *   0 success, 1 bad usage or bad input (one line on stderr), 2 a batch in
 *   which some frames failed, 3 convergence warnings with --strict, 128 +
 *   the signal number when stopped by SIGINT/SIGTERM (sample, batch).
 *
 * Option parsing is table driven (args.c): a command lists its options in
 * cli_opt tables, cli_parse() collects the raw strings (refusing unknown,
 * repeated and value-less options), then typed getters convert them with
 * messages that name the option and the accepted form. Cost: linear scans of
 * a few dozen options; nothing here is on a hot path.
 */
#ifndef PIXPOST_CLI_H
#define PIXPOST_CLI_H

#include "pixpost/pixpost.h"
#include "pixpost/datacheck.h"
#include "pixpost/ppcheck.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/calib.h"
#include "pixpost/ome.h"
#include "pixpost/spots.h"
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#if defined(__GNUC__)
#define CLI_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define CLI_PRINTF(a, b)
#endif

/* Exit statuses (DESIGN.md section 6). */
enum { CLI_EXIT_OK = 0, CLI_EXIT_USAGE = 1, CLI_EXIT_BATCH = 2, CLI_EXIT_STRICT = 3 };

/* cli_parse() result when --help / -h was given (the caller prints help). */
#define CLI_HELP (-1)

/* One option of a command. Tables end with an entry whose name is NULL. */
typedef struct cli_opt {
    const char *name; /* long name without "--", e.g. "iters" */
    char short_name;  /* e.g. 'o' for -o, or 0 */
    int takes_value;  /* 0: a flag */
    const char *form; /* accepted form for help and messages, e.g. "N", "A,B" */
    const char *help; /* one sentence, including the default */
} cli_opt;

#define CLI_MAX_OPTS 64
#define CLI_MAX_POS 8
#define CLI_MAX_REPEAT 16 /* later values of repeatable options, all together */

/* What cli_parse() collected. Strings point into argv (not copied). */
typedef struct cli_args {
    const char *command;              /* for messages: "sample" */
    const cli_opt *opt[CLI_MAX_OPTS]; /* every known option, in table order */
    const char *value[CLI_MAX_OPTS];  /* NULL when not given; "" for a given flag */
    size_t nopts;
    const char *pos[CLI_MAX_POS]; /* positional arguments */
    size_t npos;
    const char *more[CLI_MAX_REPEAT]; /* second and later values of repeatable options */
    int more_opt[CLI_MAX_REPEAT];     /* ... and the index of the option of each */
    size_t nmore;
} cli_args;

/* Parses argv[1..argc-1] against the NULL-terminated list of tables (so a
 * command can reuse another's options, e.g. batch = batch table + sample
 * table). Accepts --name value, --name=value, -o value, -ovalue and flags;
 * "--" ends the options. Returns 0, CLI_HELP, or CLI_EXIT_USAGE after
 * printing one line naming the offending option. */
int cli_parse(cli_args *a, const char *command, const cli_opt *const *tables, int argc,
              char **argv);

/* 1 if the option was given. name must be in the tables (else abort: a
 * programming error, caught by any test that runs the command). */
int cli_given(const cli_args *a, const char *name);
/* The raw value (NULL when not given; the first when repeated). */
const char *cli_str(const cli_args *a, const char *name);
/* 1 when the option may be given more than once: its form ends in " ..."
 * (e.g. "SPEC ..."); its values are kept in the order given. */
int cli_opt_repeats(const cli_opt *o);
/* The values of an option in the order given (at most max) into out;
 * returns their count (0 when not given). */
size_t cli_strs(const cli_args *a, const char *name, const char **out, size_t max);

/* Typed getters. Each leaves *out unchanged when the option was not given
 * and returns 0, or CLI_EXIT_USAGE after printing a message such as
 *   pixpost: --iters: '-5' is not accepted (expected --iters N, a whole number >= 1)
 * Unsigned integers refuse signs, spaces, non-digits and overflow. */
int cli_get_ulong(const cli_args *a, const char *name, unsigned long min, unsigned long max,
                  unsigned long *out);
int cli_get_u64(const cli_args *a, const char *name, uint64_t *out);
int cli_get_size(const cli_args *a, const char *name, size_t min, size_t *out);
/* A finite double; lo/hi are bounds, open (lo < v < hi) when open != 0. */
int cli_get_double(const cli_args *a, const char *name, double lo, double hi, int open,
                   double *out);
/* A time > 0 in seconds: a number, optionally followed by s, m or h. */
int cli_get_seconds(const cli_args *a, const char *name, double *out);
/* A size >= 1 byte: a number, optionally followed by K, M, G or T (powers
 * of 1024), below 2^60. */
int cli_get_bytes(const cli_args *a, const char *name, size_t *out);
/* "A,B": two finite doubles, each >= min. */
int cli_get_pair(const cli_args *a, const char *name, double min, double out[2]);
/* "K/N" with 1 <= K <= N: shard K of N (1-based: 1/4 is the first of four). */
int cli_get_shard(const cli_args *a, const char *name, unsigned *k, unsigned *n);
/* Refuses the two options together; returns 0 or CLI_EXIT_USAGE. */
int cli_conflict(const cli_args *a, const char *name1, const char *name2);
/* Requires the option; returns 0 or CLI_EXIT_USAGE ("--psf is required"). */
int cli_require(const cli_args *a, const char *name);
/* Requires exactly n positional arguments, named by what (e.g. "FRAME"). */
int cli_positionals(const cli_args *a, size_t n, const char *what);

/* Prints "pixpost: " + the formatted text as one line on stderr and returns
 * CLI_EXIT_USAGE. */
int cli_error(const char *fmt, ...) CLI_PRINTF(1, 2);
/* The same for an option: "pixpost: --name: <text>". */
int cli_opt_error(const char *name, const char *fmt, ...) CLI_PRINTF(2, 3);
/* Formats a refusal into msg (len bytes) for the caller to print, and
 * returns CLI_EXIT_USAGE. */
int cli_refuse(char *msg, size_t len, const char *fmt, ...) CLI_PRINTF(3, 4);
/* Prints the library's message for a failed status as one line
 * ("pixpost: <message>") and returns cli_exit_code(st). */
int cli_fail(pp_status st);
/* Maps a library status to an exit status (PP_OK -> 0, any failure -> 1). */
int cli_exit_code(pp_status st);

/* Prints the options of the tables, one block per option:
 *   --name FORM  help    (default text from defaults(), when it gives one)
 * defaults may be NULL; it writes the default of `name` into buf or leaves
 * buf empty. */
typedef void (*cli_default_fn)(const char *name, char *buf, size_t len, void *ctx);
void cli_print_options(FILE *fp, const cli_opt *const *tables, cli_default_fn defaults, void *ctx);

/* 1 if path ends in ext (case-sensitive, ext includes the dot). */
int cli_has_ext(const char *path, const char *ext);
/* Refuses an output path that names the same existing file as the input
 * (inputs are never modified). Returns 0 or CLI_EXIT_USAGE. */
int cli_check_not_same(const char *out, const char *in);
/* Checks that the folder that will hold path exists. */
int cli_check_parent_dir(const char *path);

/* Output locations (outdir.c). The folder rule, used by sample and demo
 * and meant for batch's frame folders: pixpost writes into a folder that is
 * missing (created later), empty, or marked as pixpost's (PP_OUTPUT_MARKER,
 * include/pixpost/output.h, which every run's outputs carry); a folder
 * holding other files only with overwrite (--overwrite). A path that exists
 * but is not a folder is refused even with overwrite. Only looks (touches
 * nothing), so call it before any sampling. Returns 0, or CLI_EXIT_USAGE
 * with one sentence in msg naming the folder and the way on (not printed,
 * so batch can put it in its manifest). */
int cli_check_outdir(const char *dir, int overwrite, char *msg, size_t len);
/* The single-file rule (simulate, psf): an existing file is replaced only
 * with overwrite; a folder of that name is refused. Returns 0 or
 * CLI_EXIT_USAGE after printing one line naming the file. */
int cli_check_outfile(const char *path, int overwrite);

/* ---- sample options (sample_opts.c), reused by batch ---------------- */

typedef enum cli_progress {
    CLI_PROGRESS_AUTO,
    CLI_PROGRESS_BAR,
    CLI_PROGRESS_PLAIN,
    CLI_PROGRESS_NONE
} cli_progress;

#define CLI_MAX_PSF 16 /* --psf values: one per channel */

typedef struct cli_sample_opts {
    pp_sampler_config cfg;  /* from pp_sampler_defaults, then the options */
    const char *frame;      /* FRAME (sample) or NULL (batch sets its own) */
    const char *outdir;     /* -o, required */
    const char *psf_text;   /* --psf as given (required) */
    const char *noise_text; /* --noise as given, or noise_buf (the default) */
    const char *prior_text; /* --prior as given, or prior_buf (the default) */
    char noise_buf[128];    /* the defaults' canonical text; the pointers above */
    char prior_buf[128];    /* may point here, so do not copy the struct */
    pp_psf_spec psf;        /* parsed --psf */
    pp_read_options read;   /* --channel, --max-pixels */
    const char *wisdom;     /* --wisdom FILE or NULL */
    int no_plan_cache;      /* --no-plan-cache */
    size_t memory_limit;    /* --memory-limit: CLI_MEMORY_AUTO, CLI_MEMORY_OFF or bytes */
    unsigned memory_frames; /* frames sampled at once (batch --jobs); 0 or 1: one */
    int quiet;              /* --quiet */
    cli_progress progress;  /* --progress (AUTO: bar on a terminal, else none) */
    int strict;             /* --strict */
    int overwrite;          /* --overwrite */
    const char *mask;       /* --mask FILE (nonzero = unobserved) or NULL */
    int keep_saturated;     /* --keep-saturated: saturated pixels stay data */
    int saturated_missing;  /* --saturated-missing: missing, not censored */
    int noise_auto;         /* --noise auto: estimated per frame (noise_auto.c) */
    int prior_given;        /* --prior was given */
    /* multi-page and multi-channel input (units.c) */
    char pages;             /* --pages: 'z', 't' or 'c'; 0 when not given */
    double voxel[2];        /* --voxel XY,Z in micrometres; 0, 0 when not given */
    long plane;             /* --plane K (a page, from 0), or -1 */
    int channel_all;        /* --channel all */
    size_t npsf;            /* --psf values given, 1 .. CLI_MAX_PSF; psf above is psfs[0]
                             * (one spec with wavelength=L1/L2/..: one per wavelength) */
    const char *psf_texts[CLI_MAX_PSF];
    char psf_bufs[CLI_MAX_PSF][512]; /* the texts of a wavelength list, one per channel */
    pp_psf_spec psfs[CLI_MAX_PSF];
    const char *regions;    /* --regions FILE (a label image) or NULL */
    size_t ncompare;        /* --compare A/B values given */
    pp_region_pair compare[CLI_MAX_REPEAT + 1];
    size_t nabove;          /* --above T values given */
    double above[CLI_MAX_REPEAT + 1];
    int rsd;                /* --rsd */
    size_t nprofiles;       /* --profile values given */
    double profile_lines[6 * (CLI_MAX_REPEAT + 1)]; /* z0, r0, c0, z1, r1, c1 each */
    int profile_3d[CLI_MAX_REPEAT + 1]; /* 1: given with z (six numbers) */
    double spots_radius;    /* --spots R[,RZ] (the ring's radius in pixels), -1 for
                             * --spots auto (from the PSF), or 0 */
    double spots_radius_z;  /* its RZ (slices, volumes), or 0: from the voxel size */
} cli_sample_opts;

/* The flag of each sampler setting (flag_names.c), for
 * pp_sampler_config.setting_names: the library's messages name the flags. */
extern const char *const cli_flag_names[PP_SET_COUNT];
/* The readers' defaults (pp_read_options_defaults) with the command line's
 * names for the settings, so a reader's refusal names the flag. */
void cli_read_defaults(pp_read_options *o);

/* The sample options table (NULL-terminated). */
const cli_opt *cli_sample_table(void);
/* Writes the default of a sample option (a cli_default_fn; ctx unused). */
void cli_sample_default(const char *name, char *buf, size_t len, void *ctx);
/* Fills o from options already collected by cli_parse() with the sample
 * table among its tables; does not touch positionals (o->frame = NULL).
 * Returns 0 or CLI_EXIT_USAGE (message printed). */
int cli_sample_opts_from_args(const cli_args *a, cli_sample_opts *o);
/* The whole of `pixpost sample`'s parsing: FRAME plus the options. Returns
 * 0, CLI_HELP (help printed to stdout) or CLI_EXIT_USAGE. */
int cli_sample_opts_parse(int argc, char **argv, cli_sample_opts *o);
void cli_sample_help(FILE *fp);

/* ---- multi-page and multi-channel input (units.c) ------------------- */

#define CLI_MAX_UNITS 64 /* frames one `sample` run takes from one file */

typedef struct cli_unit {
    unsigned page;       /* TIFF page to read (a frame) */
    int volume;          /* 1: the z-slices at channel c, time point t, as one volume */
    unsigned c, t;
    size_t psf;          /* index into o->psfs */
    int channel_set;     /* --channel all: channel replaces o->read.channel */
    pp_channel channel;
    char sub[16];        /* folder under OUTDIR ("c0", "t3"); "" for OUTDIR itself */
    /* after the run, for the index */
    double rhat_max;
    size_t warnings;
    char verdict[1024];
} cli_unit;

typedef struct cli_units {
    cli_unit unit[CLI_MAX_UNITS];
    size_t n;
    char role;          /* 'c', 't' for several units; 0 for one frame */
    int from_ome;       /* the role came from the OME metadata */
    unsigned pages;     /* pages of the file */
    pp_ome_meta ome;
    double voxel[3];    /* z, y, x in micrometres (cli_voxel_resolve); NaN unknown */
    int have_voxel;     /* any of them known */
} cli_units;

/* Reads --pages, --plane, --voxel and --channel all into o (called by
 * cli_sample_opts_from_args). Returns 0 or CLI_EXIT_USAGE (printed). */
int cli_units_opts(const cli_args *a, cli_sample_opts *o);
/* 1 when spec is a 3-D PSF: a 3-D model (pp_psf_is_3d) or a file: spec
 * naming a TIFF of more than one page (a bead stack). (units.c) */
int cli_psf_is_3d(const pp_psf_spec *spec);

/* What the pages of frame are, without planning units (simulate, which
 * takes one frame or one volume): u's pages, OME metadata, voxel size and
 * role ('z', 't', 'c'; 0 for one page; with --plane K the file's role, the
 * caller picks the page). --channel all leaves the role 0. Returns 0, or
 * CLI_EXIT_USAGE with one sentence in msg as cli_units_plan. */
int cli_units_role(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                   size_t len);
/* The units of frame under o's options (see units.c). Returns 0, or
 * CLI_EXIT_USAGE with one sentence in msg naming the file or option. */
int cli_units_plan(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                   size_t len);
/* The voxel size {z, y, x} in micrometres of file frame with OME metadata
 * ome (may be NULL) sampled with the PSF psf (may be NULL), per axis from
 * the first that gives it: the OME metadata, --voxel, the PSF spec
 * (widefield pixel= and step=, airy pixel=); NaN where none does, *known
 * = 1 when any axis is known. A spec whose pixel= or step= differs from the
 * size the metadata or --voxel gives (relative 1e-6) is refused: the
 * kernel would be made on another grid. Returns 0, or CLI_EXIT_USAGE with
 * one sentence in msg naming --psf, the file and the key to give. */
int cli_voxel_resolve(const cli_sample_opts *o, const pp_ome_meta *ome, const pp_psf_spec *psf,
                      const char *frame, double out[3], int *known, char *msg, size_t len);
/* What the pages of frame are, without planning units (simulate, which
 * takes one frame or one volume): u's pages, OME metadata, voxel size
 * (metadata, else --voxel) and role ('z', 't', 'c'; 0 for one page; with
 * --plane K the file's role, the caller picks the page). --channel all
 * leaves the role 0. Returns 0, or CLI_EXIT_USAGE with one sentence in msg
 * as cli_units_plan. */
int cli_units_role(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                   size_t len);
/* For batch: the units path gives. *frames: its pages when they are time
 * points (*kind 0) or channels (*kind 'c': page k is channel k, with the
 * k-th PSF when npsf > 1), by the OME metadata or given (--pages); 1 for a
 * single page (*kind 0); 1 with *kind 'z' when its pages are the z-slices of
 * one volume (OME SizeZ, or given == 'z' without metadata). Refused: z-slices
 * of several channels or time points, multi-page files without either, and
 * npsf > 1 PSFs for a file without that many channels: 0 or CLI_EXIT_USAGE
 * with one sentence in msg naming the file. */
int cli_units_batch_pages(const char *path, char given, size_t npsf, unsigned *frames,
                          char *kind, char *msg, size_t len);
/* Writes OUTDIR/channels.json (role 'c') or OUTDIR/frames.json (role 't')
 * after every unit ran. Returns 0 or CLI_EXIT_USAGE with msg set. */
int cli_units_write_index(const cli_sample_opts *o, const cli_units *u, const char *frame,
                          char *msg, size_t len);

/* ---- --noise auto (noise_auto.c) ------------------------------------ */

/* One frame's estimate. Filled by cli_noise_auto_run; used == 0 when
 * --noise auto was not given (then nothing else is set). */
typedef struct cli_noise_auto {
    int used;
    int camera;            /* 1: a camera spec; 0: the gaussian fallback */
    pp_noise_fit fit;
    pp_noise_spec spec;    /* the chosen model */
    pp_prior_spec prior;   /* the photon models' default prior, when prior_text[0] */
    char noise_text[256];  /* spec as text, for summary.json and the report */
    char prior_text[128];
    char note[512];        /* the sentence printed and recorded */
} cli_noise_auto;

/* With o->noise_auto: fits the frame and chooses the model; prints the note
 * on stderr unless o->quiet. Returns 0, or CLI_EXIT_USAGE with msg set
 * (frame too small or too detailed for the fit). */
int cli_noise_auto_run(const cli_sample_opts *o, const char *path, const pp_image *frame,
                       const pp_read_info *info, cli_noise_auto *na, char *msg, size_t len);
/* Puts the chosen model (and the photon prior, when --prior was not given)
 * into cfg; nothing without --noise auto. */
void cli_noise_auto_apply(const cli_noise_auto *na, pp_sampler_config *cfg);

/* ---- where the FFT plans come from (plan_cache.c) ------------------- */

typedef struct cli_plans {
    char path[4096];   /* wisdom file in use (cache or --wisdom), "" for none */
    int from_option;   /* path is --wisdom FILE */
    int effort;        /* PP_FFT_MEASURE with a wisdom file, else ESTIMATE */
    char summary[64];  /* summary.json's "fft_plans" */
} cli_plans;

/* Finds and loads the wisdom (--wisdom FILE, else the per-user cache unless
 * --no-plan-cache) and sets p->effort for the sampler. A cache problem is a
 * note on stderr (not under --quiet) and ESTIMATE plans; a --wisdom FILE
 * that cannot be read returns CLI_EXIT_USAGE with the reason in msg. */
int cli_plans_load(const cli_sample_opts *o, cli_plans *p, char *msg, size_t len);
/* After pp_sampler_create: saves newly measured plans and sets p->summary.
 * A cache that cannot be written is a note; a --wisdom FILE, CLI_EXIT_USAGE. */
int cli_plans_save(const cli_sample_opts *o, cli_plans *p, const pp_sampler *s, char *msg,
                   size_t len);

/* ---- one frame into a folder (run_frame.c), used by sample and batch - */

#include <signal.h>
#include <time.h>

/* What cli_run_frame() needs besides the sample options, and what it gives
 * back. The caller fills the inputs; the outputs are set by the call. */
typedef struct cli_frame_run {
    const char *frame;        /* input file */
    unsigned page;            /* TIFF page, 0-based (0 for PNG); unused for a volume */
    int volume;               /* 1: every z-slice (of channel vol_c at time point vol_t when
                               * the OME metadata has several) read as one volume */
    unsigned vol_c, vol_t;
    const pp_psf_spec *psf;   /* NULL: o->psf (units.c sets one per channel) */
    const char *psf_text;     /* NULL: o->psf_text */
    int channel_set;          /* 1: channel replaces o->read.channel (--channel all) */
    pp_channel channel;
    const char *part;         /* summary.json "input_part" (e.g. "page 2"); NULL: none */
    const double *voxel_um;   /* summary.json "voxel_um" (z, y, x); NULL: none */
    const char *outdir;       /* created if missing */
    uint64_t seed;            /* replaces o->cfg.seed */
    int threads;              /* replaces o->cfg.threads */
    const char *command_line; /* recorded in summary.json; may be NULL */
    cli_progress progress;    /* AUTO: bar on a terminal, else none */
    const char *label;        /* may be NULL; names the frame in plain progress lines */
    const volatile sig_atomic_t *stop; /* may be NULL */
    int announce_pages;       /* print "N pages; using page P" (sample) */
    int install_signals;      /* SIGINT/SIGTERM set the stop flag while sampling */
    struct timespec t0;       /* CLOCK_MONOTONIC start, for timings */
    /* outputs */
    pp_sampler *sampler; /* after a run (even a failed write); caller frees */
    pp_datacheck checks; /* the checks before sampling (datacheck.h) */
    pp_ppcheck *predictive; /* the check after sampling (ppcheck.h), NULL when it could
                             * not be made; caller frees (pp_ppcheck_free) */
    char predictive_note[256]; /* why it was not made ("" when it was) */
    pp_read_info info;
    int interrupted;     /* stopped by the stop flag: nothing was written */
    char message[1024];  /* the failure, one sentence naming the file */
    size_t masked;       /* pixels --mask made unobserved */
    pp_saturation sat;   /* the saturated pixels found (rule NONE with --keep-saturated) */
    unsigned char *censored; /* one byte per pixel, 1 = censored at sat.level (the
                              * sampler's cfg.censored), or NULL: none; freed by
                              * cli_run_frame */
    pp_regions *regions; /* --regions planned for the frame (during cli_run_frame only) */
    pp_profiles *profiles; /* --profile planned for the frame (likewise) */
    struct pp_spots *spots; /* --spots planned for the frame (likewise) */
} cli_frame_run;

/* Samples r->frame into r->outdir (DESIGN.md section 6 outputs). Returns 0,
 * or CLI_EXIT_USAGE with r->message set (nothing printed). o is not
 * modified. */
int cli_run_frame(const cli_sample_opts *o, cli_frame_run *r);
/* --memory-limit's two words (any other value is a number of bytes). */
#define CLI_MEMORY_AUTO ((size_t)0)
#define CLI_MEMORY_OFF SIZE_MAX
/* The memory check of a sampler just made (memcheck.c): returns 0 when the
 * run fits o->memory_limit (auto: the machine's available memory), else
 * CLI_EXIT_USAGE with r->message naming the need, the room and the ways
 * out. */
int cli_memory_check(const cli_sample_opts *o, cli_frame_run *r);
/* Marks the unobserved pixels of a frame just read (unobserved.c): NaN
 * where o->mask is nonzero, then at the saturated pixels
 * (pp_saturation_find) unless o->keep_saturated; counts in r->masked and
 * r->sat; unless o->saturated_missing the saturated ones are also marked
 * censored in r->censored (allocated). Returns 0, or CLI_EXIT_USAGE with
 * r->message naming --mask's file (unreadable, colour, not the frame's
 * size) or saying memory ran out. */
int cli_mark_unobserved(const cli_sample_opts *o, cli_frame_run *r, pp_image *frame);
/* --regions (regions_cli.c): reads o->regions' label image for the frame
 * into r->regions (NULL without --regions) and checks --compare's labels;
 * 0, or CLI_EXIT_USAGE with r->message naming the option and the fix. */
int cli_regions_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame);
/* Writes OUTDIR/regions.csv from the sampler's region draws (nothing
 * without --regions); 0 or CLI_EXIT_USAGE with r->message set. */
int cli_regions_write(const cli_sample_opts *o, cli_frame_run *r);
/* Parses --regions and --compare into o; 0 or CLI_EXIT_USAGE (printed). */
int cli_regions_parse(const cli_args *a, cli_sample_opts *o);
/* --above T and --rsd (maps_cli.c): parses them into o (0 or
 * CLI_EXIT_USAGE, printed); writes OUTDIR/above_<T>.tif and rsd.tif after
 * a run (0 or CLI_EXIT_USAGE with r->message set). */
int cli_maps_parse(const cli_args *a, cli_sample_opts *o);
int cli_maps_write(const cli_sample_opts *o, cli_frame_run *r);
/* --profile (profiles_cli.c): parses the lines into o (0 or CLI_EXIT_USAGE,
 * printed); plans them for the frame into r->profiles (NULL without) and
 * writes OUTDIR/profile_<k>.csv after the run: 0 or CLI_EXIT_USAGE with
 * r->message naming --profile. */
int cli_profiles_parse(const cli_args *a, cli_sample_opts *o);
int cli_profiles_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame);
int cli_profiles_write(cli_frame_run *r);
/* --spots R[,RZ] (spots_cli.c): parses the radii into o (0 or CLI_EXIT_USAGE,
 * printed); plans the candidates from the frame into r->spots (NULL
 * without) and writes OUTDIR/spots.csv after the run: 0 or CLI_EXIT_USAGE
 * with r->message naming --spots. */
int cli_spots_parse(const cli_args *a, cli_sample_opts *o);
int cli_spots_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame);
int cli_spots_write(cli_frame_run *r);
/* One line on the unobserved pixels of a run (masked and saturated, the
 * share of the frame), into buf; "" when none. */
void cli_unobserved_line(const cli_frame_run *r, size_t npix, char *buf, size_t len);
/* mkdir -p; 0 or CLI_EXIT_USAGE with the reason in msg. */
int cli_make_dirs(const char *path, char *msg, size_t len);
/* The SIGINT/SIGTERM stop flag (holds the signal number once one came). */
const volatile sig_atomic_t *cli_stop_flag(void);
/* Installs the handler for SIGINT and SIGTERM; restart: SA_RESTART. */
void cli_stop_install(int restart);
void cli_stop_uninstall(void);
/* Seconds since t0 (CLOCK_MONOTONIC). */
double cli_since(const struct timespec *t0);
/* "yes" when built with MPI support (-DPIXPOST_MPI), else "no". */
const char *cli_mpi_support(void);

/* ---- commands ------------------------------------------------------- */

int cli_cmd_simulate(int argc, char **argv);
int cli_cmd_sample(int argc, char **argv); /* cmd_sample.c (the lead) */
int cli_cmd_batch(int argc, char **argv);  /* cmd_batch.c */
int cli_cmd_psf(int argc, char **argv);
int cli_cmd_calibrate(int argc, char **argv); /* cmd_calibrate.c */
int cli_cmd_demo(int argc, char **argv);

void cli_simulate_help(FILE *fp);
void cli_psf_help(FILE *fp);
void cli_calibrate_help(FILE *fp);
void cli_demo_help(FILE *fp);

#endif
