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
 * sampler's), and the parsers of a setting's text (pp_sampler_kind_parse,
 * pp_boundary_parse, pp_channel_parse, pp_noise_parse), and the frame
 * readers (pp_read_options.setting_names: the colour-frame refusal names
 * the channel setting).
 *
 * Not yet converted (they still name a command-line flag to every
 * caller; each needs a names table passed to it, issue 18 step 0): the
 * spec parsers' messages ("--psf ..." in psf.c, psf3.c, psf_optics.c,
 * psf_widefield.c; "--prior ..." in prior.c),
 * pp_model_blur's and pp_model_add_noise's ("--boundary pad", "--noise
 * gaussian"), observed.c ("--keep-saturated"), the output folder's marker text
 * ("--overwrite", output.c) and the report's ("--boundary pad",
 * "--strict", "--iters auto" in report.c, report_checks.c,
 * output_report.c). A message names a setting only through pp_setting_name; no
 * text is rewritten afterwards.
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
    PP_SET_COUNT
} pp_setting;

/* The name of setting k: names[k] when names is not NULL and names[k] is
 * not NULL, else the library's word ("sampler", "chains", "burn-in",
 * "iterations", "thinning", "time cap", "iteration cap", "credible
 * level", "lambda hyperprior", "delta hyperprior", "prior", "PSF",
 * "boundary", "background", "noise model", "channel"); "setting" for k out of
 * range. names, when given, has PP_SET_COUNT entries. Static text or the
 * caller's. */
const char *pp_setting_name(const char *const *names, pp_setting k);

#endif
