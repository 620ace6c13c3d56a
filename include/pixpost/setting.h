/* pixpost — names of the sampler's settings in its messages.
 *
 * An error or warning about a setting names it. The library's own words
 * name the setting itself ("thinning 0: must be between 1 and iterations
 * (1000)"); a program with its own names for them (the command line's
 * flags: "--thin", "--iters") gives a table in pp_sampler_config's
 * setting_names, and the same messages (also the warnings kept in the
 * results and summary.json) then use those names.
 *
 * The same table, passed as `names` (NULL: the library's words), serves
 * the checks of the data and of the fit: pp_datacheck_run's argument and
 * pp_ppcheck_input's setting_names (pp_ppcheck_sampler takes the
 * sampler's), the parsers of a setting's text (pp_sampler_kind_parse,
 * pp_boundary_parse, pp_channel_parse, pp_noise_parse, pp_psf_parse,
 * pp_prior_parse), the forward model (pp_model_blur, pp_model_add_noise,
 * pp_model_simulate), the frame readers (pp_read_options.setting_names:
 * the colour-frame refusal names the channel setting) and the report
 * (pp_report_input.setting_names; the output writers pass the result's
 * config.setting_names, so a command line's report.html says "--boundary
 * pad", "--iters auto", "--strict", and a library caller's "boundary pad",
 * "automatic" and nothing about an exit status).
 *
 * Kept in the library's word "PSF", with no names argument: the refusals
 * of an already parsed spec when a kernel is made or refilled
 * (pp_psf_make, pp_psf_make3, pp_psf_fill; their size and depth arguments
 * are named as such). The output folder's marker text (output.c) names
 * "--overwrite" on purpose: it says what the pixpost command does with the
 * folder, whoever wrote it. A message names a setting only through this
 * table; no text is rewritten afterwards.
 */
#ifndef PIXPOST_SETTING_H
#define PIXPOST_SETTING_H

typedef enum pp_setting {
    PP_SET_SAMPLER = 0, /* cfg.kind */
    PP_SET_CHAINS,      /* cfg.chains */
    PP_SET_BURN,        /* cfg.burn */
    PP_SET_ITERS,       /* cfg.iters */
    PP_SET_THIN,        /* cfg.thin */
    PP_SET_MAX_SECONDS, /* cfg.max_seconds */
    PP_SET_MAX_ITERS,   /* cfg.max_iters */
    PP_SET_LEVEL,       /* cfg.level */
    PP_SET_HYPER_LAMBDA, /* cfg.hyper_lambda */
    PP_SET_HYPER_DELTA,  /* cfg.hyper_delta */
    PP_SET_PRIOR,       /* cfg.prior */
    PP_SET_PSF,         /* cfg.psf */
    PP_SET_BOUNDARY,    /* cfg.boundary */
    PP_SET_BACKGROUND,  /* cfg.background */
    PP_SET_NOISE,       /* cfg.noise (also pp_datacheck_run, pp_ppcheck_input) */
    PP_SET_CHANNEL,     /* pp_read_options.channel (pp_channel_parse) */

    /* Choices of the caller that the library's texts mention but that have
     * no field in the library; a text names them only when the caller's
     * table does (names[k] not NULL), and otherwise says what they mean.
     * KEEP_SATURATED: saturated pixels kept as data (the caller skips
     * pp_saturation_mark), in pp_sampler_create's refusal of a frame with
     * too few observed pixels. STRICT: an unconverged run fails the
     * caller's exit status, in the report's checks section. */
    PP_SET_KEEP_SATURATED,
    PP_SET_STRICT,
    PP_SET_COUNT
} pp_setting;

#endif
