/* pixpost — the report of a sample run (src/output_report.c), called by the
 * output writer (src/output.c); not installed. */
#ifndef PIXPOST_OUTPUT_REPORT_H
#define PIXPOST_OUTPUT_REPORT_H

#include "pixpost/image.h"
#include "pixpost/status.h"
#include "sampler_internal.h"

/* report.html of a finished run (src/output_report.c). */
struct pp_run_info;
pp_status pp_output_report(const char *path, const pp_sampler *s, const pp_image *frame,
                           const struct pp_run_info *info);

#endif
