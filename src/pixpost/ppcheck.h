/* pixpost — the posterior predictive check: does the fitted model explain
 * the frame?
 *
 * Standardised residuals r = (y - E[y | x-bar]) / sqrt(Var[y | x-bar]) over
 * the observed pixels, x-bar the posterior mean, with (in camera units):
 *   gaussian          E = A x-bar,               Var = 1/lambda
 *                     (lambda: its posterior mean, or 1/sigma^2 when fixed)
 *   poisson, camera   E = O + G (A x-bar + b),   Var = G^2 (max(A x-bar + b, 0)
 *                                                    + R^2) + q
 * G the gain (ADU per electron), O the offset, R the read noise (electrons,
 * 0 for poisson), b the background (photons per pixel), q = 1/12 ADU^2 (the
 * digitiser's rounding of the continuous read noise) for camera noise when
 * every pixel of the frame is a whole number, else 0 (poisson counts are
 * whole numbers by themselves). A is the blur with the run's boundary (pp_model_blur).
 * Pixels left out (NaN in the residual map): non-finite frame pixels
 * (unobserved), and with --boundary pad the band of the kernel's radius
 * along the edges, where A x-bar would need the scene outside the frame
 * (which the sampler estimated but does not report).
 *
 * Figures: mean and variance of r, the share beyond +-3, the lag-1
 * autocorrelation along rows and down columns, and the residual's power in
 * the PSF's band (frequencies where the transfer function |A(k)| is between
 * 0.1 and 0.9) as a share of its power over all frequencies but 0, divided
 * by that share for white noise (1 for white residuals); and the
 * correlation of the unscaled residual y - E[y] with the fitted image's
 * curvature at the PSF's scale, -Laplacian(A x-bar) (5 points): positive
 * when the data are sharper than the model can make them (a PSF too wide;
 * an offset too low also gives some, which is why the warning names the
 * offset when the variance is low too), negative when smoother.
 *
 * Using x-bar rather than draws of x makes the residuals slightly smaller
 * and anti-correlated: the fit absorbs part of the noise (about p/N of the
 * variance, p the effective number of parameters). The thresholds below
 * allow for it: they were set from frames drawn from the model
 * (bench/ppcheck/RESULTS.md, README "Checks of the data and the fit") so
 * that a correct model fires on at most 2 % of frames, and so that an
 * inverted gain, an offset 20 % too low and a PSF 30 % too wide fire.
 * Measured there (48 x 48 bead frames, camera gain 2, offset 100, read
 * 1.5 e-): 0 alarms on 100 correct frames, whose figures ranged over
 * variance 0.82-1.02, lag-1 -0.18..0.01, band power 0.36-0.82, curvature
 * -0.01..0.22; caught 20 of 20 under each misfit (variance 4.2-5.5 with
 * the gain inverted, 0.29-0.49 with the offset low, curvature 0.33-0.63
 * with the PSF wide). The curvature threshold 0.28 lies between 0.22 and
 * 0.33 of that run; the others are round values beyond the correct range.
 * Under Gaussian noise (lambda sampled, adaptive prior): 0 alarms on 30.
 * A misfit fires when its figure
 * passes the threshold AND differs from the white-noise value by more than
 * 4 of its sampling sd at this number of pixels (so a tiny frame needs a
 * larger effect):
 *   variance   > PP_PPCHECK_VAR_HI or < PP_PPCHECK_VAR_LO
 *   mean       |mean| > PP_PPCHECK_MEAN
 *   tails      share beyond +-3 > PP_PPCHECK_BEYOND3 (0.27 % for Gaussian
 *              residuals)
 *   structure  |curvature correlation| > PP_PPCHECK_CURV, max(lag-1 row,
 *              column) > PP_PPCHECK_LAG1, or the PSF-band power ratio >
 *              PP_PPCHECK_BAND
 * Each misfit is one warning sentence naming the likely cause.
 *
 * Volumes (depth > 1): the same figures over the voxels used; the lag-1
 * correlations, the curvature (5 points in the slice) and the band power
 * within each slice, the band from the transfer function of the kernel
 * summed over z (the 3-D transfer function's kz = 0 plane, Fourier slice
 * theorem), powers and weights summed over the slices. With pad the band
 * of the kernel's half-depth is left out at the first and last slices.
 * The thresholds are the frames' (not re-measured on volumes).
 * tests/ref_ppcheck_volume.py recomputes the figures with numpy.
 * Measured on dim bead frames (30-150 photons per bead, bench/ppcheck/
 * dim.py): 0 false alarms in 40, but 0 of 20 frames with the PSF 30 %
 * too wide caught (curvature 0.12-0.25 against 0.16-0.26 with the right
 * PSF): the check has no power there.
 */
#ifndef PIXPOST_PPCHECK_H
#define PIXPOST_PPCHECK_H

#include "pixpost/image.h"
#include "pixpost/model.h"
#include "pixpost/noise.h"
#include "pixpost/sampler.h"
#include <stddef.h>

#define PP_PPCHECK_VAR_HI 1.5
#define PP_PPCHECK_VAR_LO 0.6
#define PP_PPCHECK_MEAN 0.25
#define PP_PPCHECK_BEYOND3 0.01
#define PP_PPCHECK_LAG1 0.15
#define PP_PPCHECK_BAND 1.5
#define PP_PPCHECK_CURV 0.28
#define PP_PPCHECK_OTF_LO 0.1
#define PP_PPCHECK_OTF_HI 0.9

/* What the check needs: the frame y (NaN = unobserved), the posterior mean
 * x-bar of the same size (photons per pixel for the photon models, frame
 * units for gaussian), the PSF kernel and boundary of the run, the noise
 * spec, lambda (gaussian only) and the background b (photon models). */
typedef struct pp_ppcheck_input {
    const pp_image *frame, *mean, *psf;
    pp_boundary boundary;
    pp_noise_spec noise;
    double lambda;
    double background;
    /* The names of the noise model, PSF and background settings in the
     * warnings (a PP_SET_COUNT table, include/pixpost/setting.h); NULL:
     * the library's words. pp_ppcheck_sampler takes the configuration's
     * setting_names. */
    const char *const *setting_names;
} pp_ppcheck_input;

enum { PP_PPCHECK_MAX_WARNINGS = 4 };

typedef struct pp_ppcheck {
    size_t used; /* pixels in the figures */
    double mean, var, beyond3, lag1_row, lag1_col;
    double band_ratio; /* PSF-band power share / white noise's (NaN: empty band) */
    double band_white; /* white noise's share of the band */
    double curvature;  /* correlation of y - E[y] with -Laplacian(A x-bar) */
    int quantised;     /* q = 1/12 was added */
    size_t nwarnings;
    char warning[PP_PPCHECK_MAX_WARNINGS][640];
    pp_image *residual; /* frame- (volume-) sized r, NaN where left out; owned */
} pp_ppcheck;

/* Computes the figures and warnings into a new *out (free with
 * pp_ppcheck_free). Fails with PP_ERR_ARG when the images differ in size,
 * the kernel does not fit in the slices, a 3-D kernel comes with a frame,
 * or fewer than 16 pixels are left; PP_ERR_NOMEM. A volume (depth > 1) is
 * checked as above. Nothing is kept from in. Cost: one blur (two FFTs of
 * the frame's size or a padded grid), one r2c per slice for the band
 * power, a few passes. */
pp_status pp_ppcheck_run(const pp_ppcheck_input *in, pp_ppcheck **out);

/* The same for a finished run: x-bar = pp_sampler_mean(s), the noise,
 * boundary and background of the configuration used, lambda the posterior
 * mean of the "lambda" trace column (1/sigma^2 when fixed); psf is the
 * kernel the run was given. With a sampled PSF width (psf.width_auto) it
 * fails with PP_ERR_UNSUPPORTED: the prediction E[A x] would need each
 * draw's width, and A x-bar at the mean width is not it (src/ppcheck.c
 * says what that gave). */
pp_status pp_ppcheck_sampler(const pp_sampler *s, const pp_image *frame, const pp_image *psf,
                             pp_ppcheck **out);

/* "fits" when there is no warning, else "misfit" (static text). */
const char *pp_ppcheck_verdict(const pp_ppcheck *p);

/* NULL is accepted. */
void pp_ppcheck_free(pp_ppcheck *p);

#endif
