/* pixpost — convergence diagnostics: rank-normalised split-R-hat, bulk/tail
 * and basic ESS, MCSE of the mean (Vehtari et al., Bayesian Analysis 16,
 * 2021, following R posterior 1.4.0 step by step), and per-pixel split-R-hat
 * / batch-means MCSE maps from streaming half-chain moments.
 *
 * Cost of pp_diag_compute for S = 2 * chains * floor(n/2) split draws: two
 * sorts of S (rank normalisation of the draws and of the folded draws) and
 * one of chains*n (median, quantiles); four ESS evaluations (bulk, basic,
 * two tail indicators), each one r2c + one c2r of length L =
 * good_size(2 floor(n/2)) per half-chain, then an O(floor(n/2)) Geyer scan.
 * Autocovariances go through pp_fft (height 1): zero padding to L >= 2h - 1
 * makes the circular correlation equal the linear one, so the result is the
 * direct O(h^2) sum up to rounding (posterior pads to 2 nextn(h); any
 * L >= 2h - 1 gives the same numbers). Scratch: about 5 S doubles plus the
 * plan; all freed before returning. pp_diag_pixel_maps: O(nhalves * npix),
 * nhalves doubles of scratch.
 */
#include "pixpost/diag.h"
#include "diag_internal.h"
#include "internal.h"
#include "stats.h"
#include "pixpost/fft.h"
#include "pixpost/diag_extra.h"
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct rank_pair {
    double v;
    size_t i;
} rank_pair;

/* Scratch for one pp_diag_compute call; every pointer owned here. */
typedef struct diag_work {
    size_t chains, n, h, ncol, s, total; /* h = half length, s = ncol * h */
    double *split;                       /* s: split matrix, column-major */
    double *z;                           /* s: rank-normalised values */
    double *sorted;                      /* total: sorted draws / fold */
    rank_pair *pairs;                    /* s: for ranking */
    double *acov;                        /* h: autocovariance averaged over columns */
    double *rho;                         /* h: autocorrelation estimates */
    double *colmean;                     /* ncol */
    pp_fft *fft;                         /* length L, only when h >= 3 */
    double *fr;                          /* L reals */
    pp_complex *fc;                      /* L/2 + 1 complex */
} diag_work;

/* Mean with one refinement pass (as R's mean does, in double here). */
static double mean_of(const double *v, size_t len)
{
    double s = 0;
    for (size_t i = 0; i < len; i++)
        s += v[i];
    double m = s / (double)len, c = 0;
    for (size_t i = 0; i < len; i++)
        c += v[i] - m;
    return m + c / (double)len;
}

/* Sample variance (denominator len - 1), two passes; NaN for len < 2. */
static double var_of(const double *v, size_t len)
{
    if (len < 2)
        return NAN;
    double m = mean_of(v, len), s = 0;
    for (size_t i = 0; i < len; i++)
        s += (v[i] - m) * (v[i] - m);
    return s / (double)(len - 1);
}

/* posterior's is_constant: |max - min| < DBL_EPSILON (absolute). */
static int is_constant(const double *v, size_t len)
{
    double lo = v[0], hi = v[0];
    for (size_t i = 1; i < len; i++) {
        lo = v[i] < lo ? v[i] : lo;
        hi = v[i] > hi ? v[i] : hi;
    }
    return fabs(hi - lo) < DBL_EPSILON;
}

/* Copies the split chains of x (chains x n) into out: column 2c holds the
 * first h draws of chain c, column 2c+1 its last h (posterior's
 * .split_chains: with odd n the middle draw is left out). */
static void split_into(const double *x, size_t chains, size_t n, double *out)
{
    size_t h = n / 2;
    for (size_t c = 0; c < chains; c++) {
        memcpy(out + 2 * c * h, x + c * n, h * sizeof *out);
        memcpy(out + (2 * c + 1) * h, x + c * n + (n - h), h * sizeof *out);
    }
}

static int cmp_pair(const void *a, const void *b)
{
    const rank_pair *p = a, *q = b;
    if (p->v != q->v)
        return p->v < q->v ? -1 : 1;
    return p->i < q->i ? -1 : p->i > q->i;
}

static int cmp_double(const void *a, const void *b)
{
    double p = *(const double *)a, q = *(const double *)b;
    return p < q ? -1 : p > q;
}

/* out[i] = Phi^-1((r_i - 3/8) / (s + 1/4)), r_i the average-tie rank of
 * in[i] among in[0..s) (posterior's z_scale with c = 3/8). in may equal out. */
static void z_scale(const double *in, size_t s, rank_pair *pairs, double *out)
{
    for (size_t i = 0; i < s; i++)
        pairs[i] = (rank_pair){in[i], i};
    qsort(pairs, s, sizeof *pairs, cmp_pair);
    const double c = 3.0 / 8.0, denom = (double)s - 2 * c + 1;
    for (size_t a = 0; a < s;) {
        size_t b = a + 1;
        while (b < s && pairs[b].v == pairs[a].v)
            b++;
        double rank = 0.5 * (double)(a + 1 + b); /* mean of ranks a+1..b */
        double zv = pp_norm_quantile((rank - c) / denom);
        for (size_t k = a; k < b; k++)
            out[pairs[k].i] = zv;
        a = b;
    }
}

/* posterior's .rhat on ncol columns of len (column-major); NaN if the
 * values are constant or len < 2. */
static double rhat_cols(const double *cols, size_t ncol, size_t len, double *colmean)
{
    if (len < 2 || is_constant(cols, ncol * len))
        return NAN;
    double w = 0;
    for (size_t j = 0; j < ncol; j++) {
        colmean[j] = mean_of(cols + j * len, len);
        w += var_of(cols + j * len, len);
    }
    w /= (double)ncol;
    double b = (double)len * var_of(colmean, ncol);
    return sqrt((b / w + (double)len - 1) / (double)len);
}

/* Adds the autocovariance of one column (lags 0..len-1, posterior's
 * autocovariance: sum_i yc_i yc_{i+k} scaled so lag 0 is var*(len-1)/len)
 * to acc. A column of identical values adds zeros, as in posterior. */
static void add_autocov(diag_work *w, const double *col, size_t len, double *acc)
{
    double m = mean_of(col, len), ss = 0;
    size_t l = pp_fft_width(w->fft), half = pp_fft_half_width(w->fft);
    for (size_t i = 0; i < len; i++) {
        w->fr[i] = col[i] - m;
        ss += w->fr[i] * w->fr[i];
    }
    if (ss == 0 || is_constant(col, len))
        return;
    memset(w->fr + len, 0, (l - len) * sizeof *w->fr);
    pp_fft_forward(w->fft, w->fr, w->fc);
    for (size_t k = 0; k < half; k++) {
        double re = creal(w->fc[k]), im = cimag(w->fc[k]);
        w->fc[k] = re * re + im * im;
    }
    pp_fft_inverse(w->fft, w->fc, w->fr);
    double scale = ss / (double)len / w->fr[0];
    for (size_t k = 0; k < len; k++)
        acc[k] += w->fr[k] * scale;
}

/* Geyer's initial positive sequence then initial monotone sequence on the
 * autocorrelations (posterior's .ess, 0-based); returns tau before the cap. */
static double geyer_tau(const double *acov, double *rho, long len, double mean_var, double var_plus)
{
    memset(rho, 0, (size_t)len * sizeof *rho);
    long t = 0;
    double even = 1, odd = 1 - (mean_var - acov[1]) / var_plus;
    rho[0] = even;
    rho[1] = odd;
    while (t < len - 5 && !isnan(even + odd) && even + odd > 0) {
        t += 2;
        even = 1 - (mean_var - acov[t]) / var_plus;
        odd = 1 - (mean_var - acov[t + 1]) / var_plus;
        if (even + odd >= 0) {
            rho[t] = even;
            rho[t + 1] = odd;
        }
    }
    long max_t = t;
    if (even > 0)
        rho[max_t] = even;
    for (t = 2; t <= max_t - 2; t += 2) {
        if (rho[t] + rho[t + 1] > rho[t - 2] + rho[t - 1]) {
            rho[t] = (rho[t - 2] + rho[t - 1]) / 2;
            rho[t + 1] = rho[t];
        }
    }
    /* R's sum(rho_hat_t[1:max_t]) is rho_hat_t[1] when max_t = 0 (1:0 is
     * c(1, 0) and index 0 selects nothing), so the sum is never empty. */
    double sum = 0;
    for (t = 0; t < (max_t > 0 ? max_t : 1); t++)
        sum += rho[t];
    return -1 + 2 * sum + rho[max_t];
}

/* posterior's .ess on w->ncol columns of w->h values (column-major). */
static double ess_cols(diag_work *w, const double *cols)
{
    size_t len = w->h, ncol = w->ncol;
    if (len < 3 || is_constant(cols, ncol * len))
        return NAN;
    memset(w->acov, 0, len * sizeof *w->acov);
    for (size_t j = 0; j < ncol; j++) {
        add_autocov(w, cols + j * len, len, w->acov);
        w->colmean[j] = mean_of(cols + j * len, len);
    }
    for (size_t k = 0; k < len; k++)
        w->acov[k] /= (double)ncol;
    double mean_var = w->acov[0] * (double)len / (double)(len - 1);
    double var_plus = mean_var * (double)(len - 1) / (double)len;
    if (ncol > 1)
        var_plus += var_of(w->colmean, ncol);
    double tau = geyer_tau(w->acov, w->rho, (long)len, mean_var, var_plus);
    double s = (double)(ncol * len), bound = 1 / log10(s);
    if (tau < bound) /* posterior caps ESS at S log10(S) */
        tau = bound;
    return s / tau;
}

/* R's quantile(type = 7) of sorted[0..len). */
static double quantile7(const double *sorted, size_t len, double p)
{
    double index = 1 + (double)(len - 1) * p;
    double lo = floor(index), hi = ceil(index);
    double q = sorted[(size_t)lo - 1], xh = sorted[(size_t)hi - 1];
    if (index > lo && xh != q) {
        double g = index - lo;
        q = (1 - g) * q + g * xh;
    }
    return q;
}

static double median_sorted(const double *sorted, size_t len)
{
    return len % 2 ? sorted[len / 2] : 0.5 * (sorted[len / 2 - 1] + sorted[len / 2]);
}

/* ESS of the split indicator I(x <= quantile(x, p)) (posterior's
 * .ess_quantile for 0 < p < 1); w->sorted holds the sorted draws. */
static double ess_quantile(diag_work *w, const double *x, double p)
{
    double q = quantile7(w->sorted, w->total, p);
    split_into(x, w->chains, w->n, w->split);
    for (size_t i = 0; i < w->s; i++)
        w->split[i] = w->split[i] <= q ? 1.0 : 0.0;
    return ess_cols(w, w->split);
}

static void work_free(diag_work *w)
{
    free(w->split);
    free(w->z);
    free(w->sorted);
    free(w->pairs);
    free(w->acov);
    free(w->rho);
    free(w->colmean);
    pp_fft_free(w->fft);
    pp_fft_free_buffer(w->fr);
    pp_fft_free_buffer(w->fc);
}

/* Allocates the scratch of w (sizes already set); frees it on failure. */
static pp_status work_alloc(diag_work *w)
{
    size_t sb, pb, tb;
    if (!pp_mul_ok(w->s + 1, sizeof(double), &sb) || !pp_mul_ok(w->s + 1, sizeof(rank_pair), &pb) ||
        !pp_mul_ok(w->total, sizeof(double), &tb))
        return pp_fail(PP_ERR_LIMIT, "diagnostics: %zu chains of %zu draws are too many", w->chains,
                       w->n);
    w->split = malloc(sb);
    w->z = malloc(sb);
    w->sorted = malloc(tb);
    w->pairs = malloc(pb);
    w->acov = malloc((w->h + 1) * sizeof(double));
    w->rho = malloc((w->h + 1) * sizeof(double));
    w->colmean = malloc((w->ncol + 1) * sizeof(double));
    int ok = w->split && w->z && w->sorted && w->pairs && w->acov && w->rho && w->colmean;
    if (ok && w->h >= 3) {
        size_t l = pp_fft_good_size(2 * w->h);
        pp_status st = pp_fft_create(1, l, PP_FFT_ESTIMATE, &w->fft);
        if (st != PP_OK) {
            work_free(w);
            return st;
        }
        w->fr = pp_fft_alloc_real(l);
        w->fc = pp_fft_alloc_complex(l / 2 + 1);
        ok = w->fr && w->fc;
    }
    if (!ok) {
        work_free(w);
        return pp_fail(PP_ERR_NOMEM,
                       "out of memory for the diagnostics of %zu chains of %zu "
                       "draws",
                       w->chains, w->n);
    }
    return PP_OK;
}

/* The rank-based and split quantities; needs n >= 4 (h >= 2). */
static void compute_split(diag_work *w, const double *x, pp_diag_scalar *r)
{
    split_into(x, w->chains, w->n, w->split);
    z_scale(w->split, w->s, w->pairs, w->z);
    r->rhat_bulk = rhat_cols(w->z, w->ncol, w->h, w->colmean);
    r->ess_bulk = ess_cols(w, w->z);
    r->ess_basic = ess_cols(w, w->split);
    r->mcse_mean = r->sd / sqrt(r->ess_basic);

    memcpy(w->sorted, x, w->total * sizeof *x);
    qsort(w->sorted, w->total, sizeof *w->sorted, cmp_double);
    double q05 = ess_quantile(w, x, 0.05), q95 = ess_quantile(w, x, 0.95);
    r->ess_tail = (isnan(q05) || isnan(q95)) ? NAN : fmin(q05, q95);

    double med = median_sorted(w->sorted, w->total);
    split_into(x, w->chains, w->n, w->split);
    for (size_t i = 0; i < w->s; i++)
        w->split[i] = fabs(w->split[i] - med);
    z_scale(w->split, w->s, w->pairs, w->z);
    r->rhat_tail = rhat_cols(w->z, w->ncol, w->h, w->colmean);
    r->rhat = (isnan(r->rhat_bulk) || isnan(r->rhat_tail)) ? NAN : fmax(r->rhat_bulk, r->rhat_tail);
}

pp_status pp_diag_compute(const double *x, size_t chains, size_t n, pp_diag_scalar *out)
{
    if (!x || !out || chains == 0 || n == 0)
        return pp_fail(PP_ERR_ARG, "diagnostics need draws of at least one chain of at least "
                                   "one draw");
    diag_work w = {.chains = chains, .n = n, .h = n / 2, .ncol = 2 * chains};
    if (!pp_mul_ok(chains, n, &w.total) || chains > ((size_t)-1) / 4)
        return pp_fail(PP_ERR_LIMIT, "diagnostics: %zu chains of %zu draws are too many", chains,
                       n);
    w.s = w.ncol * w.h;
    pp_diag_scalar r = {NAN, NAN, NAN, NAN, NAN, NAN, NAN, NAN, NAN};
    int finite = 1;
    for (size_t i = 0; i < w.total && finite; i++)
        finite = isfinite(x[i]);
    if (finite) {
        r.mean = mean_of(x, w.total);
        r.sd = sqrt(var_of(x, w.total));
    }
    if (finite && n >= 4) {
        pp_status st = work_alloc(&w);
        if (st != PP_OK)
            return st;
        compute_split(&w, x, &r);
        work_free(&w);
    }
    *out = r;
    return PP_OK;
}

void pp_diag_pixel(const double *hm, size_t k, double m2_sum, double m, double within_add,
                   double *rhat, double *mcse, double *ess)
{
    double mean = 0;
    for (size_t j = 0; j < k; j++)
        mean += hm[j];
    mean /= (double)k;
    double w = m2_sum / ((double)k * (m - 1));
    double b_over_m = 0; /* sample variance of the half-chain means */
    for (size_t j = 0; j < k; j++)
        b_over_m += (hm[j] - mean) * (hm[j] - mean);
    b_over_m /= (double)(k - 1);
    double var_plus = (m - 1) / m * w + b_over_m;
    double draws = (double)k * m;
    double var_mean = fmax(b_over_m / (double)k, var_plus / draws);
    int ok = isfinite(var_plus) && isfinite(mean);
    double w_x = w + within_add, var_plus_x = (m - 1) / m * w_x + b_over_m;
    if (rhat)
        *rhat = ok && w_x > 0 ? sqrt(var_plus_x / w_x) : NAN;
    if (mcse)
        *mcse = ok ? sqrt(var_mean) : NAN;
    if (ess)
        *ess = ok && var_plus > 0 ? var_plus / var_mean : NAN;
}

pp_status pp_diag_pixel_maps(const double *const *half_mean, const double *const *half_m2,
                             size_t nhalves, size_t m, size_t npix, double within_add,
                             double *rhat, double *mcse, double *ess)
{
    if (!half_mean || !half_m2)
        return pp_fail(PP_ERR_ARG, "pixel diagnostics: no half-chain moments given");
    if (nhalves < 2 || m < 2)
        return pp_fail(PP_ERR_ARG,
                       "pixel diagnostics need at least 2 half-chains of at least 2 draws "
                       "(got %zu of %zu); run more iterations",
                       nhalves, m);
    for (size_t j = 0; j < nhalves; j++)
        if (!half_mean[j] || !half_m2[j])
            return pp_fail(PP_ERR_ARG, "pixel diagnostics: half-chain %zu has no moments", j);
    double *hm = malloc(nhalves * sizeof *hm);
    if (!hm)
        return pp_fail(PP_ERR_NOMEM, "pixel diagnostics: out of memory");
    for (size_t p = 0; p < npix; p++) {
        double w = 0;
        for (size_t j = 0; j < nhalves; j++) {
            hm[j] = half_mean[j][p];
            w += half_m2[j][p];
        }
        pp_diag_pixel(hm, nhalves, w, (double)m, within_add, rhat ? rhat + p : NULL,
                      mcse ? mcse + p : NULL, ess ? ess + p : NULL);
    }
    free(hm);
    return PP_OK;
}
