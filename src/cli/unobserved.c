/* pixpost command line — the pixels of a frame that are not data: --mask
 * FILE (nonzero = ignore the pixel) and the saturated pixels the library
 * finds (pixpost/saturation.h). Both become NaN, which the sampler treats as
 * unobserved (pixpost/sampler.h, pp_sampler_create); the saturated ones are
 * also marked censored (known to be at least the level) unless
 * --saturated-missing. For a volume the mask
 * is one page of the slice's size (the same pixels in every z-slice, e.g.
 * a camera's defects) or one page per z-slice. Cost: one read of the mask
 * and a few passes over the frame. */
#include "cli.h"
#include "pixpost/stack.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int mask_fail(cli_frame_run *r, const char *fmt, const char *a, const char *b)
{
    snprintf(r->message, sizeof r->message, fmt, a, b);
    return CLI_EXIT_USAGE;
}

/* NaN where the mask is nonzero (NaN in a float mask counts as nonzero). */
static int apply_mask(const char *path, cli_frame_run *r, pp_image *frame)
{
    pp_read_options ro;
    cli_read_defaults(&ro);
    pp_stack *m = NULL;
    pp_status st = pp_stack_read(path, &ro, &m, NULL);
    if (st == PP_ERR_UNSUPPORTED && strstr(pp_error_message(), "colour"))
        return mask_fail(r,
                         "--mask %s: a colour image; save the mask as a one-channel "
                         "(grayscale) PNG or TIFF, nonzero = ignore the pixel%s",
                         path, "");
    if (st != PP_OK)
        return mask_fail(r,
                         "--mask %s: cannot be read (%s); give a grayscale PNG or TIFF of "
                         "the frame's size, nonzero = ignore the pixel",
                         path, pp_error_message());
    const pp_shape *sh = &m->shape;
    size_t pages = sh->rank == 3 ? sh->n[0] : 1, h = sh->n[sh->rank - 2], w = sh->n[sh->rank - 1];
    size_t slice = frame->width * frame->height;
    char dims[256];
    if (frame->depth == 1 && (w != frame->width || h != frame->height || pages != 1)) {
        snprintf(dims, sizeof dims, "%zux%zu pixels%s but the frame %s is %zux%zu", w, h,
                 pages > 1 ? " in several pages" : "", r->frame, frame->width, frame->height);
        pp_stack_free(m);
        return mask_fail(r, "--mask %s: %s; give a one-page mask of the frame's size (width x "
                            "height)", path, dims);
    }
    if (w != frame->width || h != frame->height || (pages != 1 && pages != frame->depth)) {
        snprintf(dims, sizeof dims, "%zu page%s of %zux%zu pixels but the volume %s is %zu "
                 "z-slices of %zux%zu", pages, pages == 1 ? "" : "s", w, h, r->frame,
                 frame->depth, frame->width, frame->height);
        pp_stack_free(m);
        return mask_fail(r, "--mask %s: %s; give one page of the slice's size (the same pixels "
                            "in every slice) or one page per z-slice", path, dims);
    }
    size_t n = 0, count = pp_image_count(frame);
    for (size_t i = 0; i < count; i++)
        if (m->data[pages == 1 ? i % slice : i] != 0) {
            n += !isnan(frame->data[i]);
            frame->data[i] = NAN;
        }
    pp_stack_free(m);
    r->masked = n;
    return 0;
}

int cli_mark_unobserved(const cli_sample_opts *o, cli_frame_run *r, pp_image *frame)
{
    r->masked = 0;
    r->sat = (pp_saturation){PP_SAT_NONE, 0, 0, 0};
    if (o->mask) {
        int rc = apply_mask(o->mask, r, frame);
        if (rc)
            return rc;
    }
    if (!o->keep_saturated) {
        pp_saturation_find(frame, r->info.bits, r->info.is_float, &r->sat);
        size_t count = pp_image_count(frame);
        if (r->sat.count && !o->saturated_missing) { /* censored (masked ones are NaN) */
            if (!(r->censored = malloc(count))) {
                snprintf(r->message, sizeof r->message, "%s: out of memory marking %zu "
                         "saturated pixels", r->frame, r->sat.count);
                return CLI_EXIT_USAGE;
            }
            for (size_t i = 0; i < count; i++)
                r->censored[i] = frame->data[i] == r->sat.level;
        }
        pp_saturation_mark(frame, &r->sat);
    }
    return 0;
}

void cli_unobserved_line(const cli_frame_run *r, size_t npix, char *buf, size_t len)
{
    buf[0] = '\0';
    size_t used = 0;
    double pc = 100.0 / (double)(npix ? npix : 1);
    if (r->sat.count) {
        char why[96];
        if (r->sat.rule == PP_SAT_FORMAT_MAX)
            snprintf(why, sizeof why, "the %u-bit format's maximum", r->info.bits);
        else
            snprintf(why, sizeof why, "a flat top of the histogram");
        if (r->censored)
            used += (size_t)snprintf(buf, len,
                                     "%zu pixels (%.1f %%) are saturated at %.10g (%s); they are "
                                     "censored (their value is taken to be at least %.10g; "
                                     "--saturated-missing to treat them as missing, "
                                     "--keep-saturated to use them as data)",
                                     r->sat.count, pc * (double)r->sat.count, r->sat.level, why,
                                     r->sat.level);
        else
            used += (size_t)snprintf(buf, len,
                                     "%zu pixels (%.1f %%) are saturated at %.10g (%s); they are "
                                     "treated as missing (--keep-saturated to use them as data)",
                                     r->sat.count, pc * (double)r->sat.count, r->sat.level, why);
    }
    if (r->masked && used < len)
        snprintf(buf + used, len - used, "%s%zu pixels (%.1f %%) are masked (--mask)%s",
                 used ? "; " : "", r->masked, pc * (double)r->masked,
                 used ? "" : "; they are treated as unobserved");
}
