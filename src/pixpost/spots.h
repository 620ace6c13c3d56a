/* pixpost — spots: is a bright local maximum a real peak above its
 * surroundings? (issue #19 item 2; beads and puncta.)
 *
 * Definition. A candidate spot is a pixel c of a pilot image (the caller's
 * estimate made before the kept draws; the command line uses the input
 * frame's 3 x 3 box mean, so candidates never depend on the draws they are
 * judged by) that is larger than its 8 neighbours (ties go to the first in
 * row order) and whose pilot contrast is above 0. Its contrast in an image
 * x is
 *     C = x_c - (1/m) sum_{i in ring} x_i,
 * the ring being the m pixels of the frame whose centres lie at a distance
 * d from c's centre with R - 1/2 <= d < R + 1/2 (a one-pixel annulus of
 * radius R, about the PSF's width or the spot's size, so the ring lies on
 * the local background). C is a fixed linear combination of the pixels,
 * so a sampler given the spots (pp_sampler_config.spots) records C in every
 * kept draw and the posterior of C (mean, sd, credible interval, R-hat,
 * ESS) and the probability that the spot is real above its ring,
 * P(C > 0), are exact Monte Carlo from the draws. At most PP_SPOTS_MAX
 * candidates are kept, those of largest pilot contrast.
 *
 * Volumes: the same with voxels. A candidate is larger than its 26
 * neighbours (ties to the first in (slice, row, column) order; the command
 * line's pilot is the 3 x 3 x 3 box mean), and the ring is an ellipsoidal
 * shell of lateral radius R (pixels) and axial radius Rz (slices): the
 * voxels at offset (dz, dy, dx) with R - 1/2 <= d < R + 1/2, d =
 * sqrt((dz R / Rz)^2 + dy^2 + dx^2) (a one-pixel shell in the lateral
 * units; a sphere in um when Rz = R x pixel / z-step).
 *
 * What this follows: a local maximum tested against the local background
 * measured around it is the classical family of spot detectors compared
 * by Smal, Loog, Niessen and Meijering, "Quantitative comparison of spot
 * detection methods in fluorescence microscopy", IEEE Trans. Med. Imaging
 * 29(2), 2010, and reviewed by Mabaso, Withey and Twala, Image Anal.
 * Stereol. 37 (2018) 173-190. Read: their abstracts only; the one-pixel
 * ring as the background is from memory (common practice), not a formula
 * of either paper. Those methods threshold the contrast of one image; here the
 * contrast of every posterior draw is kept, so the threshold is replaced by
 * the posterior probability P(C > 0) under the model (the noise, PSF and
 * prior of the run). P(C > 0) near 1: the peak stands above its ring in
 * nearly every image the data allow; near 0.5: the data cannot tell.
 *
 * Cost: planning O(image + K log K) for K maxima; a draw O(K m). */
#ifndef PIXPOST_SPOTS_H
#define PIXPOST_SPOTS_H

#include <stddef.h>
#include "pixpost/image.h"
#include "pixpost/status.h"

#define PP_SPOTS_MAX 256

typedef struct pp_spots pp_spots;

/* Plans the candidates of a pilot frame or volume (NaN pixels are never
 * candidates and leave the rings) with ring radius radius (pixels, 1 to
 * 50) and, on a volume, axial radius radius_z (slices, 1 to 50; ignored on
 * a frame). Finding no candidate is not an error (count 0). Errors
 * (PP_ERR_ARG, message naming the fix): a radius out of range;
 * PP_ERR_NOMEM. */
pp_status pp_spots_plan(const pp_image *pilot, double radius, double radius_z, pp_spots **out);
void pp_spots_free(pp_spots *s);

/* Candidates, in decreasing pilot contrast; the slice (0 on a frame), row
 * and column of k, its pilot contrast, and the ring's pixel count. */
size_t pp_spots_count(const pp_spots *s);
size_t pp_spots_z(const pp_spots *s, size_t k);
size_t pp_spots_row(const pp_spots *s, size_t k);
size_t pp_spots_col(const pp_spots *s, size_t k);
double pp_spots_pilot(const pp_spots *s, size_t k);
size_t pp_spots_ring(const pp_spots *s, size_t k);
double pp_spots_radius(const pp_spots *s);
double pp_spots_radius_z(const pp_spots *s); /* 0 on a frame */
/* 1 when planned for a depth x height x width image. */
int pp_spots_fit(const pp_spots *s, size_t depth, size_t height, size_t width);

/* Every candidate's contrast in scale * f, f on a grid whose image box
 * starts at the origin with rows `row` and slices `slice` apart: out[k],
 * k < pp_spots_count. */
void pp_spots_eval(const pp_spots *s, const double *f, size_t row, size_t slice, double scale,
                   double *out);

/* Writes spots.csv (path, atomically): per candidate k its number, (on a
 * volume its slice z,) row, column, the ring's pixel (voxel) count, the
 * posterior mean intensity at it (mean: the run's mean image), whether it
 * is a local maximum of that mean (3 x 3, or 3 x 3 x 3), the contrast's
 * posterior mean, sd and equal-tailed interval at level, P(C > 0) and its
 * diagnostics, from draws v[(c * cap + i) * stride + offset + k].
 * Errors: PP_ERR_IO, PP_ERR_NOMEM. */
pp_status pp_spots_write_csv(const char *path, const pp_spots *s, const pp_image *mean,
                             const double *v, size_t chains, size_t kept, size_t cap,
                             size_t stride, size_t offset, double level);

#endif
