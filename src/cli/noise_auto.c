/* pixpost command line — `--noise auto`: the camera model estimated from
 * the frame itself by the single-frame fit (pp_noise_fit_frame, after Foi
 * et al. 2008) and turned into a spec by pp_noise_from_frame_fit (offset at
 * the darkest smooth level, read noise from the variance left there; plain
 * gaussian when the noise does not grow significantly with the signal).
 * Per frame, so batch estimates each frame on its own; a volume's slices
 * are pooled (the same camera took them all). The choice is
 * printed as a note (not under --quiet) and recorded in summary.json
 * ("noise_estimate") and the report. Cost: the fit, a few passes over the
 * frame.
 */
#include "cli.h"
#include <math.h>
#include <string.h>

/* The format's largest value for integer files (saturated pixels are left
 * out of the fit); none for float files. */
static double format_max(const pp_read_info *info)
{
    if (info->is_float || info->bits == 0 || info->bits > 32)
        return INFINITY;
    return ldexp(1.0, (int)info->bits) - 1;
}

int cli_noise_auto_run(const cli_sample_opts *o, const char *path, const pp_image *frame,
                       const pp_read_info *info, cli_noise_auto *na, char *msg, size_t len)
{
    memset(na, 0, sizeof *na);
    if (!o->noise_auto)
        return 0;
    na->used = 1;
    pp_frame_fit_config cfg;
    pp_frame_fit_defaults(&cfg);
    cfg.saturation = format_max(info);
    pp_status st = pp_noise_fit_frame(frame, &cfg, &na->fit);
    if (st != PP_OK) {
        snprintf(msg, len, "%s: --noise auto: %s (or give --noise gaussian or camera:...)", path,
                 pp_error_message());
        return CLI_EXIT_USAGE;
    }
    na->camera = pp_noise_from_frame_fit(&na->fit, &na->spec);
    pp_noise_round(&na->spec);
    pp_noise_format(&na->spec, na->noise_text, sizeof na->noise_text);
    na->prior_text[0] = '\0';
    if (na->camera && !o->prior_given) { /* the library's default for the chosen model */
        na->prior.kind = PP_PRIOR_DEFAULT;
        pp_prior_resolve(&na->prior, &na->spec);
        pp_prior_format(&na->prior, na->prior_text, sizeof na->prior_text);
    }
    const pp_noise_fit *f = &na->fit;
    const char *what = frame->depth > 1 ? "volume (its slices pooled)" : "frame";
    if (na->camera)
        snprintf(na->note, sizeof na->note,
                 "--noise auto: %s from the %s (gain 95 %% interval %.4g to %.4g ADU per "
                 "electron; offset at the darkest smooth level and read noise from the "
                 "variance there: one frame cannot separate them)",
                 na->noise_text, what, f->a - 1.96 * f->a_se, f->a + 1.96 * f->a_se);
    else
        snprintf(na->note, sizeof na->note,
                 "--noise auto: the %s shows no significant signal-dependent noise (slope "
                 "%.3g, se %.2g, below 3 standard errors); using gaussian",
                 what, f->a, f->a_se);
    if (!o->quiet)
        fprintf(stderr, "pixpost: %s: %s\n", path, na->note);
    return 0;
}

void cli_noise_auto_apply(const cli_noise_auto *na, pp_sampler_config *cfg)
{
    if (!na->used)
        return;
    cfg->noise = na->spec;
    if (na->prior_text[0])
        cfg->prior = na->prior;
}
