/* pixpost command line — `pixpost simulate`: y = A x + noise from a truth.
 *
 * Reads TRUTH, makes and checks the PSF, blurs with the chosen boundary, adds
 * noise from stream 0 of the seed (pp_model_simulate) and writes OUT as a
 * 32-bit float TIFF (.tif/.tiff) or a 16-bit PNG (.png). The output name is
 * checked before anything is computed. Cost: one FFT blur of the frame.
 */
#include "cli.h"
#include <math.h>
#include <string.h>

static const cli_opt simulate_table[] = {
    {"output", 'o', 1, "OUT",
     "Output frame: .tif/.tiff (32-bit float, values as simulated) or .png (16-bit; values "
     "rounded, stored as is when they fit 0..65535, else rescaled with a note). Required."},
    {"psf", 0, 1, "SPEC",
     "Point-spread function: gaussian:sigma=S (pixels, 0.3 to 20), "
     "airy:na=NA,wavelength=L,pixel=P (L 0.2 to 2 and P 0.001 to 20 micrometres; P is the "
     "sample-plane pixel) or file:PATH (an image of one bead). Required."},
    {"noise", 0, 1, "SPEC",
     "none, gaussian:sigma=S (camera units), poisson:gain=G,offset=O or "
     "camera:gain=G,offset=O,read=R. For poisson/camera TRUTH is in photons and OUT in "
     "ADU = offset + gain * electrons; gain (ADU per electron; or e_per_adu=E, the "
     "electrons per ADU of camera data sheets, gain = 1/E), offset (the dark level, ADU) "
     "and, for camera, read (electrons) must be given. Required."},
    {"seed", 0, 1, "N", "Random seed (whole number 0 to 2^64-1). Default: 1."},
    {"boundary", 0, 1, "pad|periodic",
     "pad: the scene is zero outside the frame; periodic: the frame wraps around. "
     "Default: pad."},
    {"channel", 0, 1, "r|g|b|luma",
     "Channel to take from a colour TRUTH. Default: none (grayscale only)."},
    {"max-pixels", 0, 1, "N", "Refuse a TRUTH with more than N pixels. Default: 268435456."},
    {"quiet", 0, 0, "", "Do not print what was written. Default: off."},
    {"overwrite", 0, 0, "",
     "Replace OUT when it exists (without it, an existing OUT is refused and left as it "
     "is). Default: off."},
    {NULL, 0, 0, NULL, NULL},
};

void cli_simulate_help(FILE *fp)
{
    const cli_opt *tables[] = {simulate_table, NULL};
    fputs("Usage: pixpost simulate TRUTH --psf SPEC --noise SPEC [--seed N]\n"
          "                        [--boundary pad|periodic] [--channel C] -o OUT\n\n"
          "Blurs the sharp image TRUTH (PNG or TIFF) with the PSF and adds noise, as the\n"
          "model y = A x + b + e of the sampler assumes. TRUTH is never modified.\n\n"
          "Options:\n",
          fp);
    cli_print_options(fp, tables, NULL, NULL);
}

typedef struct sim_opts {
    const char *truth, *out, *psf_text, *noise_text;
    pp_psf_spec psf;
    pp_noise_spec noise;
    uint64_t seed;
    pp_boundary boundary;
    pp_read_options read;
    int quiet;
    int overwrite;
} sim_opts;

static int lib(pp_status st)
{
    return st == PP_OK ? 0 : cli_fail(st);
}

static int check_out_name(const sim_opts *o)
{
    if (!cli_has_ext(o->out, ".tif") && !cli_has_ext(o->out, ".tiff") &&
        !cli_has_ext(o->out, ".png"))
        return cli_error("%s: unknown output type (expected a name ending in .tif, .tiff or "
                         ".png)",
                         o->out);
    int rc = cli_check_parent_dir(o->out);
    if (!rc)
        rc = cli_check_not_same(o->out, o->truth);
    return rc ? rc : cli_check_outfile(o->out, o->overwrite);
}

static int parse(int argc, char **argv, sim_opts *o)
{
    const cli_opt *tables[] = {simulate_table, NULL};
    cli_args a;
    int rc = cli_parse(&a, "simulate", tables, argc, argv);
    if (rc == CLI_HELP)
        cli_simulate_help(stdout);
    if (rc || (rc = cli_positionals(&a, 1, "TRUTH")) != 0 || (rc = cli_require(&a, "psf")) != 0 ||
        (rc = cli_require(&a, "noise")) != 0 || (rc = cli_require(&a, "output")) != 0)
        return rc;
    memset(o, 0, sizeof *o);
    cli_read_defaults(&o->read);
    o->truth = a.pos[0];
    o->out = cli_str(&a, "output");
    o->psf_text = cli_str(&a, "psf");
    o->noise_text = cli_str(&a, "noise");
    o->seed = 1;
    o->boundary = PP_BOUNDARY_PAD;
    o->quiet = cli_given(&a, "quiet");
    o->overwrite = cli_given(&a, "overwrite");
    if ((rc = lib(pp_psf_parse(o->psf_text, &o->psf))) != 0 ||
        (rc = lib(pp_noise_parse(o->noise_text, cli_flag_names, &o->noise))) != 0 ||
        (rc = cli_get_u64(&a, "seed", &o->seed)) != 0 ||
        (rc = cli_get_size(&a, "max-pixels", 1, &o->read.max_pixels)) != 0)
        return rc;
    if (cli_given(&a, "boundary") &&
        (rc = lib(pp_boundary_parse(cli_str(&a, "boundary"), cli_flag_names, &o->boundary))) != 0)
        return rc;
    if (cli_given(&a, "channel") &&
        (rc = lib(pp_channel_parse(cli_str(&a, "channel"), cli_flag_names, &o->read.channel))) != 0)
        return rc;
    return check_out_name(o);
}

/* A PNG holds whole camera counts: values that fit 0..65535 are stored as
 * they are; otherwise the auto scale is used and said. */
static pp_status write_out(const sim_opts *o, const pp_image *y)
{
    if (!cli_has_ext(o->out, ".png"))
        return pp_tiff_write_f32(o->out, y);
    double lo, hi, offset = 0.0, scale = 1.0;
    pp_image_range(y, &lo, &hi);
    if (lo < 0.0 || hi > 65535.0) {
        pp_png_auto_scale(y, &offset, &scale);
        fprintf(stderr,
                "pixpost: note: %s: values span [%g, %g], outside 0..65535; stored "
                "as value = %.17g + stored * %.17g\n",
                o->out, lo, hi, offset, scale);
    }
    return pp_png_write16(o->out, y, offset, scale);
}

static pp_status simulate(const sim_opts *o)
{
    pp_image *truth = NULL, *psf = NULL, *y = NULL;
    pp_status st = pp_image_read(o->truth, &o->read, &truth, NULL);
    if (st == PP_OK)
        st = pp_psf_make(&o->psf, 0, &psf);
    if (st == PP_OK)
        st = pp_psf_check(psf, truth->height, truth->width);
    if (st == PP_OK)
        st = pp_model_simulate(truth, psf, o->boundary, &o->noise, o->seed, &y);
    if (st == PP_OK)
        st = write_out(o, y);
    if (st == PP_OK && !o->quiet) {
        printf("wrote %s (%zux%zu, psf %zux%zu, noise %s, boundary %s, seed %llu)\n", o->out,
               y->width, y->height, psf->width, psf->height, o->noise_text,
               pp_boundary_name(o->boundary), (unsigned long long)o->seed);
    }
    pp_image_free(truth);
    pp_image_free(psf);
    pp_image_free(y);
    return st;
}

int cli_cmd_simulate(int argc, char **argv)
{
    sim_opts o;
    int rc = parse(argc, argv, &o);
    if (rc == CLI_HELP)
        return CLI_EXIT_OK;
    if (rc)
        return rc;
    pp_status st = simulate(&o);
    return st == PP_OK ? CLI_EXIT_OK : cli_fail(st);
}
