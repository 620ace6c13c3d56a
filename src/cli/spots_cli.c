/* pixpost command line — --spots R[,RZ]: the candidate spots planned from
 * the input frame or volume before sampling (its 3 x 3 (x 3) box mean is
 * the pilot, so the candidates never depend on the draws that judge them;
 * include/pixpost/spots.h), recorded at every kept draw, and
 * OUTDIR/spots.csv written after the run. On a volume the ring is a shell
 * of lateral radius R (pixels) and axial radius RZ (slices; default R x
 * pixel / z-step when the voxel size is known, else R). Cost: O(image x
 * ring) to plan; the summaries' O(S log S) per spot at the end. */
#include "cli.h"
#include "pixpost/spots.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

int cli_spots_parse(const cli_args *a, cli_sample_opts *o)
{
    o->spots_radius = 0;
    o->spots_radius_z = 0;
    const char *v = cli_str(a, "spots");
    if (!v)
        return 0;
    char *end;
    double r = strtod(v, &end), rz = 0;
    int ok = end != v && r >= 1 && r <= 50;
    if (ok && *end == ',') {
        const char *p = end + 1;
        rz = strtod(p, &end);
        ok = end != p && rz >= 1 && rz <= 50;
    }
    if (!ok || *end != '\0')
        return cli_opt_error("spots",
                             "'%s' is not accepted (expected R, the ring's radius in pixels, 1 "
                             "to 50, about the PSF's width or the spot's size, e.g. 3; on a "
                             "volume optionally R,RZ with RZ the axial radius in slices, 1 to 50)",
                             v);
    o->spots_radius = r;
    o->spots_radius_z = rz;
    return 0;
}

/* The pilot: the box mean (3 x 3, or 3 x 3 x 3 on a volume) of the observed
 * pixels, NaN at the unobserved ones. */
static pp_image *pilot_of(const pp_image *frame)
{
    size_t d = frame->depth, h = frame->height, w = frame->width;
    pp_image *pilot = NULL;
    if (pp_image_create3(d, h, w, &pilot) != PP_OK)
        return NULL;
    for (size_t z = 0; z < d; z++)
        for (size_t y = 0; y < h; y++)
            for (size_t x = 0; x < w; x++) {
                double s = 0;
                int n = 0;
                for (size_t zz = z ? z - 1 : 0; zz <= z + 1 && zz < d; zz++)
                    for (size_t yy = y ? y - 1 : 0; yy <= y + 1 && yy < h; yy++)
                        for (size_t xx = x ? x - 1 : 0; xx <= x + 1 && xx < w; xx++) {
                            double v = frame->data[(zz * h + yy) * w + xx];
                            if (isfinite(v))
                                s += v, n++;
                        }
                size_t i = (z * h + y) * w + x;
                pilot->data[i] = isfinite(frame->data[i]) && n ? s / n : NAN;
            }
    return pilot;
}

int cli_spots_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->spots = NULL;
    if (!(o->spots_radius > 0))
        return 0;
    double rz = o->spots_radius_z;
    if (frame->depth > 1 && !(rz > 0)) { /* a sphere in um, or in voxels when not known */
        const double *v = r->voxel_um;
        rz = v && v[0] > 0 && v[2] > 0 ? o->spots_radius * v[2] / v[0] : o->spots_radius;
        rz = rz < 1 ? 1 : rz > 50 ? 50 : rz;
    }
    pp_image *pilot = pilot_of(frame);
    if (!pilot) {
        snprintf(r->message, sizeof r->message, "--spots: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    pp_status st = pp_spots_plan(pilot, o->spots_radius, rz, &r->spots);
    pp_image_free(pilot);
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "--spots: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}

int cli_spots_write(cli_frame_run *r)
{
    if (!r->spots)
        return 0;
    size_t cap, stride;
    const double *v = pp_sampler_region_draws(r->sampler, &cap, &stride);
    const pp_trace *tr = pp_sampler_trace(r->sampler);
    size_t offset = stride - pp_spots_count(r->spots); /* after regions and profiles */
    char path[4096];
    snprintf(path, sizeof path, "%s/spots.csv", r->outdir);
    pp_status st = pp_spots_write_csv(path, r->spots, pp_sampler_mean(r->sampler), v,
                                      tr->chains, tr->kept, cap, stride, offset,
                                      pp_sampler_config_used(r->sampler)->level);
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "%s: spots.csv: %s", r->outdir,
                 pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}
