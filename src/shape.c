/* pixpost — grid shapes (include/pixpost/shape.h). */
#include "pixpost/shape.h"
#include "pixpost/shape_extra.h"

#include <stdint.h>

pp_shape pp_shape_2d(size_t height, size_t width)
{
    pp_shape s = {.rank = 2, .n = {height, width, 1}};
    return s;
}

pp_shape pp_shape_3d(size_t depth, size_t height, size_t width)
{
    pp_shape s = {.rank = 3, .n = {depth, height, width}};
    return s;
}

pp_status pp_shape_count(const pp_shape *s, size_t size, size_t *count)
{
    if (!s || !count || s->rank < 1 || s->rank > PP_MAX_RANK)
        return PP_ERR_ARG;
    size_t c = 1;
    for (int k = 0; k < PP_MAX_RANK; k++) {
        size_t n = s->n[k];
        if (n == 0 || (k >= s->rank && n != 1))
            return PP_ERR_ARG;
        if (c > SIZE_MAX / n)
            return PP_ERR_LIMIT;
        c *= n;
    }
    if (size > 0 && c > SIZE_MAX / size)
        return PP_ERR_LIMIT;
    *count = c;
    return PP_OK;
}

int pp_shape_equal(const pp_shape *a, const pp_shape *b)
{
    if (a->rank != b->rank)
        return 0;
    for (int k = 0; k < PP_MAX_RANK; k++)
        if (a->n[k] != b->n[k])
            return 0;
    return 1;
}

size_t pp_shape_half_count(const pp_shape *s)
{
    size_t c = 1;
    for (int k = 0; k < s->rank; k++)
        c *= (k == s->rank - 1) ? s->n[k] / 2 + 1 : s->n[k];
    return c;
}
