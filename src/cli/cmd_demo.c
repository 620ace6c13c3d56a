/* pixpost command line — `pixpost demo`: runs on the bundled frames.
 *
 * Finds images/ (scene_truth.tif, demo_gaussian.tif, demo_photons.tif, made
 * by tools/make_demo_scene.py; stack_truth.tif, demo_stack_gaussian.tif, a
 * z-stack made by tools/make_demo_stack.py; settings in images/README.md),
 * then for each
 * bundled frame runs a pixpost command through an argv vector, exactly as a
 * user would type it: first the forward-model round trip (`simulate` the
 * truth again with the frame's settings and report the relative difference
 * to the bundled frame, 0 when this build reproduces it), then `sample` on
 * each frame, into OUTDIR/<frame stem>/: the Gaussian frame with noise and
 * prior precision sampled (auto: gibbs, padded boundary; --iters auto, the
 * default, so it runs until it converges), the camera frame
 * with its camera noise model and the default matern prior on log
 * intensity (auto: hmc), the z-stack as one volume with its 3-D PSF and
 * the gmrf1 prior (gibbs, padded in z too). Cost on the 2-core machine: see
 * the README's Demo section.
 */
#include "cli.h"
#include "pixpost/output.h"
#include "pixpost/stack.h"
#include "pixpost/output_extra.h"
#include "pixpost/shape_extra.h"
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#ifndef PIXPOST_SOURCE_DIR
#define PIXPOST_SOURCE_DIR "."
#endif

/* One bundled frame and the settings that made it (images/README.md). */
typedef struct demo_frame {
    const char *truth; /* the bundled truth it was simulated from */
    const char *file;
    const char *psf;
    const char *noise;
    const char *seed;
    const char *model[4]; /* sample's model options: --noise N [--prior P] */
    const char *burn, *iters;
    const char *boundary; /* how it was simulated, and how it is sampled */
} demo_frame;

#define DEMO_PSF "airy:na=1.4,wavelength=0.52,pixel=0.065"
static const demo_frame demo_frames[] = {
    {"scene_truth.tif", "demo_gaussian.tif", DEMO_PSF, "gaussian:sigma=2.5", "101",
     {"--noise", "gaussian", "--prior", "gmrf1"}, "200", "auto", "pad"},
    {"scene_truth.tif", "demo_photons.tif", DEMO_PSF, "camera:gain=0.5,offset=100,read=1.6", "102",
     {"--noise", "camera:gain=0.5,offset=100,read=1.6", NULL, NULL}, "300", "700", "pad"},
    /* a z-stack (tools/make_demo_stack.py): its OME metadata says the pages
     * are z-slices, so it is sampled as one volume with the 3-D PSF; it was
     * simulated periodic, so the exact model is the fast mtc sampler's (a
     * real stack needs pad: minutes for this size, README "Demo") */
    {"stack_truth.tif", "demo_stack_gaussian.tif", "gaussian:sigma=1.2,sigma_z=1.5",
     "gaussian:sigma=1.5", "103", {"--noise", "gaussian", "--prior", "gmrf1"}, "200", "1000",
     "periodic"},
};
#define DEMO_NFRAMES (sizeof demo_frames / sizeof demo_frames[0])

static const cli_opt demo_table[] = {
    {"output", 'o', 1, "OUTDIR",
     "Folder for the demo's outputs (created). Default: ./pixpost-demo."},
    {"images", 0, 1, "DIR",
     "Folder with the bundled frames. Default: ../share/pixpost/images next to the "
     "executable, else the source tree's images/."},
    {"overwrite", 0, 0, "",
     "Write into OUTDIR (and its demo_* folders) even when they hold files pixpost did "
     "not write. Default: off (such a folder is refused)."},
    {NULL, 0, 0, NULL, NULL},
};

void cli_demo_help(FILE *fp)
{
    const cli_opt *tables[] = {demo_table, NULL};
    fputs("Usage: pixpost demo [-o OUTDIR] [--overwrite]\n\n"
          "Runs pixpost on the bundled demonstration frames: a synthetic fluorescence scene\n"
          "(curved filaments and sub-resolution beads, 65 nm pixels) blurred by an Airy PSF\n"
          "(NA 1.4, 520 nm) with Gaussian noise and with camera noise (images/README.md).\n"
          "It re-simulates each frame from the bundled truth with the same settings and\n"
          "reports how far the result is from the bundled frame (0 = reproduced), then\n"
          "runs `pixpost sample` on each frame into OUTDIR/<frame name>/ (posterior mean,\n"
          "sd, 95 % bounds, summary.json, trace.csv, report.html): the Gaussian-noise\n"
          "frame with gibbs, the camera frame with hmc, and a small z-stack (16 slices of\n"
          "64x64, a hollow tube and beads, 3-D Gaussian PSF) as one volume with gibbs.\n"
          "OUTDIR must be new, empty or a folder pixpost wrote before, as for sample.\n\n"
          "Options:\n",
          fp);
    cli_print_options(fp, tables, NULL, NULL);
}

static int has_file(const char *dir, const char *name)
{
    char p[PATH_MAX + 64];
    struct stat st;
    snprintf(p, sizeof p, "%s/%s", dir, name);
    return stat(p, &st) == 0 && S_ISREG(st.st_mode);
}

/* The images folder: next to the executable (installed), else the source. */
static int find_images(char *dir, size_t len)
{
    char exe[PATH_MAX];
    ssize_t n = readlink("/proc/self/exe", exe, sizeof exe - 1);
    if (n > 0) {
        exe[n] = '\0';
        char *slash = strrchr(exe, '/');
        if (slash) {
            *slash = '\0';
            int w = snprintf(dir, len, "%s/../share/pixpost/images", exe);
            if (w > 0 && (size_t)w < len && has_file(dir, "scene_truth.tif"))
                return 0;
        }
    }
    snprintf(dir, len, "%s/images", PIXPOST_SOURCE_DIR);
    if (has_file(dir, "scene_truth.tif"))
        return 0;
    return cli_error("demo: cannot find the bundled frames (looked in "
                     "<executable>/../share/pixpost/images and %s/images; give --images DIR)",
                     PIXPOST_SOURCE_DIR);
}

/* Runs a command from a NULL-terminated argv vector, as if typed. */
static int run_vector(int (*cmd)(int, char **), const char *const *vec)
{
    char *argv[32];
    int argc = 0;
    while (vec[argc] && argc < 31) {
        argv[argc] = (char *)vec[argc]; /* the commands never write to argv */
        argc++;
    }
    argv[argc] = NULL;
    return cmd(argc, argv);
}

/* ||a - b|| / ||b|| over all n values; *maxabs the largest |a - b|. */
static double rel_diff(const double *a, const double *b, size_t n, double *maxabs)
{
    double num = 0.0, den = 0.0;
    *maxabs = 0.0;
    for (size_t i = 0; i < n; i++) {
        double d = a[i] - b[i];
        num += d * d;
        den += b[i] * b[i];
        if (fabs(d) > *maxabs)
            *maxabs = fabs(d);
    }
    return den > 0.0 ? sqrt(num / den) : sqrt(num);
}

/* Compares the re-simulated file with the bundled one, every page. */
static int compare(const char *made, const char *bundled, double *rel, double *maxabs)
{
    pp_stack *a = NULL, *b = NULL;
    int rc = 0;
    size_t n = 0;
    pp_status st = pp_stack_read(made, NULL, &a, NULL);
    if (st == PP_OK)
        st = pp_stack_read(bundled, NULL, &b, NULL);
    if (st == PP_OK)
        st = pp_shape_count(&a->shape, 0, &n);
    if (st != PP_OK)
        rc = cli_fail(st);
    else if (!pp_shape_equal(&a->shape, &b->shape))
        rc = cli_error("%s: its shape differs from the bundled %s (pages or size)", made,
                       bundled);
    else
        *rel = rel_diff(a->data, b->data, n, maxabs);
    pp_stack_free(a);
    pp_stack_free(b);
    return rc;
}

static int make_dir(const char *dir)
{
    if (mkdir(dir, 0777) == 0 || errno == EEXIST) {
        struct stat st;
        if (stat(dir, &st) == 0 && S_ISDIR(st.st_mode))
            return 0;
    }
    return cli_error("%s: cannot create the output folder: %s", dir,
                     errno == EEXIST ? "a file of that name exists" : strerror(errno));
}

/* OUTDIR/<frame stem>, where sample writes the frame's outputs. */
static void frame_dir(char *dir, size_t len, const char *outdir, const demo_frame *f)
{
    snprintf(dir, len, "%s/%.*s", outdir, (int)(strlen(f->file) - 4), f->file);
}

/* The re-simulated frames are the demo's own files in its (marked) folder,
 * so simulate replaces them; sample's folders follow sample's rule, with
 * --overwrite passed on when given. */
static int run_frame(const char *images, const char *outdir, const demo_frame *f, int overwrite)
{
    char truth[PATH_MAX + 64], bundled[PATH_MAX + 64], made[PATH_MAX + 64];
    snprintf(truth, sizeof truth, "%s/%s", images, f->truth);
    snprintf(bundled, sizeof bundled, "%s/%s", images, f->file);
    snprintf(made, sizeof made, "%s/resimulated_%s", outdir, f->file);
    const char *vec[] = {"simulate", truth,   "--psf",  f->psf,      "--noise",
                         f->noise,   "--seed", f->seed, "--boundary", f->boundary,
                         "-o",       made,     "--quiet", "--overwrite", NULL};
    int rc = run_vector(cli_cmd_simulate, vec);
    double rel = 0.0, maxabs = 0.0;
    if (rc || (rc = compare(made, bundled, &rel, &maxabs)) != 0)
        return rc;
    printf("  %-18s psf %s, noise %s, seed %s\n", f->file, f->psf, f->noise, f->seed);
    printf("  %-18s re-simulated: relative difference %.3g, largest |difference| %.3g\n", "", rel,
           maxabs);
    if (rel > 1e-6)
        return cli_error("demo: %s: this build does not reproduce the bundled frame (relative "
                         "difference %.3g); regenerate it with tools/make_demo_scene.py",
                         bundled, rel);
    /* The posterior run, as a user would type it: the hyperparameters
     * sampled, padded boundary, default sampler and chains. */
    char dir[PATH_MAX + 64];
    frame_dir(dir, sizeof dir, outdir, f);
    const char *svec[24] = {"sample", bundled, "--psf", f->psf};
    int n = 4;
    for (int i = 0; i < 4 && f->model[i]; i++)
        svec[n++] = f->model[i];
    const char *tail[] = {"--boundary", f->boundary, "--burn", f->burn, "--iters", f->iters,
                          "--seed",     f->seed,     "-o",     dir};
    for (size_t i = 0; i < sizeof tail / sizeof tail[0]; i++)
        svec[n++] = tail[i];
    if (overwrite)
        svec[n++] = "--overwrite";
    printf("  %-18s pixpost", "");
    for (int i = 0; i < n; i++)
        printf(" %s", svec[i]);
    printf("\n");
    fflush(stdout);
    return run_vector(cli_cmd_sample, svec);
}

/* The output-folder rule for OUTDIR and every frame's folder, before
 * anything is written: a refusal leaves all of them as they were. */
static int check_folders(const char *outdir, int overwrite)
{
    char msg[1024], dir[PATH_MAX + 64];
    if (cli_check_outdir(outdir, overwrite, msg, sizeof msg))
        return cli_error("demo: %s", msg);
    for (size_t i = 0; i < DEMO_NFRAMES; i++) {
        frame_dir(dir, sizeof dir, outdir, &demo_frames[i]);
        if (cli_check_outdir(dir, overwrite, msg, sizeof msg))
            return cli_error("demo: %s", msg);
    }
    return 0;
}

int cli_cmd_demo(int argc, char **argv)
{
    const cli_opt *tables[] = {demo_table, NULL};
    cli_args a;
    char images[PATH_MAX];
    int rc = cli_parse(&a, "demo", tables, argc, argv);
    if (rc == CLI_HELP) {
        cli_demo_help(stdout);
        return CLI_EXIT_OK;
    }
    if (rc)
        return rc;
    if (a.npos > 0)
        return cli_error("demo: unexpected argument '%s' (demo takes only -o OUTDIR and "
                         "--images DIR)",
                         a.pos[0]);
    const char *outdir = cli_given(&a, "output") ? cli_str(&a, "output") : "pixpost-demo";
    int overwrite = cli_given(&a, "overwrite");
    if ((rc = check_folders(outdir, overwrite)) != 0)
        return rc;
    if (cli_given(&a, "images"))
        snprintf(images, sizeof images, "%s", cli_str(&a, "images"));
    else if ((rc = find_images(images, sizeof images)) != 0)
        return rc;
    if ((rc = make_dir(outdir)) != 0)
        return rc;
    pp_status st = pp_output_mark(outdir, "pixpost demo");
    if (st != PP_OK)
        return cli_fail(st);
    printf("pixpost demo: bundled frames from %s\n", images);
    fflush(stdout); /* seen at once when piped (`pixpost demo | tee log`) */
    for (size_t i = 0; i < DEMO_NFRAMES && rc == 0; i++) {
        rc = run_frame(images, outdir, &demo_frames[i], overwrite);
        fflush(stdout);
    }
    if (rc == 0)
        printf("outputs are in %s/\n", outdir);
    return rc;
}
