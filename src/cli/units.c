/* pixpost command line — what one input file holds: the frames and volumes
 * ("units") that `pixpost sample` runs for it. A single-page grayscale file
 * is one unit written into OUTDIR itself (as always). A multi-page TIFF's
 * pages are z-slices, time points or channels: its OME-XML says which when
 * present (src/pixpost/ome.h), --pages otherwise. z-slices are one
 * volume sampled as a whole into OUTDIR (with OME metadata of several
 * channels or time points, each channel's or time point's volume into
 * OUTDIR/c<k>/ or OUTDIR/t<k>/); time points go to OUTDIR/t<k>/, channels
 * to OUTDIR/c<k>/ with the k-th --psf; --plane K picks one page as a frame.
 * Channels and time points together (SizeC and SizeT > 1) are refused.
 * `--channel all` makes the R, G and B of a colour image three channels.
 * Also the options that say so (--pages, --plane, --voxel, --channel all),
 * the voxel size (OME metadata, else --voxel, else the PSF spec) and the
 * index OUTDIR/channels.json (or frames.json) written after all units
 * succeeded. Cost: reading the file's header and description (and page 0
 * once for --channel all); nothing on a hot path. */
#include "cli.h"
#include "pixpost/output.h"
#include "pixpost/stack.h"
#include "pixpost/io_extra.h"
#include "pixpost/output_extra.h"
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int cli_units_opts(const cli_args *a, cli_sample_opts *o)
{
    o->plane = -1;
    o->channel_all = cli_given(a, "channel") && strcmp(cli_str(a, "channel"), "all") == 0;
    const char *p = cli_str(a, "pages");
    if (p) {
        if (strcmp(p, "z") != 0 && strcmp(p, "t") != 0 && strcmp(p, "c") != 0)
            return cli_opt_error("pages",
                                 "'%s' is not accepted (expected --pages z, t or c: z-slices of "
                                 "one volume, time points or channels)",
                                 p);
        o->pages = p[0];
    }
    unsigned long plane = 0;
    int rc = cli_get_ulong(a, "plane", 0, 65535, &plane);
    rc = rc ? rc : cli_get_pair(a, "voxel", 0.0, o->voxel);
    if (rc)
        return rc;
    if (cli_given(a, "plane"))
        o->plane = (long)plane;
    if (cli_given(a, "voxel") && !(o->voxel[0] > 0 && o->voxel[1] > 0))
        return cli_opt_error("voxel",
                             "'%s': both sizes must be > 0 (expected --voxel XY,Z in "
                             "micrometres, e.g. 0.1,0.3)",
                             cli_str(a, "voxel"));
    if (o->channel_all && cli_given(a, "plane"))
        return cli_error("--channel all and --plane cannot be used together (--plane picks a "
                         "page of a multi-page TIFF; --channel all the colours of one image)");
    return 0;
}

static const char *role_words(char role)
{
    return role == 'z' ? "z-slices of one volume" : role == 't' ? "time points" : "channels";
}

/* The role the OME metadata gives the pages: 0 (one plane), 'z', 't', 'c'. */
static int ome_role(const pp_ome_meta *m, const char *frame, char *role, char *msg, size_t len)
{
    *role = 0;
    if (!m->present)
        return 0;
    if (m->nc > 1 && m->nt > 1)
        return cli_refuse(msg, len,
                    "%s: the OME metadata holds %zu channels at each of %zu time points; pixpost "
                    "takes channels or time points from one file, not both: split it into one "
                    "file per time point",
                    frame, m->nc, m->nt);
    if (m->nz > 1)
        *role = 'z';
    else if (m->nc > 1)
        *role = 'c';
    else if (m->nt > 1)
        *role = 't';
    return 0;
}

/* The role of the pages of frame: the OME metadata's, else given (--pages;
 * 0 when not given); a given role that the metadata contradicts is an
 * error naming both. */
static int decide_role(char given, const pp_ome_meta *m, unsigned pages, const char *frame,
                       char *role, int *from_ome, char *msg, size_t len)
{
    char ome;
    int rc = ome_role(m, frame, &ome, msg, len);
    if (rc)
        return rc;
    if (ome && given && given != ome)
        return cli_refuse(msg, len,
                    "%s: --pages %c conflicts with the file's OME metadata, which says its %u "
                    "pages are %s (SizeZ %zu, SizeC %zu, SizeT %zu); drop --pages",
                    frame, given, pages, role_words(ome), m->nz, m->nc, m->nt);
    *role = ome ? ome : pages > 1 ? given : 0;
    *from_ome = ome != 0;
    return 0;
}

/* The role of the pages: the OME metadata's, --pages, or an error. */
static int pick_role(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                     size_t len)
{
    int rc = decide_role(o->pages, &u->ome, u->pages, frame, &u->role, &u->from_ome, msg, len);
    if (rc)
        return rc;
    if (u->pages > 1 && !u->role && o->plane < 0)
        return cli_refuse(msg, len,
                    "%s: %u pages and no OME metadata saying what they are: give --pages z "
                    "(z-slices of one volume), --pages t (time points, each a frame) or --pages "
                    "c (channels, each with its own --psf), or --plane K for one page",
                    frame, u->pages);
    return 0;
}

int cli_units_batch_pages(const char *path, char given, size_t npsf, unsigned *frames,
                          char *kind, char *msg, size_t len)
{
    pp_ome_meta ome;
    unsigned pages;
    *frames = 1;
    *kind = 0;
    if (pp_stack_probe(path, &pages, &ome) != PP_OK)
        return cli_refuse(msg, len, "%s", pp_error_message());
    *frames = pages ? pages : 1;
    char role = 0;
    int from_ome = 0;
    int rc = decide_role(given, &ome, pages, path, &role, &from_ome, msg, len);
    if (rc)
        return rc;
    if (pages > 1 && !role)
        return cli_refuse(msg, len,
                    "%s: %u pages and no OME metadata saying what they are: give --pages t to "
                    "sample each page as a frame, --pages z to sample the file as one volume "
                    "or --pages c for channels",
                    path, pages);
    size_t nc = ome.present ? ome.nc : 1, nt = ome.present ? ome.nt : 1;
    if (role == 'z' && (nc > 1 || nt > 1))
        return cli_refuse(msg, len,
                    "%s: its %u pages are the z-slices of %zu %s (OME metadata); batch takes one "
                    "volume per file: run pixpost sample on the file (each into OUTDIR/%s<k>/)",
                    path, pages, nc > 1 ? nc : nt, nc > 1 ? "channels" : "time points",
                    nc > 1 ? "c" : "t");
    size_t channels = pages > 1 && role == 'c' ? pages : 1;
    if (npsf > 1 && npsf != channels)
        return cli_refuse(msg, len,
                    "%s: %zu channel%s (%s), and --psf gives %zu PSFs: in a batch with one PSF "
                    "per channel every file must have that many channels (or give one --psf)",
                    path, channels, channels == 1 ? "" : "s",
                    channels > 1 ? (from_ome ? "OME metadata" : "--pages c")
                                 : pages > 1 ? "its pages are not channels" : "one page",
                    npsf);
    if (pages > 1 && role == 'z')
        *frames = 1;
    if (pages > 1)
        *kind = role == 'z' ? 'z' : role == 'c' ? 'c' : 0;
    return 0;
}

static void add(cli_units *u, unsigned page, size_t psf, const char *sub, unsigned k)
{
    cli_unit *n = &u->unit[u->n++];
    memset(n, 0, sizeof *n);
    n->page = page;
    n->psf = psf < CLI_MAX_PSF ? psf : 0;
    if (sub)
        snprintf(n->sub, sizeof n->sub, "%s%u", sub, k);
}

/* --channel all: the frame must be one colour image. */
static int plan_colour(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                       size_t len)
{
    static const pp_channel rgb[3] = {PP_CHANNEL_R, PP_CHANNEL_G, PP_CHANNEL_B};
    if (u->pages > 1)
        return cli_refuse(msg, len,
                    "%s: --channel all takes a single-page colour image, and this file has %u "
                    "pages (use --pages c for channels stored as pages)",
                    frame, u->pages);
    pp_read_options ro = o->read;
    ro.channel = PP_CHANNEL_R;
    pp_image *img;
    pp_read_info info;
    pp_status st = pp_image_read(frame, &ro, &img, &info);
    if (st != PP_OK)
        return cli_refuse(msg, len, "%s", pp_error_message());
    pp_image_free(img);
    if (!info.was_colour)
        return cli_refuse(msg, len,
                    "%s: --channel all needs a colour (RGB) image, and this one is "
                    "grayscale; drop --channel",
                    frame);
    u->role = 'c';
    for (unsigned k = 0; k < 3; k++) {
        add(u, 0, o->npsf > 1 ? k : 0, "c", k);
        u->unit[k].channel_set = 1;
        u->unit[k].channel = rgb[k];
    }
    return 0;
}

/* The sampling a PSF spec is made for, {z, y, x} micrometres, 0 unknown. */
static void spec_voxel(const pp_psf_spec *p, double v[3])
{
    v[0] = v[1] = v[2] = 0;
    if (p && (p->kind == PP_PSF_WIDEFIELD || p->kind == PP_PSF_AIRY))
        v[1] = v[2] = p->pixel;
    if (p && p->kind == PP_PSF_WIDEFIELD)
        v[0] = p->step;
}

int cli_voxel_resolve(const cli_sample_opts *o, const pp_ome_meta *ome, const pp_psf_spec *psf,
                      const char *frame, double out[3], int *known, char *msg, size_t len)
{
    static const char *const axis[3] = {"z step", "y pixel size", "x pixel size"};
    static const char *const key[3] = {"step", "pixel", "pixel"};
    double given[3] = {o->voxel[1], o->voxel[0], o->voxel[0]}; /* --voxel XY,Z as z, y, x */
    double spec[3];
    spec_voxel(psf, spec);
    *known = 0;
    for (int i = 0; i < 3; i++) {
        double m = ome && ome->present ? ome->voxel[i] : 0.0, from = m > 0 ? m : given[i];
        if (from > 0 && spec[i] > 0 && fabs(spec[i] - from) > 1e-6 * from)
            return cli_refuse(msg, len,
                        "--psf: %s=%g, but %s has a %s of %g micrometres (%s); a PSF must be "
                        "made on the volume's grid: give %s=%g",
                        key[i], spec[i], frame, axis[i], from,
                        m > 0 ? "OME metadata" : "--voxel", key[i], from);
        out[i] = from > 0 ? from : spec[i] > 0 ? spec[i] : NAN;
        *known |= !isnan(out[i]);
    }
    return 0;
}

/* A volume per channel or time point of the metadata (one without them):
 * its z-slices as one unit; into OUTDIR itself when it is the only one. */
static int plan_volumes(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                        size_t len)
{
    size_t nc = u->ome.present ? u->ome.nc : 1, nt = u->ome.present ? u->ome.nt : 1;
    size_t n = nc > 1 ? nc : nt;
    if (n > CLI_MAX_UNITS)
        return cli_refuse(msg, len,
                    "%s: %zu volumes (one per %s) are more than the %d that sample takes; "
                    "split the file",
                    frame, n, nc > 1 ? "channel" : "time point", CLI_MAX_UNITS);
    u->role = nc > 1 ? 'c' : nt > 1 ? 't' : 0;
    for (size_t k = 0; k < n; k++) {
        add(u, 0, nc > 1 && o->npsf > 1 ? k : 0, u->role ? (nc > 1 ? "c" : "t") : NULL,
            (unsigned)k);
        u->unit[k].volume = 1;
        u->unit[k].c = nc > 1 ? (unsigned)k : 0;
        u->unit[k].t = nt > 1 ? (unsigned)k : 0;
    }
    return 0;
}

/* The units of a file whose role is known (pick_role or plan_colour done). */
static int plan_pages(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                      size_t len)
{
    if (o->plane >= 0) {
        if ((unsigned long)o->plane >= u->pages)
            return cli_refuse(msg, len,
                        "%s: --plane %ld asked for, but the file has %u page(s), counted from 0",
                        frame, o->plane, u->pages);
        u->role = 0;
        add(u, (unsigned)o->plane, 0, NULL, 0);
        return 0;
    }
    if (u->pages <= 1 || !u->role) {
        u->role = 0;
        add(u, 0, 0, NULL, 0);
        return 0;
    }
    if (u->role == 'z')
        return plan_volumes(o, frame, u, msg, len);
    if (u->pages > CLI_MAX_UNITS)
        return cli_refuse(msg, len,
                    "%s: %u %s are more than the %d that sample takes; use pixpost batch "
                    "--pages t (time points) or split the file",
                    frame, u->pages, role_words(u->role), CLI_MAX_UNITS);
    for (unsigned k = 0; k < u->pages; k++) {
        unsigned page = !u->ome.present  ? k
                        : u->role == 'c' ? (unsigned)pp_ome_page(&u->ome, 0, k, 0)
                                         : (unsigned)pp_ome_page(&u->ome, 0, 0, k);
        add(u, page, u->role == 'c' && o->npsf > 1 ? k : 0, u->role == 'c' ? "c" : "t", k);
    }
    return 0;
}

int cli_units_role(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg,
                   size_t len)
{
    memset(u, 0, sizeof *u);
    pp_status st = pp_stack_probe(frame, &u->pages, &u->ome);
    if (st != PP_OK)
        return cli_refuse(msg, len, "%s", pp_error_message());
    int rc = cli_voxel_resolve(o, &u->ome, NULL, frame, u->voxel, &u->have_voxel, msg, len);
    return rc ? rc : o->channel_all ? 0 : pick_role(o, frame, u, msg, len);
}

int cli_units_plan(const cli_sample_opts *o, const char *frame, cli_units *u, char *msg, size_t len)
{
    int rc = cli_units_role(o, frame, u, msg, len);
    if (!rc)
        rc = o->channel_all ? plan_colour(o, frame, u, msg, len) : plan_pages(o, frame, u, msg, len);
    if (rc)
        return rc;
    size_t channels = u->role == 'c' ? u->n : 1;
    if (o->npsf != 1 && o->npsf != channels && o->psf_texts[0] == o->psf_bufs[0])
        return cli_refuse(msg, len,
                    "--psf: wavelength= lists %zu wavelengths for %zu channel%s of %s: give one "
                    "wavelength per channel, in channel order",
                    o->npsf, channels, channels == 1 ? "" : "s", frame);
    if (o->npsf != 1 && o->npsf != channels)
        return cli_refuse(msg, len,
                    "--psf: given %zu times for %zu channel%s of %s: give one --psf per "
                    "channel, in channel order, or a single --psf for all",
                    o->npsf, channels, channels == 1 ? "" : "s", frame);
    /* the PSF spec's sampling counts for volumes only: a frame's summary.json
     * keeps the size the metadata or --voxel gave, as before volumes */
    for (size_t k = 0; u->n && u->unit[0].volume && k < o->npsf; k++) {
        double v[3];
        int known;
        if ((rc = cli_voxel_resolve(o, &u->ome, &o->psfs[k], frame, v, &known, msg, len)) != 0)
            return rc;
        if (k == 0) {
            memcpy(u->voxel, v, sizeof v);
            u->have_voxel = known;
        }
    }
    return 0;
}

/* The index of a multi-unit run: input, what the pages are and why, the
 * voxel size, and per unit its folder, page, PSF and verdict. */
int cli_units_write_index(const cli_sample_opts *o, const cli_units *u, const char *frame,
                          char *msg, size_t len)
{
    char path[4200], tmp[4300];
    snprintf(path, sizeof path, "%s/%s", o->outdir,
             u->role == 'c' ? "channels.json" : "frames.json");
    snprintf(tmp, sizeof tmp, "%s.part", path);
    FILE *f = fopen(tmp, "w");
    if (!f)
        return cli_refuse(msg, len, "%s: cannot write: %s", path, strerror(errno));
    static const char *const colour[] = {"r", "g", "b"};
    fputs("{\n  \"input\": ", f);
    pp_json_write_string(f, frame);
    fprintf(f, ",\n  \"pages_are\": \"%s\",\n  \"decided_by\": \"%s\",\n  \"voxel_um\": ",
            u->role == 'c' ? "channels" : "time points",
            o->channel_all ? "--channel all"
            : u->from_ome  ? "OME metadata"
                           : "--pages");
    if (u->have_voxel)
        pp_json_write_zyx(f, u->voxel);
    else
        fputs("null", f);
    fprintf(f, ",\n  \"%s\": [\n", u->role == 'c' ? "channels" : "frames");
    for (size_t k = 0; k < u->n; k++) {
        const cli_unit *n = &u->unit[k];
        if (n->volume) /* every page of its channel or time point: a volume */
            fprintf(f, "    {\"index\": %zu, \"folder\": \"%s\", \"page\": null, \"z_slices\": %zu, ",
                    k, n->sub, u->ome.nz);
        else
            fprintf(f, "    {\"index\": %zu, \"folder\": \"%s\", \"page\": %u, ", k, n->sub,
                    n->page);
        if (n->channel_set)
            fprintf(f, "\"colour\": \"%s\", ", colour[k % 3]);
        fputs("\"psf\": ", f);
        pp_json_write_string(f, o->psf_texts[n->psf]);
        fputs(", \"worst_rhat\": ", f);
        pp_json_write_number(f, n->rhat_max);
        fprintf(f, ", \"warnings\": %zu, \"verdict\": ", n->warnings);
        pp_json_write_string(f, n->verdict);
        fprintf(f, "}%s\n", k + 1 < u->n ? "," : "");
    }
    fputs("  ]\n}\n", f);
    int bad = ferror(f) | (fclose(f) != 0);
    if (bad || rename(tmp, path) != 0) {
        remove(tmp);
        return cli_refuse(msg, len, "%s: cannot write: %s", path, strerror(errno));
    }
    return 0;
}

int cli_psf_is_3d(const pp_psf_spec *spec)
{
    unsigned pages = 0;
    if (spec->kind == PP_PSF_FILE)
        return pp_tiff_count_pages(spec->path, &pages) == PP_OK && pages > 1;
    return pp_psf_is_3d(spec);
}
