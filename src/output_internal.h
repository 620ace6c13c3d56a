/* pixpost — the output writers' internals shared between their files (not
 * installed). */
#ifndef PIXPOST_OUTPUT_INTERNAL_H
#define PIXPOST_OUTPUT_INTERNAL_H

#include "pixpost/output.h"
#include "pixpost/result.h"

/* Writes report.html of the finished run r to path (atomically; src/report.c
 * draws it) from r, the frame and what the caller knows (info may be NULL). */
pp_status pp_output_report(const char *path, const pp_result *r, const pp_image *frame,
                           const pp_run_info *info);

#endif
