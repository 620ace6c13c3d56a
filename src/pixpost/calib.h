/* pixpost — camera calibration: offset, gain and read noise.
 *
 * Two ways to the numbers `--noise camera:gain=G,offset=O,read=R` needs:
 *
 * 1. Photon transfer (EMVA Standard 1288, "Standard for Characterization of
 *    Image Sensors and Cameras", release 3.1, in effect from December
 *    2016; formulas as we remember them, checked against our own
 *    simulations): a series of dark frames and
 *    one series of evenly lit ("flat") frames per light level. Per series,
 *    pp_series accumulates the per-pixel temporal statistics frame by frame
 *    (the frames are not kept); pp_ptc_fit fits the photon transfer line
 *      var(y) - var(dark) = K (mean(y) - mean(dark))
 *    whose slope K is the gain in ADU per electron.
 * 2. One frame (Foi, Trimeche, Katkovnik & Egiazarian, "Practical
 *    Poissonian-Gaussian noise modeling and fitting for single-image raw-
 *    data", IEEE Trans. Image Process. 17(10), 2008): pp_noise_fit_frame fits
 *    var = a mean + b over the smooth parts of one frame. a is the gain; b
 *    mixes offset O and read noise R (b = K^2 R^2 - K O), which one frame
 *    cannot separate.
 *
 * Units: frame values and means in ADU, variances in ADU^2, read noise in
 * electrons rms. Pixels that are NaN (unobserved) or >= the saturation value
 * take no part anywhere. The library only computes and writes JSON; the
 * command line (`pixpost calibrate`) reads the files and prints.
 */
#ifndef PIXPOST_CALIB_H
#define PIXPOST_CALIB_H

#include "pixpost/image.h"
#include "pixpost/noise.h"
#include "pixpost/status.h"
#include <stddef.h>
#include <stdio.h>

/* ---- one series of frames at one light level ------------------------- */

/* Opaque accumulator of per-pixel temporal statistics (count, mean and sum
 * of squared deviations per pixel, Welford's update, in double) plus each
 * frame's mean. Memory: 2 doubles and 1 counter per pixel. */
typedef struct pp_series pp_series;

/* What a series says about itself (pp_series_stats). A pixel counts only if
 * it is finite and below saturation in every frame of the series. */
typedef struct pp_series_stats {
    size_t frames;          /* frames added */
    size_t pixels;          /* pixels used (valid in every frame) */
    size_t saturated;       /* pixels at or above saturation in some frame */
    double mean;            /* ADU, over the pixels used and all frames */
    double mean_se;         /* ADU, sqrt(temporal var / (frames * pixels)) */
    double temporal_var;    /* ADU^2: per-pixel variance over time, averaged
                             * over pixels, after removing each frame's mean
                             * fluctuation (EMVA 1288's difference of frames) */
    double temporal_var_se; /* its standard error, from the spread of the
                             * per-pixel variances over the pixels */
    double spatial_var;     /* ADU^2: variance over pixels of the per-pixel
                             * means, less their temporal part (fixed-pattern
                             * noise: DSNU for darks, PRNU for flats) */
} pp_series_stats;

/* A series for frames of width x height; pixel values >= saturation are
 * excluded (pass INFINITY for none). Fails with PP_ERR_ARG for a zero size
 * and PP_ERR_LIMIT when the per-pixel arrays' size overflows. */
pp_status pp_series_create(size_t width, size_t height, double saturation, pp_series **out);

/* Adds one frame. PP_ERR_ARG when its size differs from the series' (the
 * message gives both sizes; the caller adds the file name). The frame is not
 * kept. */
pp_status pp_series_add(pp_series *s, const pp_image *frame);

/* The statistics so far. PP_ERR_ARG with fewer than 2 frames or fewer than
 * 2 pixels used. */
pp_status pp_series_stats_get(const pp_series *s, pp_series_stats *out);

/* Frees the series; NULL is accepted. */
void pp_series_free(pp_series *s);

/* ---- photon transfer fit (EMVA 1288) --------------------------------- */

#define PP_PTC_MAX_LEVELS 64

/* Quantisation noise of integer ADU: a uniform rounding error has variance
 * 1/12 ADU^2 (EMVA 1288's sigma_q^2). */
#define PP_QUANT_VAR (1.0 / 12.0)

typedef struct pp_ptc_result {
    pp_series_stats dark;
    size_t nlevels;
    pp_series_stats level[PP_PTC_MAX_LEVELS];
    double exposure[PP_PTC_MAX_LEVELS]; /* as given, NaN when not given */
    double offset, offset_se;           /* ADU: the darks' mean */
    double gain, gain_se;               /* K, ADU per electron: slope of the fit */
    double intercept, intercept_se;     /* the fit's variance at the dark level, ADU^2 */
    double chi2_red;                    /* chi^2 / (points - 2) of the weighted fit */
    double read, read_se;               /* electrons: sqrt(dark temporal var) / K, the
                                         * read noise the camera model needs (quantisation
                                         * noise included: the model has no other place
                                         * for it) */
    double read_emva;                   /* electrons: sqrt(dark var - 1/12) / K, EMVA 1288's
                                         * sigma_d (quantisation noise removed; NaN when
                                         * the dark variance is below 1/12) */
    double dsnu;                        /* electrons: sqrt(dark spatial var) / K */
    double linearity_error;             /* percent, see linearity_from_exposure */
    int linearity_from_exposure;        /* 1: EMVA 1288's linearity error of the mean
                                         * signal against exposure; 0: half the spread
                                         * of the relative residuals of the variance fit */
    double residual[PP_PTC_MAX_LEVELS]; /* relative residual of each level's
                                         * variance from the fit */
} pp_ptc_result;

/* The photon transfer fit. dark: the dark series' statistics; level[0 ..
 * nlevels-1] one flat series per light level; exposure: NULL or nlevels
 * exposure times (any unit) for the linearity error.
 *
 * Fit: weighted least squares of var_i = K (mean_i - mean_dark) + c over the
 * points of the darks (at 0) and of every level, weights 1 / se(var_i)^2;
 * the standard errors come from the inverse normal matrix, scaled up by
 * sqrt(chi2_red) when chi2_red > 1 (common practice for a fit whose scatter
 * exceeds its stated errors). With the darks as a point, their variance's
 * uncertainty reaches K's. EMVA 1288 fits through the dark point after
 * subtracting the dark variance; this is the same line with its error.
 *
 * Refused (PP_ERR_ARG, message naming the level as "flat level N", 1-based,
 * and the fix): fewer than 2 levels; a level no brighter than the darks
 * (mean signal below 5 times its standard error above them); levels whose
 * mean signals all lie within 20 % of the brightest ("all at one level");
 * a level with more than 1 % of its pixels saturated; a fitted gain that is
 * not positive. */
pp_status pp_ptc_fit(const pp_series_stats *dark, const pp_series_stats *level, size_t nlevels,
                     const double *exposure, pp_ptc_result *out);

/* ---- single-frame Poisson-Gaussian fit (Foi et al. 2008) -------------- */

#define PP_FRAME_FIT_MAX_LEVELS 16

typedef struct pp_frame_fit_config {
    double saturation; /* pixel values >= this are excluded (default INFINITY) */
    size_t per_level;  /* smooth blocks per level set, at least (default 150) */
    size_t max_levels; /* level sets, at most (default 16, <= PP_FRAME_FIT_MAX_LEVELS) */
} pp_frame_fit_config;

void pp_frame_fit_defaults(pp_frame_fit_config *cfg);

typedef struct pp_noise_fit {
    double a, a_se;                   /* var = a * mean + b: a is the gain K, ADU per electron */
    double b, b_se;                   /* ADU^2; b = K^2 R^2 - K O (+ 1/12 for integer data) */
    double cov_ab;                    /* covariance of a and b */
    double chi2_red;                  /* of the weighted fit over the level sets */
    double zero_level, zero_level_se; /* ADU: -b/a, where the fitted variance is
                                       * 0; the offset when read noise is 0, a
                                       * lower bound of the offset otherwise */
    double darkest;                   /* ADU: mean of the darkest level set */
    size_t blocks, smooth;            /* 2x2 blocks usable (finite, unsaturated, with 8 usable
                                       * neighbours) / of those, judged smooth */
    size_t nlevels;
    double level_mean[PP_FRAME_FIT_MAX_LEVELS]; /* ADU */
    double level_var[PP_FRAME_FIT_MAX_LEVELS];  /* ADU^2 */
    double level_var_se[PP_FRAME_FIT_MAX_LEVELS];
    size_t level_n[PP_FRAME_FIT_MAX_LEVELS];
    int gain_determined; /* a >= 3 a_se: the noise grows with the signal
                          * clearly enough to give a gain (3 standard errors,
                          * common practice); 0: the frame cannot separate
                          * gain from offset (too narrow a range of levels,
                          * or no signal-dependent noise) */
} pp_noise_fit;

/* Fits var = a mean + b on one frame (cfg NULL: defaults). Method (after
 * Foi et al. 2008, section IV, with our own smoothness test): the frame is
 * cut into 2x2 blocks; each gives a local mean A (the Haar approximation)
 * and a diagonal Haar detail D = (p00 - p01 - p10 + p11)/2, which removes
 * the block's level and any linear gradient; E[D^2] = a mu + b for a
 * block of true level mu. A block is smooth when a plane fits the means A
 * of its 8 neighbouring blocks within the noise (residual sum of squares
 * below the 99.5 % point of chi^2 with 5 degrees of freedom, the noise from
 * a first, robust fit) and the details D of the 48 blocks around it (7x7,
 * the block left out) sum in squares below the 95 % point of chi^2 with 48
 * degrees of freedom times the noise (texture and edges at the pixel
 * scale); selection and fit alternate 3 times. Smooth blocks are sorted by their neighbours' mean
 * (not their own A, whose noise would flatten the slope) into equal-count
 * level sets; each gives (mean A, mean D^2); the line is fitted by
 * iteratively reweighted
 * least squares with weights n / (2 kappa var^2) (kappa: the measured
 * kurtosis factor of D), standard errors scaled by sqrt(chi2_red) when
 * above 1. Cost: a few passes over the frame and one sort.
 * NaN (unobserved) and saturated pixels are skipped: a block with one takes
 * no part, nor do its neighbours' judgements. A volume (depth > 1): the
 * blocks of all its slices are pooled, each judged within its own slice
 * (one camera took them all). Fails (PP_ERR_ARG) for frames (slices)
 * under 16 x 16 pixels or with fewer than 3 * per_level smooth blocks. */
pp_status pp_noise_fit_frame(const pp_image *frame, const pp_frame_fit_config *cfg,
                             pp_noise_fit *out);

/* ---- from a fit to a --noise spec ------------------------------------ */

/* camera:gain=K,offset=O,read=R from a photon transfer fit. */
void pp_noise_from_ptc(const pp_ptc_result *r, pp_noise_spec *out);

/* The spec `--noise auto` uses, from a single-frame fit. One frame fixes a
 * and b only; we take the offset O as the darkest level set's mean (that
 * part of the frame is treated as holding no photons: any background there
 * goes into the offset) but not below the zero-signal level -b/a, and the
 * read noise from what is left of the variance there: R = sqrt(a O + b) / a.
 * The fitted variance a y + b is then kept at every level. Without
 * fit->gain_determined the result is plain `gaussian` (variance sampled).
 * Returns 1 when a camera spec was made, 0 for the gaussian fallback. */
int pp_noise_from_frame_fit(const pp_noise_fit *fit, pp_noise_spec *out);

/* Rounds a photon spec to what the fits support: gain and read noise to 4
 * significant digits, offset to 6 (their relative standard errors are
 * rarely below 1e-3 and 1e-5). Other kinds are left as they are. */
void pp_noise_round(pp_noise_spec *s);

/* ---- JSON ------------------------------------------------------------ */

/* Writes a fit as one JSON object (no trailing newline), its keys indented
 * by `indent` spaces: {"method": ..., "a": ..., ...}. chosen: the spec made
 * from it (may be NULL). Used by calibrate's file and summary.json's
 * "noise_estimate". */
void pp_noise_fit_json(FILE *f, const pp_noise_fit *fit, const pp_noise_spec *chosen, int indent);

/* Writes a calibration file atomically: {"pixpost_calibration": 1,
 * "noise": spec text, "photon_transfer": {...} or "single_frame": {...}}.
 * Exactly one of ptc and fit is non-NULL. */
pp_status pp_calib_write_json(const char *path, const pp_ptc_result *ptc, const pp_noise_fit *fit,
                              const pp_noise_spec *spec);

#endif
