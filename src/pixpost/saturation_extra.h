/* pixpost — the names of the saturation rules.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/saturation.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_SATURATION_EXTRA_H
#define PIXPOST_SATURATION_EXTRA_H

#include "pixpost/saturation.h"

/* A short name of the rule: "format maximum", "flat top", "none". */
const char *pp_sat_rule_name(pp_sat_rule r);

#endif
