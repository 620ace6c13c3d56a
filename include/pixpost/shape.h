/* pixpost — the shape of a grid: its rank and extents.
 *
 * One axis order everywhere: slowest-varying axis first. n[0] is the
 * slowest axis and n[rank-1] the fastest (the columns), so element
 * (i0, ..., i_{r-1}) of a row-major array sits at
 * ((i0 * n[1] + i1) * n[2] + i2) ... A frame is rank 2 {height, width};
 * a volume is rank 3 {depth (z-slices), height, width}. Unused extents
 * (index >= rank) are 1, so products over all PP_MAX_RANK extents are
 * the element count.
 *
 * This is also the order of FFTW's rank-n r2c/c2r transforms: the half
 * spectrum halves the last (fastest) axis, n[rank-1]/2 + 1 entries.
 */
#ifndef PIXPOST_SHAPE_H
#define PIXPOST_SHAPE_H

#include <stddef.h>
#include "pixpost/status.h"

#define PP_MAX_RANK 3

typedef struct pp_shape {
    int rank;                /* 1 .. PP_MAX_RANK */
    size_t n[PP_MAX_RANK];   /* extents, slowest first; 1 past the rank */
} pp_shape;

/* A frame: height rows of width columns. Never fails (the extents are not
 * checked: pp_shape_count does); pure, thread-safe. */
pp_shape pp_shape_2d(size_t height, size_t width);

/* A volume: depth slices of height x width. As pp_shape_2d. */
pp_shape pp_shape_3d(size_t depth, size_t height, size_t width);

/* Checks the shape (rank in 1..PP_MAX_RANK, every extent >= 1, extents past
 * the rank equal to 1) and writes the element count to *count. Fails with
 * PP_ERR_ARG for a bad shape (or s or count NULL) and PP_ERR_LIMIT when the
 * count times `size` bytes would overflow size_t (size 0 counts elements
 * only); on failure *count is unchanged and, unlike other functions, NO
 * message is set (the caller knows what it was counting). Pure,
 * thread-safe. */
pp_status pp_shape_count(const pp_shape *s, size_t size, size_t *count);

#endif
