/* Unit tests of src/grid.c: the padded-size rule (both kinds, rank 2 and
 * 3: the least sizes written out here by hand from the rule's contract in
 * src/grid.h, and the rounded sizes at least those, even, 7-smooth, equal
 * to pp_fft_good_grid/pp_fft_good_size of the least sizes) and the
 * frame-box copies (rank 2 and 3: every box element lands at
 * (z*Gy + y)*Gx + x, every element outside the box is left alone), the
 * half-spectrum weights (summed over FFTW's r2c layout, FFTW manual
 * §4.3.4, they give the full count, odd and even last axes, rank 2 and 3)
 * and the Hermitian edge pairing: every entry of an edge column equals the
 * conjugate of its mirror (-k mod every extent), self-mirrors real and
 * sqrt(2) times the drawn real part, rank 2 also against the loop
 * spectral.c and sampler_gibbs.c had before (k1 = 1 .. H-k1 mirrored);
 * kernel placement of asymmetric kernels (3x5 in 6x7, 3x3x5 in 4x5x8)
 * against numpy's roll-based placement, np.roll(np.pad(k, (0, G - n)),
 * -(n // 2), axis) on every axis, with np.roll's definition (numpy.roll
 * docs: out[(i + shift) mod G] = in[i]) written out one axis at a time. */
#include "grid.h"
#include "spectral.h"
#include "pixpost/fft.h"
#include "testutil.h"
#include "pixpost/shape_extra.h"
#include <complex.h>
#include <math.h>

/* np.roll along one axis of a row-major array of shape n[0..2]. */
static void roll_axis(double *a, const size_t *n, int axis, long shift)
{
    size_t tot = n[0] * n[1] * n[2];
    double tmp[256];
    for (size_t i = 0; i < tot; i++) {
        size_t idx[3] = {i / (n[1] * n[2]), (i / n[2]) % n[1], i % n[2]};
        long m = (long)n[axis];
        idx[axis] = (size_t)((((long)idx[axis] + shift) % m + m) % m);
        tmp[(idx[0] * n[1] + idx[1]) * n[2] + idx[2]] = a[i];
    }
    for (size_t i = 0; i < tot; i++) a[i] = tmp[i];
}

/* pp_grid_place_kernel against pad-then-roll; kernel extents k, grid g. */
static int placement_matches(const pp_shape *ks, const pp_shape *gs)
{
    size_t k[3] = {1, 1, 1}, g[3] = {1, 1, 1};
    int off = 3 - ks->rank;
    for (int a = 0; a < ks->rank; a++) {
        k[off + a] = ks->n[a];
        g[off + a] = gs->n[a];
    }
    double kern[64], ref[256], got[256];
    for (size_t i = 0; i < k[0] * k[1] * k[2]; i++) kern[i] = 1.0 + (double)i * (double)i;
    for (size_t i = 0; i < 256; i++) ref[i] = 0, got[i] = -5;
    for (size_t a = 0; a < k[0]; a++) /* np.pad: kernel at the origin */
        for (size_t b = 0; b < k[1]; b++)
            for (size_t c = 0; c < k[2]; c++)
                ref[(a * g[1] + b) * g[2] + c] = kern[(a * k[1] + b) * k[2] + c];
    for (int a = 0; a < 3; a++) roll_axis(ref, g, a, -(long)(k[a] / 2));
    pp_grid_place_kernel(got, gs, kern, ks);
    int ok = 1;
    for (size_t i = 0; i < g[0] * g[1] * g[2]; i++) ok &= got[i] == ref[i];
    return ok;
}

static int smooth_even(size_t n)
{
    if (n % 2)
        return 0;
    while (n % 2 == 0) n /= 2;
    while (n % 3 == 0) n /= 3;
    while (n % 5 == 0) n /= 5;
    while (n % 7 == 0) n /= 7;
    return n == 1;
}

int main(void)
{
    pp_shape f = pp_shape_2d(5, 8), g;
    /* scene margin r = 3 on both sides: least 11 x 14 */
    pp_grid_padded(&f, 3, PP_GRID_PAD_SCENE, &g);
    size_t eh, ew;
    pp_fft_good_grid(11, 14, &eh, &ew);
    CHECK(g.rank == 2 && g.n[0] == eh && g.n[1] == ew, "scene pad 5x8 r=3 is good_grid(11, 14)");
    CHECK(g.n[0] >= 11 && g.n[1] >= 14 && smooth_even(g.n[0]) && smooth_even(g.n[1]),
          "scene pad sides >= 11, 14, even and 7-smooth");
    /* no margin: the frame's own grid, not rounded (5 is odd) */
    pp_grid_padded(&f, 0, PP_GRID_PAD_SCENE, &g);
    CHECK(g.n[0] == 5 && g.n[1] == 8, "scene pad with r = 0 keeps 5x8");
    /* blur: max(n + r, 2r + 1) -> r = 4: max(9, 9) = 9, max(12, 9) = 12 */
    pp_grid_padded(&f, 4, PP_GRID_PAD_BLUR, &g);
    pp_fft_good_grid(9, 12, &eh, &ew);
    CHECK(g.n[0] == eh && g.n[1] == ew && g.n[0] >= 9 && g.n[1] >= 12, "blur pad 5x8 r=4");
    /* blur with a kernel wider than the frame: 2r + 1 = 21 wins over 5 + 10 */
    pp_grid_padded(&f, 10, PP_GRID_PAD_BLUR, &g);
    CHECK(g.n[0] >= 21 && g.n[1] >= 21, "blur pad keeps 2r + 1 when the kernel is wider");
    /* rank 3: depth by pp_fft_good_size, the frame axes by pp_fft_good_grid */
    pp_shape v = pp_shape_3d(3, 5, 8);
    pp_grid_padded(&v, 2, PP_GRID_PAD_SCENE, &g);
    pp_fft_good_grid(9, 12, &eh, &ew);
    CHECK(g.rank == 3 && g.n[0] == pp_fft_good_size(7) && g.n[0] >= 7 && g.n[1] == eh &&
              g.n[2] == ew,
          "rank-3 scene pad 3x5x8 r=2");

    /* frame-box copies, rank 3: frame 2x3x4 into grid 3x5x6 */
    pp_shape fs = pp_shape_3d(2, 3, 4), gs = pp_shape_3d(3, 5, 6);
    double fr[24], back[24], grid[90];
    for (int i = 0; i < 24; i++) fr[i] = i + 1;
    for (int i = 0; i < 90; i++) grid[i] = -1;
    pp_grid_put_box(grid, &gs, fr, &fs);
    int ok = 1;
    for (size_t z = 0; z < 3; z++)
        for (size_t y = 0; y < 5; y++)
            for (size_t x = 0; x < 6; x++) {
                double want = z < 2 && y < 3 && x < 4 ? fr[(z * 3 + y) * 4 + x] : -1;
                ok &= grid[(z * 5 + y) * 6 + x] == want;
            }
    CHECK(ok, "rank-3 put_box places (z,y,x) at (z*5 + y)*6 + x and leaves the rest");
    pp_grid_get_box(grid, &gs, back, &fs);
    ok = 1;
    for (int i = 0; i < 24; i++) ok &= back[i] == fr[i];
    CHECK(ok, "rank-3 get_box returns the frame");
    /* rank 2: frame 3x4 into grid 4x7 */
    pp_shape f2 = pp_shape_2d(3, 4), g2 = pp_shape_2d(4, 7);
    for (int i = 0; i < 28; i++) grid[i] = -1;
    pp_grid_put_box(grid, &g2, fr, &f2);
    ok = 1;
    for (size_t y = 0; y < 4; y++)
        for (size_t x = 0; x < 7; x++)
            ok &= grid[y * 7 + x] == (y < 3 && x < 4 ? fr[y * 4 + x] : -1);
    CHECK(ok, "rank-2 put_box");
    pp_grid_get_box(grid, &g2, back, &f2);
    ok = 1;
    for (int i = 0; i < 12; i++) ok &= back[i] == fr[i];
    CHECK(ok, "rank-2 get_box");

    /* the half-spectrum weights (spectral.h, used by every sampler) sum to
     * the full count, rank 2 and 3 */
    pp_shape ws[4] = {pp_shape_2d(5, 8), pp_shape_2d(6, 7), pp_shape_3d(3, 4, 9),
                      pp_shape_3d(2, 5, 10)};
    for (int t = 0; t < 4; t++) {
        pp_shape *w = &ws[t];
        size_t nl = w->n[w->rank - 1], rows = pp_shape_half_count(w) / (nl / 2 + 1), sum = 0;
        for (size_t r = 0; r < rows; r++)
            for (size_t k = 0; k <= nl / 2; k++) sum += (size_t)pp_half_weight(k, nl);
        size_t full = 0;
        pp_shape_count(w, 0, &full);
        CHECK(sum == full, "half-spectrum weights sum to the full-spectrum count");
    }

    /* Hermitian pairing, rank 2 (6 x 8, edge columns 0 and 4 of 5) */
    pp_complex h2[6 * 5], old2[6 * 5];
    for (int i = 0; i < 30; i++) h2[i] = old2[i] = (i + 1) + I * (0.5 * i - 3);
    pp_shape s2 = pp_shape_2d(6, 8);
    for (size_t col = 0; col < 5; col += 4) {
        pp_grid_hermitian_column(h2, &s2, col);
        for (size_t k1 = 1; k1 < 6 - k1; k1++) /* the former loop */
            old2[(6 - k1) * 5 + col] = conj(old2[k1 * 5 + col]);
        old2[col] = creal(old2[col]) * sqrt(2.0);
        old2[3 * 5 + col] = creal(old2[3 * 5 + col]) * sqrt(2.0);
    }
    ok = 1;
    for (int i = 0; i < 30; i++) ok &= h2[i] == old2[i];
    CHECK(ok, "rank-2 Hermitian pairing equals the former loop bit for bit");

    /* rank 3 (4 x 3 x 6, edge columns 0 and 3 of 4): mirror rule */
    pp_shape s3 = pp_shape_3d(4, 3, 6);
    pp_complex h3[4 * 3 * 4], d3[4 * 3 * 4];
    for (int i = 0; i < 48; i++) h3[i] = d3[i] = (i % 7 + 1) + I * (i % 5 - 2.0);
    pp_grid_hermitian_column(h3, &s3, 0);
    pp_grid_hermitian_column(h3, &s3, 3);
    ok = 1;
    int self = 0;
    for (size_t col = 0; col < 4; col += 3)
        for (size_t a = 0; a < 4; a++)
            for (size_t b = 0; b < 3; b++) {
                size_t i = (a * 3 + b) * 4 + col, m = (((4 - a) % 4) * 3 + (3 - b) % 3) * 4 + col;
                if (i == m) {
                    self++;
                    ok &= h3[i] == creal(d3[i]) * sqrt(2.0);
                } else {
                    ok &= h3[i] == conj(h3[m]);
                }
            }
    CHECK(ok, "rank-3 edge columns are Hermitian (conjugate mirrors, real self-mirrors)");
    CHECK(self == 4, "rank-3 4x3x6: (0,0) and (2,0) are self-mirrors in each of the 2 edge columns");
    ok = 1;
    for (size_t i = 0; i < 48; i++)
        if (i % 4 == 1 || i % 4 == 2)
            ok &= h3[i] == d3[i];
    CHECK(ok, "interior columns untouched");

    pp_shape k2 = pp_shape_2d(3, 5), gk2 = pp_shape_2d(6, 7);
    CHECK(placement_matches(&k2, &gk2), "rank-2 placement of a 3x5 kernel equals np.roll placement");
    pp_shape k3 = pp_shape_3d(3, 3, 5), gk3 = pp_shape_3d(4, 5, 8);
    CHECK(placement_matches(&k3, &gk3), "rank-3 placement of a 3x3x5 kernel equals np.roll placement");
    return pp_test_done();
}
