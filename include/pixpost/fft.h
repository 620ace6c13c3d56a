/* pixpost — FFTW plans for one grid size.
 *
 * A pp_fft holds one r2c and one c2r plan for an H x W real grid whose half
 * spectrum is H x (W/2 + 1) complex values (FFTW's layout and unnormalised
 * convention: c2r(r2c(x)) = H*W*x). Plans are made once (creation is
 * serialised behind one process-wide lock, as FFTW requires) and then
 * executed on any buffers from pp_fft_alloc_*, from any number of threads at
 * once. Execution allocates nothing.
 *
 * Planner effort: PP_FFT_ESTIMATE (default, deterministic plans) or
 * PP_FFT_MEASURE (faster, slower to plan; combine with wisdom files).
 */
#ifndef PIXPOST_FFT_H
#define PIXPOST_FFT_H

#include <complex.h>
#include <stddef.h>
#include "pixpost/status.h"

typedef double _Complex pp_complex;
typedef struct pp_fft pp_fft;

enum { PP_FFT_ESTIMATE = 0, PP_FFT_MEASURE = 1 };

pp_status pp_fft_create(size_t height, size_t width, int effort, pp_fft **out);
void pp_fft_free(pp_fft *f);

size_t pp_fft_height(const pp_fft *f);
size_t pp_fft_width(const pp_fft *f);
size_t pp_fft_half_width(const pp_fft *f); /* W/2 + 1 */

/* in: H*W reals; out: H*(W/2+1) complex. in is not modified. */
void pp_fft_forward(const pp_fft *f, const double *in, pp_complex *out);
/* in: half spectrum (DESTROYED, as FFTW c2r does); out: H*W reals. */
void pp_fft_inverse(const pp_fft *f, pp_complex *in, double *out);

/* SIMD-aligned buffers (fftw_malloc); free with pp_fft_free_buffer. */
double *pp_fft_alloc_real(size_t n);
pp_complex *pp_fft_alloc_complex(size_t n);
void pp_fft_free_buffer(void *p);

/* Load / save FFTW wisdom (a missing file on load is not an error). */
pp_status pp_fft_wisdom_load(const char *path);
pp_status pp_fft_wisdom_save(const char *path);

/* Smallest even n' >= n whose prime factors are all in {2, 3, 5, 7} (1 for
 * n <= 1): the sizes FFTW transforms fastest without planning. */
size_t pp_fft_good_size(size_t n);

#endif
