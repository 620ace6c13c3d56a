/* pixpost — internals of the diagnostics module (src/diag.c) shared with
 * the sampler's pixel maps (src/sampler_diag.c); not installed. */
#ifndef PIXPOST_DIAG_INTERNAL_H
#define PIXPOST_DIAG_INTERNAL_H

#include <stddef.h>

/* One pixel of pp_diag_pixel_maps (src/diag.c): hm the k half-chain means
 * of the pixel, m2_sum the sum of their M2, m draws per half-chain; outputs
 * as there (each may be NULL). */
void pp_diag_pixel(const double *hm, size_t k, double m2_sum, double m, double within_add,
                   double *rhat, double *mcse, double *ess);

#endif
