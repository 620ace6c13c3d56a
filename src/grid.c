/* pixpost — the grid unit (src/grid.h): the padded-size rule and the
 * frame-box copies, rank 2 and 3. */
#include "grid.h"
#include "pixpost/fft.h"
#include "pp_assert.h"
#include <math.h>
#include <string.h>

static size_t least_side(size_t n, size_t r, pp_grid_pad kind)
{
    if (kind == PP_GRID_PAD_BLUR)
        return n + r > 2 * r + 1 ? n + r : 2 * r + 1;
    return r > 0 ? n + 2 * r : n;
}

void pp_grid_padded(const pp_shape *frame, size_t r, pp_grid_pad kind, pp_shape *out)
{
    *out = *frame;
    if (kind == PP_GRID_PAD_SCENE && r == 0)
        return; /* no margin: the frame's own grid, not rounded */
    int a = frame->rank - 2; /* first of the two axes chosen together */
    pp_fft_good_grid(least_side(frame->n[a], r, kind), least_side(frame->n[a + 1], r, kind),
                     &out->n[a], &out->n[a + 1]);
    if (frame->rank == 3)
        out->n[0] = pp_fft_good_size(least_side(frame->n[0], r, kind));
    for (int k = 0; k < frame->rank; k++) /* the grid holds the frame and its margin */
        PP_ASSERT(out->n[k] >= least_side(frame->n[k], r, kind));
}

/* Copies the rows (runs along the last axis) of the frame box from src to
 * dst: frame row q of a rank-r shape is grid row (z, y) with the grid's row
 * stride. to_grid: src is the frame and dst the grid, else the other way. */
static void copy_box(double *dst, const double *src, const pp_shape *gs, const pp_shape *fs,
                     int to_grid)
{
    int k = fs->rank;
    size_t nz = k == 3 ? fs->n[0] : 1, ny = fs->n[k - 2], nx = fs->n[k - 1];
    size_t gy = gs->n[k - 2], gx = gs->n[k - 1];
    PP_ASSERT(gs->rank == k && ny <= gy && nx <= gx && (k < 3 || nz <= gs->n[0]));
    for (size_t z = 0; z < nz; z++)
        for (size_t y = 0; y < ny; y++) {
            size_t g = (z * gy + y) * gx, f = (z * ny + y) * nx;
            memcpy(dst + (to_grid ? g : f), src + (to_grid ? f : g), nx * sizeof *dst);
        }
}

void pp_grid_put_box(double *grid, const pp_shape *gs, const double *frame,
                     const pp_shape *fs)
{
    copy_box(grid, frame, gs, fs, 1);
}

void pp_grid_get_box(const double *grid, const pp_shape *gs, double *frame,
                     const pp_shape *fs)
{
    copy_box(frame, grid, gs, fs, 0);
}

void pp_grid_place_kernel(double *grid, const pp_shape *gs, const double *kernel,
                          const pp_shape *ks)
{
    size_t total = gs->n[0] * gs->n[1] * gs->n[2];
    memset(grid, 0, total * sizeof *grid);
    int k = ks->rank;
    size_t kz = k == 3 ? ks->n[0] : 1, ky = ks->n[k - 2], kx = ks->n[k - 1];
    size_t gz = k == 3 ? gs->n[0] : 1, gy = gs->n[k - 2], gx = gs->n[k - 1];
    size_t rz = kz / 2, ry = ky / 2, rx = kx / 2;
    PP_ASSERT(kz % 2 == 1 && ky % 2 == 1 && kx % 2 == 1); /* centred kernels */
    PP_ASSERT(rz < gz && ry < gy && rx < gx);              /* one wrap at most */
    for (size_t a = 0; a < kz; a++)
        for (size_t b = 0; b < ky; b++)
            for (size_t c = 0; c < kx; c++) /* centre goes to the origin, with wrap */
                grid[(((a + gz - rz) % gz) * gy + (b + gy - ry) % gy) * gx + (c + gx - rx) % gx] =
                    kernel[(a * ky + b) * kx + c];
}

void pp_grid_hermitian_column(pp_complex *half, const pp_shape *s, size_t col)
{
    int k = s->rank;
    size_t n0 = k == 3 ? s->n[0] : 1, n1 = s->n[k - 2], wh = s->n[k - 1] / 2 + 1;
    for (size_t a = 0; a < n0; a++)
        for (size_t b = 0; b < n1; b++) {
            size_t i = a * n1 + b, m = ((n0 - a) % n0) * n1 + (n1 - b) % n1;
            if (m == i)
                half[i * wh + col] = creal(half[i * wh + col]) * sqrt(2.0);
            else if (m < i)
                half[i * wh + col] = conj(half[m * wh + col]);
        }
}
