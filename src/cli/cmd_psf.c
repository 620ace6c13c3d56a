/* pixpost command line — `pixpost psf`: writes a PSF kernel as a float TIFF
 * (a 3-D PSF or bead stack as a multi-page one, one page per z-slice).
 *
 * Makes the kernel exactly as sample/simulate would (pp_psf_make, then
 * pp_psf_check normalises it to sum 1) so it can be inspected or compared
 * with a measured bead. Cost: one kernel evaluation (airy supersamples).
 */
#include "cli.h"
#include "pixpost/stack.h"
#include "pixpost/psf_extra.h"
#include <stdlib.h>
#include <string.h>

static const cli_opt psf_table[] = {
    {"output", 'o', 1, "OUT", "Output kernel, a 32-bit float TIFF (.tif or .tiff). Required."},
    {"size", 0, 1, "N",
     "Kernel side in pixels, odd (2R+1). Default: 0 = from the model (gaussian: radius "
     "ceil(4 sigma); airy: the 5th dark ring; widefield: that ring plus the defocused disc "
     "of the outermost slice; file: its own support)."},
    {"depth", 0, 1, "N",
     "Slices of a 3-D kernel, odd (2R+1). Default: 0 = from the model (gaussian: radius "
     "ceil(4 sigma_z); widefield: twice the paraxial first axial zero 2 n L / NA^2; file: "
     "its own support)."},
    {"quiet", 0, 0, "", "Do not print what was written. Default: off."},
    {"overwrite", 0, 0, "",
     "Replace OUT when it exists (without it, an existing OUT is refused and left as it "
     "is). Default: off."},
    {NULL, 0, 0, NULL, NULL},
};

void cli_psf_help(FILE *fp)
{
    const cli_opt *tables[] = {psf_table, NULL};
    fputs("Usage: pixpost psf SPEC [--size N] [--depth N] -o OUT\n\n"
          "Writes the point-spread function SPEC as an odd-sized square kernel, centred on\n"
          "its middle pixel and normalised to sum 1. SPEC is gaussian:sigma=S (pixels,\n"
          "0.3 to 20), airy:na=NA,wavelength=L,pixel=P (micrometres: L 0.2 to 2, P the\n"
          "sample-plane pixel, 0.001 to 20; in-focus Airy pattern averaged over each pixel)\n"
          "or file:PATH (an image of one bead: border median removed, centred; an image\n"
          "that is not one compact spot is refused).\n\n"
          "3-D PSFs are written as a multi-page 32-bit float TIFF, one page per z-slice\n"
          "(slice 0 nearest the coverslip), summing to 1 over the whole volume:\n"
          "gaussian:sigma=S,sigma_z=Z (pixels, slices); widefield:na=NA,wavelength=L,\n"
          "pixel=P,step=DZ,n=N (micrometres; n the immersion index; scalar diffraction,\n"
          "Born & Wolf) with optional sample_n=NS,depth=D (the sample's index and the\n"
          "depth below the coverslip in micrometres: Gibson & Lanni's index mismatch);\n"
          "file:STACK.tif with more than one page (a bead stack: background removed,\n"
          "centred). pixpost sample takes them for z-stacks sampled as volumes (--pages z).\n\n"
          "Options:\n",
          fp);
    cli_print_options(fp, tables, NULL, NULL);
}

static int parse(int argc, char **argv, const char **spec, size_t *size, size_t *depth,
                 const char **out, int *quiet, int *overwrite)
{
    const cli_opt *tables[] = {psf_table, NULL};
    cli_args a;
    int rc = cli_parse(&a, "psf", tables, argc, argv);
    if (rc == CLI_HELP)
        cli_psf_help(stdout);
    if (rc || (rc = cli_positionals(&a, 1, "SPEC")) != 0 || (rc = cli_require(&a, "output")) != 0 ||
        (rc = cli_get_size(&a, "size", 1, size)) != 0 || (rc = cli_get_size(&a, "depth", 1, depth)))
        return rc;
    if (cli_given(&a, "depth") && *depth % 2 == 0)
        return cli_opt_error("depth", "'%s' is even (expected --depth N, an odd number)",
                             cli_str(&a, "depth"));
    if (cli_given(&a, "size") && *size % 2 == 0)
        return cli_opt_error("size",
                             "'%s' is even (expected --size N, an odd number such as "
                             "%zu or %zu)",
                             cli_str(&a, "size"), *size - 1, *size + 1);
    *spec = a.pos[0];
    *out = cli_str(&a, "output");
    *quiet = cli_given(&a, "quiet");
    *overwrite = cli_given(&a, "overwrite");
    if (!cli_has_ext(*out, ".tif") && !cli_has_ext(*out, ".tiff"))
        return cli_error("%s: the kernel is written as a float TIFF (expected a name ending "
                         "in .tif or .tiff)",
                         *out);
    return cli_check_parent_dir(*out);
}

/* Makes and writes the 3-D kernel. */
static pp_status write_3d(const pp_psf_spec *spec, size_t size, size_t depth, const char *out,
                          int quiet)
{
    pp_shape shape;
    double *k = NULL;
    pp_status st = pp_psf_make3(spec, size, depth, &shape, &k);
    /* physical sizes (z, y, x, micrometres) where the spec knows them */
    double voxel[3] = {spec->step, spec->pixel, spec->pixel};
    int known = spec->kind == PP_PSF_WIDEFIELD;
    if (st == PP_OK)
        st = pp_ome_tiff_write_f32(out, &shape, k, known ? voxel : NULL, "PSF");
    if (st == PP_OK && !quiet) {
        char canon[256];
        pp_psf_format(spec, canon, sizeof canon);
        printf("wrote %s (%zu slices of %zux%zu, kernel of %s, sum 1 over the volume)\n", out,
               shape.n[0], shape.n[2], shape.n[1], canon);
    }
    free(k);
    return st;
}

int cli_cmd_psf(int argc, char **argv)
{
    const char *text = NULL, *out = NULL;
    size_t size = 0, depth = 0;
    int quiet = 0, overwrite = 0;
    int rc = parse(argc, argv, &text, &size, &depth, &out, &quiet, &overwrite);
    if (rc == CLI_HELP)
        return CLI_EXIT_OK;
    if (rc)
        return rc;
    pp_psf_spec spec;
    pp_image *k = NULL;
    pp_status st = pp_psf_parse(text, cli_flag_names, &spec);
    if (st == PP_OK && spec.kind == PP_PSF_FILE && (rc = cli_check_not_same(out, spec.path)))
        return rc;
    if (st == PP_OK && (rc = cli_check_outfile(out, overwrite)) != 0)
        return rc;
    if (st == PP_OK && (depth || cli_psf_is_3d(&spec))) {
        st = write_3d(&spec, size, depth, out, quiet);
        return st == PP_OK ? CLI_EXIT_OK : cli_fail(st);
    }
    if (st == PP_OK)
        st = pp_psf_make(&spec, size, &k);
    if (st == PP_OK)
        st = pp_psf_check(k, k->height, k->width);
    if (st == PP_OK)
        st = pp_tiff_write_f32(out, k);
    if (st == PP_OK && !quiet) {
        char canon[256];
        pp_psf_format(&spec, canon, sizeof canon);
        printf("wrote %s (%zux%zu kernel of %s, sum 1)\n", out, k->width, k->height, canon);
    }
    pp_image_free(k);
    return st == PP_OK ? CLI_EXIT_OK : cli_fail(st);
}
