/* pixpost — regions: an integer label image the size of the frame (0 = no
 * region) whose labels name groups of pixels (a nucleus, a spot, a cell).
 * A sampler given one (pp_sampler_config.regions) records, at every kept
 * draw, the total of the draw over each region (the draw itself, never a
 * conditional mean), so the posterior of any function of the totals is
 * exact Monte Carlo from the draws (pp_sampler_region_draws). This header
 * also summarises such per-draw series (mean, sd, equal-tailed credible
 * interval, and the diagnostics of include/pixpost/diag.h) and writes
 * regions.csv.
 *
 * Cost: planning one pass over the labels plus a sort of the distinct
 * labels; summing a draw O(frame); summarising O(S log S) per series of S
 * draws (the diagnostics' sort and FFTs). */
#ifndef PIXPOST_REGIONS_H
#define PIXPOST_REGIONS_H

#include <stddef.h>
#include "pixpost/diag.h"
#include "pixpost/image.h"
#include "pixpost/status.h"

typedef struct pp_regions pp_regions;

/* Plans the regions of a label image for a frame of depth x height x width
 * (depth 1 for a 2-D frame). Every label must be a whole number >= 0 below
 * 2^31, finite; labels of 0 are no region; at least one pixel must carry a
 * label. Errors (PP_ERR_ARG, message naming the problem and the fix): a
 * size that differs from the frame's, a value that is not a whole number,
 * negative or too large, no labelled pixel; PP_ERR_NOMEM. */
pp_status pp_regions_plan(const pp_image *labels, size_t depth, size_t height, size_t width,
                          pp_regions **out);
void pp_regions_free(pp_regions *r);

/* Regions in increasing label order: their count, the label and pixel count
 * of region j, and the region holding a label (-1 when no pixel has it). */
size_t pp_regions_count(const pp_regions *r);
long pp_regions_label(const pp_regions *r, size_t j);
size_t pp_regions_pixels(const pp_regions *r, size_t j);
long pp_regions_find(const pp_regions *r, long label);
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

/* A comparison of two regions' means: labels a and b. */
typedef struct pp_region_pair {
    long a, b;
} pp_region_pair;

/* Writes regions.csv (path): for every region its total and mean, for every
 * pair the difference and ratio of the means and P(mean_a > mean_b), from
 * the draws' totals: totals[(c * cap + i) * stride + j] for chain c < chains,
 * kept draw i < kept, region j (pp_sampler_region_draws). Columns and rows
 * are documented in README ("Regions, profiles and probability maps").
 * Written atomically. Errors: PP_ERR_ARG (a pair's label absent, fewer
 * than 2 draws), PP_ERR_IO, PP_ERR_NOMEM. */
pp_status pp_regions_write_csv(const char *path, const pp_regions *r, const double *totals,
                               size_t chains, size_t kept, size_t cap, size_t stride,
                               double level,
                               const pp_region_pair *pairs, size_t npairs);

#endif
