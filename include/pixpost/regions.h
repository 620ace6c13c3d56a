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
#include "pixpost/image.h"
#include "pixpost/status.h"

typedef struct pp_regions pp_regions;

/* Plans the regions of a label image for a frame of depth x height x width
 * (depth 1 for a 2-D frame). Every label must be a whole number >= 0 below
 * 2^31, finite; labels of 0 are no region; at least one pixel must carry a
 * label. labels and out: not NULL; labels is read, not kept. *out
 * receives new regions owned by the caller (pp_regions_free), NULL on
 * failure. Errors (PP_ERR_ARG, message naming the problem and the fix): a
 * size that differs from the frame's, a value that is not a whole number,
 * negative or too large, no labelled pixel; PP_ERR_NOMEM. Thread-safe. A
 * plan is read only once made: several samplers may share it. */
pp_status pp_regions_plan(const pp_image *labels, size_t depth, size_t height, size_t width,
                          pp_regions **out);
/* Frees r; r may be NULL. Not while a sampler created with it has yet to
 * return from pp_sampler_run. */
void pp_regions_free(pp_regions *r);

/* Regions in increasing label order: their count, the label and pixel count
 * of region j (j < count: not checked), and the region holding a label
 * (-1 when no pixel has it). r: not NULL. Never fail; read only
 * (thread-safe). */
size_t pp_regions_count(const pp_regions *r);
long pp_regions_label(const pp_regions *r, size_t j);
size_t pp_regions_pixels(const pp_regions *r, size_t j);
long pp_regions_find(const pp_regions *r, long label);
/* A comparison of two regions' means: labels a and b. */
typedef struct pp_region_pair {
    long a, b;
} pp_region_pair;

/* Writes regions.csv (path): for every region its total and mean, for every
 * pair the difference and ratio of the means and P(mean_a > mean_b), from
 * the draws' totals: totals[(c * cap + i) * stride + j] for chain c < chains,
 * kept draw i < kept, region j (pp_sampler_region_draws). Columns and rows
 * are documented in README ("Regions, profiles and probability maps").
 * Written atomically (a temporary file in path's folder renamed over
 * path). path, r, totals: not NULL; pairs may be NULL when npairs is 0.
 * Errors, the message naming path or the label: PP_ERR_ARG (a pair's label
 * absent, fewer than 2 draws), PP_ERR_IO (cannot write; no partial file
 * is left), PP_ERR_NOMEM. Thread-safe for different paths. */
pp_status pp_regions_write_csv(const char *path, const pp_regions *r, const double *totals,
                               size_t chains, size_t kept, size_t cap, size_t stride,
                               double level,
                               const pp_region_pair *pairs, size_t npairs);

#endif
