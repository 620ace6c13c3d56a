/* pixpost — saturated pixels: where a frame's values are clipped at the top.
 *
 * A clipped pixel is not data about the intensity (the truth is only known
 * to be at least the clip level), so pixpost treats it as unobserved (NaN,
 * see pp_sampler_create) rather than as a measurement. A volume is taken
 * as a whole (every voxel, one level for all slices). Two rules, the first
 * that applies:
 *   1. format maximum (integer input only): the value 2^bits - 1 of the
 *      file's sample format (255 for 8-bit, 65535 for 16-bit). Any pixel
 *      there counts: a detector or converter that reaches the top of its
 *      range has clipped (common practice in microscopy image analysis).
 *   2. flat top of the histogram (any input; our own rule): the frame's
 *      largest finite value M holds at least PP_SAT_MIN_SHARE of the finite
 *      pixels (and at least 2), and more than PP_SAT_SPIKE times the mean
 *      count of the PP_SAT_NEXT distinct values just below M (a histogram
 *      that piles up on one value at its top, e.g. a 12-bit camera's 4095
 *      in a 16-bit file, or a float frame clipped before it was saved).
 *      A frame with no value below M (constant) does not qualify.
 * Cost: one pass for rule 1; PP_SAT_NEXT + 2 passes for rule 2. */
#ifndef PIXPOST_SATURATION_H
#define PIXPOST_SATURATION_H

#include "pixpost/image.h"
#include "pixpost/status.h"
#include <stddef.h>

#define PP_SAT_MIN_SHARE 0.001 /* 0.1 % of the pixels */
#define PP_SAT_SPIKE 4.0
#define PP_SAT_NEXT 8

typedef enum pp_sat_rule {
    PP_SAT_NONE = 0,   /* nothing saturated */
    PP_SAT_FORMAT_MAX, /* rule 1 */
    PP_SAT_FLAT_TOP    /* rule 2 */
} pp_sat_rule;

typedef struct pp_saturation {
    pp_sat_rule rule;
    double level;  /* the clip value (0 when rule is NONE) */
    size_t count;  /* pixels at it (0 when NONE) */
    size_t finite; /* finite pixels of the frame (the share's denominator) */
} pp_saturation;

/* Finds the saturated pixels of frame (NaN pixels are ignored). bits and
 * is_float describe the file's samples (pp_read_info); rule 1 applies when
 * !is_float and 1 <= bits <= 32. frame and out: not NULL; frame is only
 * read. Never fails, allocates nothing; *out is filled in full.
 * Thread-safe. */
void pp_saturation_find(const pp_image *frame, unsigned bits, int is_float, pp_saturation *out);

/* Sets the pixels found by pp_saturation_find (value == sat->level) to NaN
 * (unobserved), in place; returns how many were set. Nothing when rule is
 * NONE. frame (modified) and sat: not NULL. Never fails. Not concurrently
 * with other uses of frame. */
size_t pp_saturation_mark(pp_image *frame, const pp_saturation *sat);

#endif
