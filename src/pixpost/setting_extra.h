/* pixpost — the words of the settings in messages.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/setting.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_SETTING_EXTRA_H
#define PIXPOST_SETTING_EXTRA_H

#include "pixpost/setting.h"

/* The name of setting k: names[k] when names is not NULL and names[k] is
 * not NULL, else the library's word ("sampler", "chains", "burn-in",
 * "iterations", "thinning", "time cap", "iteration cap", "credible
 * level", "lambda hyperprior", "delta hyperprior", "prior", "PSF",
 * "boundary", "background", "noise model", "channel", "keeping saturated
 * pixels", "strict exit status"); "setting" for k out of range. names,
 * when given, has PP_SET_COUNT entries. Static text or the caller's. */
const char *pp_setting_name(const char *const *names, pp_setting k);

#endif
