/* pixpost — region sums and series summaries (the samplers', the report's, the tests').
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/regions.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_REGIONS_EXTRA_H
#define PIXPOST_REGIONS_EXTRA_H

#include <stddef.h>
#include "pixpost/diag.h"
#include "pixpost/regions.h"
#include "pixpost/status.h"

/* The region holding pixel i of the frame (i = (z * height + y) * width
 * + x), -1 when none. */
long pp_regions_at(const pp_regions *r, size_t i);
/* 1 when the regions were planned for a frame of depth x height x width. */
int pp_regions_fit(const pp_regions *r, size_t depth, size_t height, size_t width);

/* The total over each region of scale * f, f a field on a grid whose frame
 * box starts at the grid's origin (rows `row` apart, slices `slice` apart):
 * out[j] for j < pp_regions_count. */
void pp_regions_sum(const pp_regions *r, const double *f, size_t row, size_t slice, double scale,
                    double *out);

/* The posterior summary of one per-draw series x[c * n + i] (c < chains):
 * mean and sd (as pp_diag_compute), the equal-tailed credible interval at
 * level (the type-7 quantiles (1 - level)/2 and (1 + level)/2 of all draws)
 * and the diagnostics. */
typedef struct pp_series_summary {
    double mean, sd, lo, hi;
    pp_diag_scalar diag;
} pp_series_summary;
pp_status pp_series_summarise(const double *x, size_t chains, size_t n, double level,
                              pp_series_summary *out);

#endif
