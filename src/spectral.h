/* pixpost — half-spectrum helpers (src/spectral.c), shared by the samplers
 * and the checks that work on FFTW's half spectrum (not installed). */
#ifndef PIXPOST_SPECTRAL_H
#define PIXPOST_SPECTRAL_H

#include <stddef.h>
#include "pixpost/fft.h"
#include "pixpost/rng.h"

/* ---- Half-spectrum helpers (src/spectral.c) -------------------------------
 * A real H x W grid has an H x (W/2+1) half spectrum in FFTW's layout. A sum
 * over the full spectrum equals a half-spectrum sum with weight 1 in column 0
 * and (W even) column W/2, and weight 2 elsewhere. */
static inline double pp_half_weight(size_t col, size_t width)
{
    return (col == 0 || (width % 2 == 0 && col == width / 2)) ? 1.0 : 2.0;
}
/* Fills out (H x (W/2+1)) with the DFT (FFTW's unnormalised convention) of
 * an H x W field of independent N(0,1) values, drawn directly: complex
 * entries with real and imaginary parts of variance N/2, Hermitian pairs in
 * the self-conjugate columns, real entries of variance N where k = -k. */
void pp_half_noise(pp_rng *rng, size_t height, size_t width, pp_complex *out);
/* The same for a real field of any shape (rank 1 to 3; out: the rows of
 * all but the last axis times n[last]/2 + 1); rank 2 is pp_half_noise. */
void pp_half_noise_shape(pp_rng *rng, const pp_shape *shape, pp_complex *out);

#endif
