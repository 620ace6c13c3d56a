/* pixpost — FFTW plans for one grid size (internal: src/pixpost/, not
 * installed, not exported; docs/developers.md "Public API").
 *
 * A pp_fft holds one r2c and one c2r plan for an H x W real grid whose half
 * spectrum is H x (W/2 + 1) complex values (FFTW's layout and unnormalised
 * convention: c2r(r2c(x)) = H*W*x). Plans are made once (creation is
 * serialised behind one process-wide lock, as FFTW requires) and then
 * executed on any buffers from pp_fft_alloc_*, from any number of threads at
 * once. Execution allocates nothing.
 *
 * Planner effort: PP_FFT_ESTIMATE (deterministic plans, no planning time) or
 * PP_FFT_MEASURE (FFTW times candidate plans: faster to run, 0.02-2 s to
 * make below 1024^2, up to ~10 s at 2048^2 (bench/NOTES.md), unless wisdom
 * already holds them). Different plans round differently: results computed
 * with different plans agree to rounding, not bit for bit.
 */
#ifndef PIXPOST_FFT_H
#define PIXPOST_FFT_H

#include <complex.h>
#include <stddef.h>
#include "pixpost/fft_plans.h"
#include "pixpost/shape.h"
#include "pixpost/status.h"

typedef double _Complex pp_complex;
typedef struct pp_fft pp_fft;

/* PP_FFT_ESTIMATE, PP_FFT_MEASURE, pp_fft_plans and the wisdom functions:
 * include/pixpost/fft_plans.h (public). */

/* Plans of any rank 1..3 (FFTW's rank-n r2c/c2r): a real grid of the given
 * shape (slowest axis first, include/pixpost/shape.h) and its half
 * spectrum, the last axis halved to n[rank-1]/2 + 1 (FFTW manual §4.3.4).
 * Both keep the layout "rows x last axis": a rank-3 grid is n[0]*n[1] rows
 * of n[2] reals, its spectrum n[0]*n[1] rows of n[2]/2 + 1 entries.
 * PP_ERR_ARG for a bad rank or a zero side, PP_ERR_LIMIT past FFTW's int
 * sizes. */
pp_status pp_fft_create_shape(const pp_shape *shape, int effort, pp_fft **out);
/* The rank-2 case: pp_fft_create_shape of pp_shape_2d(height, width). */
pp_status pp_fft_create(size_t height, size_t width, int effort, pp_fft **out);
/* rows independent 1-D transforms of length len, stored one after another
 * (rows x len reals, rows x (len/2 + 1) complex): the same layout as a
 * rank-2 grid, transformed along its last axis only. */
pp_status pp_fft_create_rows(size_t rows, size_t len, int effort, pp_fft **out);
void pp_fft_free(pp_fft *f);

pp_shape pp_fft_shape(const pp_fft *f);
size_t pp_fft_height(const pp_fft *f);     /* rows: product of all axes but the last */
size_t pp_fft_width(const pp_fft *f);      /* W, the last (fastest) axis */
size_t pp_fft_half_width(const pp_fft *f); /* W/2 + 1 */
pp_fft_plans pp_fft_plans_source(const pp_fft *f);

/* in: H*W reals; out: H*(W/2+1) complex. in is not modified. */
void pp_fft_forward(const pp_fft *f, const double *in, pp_complex *out);
/* in: half spectrum (DESTROYED, as FFTW c2r does); out: H*W reals. */
void pp_fft_inverse(const pp_fft *f, pp_complex *in, double *out);

/* SIMD-aligned buffers (fftw_malloc); free with pp_fft_free_buffer. */
double *pp_fft_alloc_real(size_t n);
pp_complex *pp_fft_alloc_complex(size_t n);
void pp_fft_free_buffer(void *p);

/* Smallest even n' >= n whose prime factors are all in {2, 3, 5, 7} (1 for
 * n <= 1). Used for 1-D lengths (diag.c's autocovariances). */
size_t pp_fft_good_size(size_t n);

/* The grid for a padded H x W transform: the gh x gw with gh >= h and
 * gw >= w of least modelled cost per iteration, from a fixed table of
 * measured transform costs (src/fft.c), so the choice is the same on every
 * machine. A larger grid is chosen when it is faster; sizes whose ESTIMATE
 * plans are slow are never chosen. Beyond the table (above 2200) it is
 * pp_fft_good_size() per side. The one padding rule of the library
 * (sampler, pp_model_blur, through src/grid.c pp_grid_padded). */
void pp_fft_good_grid(size_t h, size_t w, size_t *gh, size_t *gw);

#endif
