/* pixpost command line — --profile r0,c0,r1,c1 on a frame, or
 * z0,r0,c0,z1,r1,c1 on a volume (repeatable): the lines parsed, planned
 * against the image (src/pixpost/profiles.h) and
 * OUTDIR/profile_<k>.csv written from the values the sampler recorded at
 * every kept draw. Cost: O(points) to plan; the summaries' O(S log S) per
 * point at the end. */
#include "cli.h"
#include "pixpost/profiles.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

int cli_profiles_parse(const cli_args *a, cli_sample_opts *o)
{
    const char *v[CLI_MAX_REPEAT + 1];
    o->nprofiles = cli_strs(a, "profile", v, CLI_MAX_REPEAT + 1);
    for (size_t k = 0; k < o->nprofiles; k++) {
        const char *p = v[k];
        double x[6];
        int n = 0;
        for (;;) {
            char *end;
            x[n] = strtod(p, &end);
            if (end == p || !isfinite(x[n]) || (*end != ',' && *end != '\0') || ++n > 6 ||
                (*end == ',' && n == 6))
                return cli_opt_error("profile",
                                     "'%s' is not accepted (expected --profile r0,c0,r1,c1 on a "
                                     "frame, the two ends' row and column from 0, e.g. "
                                     "10,5,10,60; or z0,r0,c0,z1,r1,c1 on a volume, slices "
                                     "from 0)",
                                     v[k]);
            if (*end == '\0')
                break;
            p = end + 1;
        }
        if (n != 4 && n != 6)
            return cli_opt_error("profile",
                                 "'%s' has %d numbers (expected four, r0,c0,r1,c1, on a frame; "
                                 "six, z0,r0,c0,z1,r1,c1, on a volume)",
                                 v[k], n);
        double *l = o->profile_lines + 6 * k;
        o->profile_3d[k] = n == 6;
        if (n == 6)
            for (int e = 0; e < 6; e++)
                l[e] = x[e];
        else
            l[0] = 0, l[1] = x[0], l[2] = x[1], l[3] = 0, l[4] = x[2], l[5] = x[3];
    }
    return 0;
}

int cli_profiles_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->profiles = NULL;
    if (!o->nprofiles)
        return 0;
    int vol = frame->depth > 1;
    for (size_t k = 0; k < o->nprofiles; k++)
        if (o->profile_3d[k] != vol) {
            const double *l = o->profile_lines + 6 * k;
            if (vol)
                snprintf(r->message, sizeof r->message,
                         "--profile %g,%g,%g,%g: %s is a volume of %zu slices; give the ends' "
                         "slices too, z0,r0,c0,z1,r1,c1 (slices from 0)",
                         l[1], l[2], l[4], l[5], r->frame, frame->depth);
            else
                snprintf(r->message, sizeof r->message,
                         "--profile %g,%g,%g,%g,%g,%g: %s is a frame; give r0,c0,r1,c1 (four "
                         "numbers, no slices)",
                         l[0], l[1], l[2], l[3], l[4], l[5], r->frame);
            return CLI_EXIT_USAGE;
        }
    pp_status st = pp_profiles_plan(o->profile_lines, o->nprofiles, frame->depth, frame->height,
                                    frame->width, r->voxel_um, &r->profiles);
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "--profile: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}

int cli_profiles_write(cli_frame_run *r)
{
    if (!r->profiles)
        return 0;
    size_t cap, stride;
    const double *v = pp_sampler_region_draws(r->sampler, &cap, &stride);
    const pp_trace *tr = pp_sampler_trace(r->sampler);
    size_t offset = r->regions ? pp_regions_count(r->regions) : 0; /* after the region totals */
    double level = pp_sampler_config_used(r->sampler)->level;
    for (size_t k = 0; k < pp_profiles_lines(r->profiles); k++) {
        pp_status st = pp_profiles_write_csv(r->outdir, r->profiles, k, v, tr->chains, tr->kept,
                                             cap, stride, offset, level);
        if (st != PP_OK) {
            snprintf(r->message, sizeof r->message, "%s", pp_error_message());
            return CLI_EXIT_USAGE;
        }
    }
    return 0;
}
