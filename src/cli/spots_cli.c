/* pixpost command line — --spots R: the candidate spots planned from the
 * input frame before sampling (its 3 x 3 box mean is the pilot, so the
 * candidates never depend on the draws that judge them;
 * src/pixpost/spots.h), recorded at every kept draw, and
 * OUTDIR/spots.csv written after the run. Frames only. Cost: O(frame x
 * ring) to plan; the summaries' O(S log S) per spot at the end. */
#include "cli.h"
#include "pixpost/spots.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

int cli_spots_parse(const cli_args *a, cli_sample_opts *o)
{
    o->spots_radius = 0;
    return cli_get_double(a, "spots", 1, 50, 0, &o->spots_radius) ? CLI_EXIT_USAGE : 0;
}

int cli_spots_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->spots = NULL;
    if (!(o->spots_radius > 0))
        return 0;
    if (frame->depth > 1) {
        snprintf(r->message, sizeof r->message,
                 "--spots: %s is a volume; spots are for frames (sample one slice with "
                 "--plane K)", r->frame);
        return CLI_EXIT_USAGE;
    }
    size_t h = frame->height, w = frame->width;
    pp_image *pilot = NULL;
    if (pp_image_create(h, w, &pilot) != PP_OK) {
        snprintf(r->message, sizeof r->message, "--spots: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    for (size_t y = 0; y < h; y++) /* the 3 x 3 box mean of the observed pixels */
        for (size_t x = 0; x < w; x++) {
            double s = 0;
            int n = 0;
            for (size_t yy = y ? y - 1 : 0; yy <= y + 1 && yy < h; yy++)
                for (size_t xx = x ? x - 1 : 0; xx <= x + 1 && xx < w; xx++) {
                    double v = frame->data[yy * w + xx];
                    if (isfinite(v))
                        s += v, n++;
                }
            pilot->data[y * w + x] = isfinite(frame->data[y * w + x]) && n ? s / n : NAN;
        }
    pp_status st = pp_spots_plan(pilot, o->spots_radius, &r->spots);
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
