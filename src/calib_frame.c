/* pixpost — the Poisson-Gaussian noise of one frame, var(y) = a E[y] + b,
 * after Foi, Trimeche, Katkovnik & Egiazarian, "Practical Poissonian-
 * Gaussian noise modeling and fitting for single-image raw-data", IEEE
 * Trans. Image Process. 17(10), 2008. Their algorithm, as we remember it:
 * the finest-scale wavelet detail and approximation coefficients, a
 * smoothness mask from an edge detector on the approximation, level sets
 * of the smooth coefficients by their approximation value, and a maximum-
 * likelihood fit of the level sets' (mean, sd) pairs (they also model
 * clipping, which we leave to the saturation value). Contract and method
 * summary in src/pixpost/calib.h.
 *
 * Our choices, each measured on simulated camera frames (README,
 * "Calibrating the camera"; bench/calib_frame.py):
 * - the finest Haar transform on 2x2 blocks (a Daubechies wavelet in their
 *   paper, as we remember; Haar is db1). The blocks do not overlap, so
 *   their details are independent;
 * - a block's level set and its smoothness are judged from its 8
 *   neighbours only, never from the block itself. Sorting blocks by their
 *   own mean A flattens the slope: A carries the block's read noise, which
 *   D does not see (E[D^2 | A] has slope K mu / (mu + R^2) within a patch
 *   of true level mu, photons), so wherever the true levels spread less
 *   than that noise (dim frames) the fit came out low: on the demo's
 *   camera frame (true gain 0.5) 0.357, interval 0.289..0.426; with the
 *   neighbours' mean as the key, 0.486 (0.366..0.605). A level set's mean
 *   is still the mean of its blocks' own A, an unbiased estimate of their
 *   true level because neither the sorting nor the selection looks at it;
 * - smoothness: a plane through the 8 neighbouring block means; a larger
 *   5x5 neighbourhood kept fewer blocks and gave wider intervals (median
 *   relative standard error of the gain 3.9 % against 2.3 % on 48
 *   simulated 256^2 frames in our numpy prototype) without less bias;
 * - and the detail test (detail_quiet): the plane test passes texture and
 *   edges at the pixel scale (an unblurred photograph), whose finest
 *   details then inflate the variance. The 48 blocks around (7x7, the
 *   block left out, so its own D stays unselected) must have their D^2
 *   sum below the 95 % chi^2 point of the noise. On unblurred 256^2
 *   frames of 14 kinds (bench/calib_frame.py --kinds dev, 112 frames) the
 *   gain came within 10 % in 44 % of them (34 % before; the worst errors
 *   of 4-23x became refusals of grass and gravel); 5x5 at 99 % or a test
 *   on the largest neighbouring D^2 did no better; blurred frames as
 *   before (README). What is left on photographs is their own grain
 *   (bench/NOTES.md, 2026-12-05);
 * - the level sets' variances by plain means of D^2 (efficient); the first
 *   pass, before any block is judged, uses the robust 1.4826 median |D|;
 * - the line by iteratively reweighted least squares on the variances
 *   (not their maximum likelihood on standard deviations).
 * Cost: five passes over the frame (the detail test reads 48 details per
 * block in three of them), one sort of the blocks (n log n) per pass, and
 * a sort per level set for the robust first pass.
 */
#include "calib_internal.h"
#include "internal.h"
#include "pixpost/calib.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* scipy.stats.chi2.ppf(0.995, 5) / 5: the residual sum of squares of a
 * plane through 8 block means (5 degrees of freedom) over 5 noise
 * variances, 99.5 % point. */
#define SMOOTH_LIMIT (16.74960234363904 / 5.0)
/* The detail test (detail_quiet): the 7x7 blocks around a block (48
 * neighbours) and the 95 % point (z = scipy.stats.norm.ppf(0.95)). */
#define DETAIL_RADIUS 3
#define DETAIL_Z 1.6448536269514722
#define MAD_TO_SD 1.482602218505602 /* 1 / Phi^-1(3/4), normal consistency */
#define IRLS_STEPS 20
#define SELECT_PASSES 3 /* selection and fit in turn (the tests use the fit) */

typedef struct block {
    double a, d; /* Haar approximation (mean of 4) and diagonal detail */
    double key;  /* the mean of the 8 neighbouring blocks' a: sorts into level sets */
} block;

typedef struct fit_state {
    double a, b, cov[3], chi2;
    double floor_var; /* variances below this are taken as this (weights) */
} fit_state;

void pp_frame_fit_defaults(pp_frame_fit_config *cfg)
{
    cfg->saturation = INFINITY;
    cfg->per_level = 150;
    cfg->max_levels = PP_FRAME_FIT_MAX_LEVELS;
}

static int by_key(const void *x, const void *y)
{
    double p = ((const block *)x)->key, q = ((const block *)y)->key;
    return (p > q) - (p < q);
}

static int by_value(const void *x, const void *y)
{
    double p = *(const double *)x, q = *(const double *)y;
    return (p > q) - (p < q);
}

static int usable(double v, double saturation)
{
    return isfinite(v) && v < saturation;
}

/* A and D of every 2x2 block of each slice; valid[k] = all four pixels
 * usable. A volume's slices are stacked as bands of sh = height / 2 block
 * rows, each but the last followed by DETAIL_RADIUS rows of invalid blocks
 * (bh rows in all), so that no block's neighbourhood or detail test
 * reaches into another slice; a frame is one band. */
static void haar_blocks(const pp_image *f, double saturation, size_t bh, size_t bw, block *blk,
                        unsigned char *valid)
{
    size_t sh = f->height / 2;
    for (size_t i = 0; i < bh; i++) {
        size_t z = i / (sh + DETAIL_RADIUS), iz = i % (sh + DETAIL_RADIUS);
        for (size_t j = 0; j < bw; j++) {
            size_t k = i * bw + j;
            if (iz >= sh) { /* a gap between slices */
                valid[k] = 0;
                blk[k].a = blk[k].d = 0;
                continue;
            }
            const double *r0 = f->data + (z * f->height + 2 * iz) * f->width + 2 * j;
            const double *r1 = r0 + f->width;
            valid[k] = usable(r0[0], saturation) && usable(r0[1], saturation) &&
                      usable(r1[0], saturation) && usable(r1[1], saturation);
            blk[k].a = valid[k] ? (r0[0] + r0[1] + r1[0] + r1[1]) / 4 : 0;
            blk[k].d = valid[k] ? (r0[0] - r0[1] - r1[0] + r1[1]) / 2 : 0;
        }
    }
}

/* Level sets of the n blocks in sel (sorted here by key): equal counts;
 * each level set's mean is that of the blocks' own a. With
 * robust != 0 the variance is (1.4826 median |D|)^2, else mean D^2; m4
 * gets mean D^4 (kurtosis) when not robust. scratch holds n doubles. */
static size_t level_sets(block *sel, size_t n, const pp_frame_fit_config *cfg, int robust,
                         pp_noise_fit *out, double *m4, double *scratch)
{
    size_t S = n / cfg->per_level;
    if (S > cfg->max_levels)
        S = cfg->max_levels;
    qsort(sel, n, sizeof *sel, by_key);
    for (size_t s = 0; s < S; s++) {
        size_t lo = n * s / S, hi = n * (s + 1) / S, m = hi - lo;
        double sa = 0, s2 = 0, s4 = 0;
        for (size_t k = lo; k < hi; k++) {
            double d2 = sel[k].d * sel[k].d;
            sa += sel[k].a;
            s2 += d2;
            s4 += d2 * d2;
            scratch[k - lo] = fabs(sel[k].d);
        }
        out->level_mean[s] = sa / (double)m;
        out->level_n[s] = m;
        m4[s] = s4 / (double)m;
        if (robust) {
            qsort(scratch, m, sizeof *scratch, by_value);
            double med = m % 2 ? scratch[m / 2] : (scratch[m / 2 - 1] + scratch[m / 2]) / 2;
            out->level_var[s] = MAD_TO_SD * MAD_TO_SD * med * med;
        } else
            out->level_var[s] = s2 / (double)m;
    }
    out->nlevels = S;
    return S;
}

/* var = a mean + b over the level sets by iteratively reweighted least
 * squares, weights n / (2 kappa var_fit^2) (the variance of a mean of n
 * squared zero-mean details, kappa = 1 for normal ones). */
static int irls(pp_noise_fit *ls, double kappa, fit_state *fs)
{
    size_t S = ls->nlevels;
    double w[PP_FRAME_FIT_MAX_LEVELS], top = 0;
    for (size_t s = 0; s < S; s++)
        top = fmax(top, ls->level_var[s]);
    fs->floor_var = 1e-3 * top;
    if (!(top > 0))
        return -1;
    for (size_t s = 0; s < S; s++)
        w[s] = (double)ls->level_n[s] / (2 * kappa * pow(fmax(ls->level_var[s], fs->floor_var), 2));
    for (int it = 0; it < IRLS_STEPS; it++) {
        if (pp_line_fit(ls->level_mean, ls->level_var, w, S, &fs->a, &fs->b, fs->cov, &fs->chi2))
            return -1;
        for (size_t s = 0; s < S; s++) {
            double v = fmax(fs->a * ls->level_mean[s] + fs->b, fs->floor_var);
            w[s] = (double)ls->level_n[s] / (2 * kappa * v * v);
        }
    }
    for (size_t s = 0; s < S; s++) /* the standard errors the last weights imply */
        ls->level_var_se[s] = 1 / sqrt(w[s]);
    return 0;
}

/* The 8 blocks around (i, j): their mean (*key) and the residual sum of
 * squares of a plane through their means, over the noise variance of one
 * mean (var / 4) times its 5 degrees of freedom (*misfit; fs NULL: not
 * computed). The centre block takes no part, so neither its level set nor
 * its being judged smooth depends on its own noise (see the file's
 * opening comment). Returns 0, or -1 when a block of the 3x3 is unusable. */
static int neighbours(const block *blk, const unsigned char *valid, size_t bw, size_t i, size_t j,
                      const fit_state *fs, double *key, double *misfit)
{
    double v[8], m = 0, su = 0, sv = 0;
    int n = 0;
    for (int u = -1; u <= 1; u++)
        for (int t = -1; t <= 1; t++) {
            size_t k = (i + (size_t)(u + 1) - 1) * bw + j + (size_t)(t + 1) - 1;
            if (!valid[k])
                return -1;
            if (u == 0 && t == 0)
                continue;
            v[n] = blk[k].a;
            m += v[n] / 8;
            su += u * v[n];
            sv += t * v[n];
            n++;
        }
    *key = m;
    if (!fs)
        return 0;
    double rss = 0;
    for (int q = 0; q < 8; q++)
        rss += (v[q] - m) * (v[q] - m);
    rss -= (su * su + sv * sv) / 6; /* sum of u^2 (and of t^2) over the 8 is 6 */
    double var = fmax(fs->a * m + fs->b, fs->floor_var);
    *misfit = rss / (5 * var / 4);
    return 0;
}

/* scipy.stats.chi2.ppf(p, k) by Wilson & Hilferty's cube-root normal
 * approximation (1931; within 0.12 % of the exact point for k >= 8 at
 * p = 0.95, checked against scipy for k = 8..48). z: the normal p point. */
static double chi2_point(double k, double z)
{
    double c = 2 / (9 * k), t = 1 - c + z * sqrt(c);
    return k * t * t * t;
}

/* The detail test: the usable blocks within DETAIL_RADIUS of (i, j), the
 * block itself left out, have their squared details sum to less than the
 * 95 % point of chi^2 with as many degrees of freedom, in units of the
 * noise variance var the current fit gives at the block's key (their D are
 * independent N(0, var) where the patch is smooth). Texture and edges at
 * the pixel scale raise the finest details around a block while its
 * neighbours' means can still lie on a plane; Foi et al.'s smoothness mask
 * looks at the same detail band. Returns 1 when the block passes. */
static int detail_quiet(const block *blk, const unsigned char *valid, size_t bh, size_t bw,
                        size_t i, size_t j, double var)
{
    size_t i0 = i >= DETAIL_RADIUS ? i - DETAIL_RADIUS : 0;
    size_t j0 = j >= DETAIL_RADIUS ? j - DETAIL_RADIUS : 0;
    size_t i1 = i + DETAIL_RADIUS < bh ? i + DETAIL_RADIUS : bh - 1;
    size_t j1 = j + DETAIL_RADIUS < bw ? j + DETAIL_RADIUS : bw - 1;
    double s = 0;
    int k = 0;
    for (size_t u = i0; u <= i1; u++)
        for (size_t t = j0; t <= j1; t++) {
            size_t q = u * bw + t;
            if ((u == i && t == j) || !valid[q])
                continue;
            s += blk[q].d * blk[q].d;
            k++;
        }
    return k >= 8 && s / var < chi2_point(k, DETAIL_Z);
}

/* Copies the blocks with a usable 3x3 neighbourhood into sel, with their
 * keys; with fs, only those whose neighbourhood is smooth (the plane test
 * on the 8 neighbours' means and the detail test). Returns their number. */
static size_t select_blocks(const block *blk, const unsigned char *valid, size_t bh, size_t bw,
                            const fit_state *fs, block *sel)
{
    size_t n = 0;
    for (size_t i = 1; i + 1 < bh; i++)
        for (size_t j = 1; j + 1 < bw; j++) {
            double key, t = 0;
            if (neighbours(blk, valid, bw, i, j, fs, &key, &t) || t >= SMOOTH_LIMIT)
                continue;
            if (fs && !detail_quiet(blk, valid, bh, bw, i, j,
                                    fmax(fs->a * key + fs->b, fs->floor_var)))
                continue;
            sel[n] = blk[i * bw + j];
            sel[n++].key = key;
        }
    return n;
}

static double kurtosis_factor(const pp_noise_fit *ls, const double *m4)
{
    double num = 0, den = 0;
    for (size_t s = 0; s < ls->nlevels; s++) {
        double v = ls->level_var[s], n = (double)ls->level_n[s];
        num += n * (m4[s] - v * v);
        den += n * 2 * v * v;
    }
    return den > 0 ? fmax(num / den, 0.5) : 1.0;
}

static void finish(pp_noise_fit *out, const fit_state *fs)
{
    size_t S = out->nlevels;
    out->chi2_red = S > 2 ? fs->chi2 / (double)(S - 2) : NAN;
    double scale = S > 2 ? fmax(1.0, out->chi2_red) : 1.0;
    out->a = fs->a;
    out->b = fs->b;
    out->a_se = sqrt(fs->cov[0] * scale);
    out->b_se = sqrt(fs->cov[2] * scale);
    out->cov_ab = fs->cov[1] * scale;
    out->darkest = out->level_mean[0];
    if (out->a > 0) {
        double a = out->a, b = out->b;
        out->zero_level = -b / a;
        double ga = b / (a * a), gb = -1 / a;
        out->zero_level_se =
            sqrt(fmax(ga * ga * out->a_se * out->a_se + gb * gb * out->b_se * out->b_se +
                          2 * ga * gb * out->cov_ab,
                      0));
    } else {
        out->zero_level = NAN;
        out->zero_level_se = NAN;
    }
    out->gain_determined = out->a > 0 && out->a >= 3 * out->a_se;
}

static pp_status fit_blocks(block *blk, const unsigned char *valid, size_t bh, size_t bw,
                            const pp_frame_fit_config *cfg, block *sel, double *scratch,
                            pp_noise_fit *out)
{
    size_t n = select_blocks(blk, valid, bh, bw, NULL, sel);
    out->blocks = n;
    double m4[PP_FRAME_FIT_MAX_LEVELS];
    fit_state fs;
    if (n < 3 * cfg->per_level || level_sets(sel, n, cfg, 1, out, m4, scratch) < 3)
        return pp_fail(PP_ERR_ARG,
                       "single-frame noise fit: %zu usable 2x2 blocks (finite, unsaturated, "
                       "with usable neighbours), %zu needed; give a larger frame",
                       n, 3 * cfg->per_level);
    if (irls(out, 1.0, &fs))
        return pp_fail(PP_ERR_ARG, "single-frame noise fit: the frame has no noise to fit (its "
                                   "pixel-to-pixel differences are all 0, or it is constant)");
    for (int pass = 0; pass < SELECT_PASSES; pass++) {
        size_t m = select_blocks(blk, valid, bh, bw, &fs, sel);
        out->smooth = m;
        if (m < 3 * cfg->per_level)
            return pp_fail(PP_ERR_ARG,
                           "single-frame noise fit: only %zu of %zu blocks are smooth, %zu "
                           "needed; the frame has too little flat area (or too much detail at "
                           "the pixel scale) for this fit: calibrate with darks and flats",
                           m, n, 3 * cfg->per_level);
        level_sets(sel, m, cfg, 0, out, m4, scratch);
        if (irls(out, kurtosis_factor(out, m4), &fs))
            return pp_fail(PP_ERR_NUMERIC, "single-frame noise fit: the level sets give no "
                                           "slope (the frame is constant)");
    }
    finish(out, &fs);
    return PP_OK;
}

pp_status pp_noise_fit_frame(const pp_image *frame, const pp_frame_fit_config *cfg,
                             pp_noise_fit *out)
{
    pp_frame_fit_config def;
    if (!cfg) {
        pp_frame_fit_defaults(&def);
        cfg = &def;
    }
    memset(out, 0, sizeof *out);
    if (cfg->per_level < 2 || cfg->max_levels < 3 || cfg->max_levels > PP_FRAME_FIT_MAX_LEVELS)
        return pp_fail(PP_ERR_ARG,
                       "single-frame noise fit: per_level must be >= 2 and "
                       "max_levels 3 to %d",
                       PP_FRAME_FIT_MAX_LEVELS);
    if (frame->width < 16 || frame->height < 16)
        return pp_fail(PP_ERR_ARG,
                       "single-frame noise fit: the frame is %zux%zu; at least 16x16 is needed",
                       frame->width, frame->height);
    /* a volume: its slices' block bands with gaps between (haar_blocks) */
    size_t bh = frame->depth * (frame->height / 2) + (frame->depth - 1) * DETAIL_RADIUS;
    size_t bw = frame->width / 2, nb = bh * bw;
    block *blk = malloc(nb * sizeof *blk), *sel = malloc(nb * sizeof *sel);
    unsigned char *valid = malloc(nb);
    double *scratch = malloc(nb * sizeof *scratch);
    pp_status st;
    if (!blk || !sel || !valid || !scratch)
        st = pp_fail(PP_ERR_NOMEM, "out of memory for the single-frame noise fit");
    else {
        haar_blocks(frame, cfg->saturation, bh, bw, blk, valid);
        st = fit_blocks(blk, valid, bh, bw, cfg, sel, scratch, out);
    }
    free(blk);
    free(sel);
    free(valid);
    free(scratch);
    return st;
}
