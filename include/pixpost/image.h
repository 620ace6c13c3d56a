/* pixpost — a frame (or a volume) of doubles.
 *
 * Layout: row-major, no padding, slowest axis first: pixel (row r, column
 * c) of slice z is data[(z * height + r) * width + c]. A frame has depth 1;
 * a volume (a z-stack) has depth > 1 slices of height x width. Functions
 * that handle frames only say so and refuse a volume (PP_ERR_ARG). Values are camera units (ADU) or whatever the file
 * held; nothing is rescaled on reading. The struct is plain so callers can
 * index it; create and free it only through these functions.
 */
#ifndef PIXPOST_IMAGE_H
#define PIXPOST_IMAGE_H

#include <stddef.h>
#include "pixpost/shape.h"
#include "pixpost/status.h"

typedef struct pp_image {
    size_t width;
    size_t height;
    double *data; /* depth * height * width values, owned by the image */
    size_t depth; /* z-slices: 1 for a frame (pp_image_create) */
} pp_image;

/* Largest frame accepted by default, in pixels (2^28: 2 GiB of doubles). The
 * readers take a per-call limit; this is only the default. */
#define PP_DEFAULT_MAX_PIXELS ((size_t)1 << 28)

/* A zero-filled image of height rows and width columns (slowest axis
 * first, as everywhere: include/pixpost/shape.h; messages still say sizes
 * as width x height). *out (not NULL) receives a new image owned by the
 * caller (pp_image_free); it is NULL on failure. Errors (message by
 * pp_error_message): PP_ERR_ARG for a zero size, PP_ERR_LIMIT when
 * width*height*sizeof(double) overflows, PP_ERR_NOMEM. Thread-safe. */
pp_status pp_image_create(size_t height, size_t width, pp_image **out);

/* A zero-filled volume of depth slices of height x width (depth 1 gives a
 * frame, as pp_image_create). Same ownership, failures and thread safety. */
pp_status pp_image_create3(size_t depth, size_t height, size_t width, pp_image **out);

/* Elements of img (not NULL): depth * height * width. Never fails; reads
 * img only (thread-safe while nobody writes img). */
size_t pp_image_count(const pp_image *img);

/* The shape of img (not NULL): rank 2 {height, width} for a frame (depth
 * 1), rank 3 {depth, height, width} for a volume. As pp_image_count. */
pp_shape pp_image_shape(const pp_image *img);

/* Frees the image and its data; img may be NULL (nothing happens). Only
 * for images the library made (pp_image_create*, readers, accessors that
 * say the caller frees); never for an image an accessor points into a
 * sampler with. Not concurrently with any use of img. */
void pp_image_free(pp_image *img);

/* Smallest and largest finite value into *lo and *hi (img, lo, hi not
 * NULL); returns the number of non-finite pixels (NaN/Inf), which are
 * ignored. An all-non-finite image gives 0, 0. Never fails; reads img
 * only. */
size_t pp_image_range(const pp_image *img, double *lo, double *hi);

#endif
