/* pixpost — the library's words for the sampler's settings in messages,
 * or the caller's (include/pixpost/setting.h). */
#include "pixpost/setting.h"
#include "pixpost/setting_extra.h"

static const char *const own[PP_SET_COUNT] = {
    "sampler",  "chains",        "burn-in",         "iterations",        "thinning",
    "time cap", "iteration cap", "credible level", "lambda hyperprior", "delta hyperprior",
    "prior",    "PSF",           "boundary",        "background",
    "noise model", "channel", "keeping saturated pixels", "strict exit status"};

const char *pp_setting_name(const char *const *names, pp_setting k)
{
    if ((unsigned)k >= PP_SET_COUNT)
        return "setting";
    return names && names[k] ? names[k] : own[k];
}
