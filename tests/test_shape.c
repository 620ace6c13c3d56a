/* Unit tests of src/shape.c: element counts (rank 2 and 3), the half
 * spectrum count against FFTW's documented r2c layout (n0 x ... x
 * (n_{d-1}/2 + 1), FFTW manual §4.3.4 "Real-data DFT Array Format"),
 * refusal of bad shapes and of overflowing counts. */
#include "pixpost/shape.h"
#include "testutil.h"
#include "pixpost/shape_extra.h"
#include <stdint.h>

int main(void)
{
    size_t c = 0;
    pp_shape f = pp_shape_2d(5, 8);
    CHECK(pp_shape_count(&f, 0, &c) == PP_OK && c == 40, "pp_shape_count(&f, 0, &c) == PP_OK && c == 40");
    CHECK(pp_shape_half_count(&f) == 5 * 5, "pp_shape_half_count(&f) == 5 * 5");
    pp_shape v = pp_shape_3d(3, 5, 7);
    CHECK(pp_shape_count(&v, sizeof(double), &c) == PP_OK && c == 105, "pp_shape_count(&v, sizeof(double), &c) == PP_OK && c == 105");
    CHECK(pp_shape_half_count(&v) == 3 * 5 * 4, "pp_shape_half_count(&v) == 3 * 5 * 4");
    CHECK(!pp_shape_equal(&f, &v), "!pp_shape_equal(&f, &v)");
    pp_shape f2 = pp_shape_2d(5, 8);
    CHECK(pp_shape_equal(&f, &f2), "pp_shape_equal(&f, &f2)");
    pp_shape bad = pp_shape_3d(0, 5, 7);
    CHECK(pp_shape_count(&bad, 0, &c) == PP_ERR_ARG, "pp_shape_count(&bad, 0, &c) == PP_ERR_ARG");
    bad = f;
    bad.n[2] = 2; /* past the rank must be 1 */
    CHECK(pp_shape_count(&bad, 0, &c) == PP_ERR_ARG, "pp_shape_count(&bad, 0, &c) == PP_ERR_ARG");
    bad.rank = 4;
    CHECK(pp_shape_count(&bad, 0, &c) == PP_ERR_ARG, "pp_shape_count(&bad, 0, &c) == PP_ERR_ARG");
    pp_shape huge = pp_shape_3d(SIZE_MAX / 2, 2, 2);
    CHECK(pp_shape_count(&huge, 0, &c) == PP_ERR_LIMIT, "pp_shape_count(&huge, 0, &c) == PP_ERR_LIMIT");
    pp_shape big = pp_shape_2d(SIZE_MAX / 8, 2);
    CHECK(pp_shape_count(&big, sizeof(double), &c) == PP_ERR_LIMIT, "pp_shape_count(&big, sizeof(double), &c) == PP_ERR_LIMIT");
    return pp_test_done();
}
