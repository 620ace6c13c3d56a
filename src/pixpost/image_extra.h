/* pixpost — image helpers the tree uses beyond the public API.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/image.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_IMAGE_EXTRA_H
#define PIXPOST_IMAGE_EXTRA_H

#include "pixpost/image.h"

/* A deep copy of src (frame or volume). */
pp_status pp_image_clone(const pp_image *src, pp_image **out);

#endif
