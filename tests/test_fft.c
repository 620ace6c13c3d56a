/* Unit tests of src/fft.c: the forward transform against a direct DFT sum,
 * the round-trip scaling c2r(r2c(x)) = H*W*x, that forward leaves its input
 * alone, good sizes, the padded-grid rule, wisdom files (where plans come
 * from, merged saves), refusals, planning from several threads at once,
 * rank-3 (and rank-1) plans against the DFT's definition, and batches of
 * 1-D transforms (pp_fft_create_rows) against a direct 1-D DFT per row. */
#include "pixpost/fft.h"
#include "testutil.h"
#include "pixpost/shape_extra.h"
#include <complex.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <string.h>

#define TWO_PI 6.283185307179586476925

/* A fixed pseudo-random sequence in [-1, 1) (64-bit LCG, Knuth's MMIX). */
static double lcg(unsigned long long *s)
{
    *s = *s * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*s >> 11) / 4503599627370496.0 - 1.0;
}

/* max |r2c(x) - direct DFT| over the half spectrum, and the round trip. */
static void check_grid(size_t h, size_t w, int effort)
{
    pp_fft *f = NULL;
    CHECK(pp_fft_create(h, w, effort, &f) == PP_OK, "create %zux%zu", h, w);
    if (!f)
        return;
    size_t hw = pp_fft_half_width(f);
    CHECK(hw == w / 2 + 1 && pp_fft_height(f) == h && pp_fft_width(f) == w, "sizes");
    double *x = pp_fft_alloc_real(h * w), *copy = pp_fft_alloc_real(h * w);
    double *back = pp_fft_alloc_real(h * w);
    pp_complex *X = pp_fft_alloc_complex(h * hw);
    unsigned long long seed = 42 + h * 1000 + w;
    for (size_t i = 0; i < h * w; i++)
        copy[i] = x[i] = lcg(&seed);
    pp_fft_forward(f, x, X);
    CHECK(memcmp(x, copy, h * w * sizeof *x) == 0, "forward left its input unchanged %zux%zu", h,
          w);
    double err = 0;
    for (size_t k1 = 0; k1 < h; k1++)
        for (size_t k2 = 0; k2 < hw; k2++) {
            double complex s = 0; /* X(k) = sum x(n) exp(-2 pi i (k1 n1/H + k2 n2/W)) */
            for (size_t n1 = 0; n1 < h; n1++)
                for (size_t n2 = 0; n2 < w; n2++)
                    s += x[n1 * w + n2] *
                         cexp(-I * TWO_PI * ((double)(k1 * n1) / h + (double)(k2 * n2) / w));
            double e = cabs(s - X[k1 * hw + k2]);
            err = e > err ? e : err;
        }
    CHECK(err < 1e-10, "r2c equals the direct DFT on %zux%zu (max err %g)", h, w, err);
    pp_fft_inverse(f, X, back);
    double rt = 0;
    for (size_t i = 0; i < h * w; i++) {
        double e = fabs(back[i] / (double)(h * w) - x[i]);
        rt = e > rt ? e : rt;
    }
    CHECK(rt < 1e-13, "c2r(r2c(x)) = H*W*x on %zux%zu (max err %g)", h, w, rt);
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(copy);
    pp_fft_free_buffer(back);
    pp_fft_free_buffer(X);
    pp_fft_free(f);
}

static int smooth7(size_t n)
{
    size_t p[] = {2, 3, 5, 7};
    for (int i = 0; i < 4; i++)
        while (n % p[i] == 0)
            n /= p[i];
    return n == 1;
}

static void check_good_size(void)
{
    /* Hand-factored values: 3->4, 11->12, 13->14 (2*7), 17->18, 97->98
     * (2*7^2), 101->108 (102 = 2*3*17, 104 = 8*13, 106 = 2*53; 105 is odd),
     * 127->128, 1021->1024 (1022 = 2*7*73), 1000 stays. */
    size_t in[] = {0, 1, 2, 3, 11, 13, 17, 97, 101, 127, 1000, 1021};
    size_t want[] = {1, 1, 2, 4, 12, 14, 18, 98, 108, 128, 1000, 1024};
    for (size_t i = 0; i < sizeof in / sizeof in[0]; i++)
        CHECK(pp_fft_good_size(in[i]) == want[i], "good_size(%zu) = %zu, want %zu", in[i],
              pp_fft_good_size(in[i]), want[i]);
    int bad = 0;
    for (size_t n = 1; n <= 3000; n++) {
        size_t g = pp_fft_good_size(n);
        if (g < n || !smooth7(g) || (n > 1 && g % 2))
            bad++;
        for (size_t m = n; m < g; m++)
            bad += m % 2 == 0 && smooth7(m);
    }
    CHECK(bad == 0, "good_size is the smallest even 7-smooth n' >= n for n = 2..3000 (%d bad)",
          bad);
}

/* The padded-grid rule (pp_fft_good_grid): sides at least the minimum,
 * even and 7-smooth, never one of the sizes whose ESTIMATE plans were
 * measured 12-41x slower than MEASURE plans (bench/fft_sizes.txt: 144 48 vs
 * 2.7 ns per pixel per pair, 216 57 vs 3.6, 1280 289 vs 7.0), a larger side
 * when the smallest is slow (125 -> 128: 126 costs 4.1 ns per pixel, 128
 * 2.1), within 1.5x of the minimum, the same for both sides of a square,
 * and the old rule beyond the table. */
static void check_good_grid(void)
{
    int bad = 0, slow = 0, far = 0;
    for (size_t n = 3; n <= 2300; n++) {
        size_t gh, gw;
        pp_fft_good_grid(n, n + n % 7, &gh, &gw);
        if (gh < n || gw < n + n % 7 || gh % 2 || gw % 2 || !smooth7(gh) || !smooth7(gw))
            bad++;
        slow += gh == 144 || gh == 216 || gh == 1280 || gw == 144 || gw == 216 || gw == 1280;
        far += gh > n + n / 2 + 2;
    }
    CHECK(bad == 0, "good_grid: sides >= the minimum, even, 7-smooth for 3..2300 (%d bad)", bad);
    CHECK(slow == 0, "good_grid never picks 144, 216 or 1280 (%d times)", slow);
    CHECK(far == 0, "good_grid stays within 1.5x of the minimum side (%d times)", far);
    size_t gh, gw;
    pp_fft_good_grid(125, 125, &gh, &gw);
    CHECK(gh == 128 && gw == 128, "good_grid(125, 125) = %zux%zu, want 128x128 (126 is slower)",
          gh, gw);
    pp_fft_good_grid(140, 1275, &gh, &gw);
    CHECK(gh != 144 && gw != 1280 && gh >= 140 && gw >= 1275,
          "good_grid(140, 1275) = %zux%zu avoids 144 and 1280", gh, gw);
    pp_fft_good_grid(2600, 3001, &gh, &gw);
    CHECK(gh == pp_fft_good_size(2600) && gw == pp_fft_good_size(3001),
          "beyond the table: the smallest even 7-smooth sides (%zux%zu)", gh, gw);
    size_t a1, b1, a2, b2;
    pp_fft_good_grid(300, 500, &a1, &b1);
    pp_fft_good_grid(500, 300, &a2, &b2);
    CHECK(a1 == b2 && b1 == a2, "good_grid is symmetric (%zux%zu, %zux%zu)", a1, b1, a2, b2);
}

static void check_wisdom(void)
{
    const char *dir = pp_test_tmpdir();
    char path[4200], missing[4200], junk[4200];
    snprintf(path, sizeof path, "%s/wisdom.txt", dir);
    snprintf(missing, sizeof missing, "%s/none.txt", dir);
    snprintf(junk, sizeof junk, "%s/junk.txt", dir);
    CHECK(pp_fft_wisdom_load(missing) == PP_OK, "a missing wisdom file is not an error");
    CHECK(pp_fft_wisdom_save(path) == PP_OK, "wisdom saved: %s", pp_error_message());
    CHECK(pp_fft_wisdom_load(path) == PP_OK, "saved wisdom loads back: %s", pp_error_message());
    FILE *fp = fopen(junk, "w");
    if (fp) {
        fputs("this is not wisdom\n", fp);
        fclose(fp);
    }
    CHECK(pp_fft_wisdom_load(junk) == PP_ERR_FORMAT && strstr(pp_error_message(), junk),
          "a junk wisdom file is refused naming it: %s", pp_error_message());
    char nodir[4200];
    snprintf(nodir, sizeof nodir, "%s/no/such/dir/w.txt", dir);
    CHECK(pp_fft_wisdom_save(nodir) == PP_ERR_IO, "saving into a missing folder fails");
    char empty[4200];
    snprintf(empty, sizeof empty, "%s/empty.txt", dir);
    fp = fopen(empty, "w");
    if (fp)
        fclose(fp);
    CHECK(pp_fft_wisdom_load(empty) == PP_OK, "an empty wisdom file counts as missing");
    /* where plans come from: 22x18 is planned nowhere else in this test */
    pp_fft *e = NULL, *m = NULL, *w = NULL;
    pp_fft_create(22, 18, PP_FFT_ESTIMATE, &e);
    pp_fft_create(22, 18, PP_FFT_MEASURE, &m);
    pp_fft_create(22, 18, PP_FFT_MEASURE, &w);
    CHECK(e && m && w && pp_fft_plans_source(e) == PP_FFT_PLANS_ESTIMATED &&
              pp_fft_plans_source(m) == PP_FFT_PLANS_MEASURED &&
              pp_fft_plans_source(w) == PP_FFT_PLANS_WISDOM,
          "plans: ESTIMATE, then MEASURE measured, then MEASURE again from wisdom");
    pp_fft_free(e);
    pp_fft_free(m);
    pp_fft_free(w);
}

struct job {
    size_t base;
    int fails;
};

/* Each thread plans, executes and frees grids of its own sizes. */
static void *plan_worker(void *arg)
{
    struct job *job = arg;
    size_t base = job->base;
    int fails = 0;
    for (size_t k = 0; k < 20; k++) {
        size_t h = base + k % 5, w = base + 2 + k % 7;
        pp_fft *f = NULL;
        if (pp_fft_create(h, w, PP_FFT_ESTIMATE, &f) != PP_OK) {
            fails++;
            continue;
        }
        double *x = pp_fft_alloc_real(h * w);
        pp_complex *X = pp_fft_alloc_complex(h * pp_fft_half_width(f));
        for (size_t i = 0; i < h * w; i++)
            x[i] = 1.0;
        pp_fft_forward(f, x, X);
        if (cabs(X[0] - (double)(h * w)) > 1e-9)
            fails++;
        pp_fft_free_buffer(x);
        pp_fft_free_buffer(X);
        pp_fft_free(f);
    }
    job->fails = fails;
    return NULL;
}

static void check_threads(void)
{
    pthread_t t[4];
    struct job arg[4] = {{5, 0}, {9, 0}, {12, 0}, {16, 0}};
    for (int i = 0; i < 4; i++)
        pthread_create(&t[i], NULL, plan_worker, &arg[i]);
    int fails = 0;
    for (int i = 0; i < 4; i++) {
        pthread_join(t[i], NULL);
        fails += arg[i].fails;
    }
    CHECK(fails == 0, "4 threads planning and executing at once: %d failures", fails);
}

/* A rank-3 grid (and rank 1) against the DFT's definition (FFTW manual
 * §4.8.1: Y[k] = sum_j X[j] exp(-2 pi i sum_a j_a k_a / n_a), unnormalised),
 * with unequal odd and even sides so an axis swap or a wrong halved axis
 * shows, and the round trip c2r(r2c(x)) = N x. Tolerance 1e-10 of the
 * input's scale: a few hundred terms of double rounding. */
static void check_rank3(size_t d, size_t h, size_t w)
{
    pp_shape sh = pp_shape_3d(d, h, w);
    pp_fft *f = NULL;
    CHECK(pp_fft_create_shape(&sh, PP_FFT_ESTIMATE, &f) == PP_OK, "create %zux%zux%zu", w, h, d);
    if (!f)
        return;
    pp_shape back = pp_fft_shape(f);
    size_t hw = pp_fft_half_width(f), n = d * h * w;
    CHECK(pp_shape_equal(&back, &sh) && pp_fft_height(f) == d * h && pp_fft_width(f) == w &&
              hw == w / 2 + 1,
          "rank-3 plan keeps rows x last axis: rows %zu, width %zu", pp_fft_height(f),
          pp_fft_width(f));
    double *x = pp_fft_alloc_real(n), *y = pp_fft_alloc_real(n);
    pp_complex *c = pp_fft_alloc_complex(d * h * hw);
    unsigned long long seed = 99;
    for (size_t i = 0; i < n; i++)
        x[i] = lcg(&seed);
    pp_fft_forward(f, x, c);
    double err = 0.0;
    for (size_t kz = 0; kz < d; kz++)
        for (size_t ky = 0; ky < h; ky++)
            for (size_t kx = 0; kx < hw; kx++) {
                pp_complex sum = 0;
                for (size_t z = 0; z < d; z++)
                    for (size_t yy = 0; yy < h; yy++)
                        for (size_t xx = 0; xx < w; xx++) {
                            double ph = TWO_PI * ((double)(kz * z % d) / d +
                                                  (double)(ky * yy % h) / h +
                                                  (double)(kx * xx % w) / w);
                            sum += x[(z * h + yy) * w + xx] * cexp(-I * ph);
                        }
                err = fmax(err, cabs(c[(kz * h + ky) * hw + kx] - sum));
            }
    CHECK(err < 1e-10, "rank-3 r2c = direct DFT (max error %.3g)", err);
    pp_fft_inverse(f, c, y);
    double rt = 0.0;
    for (size_t i = 0; i < n; i++)
        rt = fmax(rt, fabs(y[i] / (double)n - x[i]));
    CHECK(rt < 1e-12, "rank-3 round trip (max error %.3g)", rt);
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(y);
    pp_fft_free_buffer(c);
    pp_fft_free(f);
}

/* pp_fft_create_rows: rows independent 1-D transforms, each against the
 * direct 1-D DFT of its own row (FFTW manual §4.8.1's definition; a 2-D
 * transform would mix the rows and fail), and the round trip
 * c2r(r2c(x)) = len x. Tolerance as check_rank3. */
static void check_rows(size_t rows, size_t len, int effort)
{
    pp_fft *f = NULL;
    CHECK(pp_fft_create_rows(rows, len, effort, &f) == PP_OK, "create %zu rows of %zu", rows, len);
    if (!f)
        return;
    size_t hl = pp_fft_half_width(f);
    CHECK(hl == len / 2 + 1 && pp_fft_height(f) == rows && pp_fft_width(f) == len, "row sizes");
    double *x = pp_fft_alloc_real(rows * len), *y = pp_fft_alloc_real(rows * len);
    pp_complex *c = pp_fft_alloc_complex(rows * hl);
    unsigned long long seed = 7 + rows * 100 + len;
    for (size_t i = 0; i < rows * len; i++)
        x[i] = lcg(&seed);
    pp_fft_forward(f, x, c);
    double err = 0.0;
    for (size_t r = 0; r < rows; r++)
        for (size_t k = 0; k < hl; k++) {
            pp_complex sum = 0;
            for (size_t j = 0; j < len; j++)
                sum += x[r * len + j] * cexp(-I * TWO_PI * (double)(k * j % len) / (double)len);
            err = fmax(err, cabs(c[r * hl + k] - sum));
        }
    CHECK(err < 1e-10, "%zu rows of %zu: each row's r2c = its direct 1-D DFT (max error %.3g)",
          rows, len, err);
    pp_fft_inverse(f, c, y);
    double rt = 0.0;
    for (size_t i = 0; i < rows * len; i++)
        rt = fmax(rt, fabs(y[i] / (double)len - x[i]));
    CHECK(rt < 1e-12, "rows round trip (max error %.3g)", rt);
    pp_fft_free_buffer(x);
    pp_fft_free_buffer(y);
    pp_fft_free_buffer(c);
    pp_fft_free(f);
}

/* Rank 1 and the refusals of the shape form. */
static void check_shape_forms(void)
{
    pp_shape one = {.rank = 1, .n = {9, 1, 1}};
    pp_fft *f = NULL;
    CHECK(pp_fft_create_shape(&one, PP_FFT_ESTIMATE, &f) == PP_OK && pp_fft_height(f) == 1 &&
              pp_fft_half_width(f) == 5,
          "rank 1: one row of 9, 5 half-spectrum entries");
    pp_fft_free(f);
    pp_shape bad = {.rank = 4, .n = {2, 2, 2}};
    f = (pp_fft *)1;
    CHECK(pp_fft_create_shape(&bad, PP_FFT_ESTIMATE, &f) == PP_ERR_ARG && f == NULL,
          "rank 4 is refused");
    pp_shape zero = pp_shape_3d(4, 0, 4);
    CHECK(pp_fft_create_shape(&zero, PP_FFT_ESTIMATE, &f) == PP_ERR_ARG, "a zero side is refused");
    pp_shape big = pp_shape_3d((size_t)1 << 12, (size_t)1 << 12, (size_t)1 << 10);
    CHECK(pp_fft_create_shape(&big, PP_FFT_ESTIMATE, &f) == PP_ERR_LIMIT,
          "a rank-3 grid beyond int sizes is refused");
}

int main(void)
{
    check_grid(6, 10, PP_FFT_ESTIMATE);
    check_grid(7, 9, PP_FFT_ESTIMATE); /* odd sides: no Nyquist column */
    check_grid(1, 8, PP_FFT_ESTIMATE);
    check_grid(5, 1, PP_FFT_ESTIMATE);
    check_grid(12, 14, PP_FFT_MEASURE);
    check_rank3(3, 4, 6);
    check_rank3(4, 5, 7); /* odd last axis: no Nyquist plane */
    check_shape_forms();
    check_rows(5, 12, PP_FFT_ESTIMATE);
    check_rows(3, 9, PP_FFT_MEASURE); /* odd length: no Nyquist entry */
    check_good_size();
    check_good_grid();
    check_wisdom();
    check_threads();
    pp_fft *f = (pp_fft *)1;
    CHECK(pp_fft_create(0, 8, PP_FFT_ESTIMATE, &f) == PP_ERR_ARG && f == NULL,
          "a zero side is refused");
    CHECK(pp_fft_create(8, 8, 7, &f) == PP_ERR_ARG, "an unknown effort is refused");
    CHECK(pp_fft_create((size_t)1 << 40, 8, PP_FFT_ESTIMATE, &f) == PP_ERR_LIMIT,
          "a grid beyond int sizes is refused");
    pp_fft_free(NULL);
    CHECK(pp_fft_alloc_real(0) == NULL, "a zero-length buffer is NULL");
    return pp_test_done();
}
