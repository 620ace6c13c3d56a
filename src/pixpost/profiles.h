/* pixpost — intensity profiles along straight lines of a frame or a
 * volume. A line from (z0, r0, c0) to (z1, r1, c1) (pixel or voxel centres,
 * slices, rows and columns from 0, fractions allowed; z = 0 on a frame) is
 * sampled at n = ceil(max(|z1 - z0|, |r1 - r0|, |c1 - c0|)) + 1 evenly
 * spaced points (one per step along the longest axis, in pixels or
 * voxels; both ends included), each the bilinear (frame) or trilinear
 * (volume) interpolation of its 4 or 8 neighbouring pixels or voxels (at
 * the last slice, row or column, of those that exist). Each point is a
 * fixed linear combination of the pixels, so a sampler given the lines
 * (pp_sampler_config.profiles) records its value in every kept draw, and
 * the posterior of the profile (mean and credible band at each point) is
 * exact Monte Carlo from the draws (pp_sampler_region_draws, after the
 * regions' totals).
 *
 * Cost: planning O(points); evaluating a draw O(points). */
#ifndef PIXPOST_PROFILES_H
#define PIXPOST_PROFILES_H

#include <stddef.h>
#include "pixpost/status.h"

typedef struct pp_profiles pp_profiles;

/* Plans nlines lines, line k from lines[6k .. 6k+5] = z0, r0, c0, z1, r1,
 * c1, for a depth x height x width image (depth 1: a frame, z0 = z1 = 0).
 * voxel: z, y, x sizes in um for the distances in um (NULL, or any not
 * above 0: not known). Errors (PP_ERR_ARG, message naming line k + 1 and
 * the fix): an end outside the image (slices 0 .. depth - 1, rows 0 ..
 * height - 1, columns 0 .. width - 1) or not finite; PP_ERR_NOMEM. */
pp_status pp_profiles_plan(const double *lines, size_t nlines, size_t depth, size_t height,
                           size_t width, const double *voxel, pp_profiles **out);
void pp_profiles_free(pp_profiles *p);

/* Lines, points in all, points of line k and the first point's index. */
size_t pp_profiles_lines(const pp_profiles *p);
size_t pp_profiles_points(const pp_profiles *p);
size_t pp_profiles_line_points(const pp_profiles *p, size_t k);
size_t pp_profiles_line_first(const pp_profiles *p, size_t k);
/* Point j's slice, row and column (pos[0..2]) and distance from its
 * line's start: in pixel or voxel steps (the index differences'
 * Euclidean length), and in um (NaN when the voxel size is not known). */
void pp_profiles_point(const pp_profiles *p, size_t j, double pos[3], double *dist,
                       double *dist_um);
/* 1 when planned for a depth x height x width image. */
int pp_profiles_fit(const pp_profiles *p, size_t depth, size_t height, size_t width);

/* Every point's value of scale * f, f on a grid whose image box starts at
 * the origin with rows `row` and slices `slice` apart: out[j], j <
 * pp_profiles_points. */
void pp_profiles_eval(const pp_profiles *p, const double *f, size_t row, size_t slice,
                      double scale, double *out);

/* Writes profile_<k+1>.csv for line k into dir (atomically): per point its
 * index, row, column, distance from the start (pixels) -- on a volume its
 * index, slice z, row, column, distance (voxel steps) and distance_um
 * (nan when not known) --, and the posterior
 * mean, sd and the equal-tailed interval at level (type-7 quantiles of all
 * draws), from draws v[(c * cap + i) * stride + first + j] (chain c, kept
 * draw i, point j of the line; first = pp_profiles_line_first + the
 * offset of the profiles in the row). Errors: PP_ERR_IO, PP_ERR_NOMEM. */
pp_status pp_profiles_write_csv(const char *dir, const pp_profiles *p, size_t k, const double *v,
                                size_t chains, size_t kept, size_t cap, size_t stride,
                                size_t offset, double level);

#endif
