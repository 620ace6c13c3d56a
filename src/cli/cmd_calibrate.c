/* pixpost command line — `pixpost calibrate`: a camera's offset, gain and
 * read noise, printed as the --noise spec to use and written as JSON.
 *
 *   pixpost calibrate --dark FILE... --flat FILE... [--flat FILE...]... [-o OUT.json]
 *   pixpost calibrate --frame FILE [-o OUT.json]
 *
 * With darks and flats: EMVA 1288 photon transfer (pp_series per series,
 * pp_ptc_fit). --dark and each --flat take every following argument up to
 * the next option as files; a multi-page TIFF gives all its pages; each
 * --flat is one light level. With --frame: the single-frame fit of Foi et
 * al. 2008 (pp_noise_fit_frame). Frames are read one at a time and not
 * kept. Cost: one pass per frame read, plus the fits (negligible).
 */
#include "cli.h"
#include "pixpost/calib.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define MAX_FILES 4096

static const cli_opt calib_table[] = {
    {"dark", 0, 1, "FILE...",
     "Dark frames (no light reaches the sensor; same exposure and settings as the flats): 2 "
     "or more frames, as files or pages of multi-page TIFFs; 16 or more are better."},
    {"flat", 0, 1, "FILE...",
     "Evenly lit frames at one light level, 2 or more (files or pages). Give --flat once per "
     "level, at 2 or more levels (5 to 8 from dim to about 70 % of saturation are better)."},
    {"exposure", 0, 1, "T1,T2,...",
     "Exposure times (or light levels, any unit), one per --flat in order: the linearity "
     "error is then EMVA 1288's, of the mean signal against exposure."},
    {"frame", 0, 1, "FILE",
     "Instead of darks and flats: fit the noise of one frame (the one to be processed; page "
     "0 of a TIFF). Gives the gain, but not offset and read noise separately."},
    {"saturation", 0, 1, "V",
     "Pixels at or above V are saturated and left out. Default: the format's maximum for "
     "integer files (255, 65535), none for float files."},
    {"channel", 0, 1, "r|g|b|luma",
     "Channel to take from colour files. Default: none (grayscale only)."},
    {"output", 'o', 1, "OUT.json", "Write the calibration as JSON. Default: not written."},
    {"overwrite", 0, 0, "", "Replace OUT.json when it exists. Default: off."},
    {"quiet", 0, 0, "", "Print only the --noise spec line. Default: off."},
    {NULL, 0, 0, NULL, NULL},
};

void cli_calibrate_help(FILE *fp)
{
    const cli_opt *tables[] = {calib_table, NULL};
    fputs("Usage: pixpost calibrate --dark FILE... --flat FILE... [--flat FILE...]... "
          "[-o OUT.json]\n"
          "       pixpost calibrate --frame FILE [-o OUT.json]\n\n"
          "Measures the camera's offset (ADU), gain (ADU per electron) and read noise\n"
          "(electrons) and prints the --noise camera:gain=G,offset=O,read=R spec to use.\n"
          "From darks and flats: the photon transfer method of EMVA 1288 (offset and read\n"
          "noise from the darks, gain from the slope of the temporal variance against the\n"
          "mean signal over the flat levels), with standard errors and the linearity.\n"
          "From one frame (--frame): the Poisson-Gaussian fit of Foi et al. (IEEE TIP\n"
          "2008) on the frame's smooth parts: var = a * mean + b. a is the gain; one frame\n"
          "cannot separate offset from read noise, so the spec printed is the choice\n"
          "--noise auto makes (README, \"Calibrating the camera\").\n\n"
          "Options:\n",
          fp);
    cli_print_options(fp, tables, NULL, NULL);
    fputs("\nExit status: 0 success (also when one frame shows no signal-dependent noise: "
          "that is\nreported); 1 bad usage or input (one line on stderr naming the file or "
          "option).\n",
          fp);
}

typedef struct group {
    const char *file[MAX_FILES];
    size_t n;
} group;

typedef struct calib_opts {
    group dark;
    group flat[PP_PTC_MAX_LEVELS];
    size_t nflat;
    int dark_given;
    const char *frame, *out;
    double saturation;  /* NaN: from each file's format */
    pp_channel channel; /* --channel */
    double exposure[PP_PTC_MAX_LEVELS];
    size_t nexposure;
    int quiet, overwrite;
} calib_opts;

/* Moves the files after --dark / --flat out of argv into groups; the rest
 * (argv[0] and the other options) goes to rest for cli_parse. */
static int split_groups(int argc, char **argv, calib_opts *o, char **rest, int *nrest)
{
    *nrest = 0;
    rest[(*nrest)++] = argv[0];
    for (int k = 1; k < argc; k++) {
        int is_dark = strcmp(argv[k], "--dark") == 0, is_flat = strcmp(argv[k], "--flat") == 0;
        if (!is_dark && !is_flat) {
            rest[(*nrest)++] = argv[k];
            continue;
        }
        if (is_dark && o->dark_given)
            return cli_opt_error("dark", "given twice (list every dark after one --dark)");
        if (is_flat && o->nflat == PP_PTC_MAX_LEVELS)
            return cli_opt_error("flat", "more than %d levels", PP_PTC_MAX_LEVELS);
        group *g = is_dark ? &o->dark : &o->flat[o->nflat++];
        o->dark_given |= is_dark;
        while (k + 1 < argc && argv[k + 1][0] != '-') {
            if (g->n == MAX_FILES)
                return cli_opt_error(argv[k] + 2, "more than %d files", MAX_FILES);
            g->file[g->n++] = argv[++k];
        }
        if (!g->n)
            return cli_opt_error(argv[k] + 2, "needs at least one file (expected --%s FILE...)",
                                 is_dark ? "dark" : "flat");
    }
    return 0;
}

static int parse_exposures(const char *v, calib_opts *o)
{
    const char *p = v;
    while (*p) {
        char *end;
        double t = strtod(p, &end);
        if (end == p || !isfinite(t) || (*end && *end != ','))
            return cli_opt_error("exposure",
                                 "'%s' is not a list of numbers (expected "
                                 "--exposure T1,T2,..., one per --flat)",
                                 v);
        if (o->nexposure == PP_PTC_MAX_LEVELS)
            return cli_opt_error("exposure", "more than %d values", PP_PTC_MAX_LEVELS);
        o->exposure[o->nexposure++] = t;
        p = *end ? end + 1 : end;
    }
    if (o->nexposure != o->nflat)
        return cli_opt_error("exposure",
                             "%zu values for %zu --flat levels (give one per "
                             "--flat, in the same order)",
                             o->nexposure, o->nflat);
    return 0;
}

static int check_outputs(calib_opts *o)
{
    int rc;
    if (!o->out)
        return 0;
    if (!cli_has_ext(o->out, ".json"))
        return cli_error("%s: the calibration is written as JSON (expected a name ending in "
                         ".json)",
                         o->out);
    if ((rc = cli_check_parent_dir(o->out)) != 0 || (rc = cli_check_outfile(o->out, o->overwrite)))
        return rc;
    if (o->frame && (rc = cli_check_not_same(o->out, o->frame)) != 0)
        return rc;
    for (size_t i = 0; i < o->dark.n; i++)
        if ((rc = cli_check_not_same(o->out, o->dark.file[i])) != 0)
            return rc;
    for (size_t l = 0; l < o->nflat; l++)
        for (size_t i = 0; i < o->flat[l].n; i++)
            if ((rc = cli_check_not_same(o->out, o->flat[l].file[i])) != 0)
                return rc;
    return 0;
}

static int parse(int argc, char **argv, calib_opts *o)
{
    char **rest = malloc(((size_t)argc + 1) * sizeof *rest);
    if (!rest)
        return cli_error("out of memory");
    int nrest, rc = split_groups(argc, argv, o, rest, &nrest);
    const cli_opt *tables[] = {calib_table, NULL};
    cli_args a;
    if (!rc) {
        rc = cli_parse(&a, "calibrate", tables, nrest, rest);
        if (rc == CLI_HELP)
            cli_calibrate_help(stdout);
    }
    free(rest);
    if (rc)
        return rc;
    if (a.npos)
        return cli_error("calibrate: unexpected argument '%s' (files follow --dark, --flat or "
                         "--frame; see 'pixpost calibrate --help')",
                         a.pos[0]);
    if (cli_given(&a, "dark") || cli_given(&a, "flat"))
        return cli_opt_error(cli_given(&a, "dark") ? "dark" : "flat",
                             "takes its files after a space (--dark FILE..., not --dark=FILE)");
    o->frame = cli_str(&a, "frame");
    o->out = cli_str(&a, "output");
    o->quiet = cli_given(&a, "quiet");
    o->overwrite = cli_given(&a, "overwrite");
    o->saturation = NAN;
    if ((rc = cli_get_double(&a, "saturation", -1e300, 1e300, 0, &o->saturation)) != 0)
        return rc;
    pp_status cst;
    if (cli_given(&a, "channel") &&
        (cst = pp_channel_parse(cli_str(&a, "channel"), cli_flag_names, &o->channel)) != PP_OK)
        return cli_fail(cst);
    if (o->frame && (o->dark_given || o->nflat))
        return cli_opt_error("frame", "cannot be used with --dark/--flat (one frame, or darks "
                                      "and flats)");
    if (!o->frame && !o->dark_given && !o->nflat)
        return cli_error("calibrate: give --dark FILE... and --flat FILE... (photon transfer), "
                         "or --frame FILE (one frame); see 'pixpost calibrate --help'");
    if (!o->frame && !o->dark_given)
        return cli_opt_error("dark", "is required with --flat (the darks give offset and read "
                                     "noise: frames taken with no light)");
    if (!o->frame && !o->nflat)
        return cli_opt_error("flat", "is required with --dark (evenly lit frames, one --flat "
                                     "per light level)");
    if (cli_given(&a, "exposure") && o->frame)
        return cli_opt_error("exposure", "applies to --flat levels only");
    if (cli_given(&a, "exposure") && (rc = parse_exposures(cli_str(&a, "exposure"), o)) != 0)
        return rc;
    return check_outputs(o);
}

/* ---- reading series ------------------------------------------------- */

static double format_max(const pp_read_info *info)
{
    if (info->is_float || info->bits == 0 || info->bits > 32)
        return INFINITY;
    return ldexp(1.0, (int)info->bits) - 1;
}

/* The frame size every series must have (the first dark's). */
typedef struct frame_size {
    size_t width, height;
} frame_size;

/* Reads every page of file into *s (created at the first frame). what:
 * "--dark" or "--flat (level N)" for messages. */
static int add_file(const calib_opts *o, const char *file, const char *what, pp_series **s,
                    size_t *frames, frame_size *size)
{
    pp_read_options ro;
    cli_read_defaults(&ro);
    ro.channel = o->channel;
    unsigned pages = 1;
    for (unsigned p = 0; p < pages; p++) {
        pp_read_info info;
        pp_image *img = NULL;
        ro.page = p;
        pp_status st = pp_image_read(file, &ro, &img, &info);
        if (st != PP_OK)
            return cli_fail(st);
        pages = info.pages;
        if (info.nonfinite) {
            pp_image_free(img);
            return cli_error("%s: %zu pixels are NaN or infinite; mask or repair them first", file,
                             info.nonfinite);
        }
        if (size->width && (img->width != size->width || img->height != size->height)) {
            size_t w = img->width, h = img->height;
            pp_image_free(img);
            return cli_error(
                "%s %s: frame is %zux%zu but the first dark is %zux%zu; every frame of "
                "a calibration must have the same size (same camera region and "
                "binning)",
                what, file, w, h, size->width, size->height);
        }
        size->width = img->width;
        size->height = img->height;
        if (!*s) {
            double sat = isnan(o->saturation) ? format_max(&info) : o->saturation;
            if ((st = pp_series_create(img->width, img->height, sat, s)) != PP_OK) {
                pp_image_free(img);
                return cli_fail(st);
            }
        }
        st = pp_series_add(*s, img);
        pp_image_free(img);
        if (st != PP_OK)
            return cli_error("%s %s: %s", what, file, pp_error_message());
        (*frames)++;
    }
    return 0;
}

static int read_group(const calib_opts *o, const group *g, const char *what, pp_series_stats *out,
                      frame_size *size)
{
    pp_series *s = NULL;
    size_t frames = 0;
    int rc = 0;
    for (size_t i = 0; i < g->n && !rc; i++)
        rc = add_file(o, g->file[i], what, &s, &frames, size);
    if (!rc && frames < 2)
        rc = cli_error("%s: %zu frame given (%s); at least 2 are needed, as the noise is "
                       "measured between frames (give more files or a multi-page TIFF)",
                       what, frames, g->file[0]);
    if (!rc && pp_series_stats_get(s, out) != PP_OK)
        rc = cli_error("%s %s%s: %s", what, g->file[0], g->n > 1 ? " ..." : "", pp_error_message());
    pp_series_free(s);
    return rc;
}

static void print_ptc(const pp_ptc_result *r)
{
    printf("photon transfer (EMVA 1288): %zu darks, %zu flat levels, %zu pixels used\n",
           r->dark.frames, r->nlevels, r->dark.pixels);
    printf("  offset      %.6g ADU (se %.2g)\n", r->offset, r->offset_se);
    printf("  gain        %.4g ADU per electron (95 %% interval %.4g to %.4g; %.4g electrons "
           "per ADU)\n",
           r->gain, r->gain - 1.96 * r->gain_se, r->gain + 1.96 * r->gain_se, 1 / r->gain);
    printf("  read noise  %.4g electrons rms (se %.2g; %.4g without the 1/12 ADU^2 of "
           "quantisation, EMVA 1288's sigma_d)\n",
           r->read, r->read_se, r->read_emva);
    printf("  dark fixed pattern %.3g electrons rms (pixel-to-pixel, not in the model)\n", r->dsnu);
    printf("  linearity error %.2g %% (%s); fit chi^2 per degree of freedom %.2g\n",
           r->linearity_error,
           r->linearity_from_exposure ? "mean signal against --exposure, EMVA 1288"
                                      : "spread of the variance fit's relative residuals; "
                                        "give --exposure for EMVA 1288's",
           r->chi2_red);
    printf("  level  frames  mean (ADU)  variance (ADU^2)  residual\n");
    printf("  dark   %6zu  %10.6g  %16.6g\n", r->dark.frames, r->dark.mean, r->dark.temporal_var);
    for (size_t i = 0; i < r->nlevels; i++)
        printf("  %-5zu  %6zu  %10.6g  %16.6g  %+.2g %%\n", i + 1, r->level[i].frames,
               r->level[i].mean, r->level[i].temporal_var, 100 * r->residual[i]);
}

static int run_ptc(const calib_opts *o, pp_noise_spec *spec, pp_ptc_result *r)
{
    pp_series_stats dark, level[PP_PTC_MAX_LEVELS];
    frame_size size = {0, 0};
    int rc = read_group(o, &o->dark, "--dark", &dark, &size);
    char what[64];
    for (size_t l = 0; l < o->nflat && !rc; l++) {
        snprintf(what, sizeof what, "--flat (level %zu)", l + 1);
        rc = read_group(o, &o->flat[l], what, &level[l], &size);
    }
    if (rc)
        return rc;
    pp_status st = pp_ptc_fit(&dark, level, o->nflat, o->nexposure ? o->exposure : NULL, r);
    if (st != PP_OK)
        return cli_fail(st);
    pp_noise_from_ptc(r, spec);
    pp_noise_round(spec);
    if (!o->quiet)
        print_ptc(r);
    return 0;
}

static void print_fit(const calib_opts *o, const pp_noise_fit *f, int camera)
{
    printf("single-frame noise fit (Foi et al. 2008) of %s: %zu smooth 2x2 blocks of %zu, %zu "
           "level sets\n",
           o->frame, f->smooth, f->blocks, f->nlevels);
    printf("  var = a * mean + b:  a = %.4g ADU per electron (95 %% interval %.4g to %.4g), "
           "b = %.4g ADU^2 (se %.2g)\n",
           f->a, f->a - 1.96 * f->a_se, f->a + 1.96 * f->a_se, f->b, f->b_se);
    if (!camera) {
        printf("  the noise does not grow significantly with the signal (a below 3 standard "
               "errors): gain and offset cannot be separated from this frame; use --noise "
               "gaussian, or calibrate with --dark and --flat\n");
        return;
    }
    printf("  zero-signal level -b/a = %.6g ADU (se %.2g): the offset if the read noise were "
           "0, below the offset otherwise\n",
           f->zero_level, f->zero_level_se);
    printf("  one frame cannot separate offset from read noise: the spec below (as --noise "
           "auto) puts the offset at the darkest smooth level, %.6g ADU, and the read noise "
           "at what variance is left there\n",
           fmax(f->darkest, f->zero_level));
}

static int run_frame_fit(const calib_opts *o, pp_noise_spec *spec, pp_noise_fit *f)
{
    pp_read_info info;
    pp_image *img = NULL;
    pp_read_options ro;
    cli_read_defaults(&ro);
    ro.channel = o->channel;
    pp_status st = pp_image_read(o->frame, &ro, &img, &info);
    if (st != PP_OK)
        return cli_fail(st);
    if (info.nonfinite) {
        pp_image_free(img);
        return cli_error("%s: %zu pixels are NaN or infinite; mask or repair them first", o->frame,
                         info.nonfinite);
    }
    pp_frame_fit_config cfg;
    pp_frame_fit_defaults(&cfg);
    cfg.saturation = isnan(o->saturation) ? format_max(&info) : o->saturation;
    st = pp_noise_fit_frame(img, &cfg, f);
    pp_image_free(img);
    if (st != PP_OK)
        return cli_error("%s: %s", o->frame, pp_error_message());
    int camera = pp_noise_from_frame_fit(f, spec);
    if (camera)
        pp_noise_round(spec);
    if (!o->quiet)
        print_fit(o, f, camera);
    return 0;
}

int cli_cmd_calibrate(int argc, char **argv)
{
    calib_opts *o = calloc(1, sizeof *o);
    if (!o)
        return cli_error("out of memory");
    int rc = parse(argc, argv, o);
    pp_noise_spec spec;
    pp_ptc_result ptc;
    pp_noise_fit fit;
    if (!rc)
        rc = o->frame ? run_frame_fit(o, &spec, &fit) : run_ptc(o, &spec, &ptc);
    if (!rc) {
        char text[256];
        pp_noise_format(&spec, text, sizeof text);
        printf("--noise %s\n", text);
    }
    if (!rc && o->out) {
        pp_status st =
            pp_calib_write_json(o->out, o->frame ? NULL : &ptc, o->frame ? &fit : NULL, &spec);
        rc = st == PP_OK ? 0 : cli_fail(st);
        if (!rc && !o->quiet)
            printf("wrote %s\n", o->out);
    }
    free(o);
    return rc == CLI_HELP ? CLI_EXIT_OK : rc;
}
