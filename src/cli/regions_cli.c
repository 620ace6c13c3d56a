/* pixpost command line — --regions FILE and --compare A/B: the label image
 * read and checked against the frame (one page for a frame, one page per
 * z-slice for a volume), and OUTDIR/regions.csv written from the region
 * totals the sampler recorded at every kept draw
 * (include/pixpost/regions.h). Cost: one read of the labels, and the
 * summaries' O(S log S) per row at the end. */
#include "cli.h"
#include "pixpost/stack.h"
#include "pixpost/sampler_extra.h"
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int regions_fail(cli_frame_run *r, const char *fmt, const char *a, const char *b)
{
    snprintf(r->message, sizeof r->message, fmt, a, b);
    return CLI_EXIT_USAGE;
}

/* A label of --compare: a whole number >= 1 (0 is no region). */
static int parse_label(const char *p, const char **end, long *out)
{
    if (*p < '0' || *p > '9')
        return -1;
    errno = 0;
    char *e;
    long v = strtol(p, &e, 10);
    if (errno || v < 1)
        return -1;
    *end = e;
    *out = v;
    return 0;
}

int cli_regions_parse(const cli_args *a, cli_sample_opts *o)
{
    o->regions = cli_str(a, "regions");
    if (o->regions && !o->regions[0])
        return cli_opt_error("regions", "empty file name (expected --regions FILE)");
    const char *v[CLI_MAX_REPEAT + 1];
    o->ncompare = cli_strs(a, "compare", v, CLI_MAX_REPEAT + 1);
    if (o->ncompare && !o->regions)
        return cli_opt_error("compare", "needs --regions FILE (the label image whose labels "
                                        "it compares)");
    for (size_t k = 0; k < o->ncompare; k++) {
        const char *e;
        long x, y;
        if (parse_label(v[k], &e, &x) || *e != '/' || parse_label(e + 1, &e, &y) || *e)
            return cli_opt_error("compare",
                                 "'%s' is not accepted (expected --compare A/B, two labels "
                                 "of the label image, whole numbers >= 1, e.g. 3/7)",
                                 v[k]);
        if (x == y)
            return cli_opt_error("compare", "'%s' compares a region with itself (give two "
                                            "different labels)", v[k]);
        o->compare[k] = (pp_region_pair){x, y};
    }
    return 0;
}

int cli_regions_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->regions = NULL;
    if (!o->regions)
        return 0;
    pp_read_options ro;
    cli_read_defaults(&ro);
    pp_stack *m = NULL;
    pp_status st = pp_stack_read(o->regions, &ro, &m, NULL);
    if (st != PP_OK)
        return regions_fail(r,
                            "--regions %s: cannot be read (%s); give a one-channel PNG or TIFF "
                            "of whole-number labels of the frame's size, 0 = no region",
                            o->regions, pp_error_message());
    const pp_shape *sh = &m->shape;
    size_t pages = sh->rank == 3 ? sh->n[0] : 1, h = sh->n[sh->rank - 2], w = sh->n[sh->rank - 1];
    if (pages != frame->depth || h != frame->height || w != frame->width) {
        char dims[256], of[96];
        if (frame->depth > 1)
            snprintf(of, sizeof of, "%zu z-slices of %zux%zu", frame->depth, frame->width,
                     frame->height);
        else
            snprintf(of, sizeof of, "%zux%zu", frame->width, frame->height);
        snprintf(dims, sizeof dims, "%zu page%s of %zux%zu pixels but the %s %s is %s", pages,
                 pages == 1 ? "" : "s", w, h, frame->depth > 1 ? "volume" : "frame", r->frame, of);
        pp_stack_free(m);
        return regions_fail(r, "--regions %s: %s; give labels of the frame's size (a volume: "
                               "one page per z-slice)", o->regions, dims);
    }
    pp_image img = {.width = frame->width, .height = frame->height, .data = m->data,
                    .depth = frame->depth};
    st = pp_regions_plan(&img, frame->depth, frame->height, frame->width, &r->regions);
    pp_stack_free(m);
    if (st != PP_OK)
        return regions_fail(r, "--regions %s: %s", o->regions, pp_error_message());
    for (size_t k = 0; k < o->ncompare; k++)
        for (int e = 0; e < 2; e++) {
            long lab = e ? o->compare[k].b : o->compare[k].a;
            if (pp_regions_find(r->regions, lab) < 0) {
                char what[128];
                snprintf(what, sizeof what, "%ld/%ld: no pixel of %s has the label %ld",
                         o->compare[k].a, o->compare[k].b, o->regions, lab);
                pp_regions_free(r->regions);
                r->regions = NULL;
                return regions_fail(r, "--compare %s; compare labels present in %s", what,
                                    o->regions);
            }
        }
    return 0;
}

int cli_regions_write(const cli_sample_opts *o, cli_frame_run *r)
{
    if (!r->regions)
        return 0;
    size_t cap, stride;
    const double *t = pp_sampler_region_draws(r->sampler, &cap, &stride);
    const pp_trace *tr = pp_sampler_trace(r->sampler);
    char path[4096];
    snprintf(path, sizeof path, "%s/regions.csv", r->outdir);
    pp_status st = pp_regions_write_csv(path, r->regions, t, tr->chains, tr->kept, cap, stride,
                                        pp_sampler_config_used(r->sampler)->level, o->compare,
                                        o->ncompare);
    if (st != PP_OK)
        return regions_fail(r, "%s: regions.csv: %s", r->outdir, pp_error_message());
    return 0;
}
