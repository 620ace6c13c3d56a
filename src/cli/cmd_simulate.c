/* pixpost command line — `pixpost simulate`: y = A x + noise from a truth.
 *
 * Reads TRUTH, makes and checks the PSF, blurs with the chosen boundary, adds
 * noise from stream 0 of the seed (pp_model_simulate) and writes OUT as a
 * 32-bit float TIFF (.tif/.tiff) or a 16-bit PNG (.png). A multi-page TRUTH
 * whose pages are z-slices (OME metadata or --pages z; units.c decides, as
 * for sample) is one volume: blurred by a 3-D PSF (or each slice by a 2-D
 * one) and written as a multi-page float OME-TIFF with its voxel size. The
 * output name is checked before anything is computed. Cost: one FFT blur of
 * the frame or volume.
 */
#include "cli.h"
#include "pixpost/stack.h"
#include "pixpost/io_extra.h"
#include "pixpost/psf_extra.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

static const cli_opt simulate_table[] = {
    {"output", 'o', 1, "OUT",
     "Output frame: .tif/.tiff (32-bit float, values as simulated) or .png (16-bit; values "
     "rounded, stored as is when they fit 0..65535, else rescaled with a note). A volume: "
     ".tif/.tiff only (a multi-page 32-bit float OME-TIFF). Required."},
    {"psf", 0, 1, "SPEC",
     "Point-spread function: gaussian:sigma=S (pixels, 0.3 to 20), "
     "airy:na=NA,wavelength=L,pixel=P (L 0.2 to 2 and P 0.001 to 20 micrometres; P is the "
     "sample-plane pixel) or file:PATH (an image of one bead). For a volume also the 3-D "
     "PSFs of pixpost psf: gaussian:sigma=S,sigma_z=Z (Z in slices), "
     "widefield:na=NA,wavelength=L,pixel=P,step=DZ,n=N or file:STACK.tif (a bead stack); a "
     "2-D PSF blurs each slice on its own. Required."},
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
    {"pages", 0, 1, "z|t|c",
     "What the pages of a multi-page TRUTH are. z: the z-slices of one volume, simulated as "
     "a volume. t or c (time points, channels) are refused: pick one page with --plane K. "
     "OME-TIFF metadata decides when present (a different --pages is an error); a "
     "multi-page TRUTH with neither is refused. Default: none."},
    {"plane", 0, 1, "K", "Simulate only page K (from 0) of a multi-page TRUTH, as a frame."},
    {"voxel", 0, 1, "XY,Z",
     "Voxel size of a volume in micrometres (pixel size in the plane, z spacing) where the "
     "OME metadata does not give it; written into OUT's OME-XML. A PSF spec that names its "
     "pixel or step must agree with it. Default: from the OME metadata, else the PSF spec "
     "(pixel=, step=), else not recorded."},
    {"max-pixels", 0, 1, "N",
     "Refuse a TRUTH with more than N pixels (per page). Default: 268435456."},
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
          "                        [--boundary pad|periodic] [--channel C]\n"
          "                        [--pages z|t|c] [--plane K] [--voxel XY,Z] -o OUT\n\n"
          "Blurs the sharp image TRUTH (PNG or TIFF) with the PSF and adds noise, as the\n"
          "model y = A x + b + e of the sampler assumes. TRUTH is never modified.\n\n"
          "A z-stack TRUTH (a multi-page TIFF whose OME metadata says its pages are\n"
          "z-slices, or --pages z) is simulated as one volume: a 3-D PSF blurs across\n"
          "slices (pad: zero outside the volume on every axis; periodic: every axis\n"
          "wraps), a 2-D PSF each slice on its own; OUT is then a multi-page 32-bit\n"
          "float OME-TIFF (.tif/.tiff) with the voxel size. A 3-D PSF needs a volume.\n\n"
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
    cli_sample_opts pages; /* --pages, --plane, --voxel (units.c reads them) */
    cli_units units;       /* what TRUTH's pages are (cli_units_role) */
    int volume;            /* TRUTH is simulated as a volume */
    int psf_3d;            /* the spec is 3-D, or a bead stack */
    double voxel[3];       /* a volume's z, y, x size in micrometres; 0 unknown */
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
    if (o->volume && cli_has_ext(o->out, ".png"))
        return cli_error("%s: TRUTH %s is a volume (%u z-slices), written as a multi-page "
                         "float OME-TIFF; name OUT with .tif or .tiff",
                         o->out, o->truth, o->units.pages);
    int rc = cli_check_parent_dir(o->out);
    if (!rc)
        rc = cli_check_not_same(o->out, o->truth);
    return rc ? rc : cli_check_outfile(o->out, o->overwrite);
}

/* The voxel size written with a volume (z, y, x micrometres; 0 unknown):
 * the truth's (OME metadata, else --voxel), else what the PSF spec says;
 * a spec that disagrees with the truth's size is refused, by sample's rule
 * (cli_voxel_resolve). */
static int settle_voxel(sim_opts *o)
{
    char msg[1024];
    int known;
    if (cli_voxel_resolve(&o->pages, &o->units.ome, &o->psf, o->truth, o->voxel, &known, msg,
                          sizeof msg))
        return cli_error("%s", msg);
    for (int i = 0; i < 3; i++)
        o->voxel[i] = isnan(o->voxel[i]) ? 0.0 : o->voxel[i];
    return 0;
}

/* What TRUTH is (a frame, a page of a stack, or a volume) and whether the
 * PSF suits it; all refusals come before anything is computed. */
static int decide_truth(sim_opts *o)
{
    char msg[1024];
    o->pages.read = o->read;
    if (cli_units_role(&o->pages, o->truth, &o->units, msg, sizeof msg))
        return cli_error("%s", msg);
    const cli_units *u = &o->units;
    o->psf_3d = cli_psf_is_3d(&o->psf);
    if (o->pages.plane >= 0) {
        o->read.page = (unsigned)o->pages.plane;
    } else if (u->role == 'z') {
        o->volume = 1;
    } else if (u->role) {
        return cli_error("%s: its %u pages are %s (%s); simulate takes one frame or one volume: "
                         "pick one page with --plane K (0 to %u)",
                         o->truth, u->pages, u->role == 't' ? "time points" : "channels",
                         u->from_ome      ? "OME metadata"
                         : u->role == 't' ? "--pages t"
                                          : "--pages c",
                         u->pages - 1);
    }
    if (o->volume && u->ome.present && u->ome.nz * u->ome.nc * u->ome.nt != u->ome.nz)
        return cli_error("%s: the OME metadata holds several volumes (SizeZ %zu, SizeC %zu, "
                         "SizeT %zu); simulate takes one volume (split the file by channel and "
                         "time point)",
                         o->truth, u->ome.nz, u->ome.nc, u->ome.nt);
    if (o->psf_3d && !o->volume)
        return cli_opt_error("psf",
                             "%s is a 3-D PSF, and TRUTH %s is one frame%s; a 3-D PSF blurs a "
                             "volume: give a z-stack TRUTH (a multi-page TIFF with --pages z) "
                             "or a 2-D PSF (gaussian without sigma_z, airy, or file: of one "
                             "bead image)",
                             o->psf_text, o->truth, o->pages.plane >= 0 ? " (--plane)" : "");
    return o->volume ? settle_voxel(o) : 0;
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
    if ((rc = lib(pp_psf_parse(o->psf_text, cli_flag_names, &o->psf))) != 0 ||
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
    if ((rc = cli_units_opts(&a, &o->pages)) != 0 || (rc = decide_truth(o)) != 0)
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

/* The z-slices of TRUTH as one volume, in z order (the OME metadata's page
 * order when present). */
static pp_status read_volume(const sim_opts *o, pp_image **out)
{
    pp_stack *stk = NULL;
    pp_status st = pp_stack_read(o->truth, &o->read, &stk, NULL);
    if (st != PP_OK)
        return st;
    size_t nz = stk->shape.n[0], ny = stk->shape.n[1], nx = stk->shape.n[2];
    if ((st = pp_image_create3(nz, ny, nx, out)) == PP_OK)
        for (size_t z = 0; z < nz; z++) {
            size_t page = o->units.ome.present ? pp_ome_page(&o->units.ome, z, 0, 0) : z;
            memcpy((*out)->data + z * ny * nx, stk->data + page * ny * nx,
                   ny * nx * sizeof *stk->data);
        }
    pp_stack_free(stk);
    return st;
}

/* A volume's PSF: a 3-D kernel (pp_psf_make3, sum 1 over the volume), or a
 * 2-D one made and normalised as `pixpost psf` does, which blurs each
 * slice on its own. The model refuses what does not fit the boundary. */
static pp_status make_volume_psf(const sim_opts *o, pp_image **out)
{
    if (!o->psf_3d) {
        pp_status st = pp_psf_make(&o->psf, 0, out);
        return st == PP_OK ? pp_psf_check(*out, (*out)->height, (*out)->width) : st;
    }
    pp_shape ks;
    double *k = NULL;
    pp_status st = pp_psf_make3(&o->psf, 0, 0, &ks, &k);
    if (st == PP_OK && (st = pp_image_create3(ks.n[0], ks.n[1], ks.n[2], out)) == PP_OK)
        memcpy((*out)->data, k, ks.n[0] * ks.n[1] * ks.n[2] * sizeof *k);
    free(k);
    return st;
}

static pp_status simulate_volume(const sim_opts *o)
{
    pp_image *truth = NULL, *psf = NULL, *y = NULL;
    pp_status st = read_volume(o, &truth);
    if (st == PP_OK)
        st = make_volume_psf(o, &psf);
    if (st == PP_OK)
        st = pp_model_simulate(truth, psf, o->boundary, &o->noise, o->seed, cli_flag_names, &y);
    pp_shape shape = y ? pp_image_shape(y) : pp_shape_2d(1, 1);
    if (st == PP_OK)
        st = pp_ome_tiff_write_f32(o->out, &shape, y->data, o->voxel, "pixpost simulate");
    if (st == PP_OK && !o->quiet) {
        char v[3][32];
        for (int i = 0; i < 3; i++)
            if (o->voxel[i] > 0)
                snprintf(v[i], sizeof v[i], "%g", o->voxel[i]);
            else
                strcpy(v[i], "unknown");
        char k[64];
        if (psf->depth > 1)
            snprintf(k, sizeof k, "%zu slices of %zux%zu", psf->depth, psf->width, psf->height);
        else
            snprintf(k, sizeof k, "%zux%zu on each slice", psf->width, psf->height);
        printf("wrote %s (%zu slices of %zux%zu, psf %s, noise %s, boundary %s, seed %llu, "
               "voxel z,y,x %s,%s,%s um)\n",
               o->out, y->depth, y->width, y->height, k, o->noise_text,
               pp_boundary_name(o->boundary), (unsigned long long)o->seed, v[0], v[1], v[2]);
    }
    pp_image_free(truth);
    pp_image_free(psf);
    pp_image_free(y);
    return st;
}

static pp_status simulate(const sim_opts *o)
{
    if (o->volume)
        return simulate_volume(o);
    pp_image *truth = NULL, *psf = NULL, *y = NULL;
    pp_status st = pp_image_read(o->truth, &o->read, &truth, NULL);
    if (st == PP_OK)
        st = pp_psf_make(&o->psf, 0, &psf);
    if (st == PP_OK)
        st = pp_psf_check(psf, truth->height, truth->width);
    if (st == PP_OK)
        st = pp_model_simulate(truth, psf, o->boundary, &o->noise, o->seed, cli_flag_names, &y);
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
