/* pixpost — a frame of doubles.
 *
 * Layout: row-major, no padding: pixel (row r, column c) is
 * data[r * width + c]. Values are camera units (ADU) or whatever the file
 * held; nothing is rescaled on reading. The struct is plain so callers can
 * index it; create and free it only through these functions.
 */
#ifndef PIXPOST_IMAGE_H
#define PIXPOST_IMAGE_H

#include <stddef.h>
#include "pixpost/status.h"

typedef struct pp_image {
    size_t width;
    size_t height;
    double *data; /* width * height values, owned by the image */
} pp_image;

/* Largest frame accepted by default, in pixels (2^28: 2 GiB of doubles). The
 * readers take a per-call limit; this is only the default. */
#define PP_DEFAULT_MAX_PIXELS ((size_t)1 << 28)

/* A zero-filled image of height rows and width columns (slowest axis
 * first, as everywhere: include/pixpost/shape.h; messages still say sizes
 * as width x height). Fails with PP_ERR_ARG for a zero size and
 * PP_ERR_LIMIT when width*height*sizeof(double) overflows. */
pp_status pp_image_create(size_t height, size_t width, pp_image **out);

/* A deep copy of src. */
pp_status pp_image_clone(const pp_image *src, pp_image **out);

/* Frees the image and its data; NULL is accepted. */
void pp_image_free(pp_image *img);

/* Smallest and largest finite value; returns the number of non-finite
 * pixels (NaN/Inf), which are ignored. An all-non-finite image gives 0, 0. */
size_t pp_image_range(const pp_image *img, double *lo, double *hi);

#endif
