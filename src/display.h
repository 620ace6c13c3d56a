/* pixpost — the grey scales of every picture pixpost writes: the PNGs
 * (mean.png, sd.png, a volume's mean_mip.png, sd_mip.png) and report.html's
 * images map an image linearly onto black..white (or the colour ramp),
 * clipping beyond, by one of two rules, defined here once (issue #19 item
 * 4 and its leftovers):
 *  - levels (the input, the mean, the residual): the robust range, the
 *    PP_DISPLAY_LO-th to the PP_DISPLAY_HI-th percentile of the finite
 *    pixels, so one bright bead or hot pixel does not turn the rest black;
 *  - spread (the sd, the credible-interval width: maps of uncertainty, >= 0):
 *    from 0 to the PP_DISPLAY_HI-th percentile, so the shade is
 *    proportional to the value and a nearly constant map looks flat (the
 *    robust range would stretch a 1 % variation over the whole scale and
 *    make it look like structure).
 * Not installed. */
#ifndef PIXPOST_DISPLAY_H
#define PIXPOST_DISPLAY_H

#include "pixpost/image.h"
#include "pixpost/status.h"

#define PP_DISPLAY_LO 0.5
#define PP_DISPLAY_HI 99.5

/* Percentiles plo, phi (in [0, 100], linear interpolation between order
 * statistics as numpy's default) of the finite pixels (of every slice of a
 * volume). Fails with PP_ERR_NOMEM, or PP_ERR_NUMERIC when no pixel is
 * finite. Cost: one copy and sort of the pixels. */
pp_status pp_display_percentiles(const pp_image *img, double plo, double phi, double *lo,
                                 double *hi);

/* The mapping range of an image: its PP_DISPLAY_LO and _HI percentiles,
 * widened around the value when they are equal (by 1e-3 of |value|, or 1
 * at 0). Fails as pp_display_percentiles. */
pp_status pp_display_range(const pp_image *img, double *lo, double *hi);

/* The mapping range of a spread map (>= 0 where meaningful): lo = 0, hi
 * its PP_DISPLAY_HI percentile (1 when that is not above 0, so an all-zero
 * map is black). Fails as pp_display_percentiles. */
pp_status pp_display_spread_range(const pp_image *img, double *lo, double *hi);

#endif
