/* pixpost — intensity profiles along straight lines of a frame. A line from
 * (r0, c0) to (r1, c1) (pixel centres, rows and columns from 0, fractions
 * allowed) is sampled at n = ceil(max(|r1 - r0|, |c1 - c0|)) + 1 evenly
 * spaced points (one per pixel step along the longer axis; both ends
 * included), each the bilinear interpolation of its four neighbouring
 * pixels (at the last row or column, of the two or one that exist). Each
 * point is a fixed linear combination of the pixels, so a sampler given
 * the lines (pp_sampler_config.profiles) records its value in every kept
 * draw, and the posterior of the profile (mean and credible band at each
 * point) is exact Monte Carlo from the draws (pp_sampler_region_draws,
 * after the regions' totals). Frames only (2-D).
 *
 * Cost: planning O(points); evaluating a draw O(points). */
#ifndef PIXPOST_PROFILES_H
#define PIXPOST_PROFILES_H

#include <stddef.h>
#include "pixpost/status.h"

typedef struct pp_profiles pp_profiles;

/* Plans nlines lines, line k from lines[4k .. 4k+3] = r0, c0, r1, c1, for a
 * height x width frame. Errors (PP_ERR_ARG, message naming line k + 1 and
 * the fix): an end outside the frame (rows 0 .. height - 1, columns 0 ..
 * width - 1) or not finite; PP_ERR_NOMEM. */
pp_status pp_profiles_plan(const double *lines, size_t nlines, size_t height, size_t width,
                           pp_profiles **out);
void pp_profiles_free(pp_profiles *p);

/* Lines, points in all, points of line k and the first point's index. */
size_t pp_profiles_lines(const pp_profiles *p);
size_t pp_profiles_points(const pp_profiles *p);
size_t pp_profiles_line_points(const pp_profiles *p, size_t k);
size_t pp_profiles_line_first(const pp_profiles *p, size_t k);
/* Point j's row, column and distance from its line's start (pixels). */
void pp_profiles_point(const pp_profiles *p, size_t j, double *row, double *col, double *dist);
/* 1 when planned for a height x width frame. */
int pp_profiles_fit(const pp_profiles *p, size_t height, size_t width);

/* Every point's value of scale * f, f on a grid whose frame box starts at
 * the origin with rows `row` apart: out[j], j < pp_profiles_points. */
void pp_profiles_eval(const pp_profiles *p, const double *f, size_t row, double scale,
                      double *out);

/* Writes profile_<k+1>.csv for line k into dir (atomically): per point its
 * index, row, column, distance from the start (pixels), and the posterior
 * mean, sd and the equal-tailed interval at level (type-7 quantiles of all
 * draws), from draws v[(c * cap + i) * stride + first + j] (chain c, kept
 * draw i, point j of the line; first = pp_profiles_line_first + the
 * offset of the profiles in the row). Errors: PP_ERR_IO, PP_ERR_NOMEM. */
pp_status pp_profiles_write_csv(const char *dir, const pp_profiles *p, size_t k, const double *v,
                                size_t chains, size_t kept, size_t cap, size_t stride,
                                size_t offset, double level);

#endif
