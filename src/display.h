/* pixpost — the one grey scale of every picture pixpost writes: the PNGs
 * (mean.png, sd.png, a volume's mean_mip.png, sd_mip.png) and report.html's
 * images map an image linearly from its robust range, the
 * PP_DISPLAY_LO-th to the PP_DISPLAY_HI-th percentile of its finite pixels,
 * clipping beyond, so one bright bead or hot pixel does not turn the rest
 * black. Defined here once (issue #19 item 4). Not installed. */
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

#endif
