/* pixpost — the grid unit: index maths on a (possibly padded) grid, for
 * rank 2 and rank 3 shapes (pp_shape, slowest axis first).
 *
 * One home for rules that were written twice: the padded-size rule
 * (pp_model_blur and the sampler) and the frame-box loops that copy a
 * frame into the top-left box of a padded grid and back. The frame box of
 * a grid is the elements whose every index is below the frame's extent on
 * that axis; the frame sits at the grid's origin (index 0 on every axis).
 *
 * Half spectrum (FFTW's r2c layout): the shape's extents with the last
 * axis n halved to n/2 + 1. Its edge columns (last index 0 and, n even,
 * n/2) hold each frequency k together with -k (mod every extent), so
 * there an entry pairs with its mirror as complex conjugates; elsewhere
 * the mirror is not stored and an entry stands for two.
 */
#ifndef PIXPOST_GRID_H
#define PIXPOST_GRID_H

#include <stddef.h>
#include "pixpost/fft.h"
#include "pixpost/shape.h"

/* Which padded grid is wanted around a frame for a PSF of radius r
 * (kernel side 2r + 1). */
typedef enum pp_grid_pad {
    /* Forward blur of a scene that is zero outside the frame (pp_model_blur):
     * every axis at least max(n + r, 2r + 1), so a circular convolution never
     * wraps a frame element's r-neighbourhood onto frame data. */
    PP_GRID_PAD_BLUR,
    /* The sampler's scene, unknown over an r-wide margin on both sides of
     * every axis: every axis at least n + 2r (n itself when r is 0). */
    PP_GRID_PAD_SCENE
} pp_grid_pad;

/* The padded grid *out for frame shape *frame (rank 2 or 3) and PSF radius
 * r: the least sizes of `kind` rounded to fast FFT sizes. The last two axes
 * are chosen together by pp_fft_good_grid (the measured cost table); the
 * depth of a rank-3 shape by pp_fft_good_size. Same rank as *frame. */
void pp_grid_padded(const pp_shape *frame, size_t r, pp_grid_pad kind, pp_shape *out);

/* Copies the frame (row-major, shape *frame) into the frame box of grid
 * (row-major, shape *grid, every extent >= the frame's); the rest of grid
 * is left as it was. Same rank. */
void pp_grid_put_box(double *grid, const pp_shape *gs, const double *frame,
                     const pp_shape *fs);

/* Copies the frame box of grid (shape *gs) out into frame (shape *fs). */
void pp_grid_get_box(const double *grid, const pp_shape *gs, double *frame,
                     const pp_shape *fs);

/* Zeroes grid (shape *gs) and places the kernel (shape *ks, same rank, odd
 * extents no larger than the grid's) with its centre element (n/2 on every
 * axis) at the grid's origin, wrapping: kernel element i goes to
 * (i - n/2) mod the grid extent on every axis. Its transform is then the
 * transfer function of a blur centred on each element. */
void pp_grid_place_kernel(double *grid, const pp_shape *gs, const double *kernel,
                          const pp_shape *ks);

/* Makes edge column `col` (0 or, n[rank-1] even, n[rank-1]/2) of the half
 * spectrum `half` of a real grid of shape *s (rank 2 or 3) Hermitian, in
 * the way the samplers draw white noise there: an entry whose mirror
 * -k comes later in row-major order becomes the conjugate of the mirror's
 * entry; an entry that is its own mirror keeps sqrt(2) times its real
 * part (i.i.d. complex entries of variance N become real ones of
 * variance N). Entries before their mirror are left as they are. */
void pp_grid_hermitian_column(pp_complex *half, const pp_shape *s, size_t col);

#endif
