/* pixpost — shape helpers the tree uses beyond the public API.
 * Internal (src/pixpost/, not installed, not exported from libpixpost.so):
 * the library, the command line and the tests use these; the public part
 * is include/pixpost/shape.h. docs/developers.md "Public API" says why. */
#ifndef PIXPOST_SHAPE_EXTRA_H
#define PIXPOST_SHAPE_EXTRA_H

#include <stddef.h>
#include "pixpost/shape.h"

/* 1 when the two shapes have the same rank and extents. */
int pp_shape_equal(const pp_shape *a, const pp_shape *b);

/* Elements of the half spectrum of a real grid of this shape: the product
 * of the extents with the last one replaced by n[rank-1]/2 + 1. */
size_t pp_shape_half_count(const pp_shape *s);

#endif
