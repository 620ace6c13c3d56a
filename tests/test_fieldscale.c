/* The adaptive prior's block field-scale move (src/fieldscale.c) with
 * latent data: with --boundary pad or masked pixels its moves carry the
 * latent data along with A x, and a censored (saturated) pixel's latent
 * datum has zero density below the saturation level, so a move that would
 * take one there must be rejected. Here a band of censored latent pixels
 * sits just above the level (slack 0 to 0.02, against steps of A v of
 * about 0.1 here) inside the windows of the blocks next to it; 300 sweeps
 * must accept moves that carry those data (the check is not vacuous) and
 * never leave one below the level. Also: A x as the move keeps it (direct
 * convolution) equals A x by FFT (pp_fft) to rounding (1e-9 of its range:
 * about 10^6 times double rounding over 300 sweeps of additions).
 * And the observed residual sum the move keeps in step equals the sum
 * afresh (1e-9 relative: rounding of 300 sweeps of updates).
 * Without the censored test in block_move the check "no censored datum
 * below" fails (measured with that test disabled: 5671 pixel-sweeps below
 * the level). */
#include "adaptive.h"
#include "fieldscale.h"
#include "testutil.h"
#include "pixpost/fft.h"
#include "pixpost/rng.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define H 32
#define W 32
#define N (H * W)
#define GM (H * (W / 2 + 1))
#define LEVEL 0.0

/* A x by FFT: out = c2r(otf r2c(x)) / N. */
static void blur(const pp_fft *f, const pp_complex *otf, const double *x, double *out,
                 pp_complex *spec)
{
    pp_fft_forward(f, x, spec);
    for (size_t i = 0; i < GM; i++)
        spec[i] *= otf[i] / (double)N;
    pp_fft_inverse(f, spec, out);
}

/* Σ (A x − y)² over the observed pixels. */
static double observed_ss(const double *ax, const double *y, const unsigned char *obs)
{
    double ss = 0;
    for (size_t i = 0; i < N; i++)
        if (obs[i])
            ss += (ax[i] - y[i]) * (ax[i] - y[i]);
    return ss;
}

int main(void)
{
    pp_fft *fft = NULL;
    CHECK(pp_fft_create(H, W, 0, &fft) == PP_OK, "fft");
    double *x = pp_fft_alloc_real(N), *ax = pp_fft_alloc_real(N), *y = pp_fft_alloc_real(N);
    double *wh = pp_fft_alloc_real(N), *wv = pp_fft_alloc_real(N), *tmp = pp_fft_alloc_real(N);
    pp_complex *otf = pp_fft_alloc_complex(GM), *spec = pp_fft_alloc_complex(GM);
    unsigned char obs[N], cens[N];
    /* a gaussian PSF (sd 1.2 px, 9 x 9, unit sum) centred on pixel (0, 0) */
    const size_t ksize = 9;
    double sum = 0;
    memset(tmp, 0, N * sizeof *tmp);
    for (int di = -4; di <= 4; di++)
        for (int dj = -4; dj <= 4; dj++)
            sum += tmp[((di + H) % H) * W + (dj + W) % W] = exp(-(di * di + dj * dj) / 2.88);
    for (size_t i = 0; i < N; i++)
        tmp[i] /= sum;
    pp_fft_forward(fft, tmp, otf);
    pp_rng rng;
    pp_rng_seed(&rng, 20261205, 0);
    pp_rng_normals(&rng, x, N);
    blur(fft, otf, x, ax, spec);
    /* rows 12-13: censored latent data exactly at the level; the rest observed */
    for (size_t i = 0; i < N; i++) {
        int band = i / W == 12 || i / W == 13;
        obs[i] = !band;
        cens[i] = (unsigned char)band;
        y[i] = band ? LEVEL + 0.02 * pp_rng_uniform(&rng) : ax[i] + 0.1 * pp_rng_normal(&rng);
    }
    pp_shape g = pp_shape_2d(H, W);
    const double hyper[2] = {1.0, 1e-4};
    pp_adapt *a = NULL;
    pp_fieldscale *fs = NULL;
    CHECK(pp_adapt_create(&g, &g, 8, NULL, 2.0, hyper, &a) == PP_OK, "adapt");
    CHECK(pp_fieldscale_create(H, W, ksize, 8, otf, fft, &fs) == PP_OK && fs, "fieldscale");
    if (!a || !fs)
        return pp_test_done();
    pp_adapt_start(a, 1.0);
    pp_adapt_update(a, x, NULL, wh, wv, &rng);
    unsigned acc = 0;
    size_t below = 0, moved = 0;
    double y0[N];
    memcpy(y0, y, sizeof y0);
    double ss = observed_ss(ax, y, obs);
    for (int t = 0; t < 300; t++) {
        acc += pp_fieldscale_sweep(fs, a, x, ax, y, wh, wv, 1.0, obs, cens, LEVEL, &rng, &ss);
        for (size_t i = 0; i < N; i++)
            below += cens[i] && y[i] < LEVEL;
    }
    for (size_t i = 0; i < N; i++)
        moved += cens[i] && y[i] != y0[i];
    CHECK(acc > 300, "the move accepts (%u of %d block moves)", acc, 300 * 16);
    /* the residual sum the move kept in step, against the sum afresh */
    double ss1 = observed_ss(ax, y, obs);
    CHECK(fabs(ss - ss1) <= 1e-9 * ss1, "observed residual kept in step (%.12g vs %.12g)", ss,
          ss1);
    CHECK(moved > W, "moves carried the censored data (%zu of %d moved)", moved, 2 * W);
    CHECK(below == 0, "no censored datum below its level (%zu pixel-sweeps)", below);
    blur(fft, otf, x, tmp, spec);
    double err = 0, lo = INFINITY, hi = -INFINITY;
    for (size_t i = 0; i < N; i++) {
        err = fmax(err, fabs(tmp[i] - ax[i]));
        lo = fmin(lo, tmp[i]), hi = fmax(hi, tmp[i]);
    }
    CHECK(err <= 1e-9 * (hi - lo), "A x kept by the move matches A x by FFT (%g)", err);
    pp_fieldscale_free(fs);
    pp_adapt_free(a);
    pp_fft_free_buffer(x), pp_fft_free_buffer(ax), pp_fft_free_buffer(y);
    pp_fft_free_buffer(wh), pp_fft_free_buffer(wv), pp_fft_free_buffer(tmp);
    pp_fft_free_buffer(otf), pp_fft_free_buffer(spec);
    pp_fft_free(fft);
    return pp_test_done();
}
