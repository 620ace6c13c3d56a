/* pixpost command line — --profile r0,c0,r1,c1 (repeatable): the lines
 * parsed, planned against the frame (src/pixpost/profiles.h; frames
 * only) and OUTDIR/profile_<k>.csv written from the values the sampler
 * recorded at every kept draw. Cost: O(points) to plan; the summaries'
 * O(S log S) per point at the end. */
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
        for (int e = 0; e < 4; e++) {
            char *end;
            double x = strtod(p, &end);
            if (end == p || !isfinite(x) || *end != (e < 3 ? ',' : '\0'))
                return cli_opt_error("profile",
                                     "'%s' is not accepted (expected --profile r0,c0,r1,c1: "
                                     "the two ends' row and column, from 0, e.g. 10,5,10,60)",
                                     v[k]);
            o->profile_lines[4 * k + e] = x;
            p = end + 1;
        }
    }
    return 0;
}

int cli_profiles_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->profiles = NULL;
    if (!o->nprofiles)
        return 0;
    if (frame->depth > 1) {
        snprintf(r->message, sizeof r->message,
                 "--profile: %s is a volume; profiles are for frames (sample one slice with "
                 "--plane K)", r->frame);
        return CLI_EXIT_USAGE;
    }
    pp_status st = pp_profiles_plan(o->profile_lines, o->nprofiles, frame->height, frame->width,
                                    &r->profiles);
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
