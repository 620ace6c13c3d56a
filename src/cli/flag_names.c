/* pixpost command line — the flag that sets each of the sampler's settings,
 * so the library's messages about them name the flag (pp_sampler_config's
 * setting_names, include/pixpost/setting.h). The one table of them. */
#include "cli.h"

const char *const cli_flag_names[PP_SET_COUNT] = {
    [PP_SET_SAMPLER] = "--sampler",
    [PP_SET_CHAINS] = "--chains",
    [PP_SET_BURN] = "--burn",
    [PP_SET_ITERS] = "--iters",
    [PP_SET_THIN] = "--thin",
    [PP_SET_MAX_SECONDS] = "--max-time",
    [PP_SET_MAX_ITERS] = "--max-iters",
    [PP_SET_LEVEL] = "--level",
    [PP_SET_HYPER_LAMBDA] = "--hyper-lambda",
    [PP_SET_HYPER_DELTA] = "--hyper-delta",
    [PP_SET_PRIOR] = "--prior",
    [PP_SET_PSF] = "--psf",
    [PP_SET_BOUNDARY] = "--boundary",
    [PP_SET_BACKGROUND] = "--background",
    [PP_SET_NOISE] = "--noise",
    [PP_SET_CHANNEL] = "--channel",
    [PP_SET_KEEP_SATURATED] = "--keep-saturated",
    [PP_SET_STRICT] = "--strict",
};

void cli_read_defaults(pp_read_options *o)
{
    pp_read_options_defaults(o);
    o->setting_names = cli_flag_names;
}
