/* pixpost — the DFT of real white noise, drawn straight into the half
 * spectrum (DESIGN.md section 2). Cost: H*(W+2) normals and one pass. */
#include <math.h>
#include "spectral.h"
#include "grid.h"

void pp_half_noise(pp_rng *rng, size_t height, size_t width, pp_complex *out)
{
    pp_shape sh = pp_shape_2d(height, width);
    pp_half_noise_shape(rng, &sh, out);
}

void pp_half_noise_shape(pp_rng *rng, const pp_shape *sh, pp_complex *out)
{
    const int k = sh->rank;
    size_t width = sh->n[k - 1], wh = width / 2 + 1, height = 1;
    double n = 1;
    for (int a = 0; a < k; a++) {
        n = a == 0 ? (double)sh->n[0] : n * (double)sh->n[a];
        height *= a + 1 < k ? sh->n[a] : 1;
    }
    double s = sqrt(n / 2.0);
    double *d = (double *)out;
    pp_rng_normals(rng, d, 2 * height * wh);
    for (size_t i = 0; i < 2 * height * wh; i++)
        d[i] *= s;
    /* Columns 0 and (W even) W/2 hold k with -k in the same column: row k1
     * pairs with row H-k1 as complex conjugates; k1 = 0 and (H even) H/2
     * are their own mirror and real, with variance N (src/grid.h). */
    size_t ncol = (width % 2 == 0 && wh > 1) ? 2 : 1;
    for (size_t c = 0; c < ncol; c++)
        pp_grid_hermitian_column(out, sh, c == 0 ? 0 : width / 2);
}
