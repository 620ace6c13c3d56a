/* Unit tests of src/rng.c: reproducibility, streams, the open uniform
 * interval, bulk == scalar normals, accuracy of our Box–Muller kernels
 * against long-double libm, gamma and Poisson moments at fixed seeds, NaN for
 * invalid arguments, hash test vectors. Runs ~1 s.
 *
 * Moment tolerances are 5 standard errors of the sample statistic (normal
 * approximation of the Monte Carlo error; a correct sampler fails one check
 * with probability ~6e-7, and the seeds are fixed anyway). */
#include "pixpost/rng.h"
#include "testutil.h"
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#define NSE 5.0

static void test_streams(void)
{
    pp_rng a, b, c, d;
    pp_rng_seed(&a, 42, 0);
    pp_rng_seed(&b, 42, 0);
    pp_rng_seed(&c, 42, 1);
    pp_rng_seed(&d, 43, 0);
    int same = 1, diff_stream = 0, diff_seed = 0;
    for (int i = 0; i < 1000; i++) {
        uint64_t x = pp_rng_u64(&a), y = pp_rng_u64(&b);
        same &= x == y;
        diff_stream += x != pp_rng_u64(&c);
        diff_seed += x != pp_rng_u64(&d);
    }
    CHECK(same, "same seed and stream reproduce the sequence");
    CHECK(diff_stream == 1000, "stream 1 differs from stream 0 everywhere (%d/1000)", diff_stream);
    CHECK(diff_seed == 1000, "seed 43 differs from seed 42 everywhere (%d/1000)", diff_seed);

    /* Known answer from numpy 1.24.2 (Debian): Philox(key=5 + 2**64*7)
     * .random_raw(5)[0] and [4] (the second block). */
    pp_rng_seed(&a, 5, 7);
    uint64_t w[5];
    for (int i = 0; i < 5; i++)
        w[i] = pp_rng_u64(&a);
    CHECK(w[0] == 0x2de0f782c87deea2ULL && w[4] == 0xa548b7614a8a0e3bULL,
          "numpy Philox known answer: %016llx %016llx", (unsigned long long)w[0],
          (unsigned long long)w[4]);
}

/* The uniform map, fed chosen words through the (private) buffer. */
static void test_uniform_map(void)
{
    const uint64_t words[8] = {0,
                               UINT64_MAX,
                               UINT64_MAX - 2048,
                               1ULL << 63,
                               (1ULL << 63) + 2048,
                               0x123456789abcdef0ULL,
                               1ULL << 11,
                               0xfffffffffffff800ULL - 4096};
    pp_rng r;
    pp_rng_seed(&r, 1, 1);
    int exact = 1;
    for (int i = 0; i < 8; i += 4) {
        memcpy(r.buf, words + i, sizeof r.buf);
        r.pos = 0;
        for (int j = 0; j < 4; j++) {
            uint64_t wd = words[i + j];
            double u = pp_rng_uniform(&r);
            double want = ((double)(wd >> 11) + 0.5) * 0x1p-53; /* the formula */
            if (wd >> 11 == (1ULL << 53) - 1)
                want = 1.0 - 0x1p-52; /* the one word moved off 1.0 */
            exact &= u == want && u > 0.0 && u < 1.0;
        }
    }
    CHECK(exact, "uniform equals ((w>>11)+0.5)*2^-53, in (0,1) at the extremes");

    pp_rng_seed(&r, 7, 3);
    const int n = 1000000;
    double s = 0;
    int inside = 1;
    for (int i = 0; i < n; i++) {
        double u = pp_rng_uniform(&r);
        inside &= u > 0.0 && u < 1.0;
        s += u;
    }
    double se = sqrt(1.0 / 12.0 / n);
    CHECK(inside, "1e6 uniforms strictly inside (0,1)");
    CHECK(fabs(s / n - 0.5) < NSE * se, "uniform mean %.6f vs 0.5 (5 SE = %.2g)", s / n, NSE * se);
}

/* pp_rng_normals(n) equals n calls of pp_rng_normal and any split of it. */
static void test_normal_splits(void)
{
    enum { N = 1001 };
    static double a[N], b[N], c[N];
    pp_rng r;
    pp_rng_seed(&r, 99, 5);
    pp_rng_normals(&r, a, N);
    pp_rng_seed(&r, 99, 5);
    for (int i = 0; i < N; i++)
        b[i] = pp_rng_normal(&r);
    pp_rng_seed(&r, 99, 5);
    pp_rng_normals(&r, c, 3);
    pp_rng_normals(&r, c + 3, 500);
    c[503] = pp_rng_normal(&r);
    pp_rng_normals(&r, c + 504, 0);
    pp_rng_normals(&r, c + 504, N - 504);
    CHECK(memcmp(a, b, sizeof a) == 0, "bulk normals == scalar normals bit for bit");
    CHECK(memcmp(a, c, sizeof a) == 0, "bulk normals independent of how calls are split");
}

/* Our log and sin/cos kernels vs long-double libm on the same raw words. */
static void test_normal_accuracy(void)
{
    enum { N = 200000 };
    double *z = malloc(N * sizeof *z);
    pp_rng r, raw;
    pp_rng_seed(&r, 2024, 11);
    pp_rng_seed(&raw, 2024, 11);
    pp_rng_normals(&r, z, N);
    const long double two_pi = 6.283185307179586476925286766559L;
    double worst = 0;
    for (int i = 0; i < N; i += 2) {
        /* the same uniforms from the pair's one word (src/rng.c: radius from
         * the high 40 bits, angle from the low 24, each (k + 1/2) 2^-bits,
         * exact), so that only the kernels are compared, not the grids */
        uint64_t w = pp_rng_u64(&raw);
        long double u1 = ((long double)(w >> 24) + 0.5L) * 0x1p-40L;
        long double u2 = ((long double)(w & 0xFFFFFF) + 0.5L) * 0x1p-24L;
        long double rad = sqrtl(-2.0L * logl(u1));
        long double e0 = fabsl(z[i] - rad * cosl(two_pi * u2)) / (1.0L + rad);
        long double e1 = fabsl(z[i + 1] - rad * sinl(two_pi * u2)) / (1.0L + rad);
        worst = fmax(worst, (double)fmaxl(e0, e1));
    }
    free(z);
    printf("Box-Muller kernels: max error / (1 + radius) = %.3g\n", worst);
    /* Error relative to 1 + radius; a few double ulps (2.2e-16 each) from the
     * polynomial evaluation are expected, so 1e-15 is the bar. */
    CHECK(worst < 1e-15, "Box-Muller kernels vs long-double libm: max rel. error %.3g", worst);
}

static void test_normal_moments(void)
{
    enum { N = 1000000 };
    double *z = malloc(N * sizeof *z);
    pp_rng r;
    pp_rng_seed(&r, 31337, 0);
    pp_rng_normals(&r, z, N);
    double s1 = 0, s2 = 0, s4 = 0;
    for (int i = 0; i < N; i++) {
        double q = z[i] * z[i];
        s1 += z[i];
        s2 += q;
        s4 += q * q;
    }
    free(z);
    /* SEs for N(0,1): mean 1/sqrt(n); E z^2 sqrt(2/n); E z^4 sqrt((105-9)/n). */
    CHECK(fabs(s1 / N) < NSE / sqrt(N), "normal mean %.5f", s1 / N);
    CHECK(fabs(s2 / N - 1) < NSE * sqrt(2.0 / N), "normal E z^2 %.5f", s2 / N);
    CHECK(fabs(s4 / N - 3) < NSE * sqrt(96.0 / N), "normal E z^4 %.5f", s4 / N);
}

static void check_gamma(double a, double b, uint64_t seed)
{
    const int n = 200000;
    pp_rng r;
    pp_rng_seed(&r, seed, 0);
    double s1 = 0, s2 = 0;
    int positive = 1;
    for (int i = 0; i < n; i++) {
        double g = pp_rng_gamma(&r, a, b);
        positive &= g > 0.0 && isfinite(g);
        s1 += g;
        s2 += g * g;
    }
    double m = s1 / n, v = s2 / n - m * m;
    double mean = a / b, var = a / (b * b);
    /* SE of the mean sqrt(var/n); of the variance var*sqrt((2 + 6/a)/n),
     * from the gamma excess kurtosis 6/a. */
    double se_m = sqrt(var / n), se_v = var * sqrt((2.0 + 6.0 / a) / n);
    CHECK(positive || a < 1, "gamma(%g,%g) draws positive and finite", a, b);
    CHECK(fabs(m - mean) < NSE * se_m, "gamma(%g,%g) mean %.8g vs %.8g (5 SE %.2g)", a, b, m, mean,
          NSE * se_m);
    CHECK(fabs(v - var) < NSE * se_v, "gamma(%g,%g) var %.8g vs %.8g (5 SE %.2g)", a, b, v, var,
          NSE * se_v);
}

static void check_poisson(double mu, uint64_t seed)
{
    const int n = 200000;
    pp_rng r;
    pp_rng_seed(&r, seed, 0);
    double s1 = 0, s2 = 0;
    int integer = 1;
    for (int i = 0; i < n; i++) {
        double k = pp_rng_poisson(&r, mu);
        integer &= k >= 0 && k == floor(k);
        double d = k - mu; /* centred: keeps precision at mu = 1e12 */
        s1 += d;
        s2 += d * d;
    }
    double m = s1 / n, v = s2 / n - m * m;
    /* SE of the mean sqrt(mu/n); of the variance sqrt((mu + 2 mu^2)/n), from
     * the Poisson fourth central moment mu(1 + 3 mu). */
    double se_m = sqrt(mu / n), se_v = sqrt((mu + 2 * mu * mu) / n);
    CHECK(integer, "poisson(%g) draws are non-negative integers", mu);
    CHECK(fabs(m) < NSE * se_m, "poisson(%g) mean - mu = %.4g (5 SE %.2g)", mu, m, NSE * se_m);
    CHECK(fabs(v - mu) < NSE * se_v, "poisson(%g) var %.8g (5 SE %.2g)", mu, v, NSE * se_v);
}

static void test_invalid(void)
{
    pp_rng r;
    pp_rng_seed(&r, 1, 2);
    CHECK(isnan(pp_rng_gamma(&r, 0, 1)) && isnan(pp_rng_gamma(&r, -1, 1)) &&
              isnan(pp_rng_gamma(&r, 1, 0)) && isnan(pp_rng_gamma(&r, 1, -2)) &&
              isnan(pp_rng_gamma(&r, NAN, 1)) && isnan(pp_rng_gamma(&r, 1, NAN)) &&
              isnan(pp_rng_gamma(&r, INFINITY, 1)) && isnan(pp_rng_gamma(&r, 1, INFINITY)),
          "gamma: invalid shape/rate give NaN");
    CHECK(isnan(pp_rng_poisson(&r, -1)) && isnan(pp_rng_poisson(&r, NAN)) &&
              isnan(pp_rng_poisson(&r, INFINITY)) && isnan(pp_rng_poisson(&r, 0x1p51)),
          "poisson: negative, NaN, infinite and > 2^50 means give NaN");
    CHECK(pp_rng_poisson(&r, 0) == 0.0, "poisson(0) = 0");
    CHECK(pp_rng_gamma(&r, 1e-3, 1) >= 0.0, "tiny shape still gives a number");
}

static void test_hash(void)
{
    /* splitmix64 first output for seed 0 (from memory, confirmed with an
     * independent Python implementation); FNV-1a 64 test vectors "a" and
     * "foobar" (from memory, same confirmation). */
    CHECK(pp_hash64(0) == 0xe220a8397b1dcdafULL, "splitmix64(0) test vector");
    CHECK(pp_hash_string(0, "") == pp_hash64(0xcbf29ce484222325ULL), "FNV-1a of \"\"");
    CHECK(pp_hash_string(0, "a") == pp_hash64(0xaf63dc4c8601ec8cULL), "FNV-1a of \"a\"");
    CHECK(pp_hash_string(0, "foobar") == pp_hash64(0x85944171f73967e8ULL), "FNV-1a of foobar");
    uint64_t hi = (0xcbf29ce484222325ULL ^ 0xe9) * 0x100000001b3ULL;
    CHECK(pp_hash_string(0, "\xe9") == pp_hash64(hi), "bytes >= 0x80 hashed unsigned");
    CHECK(pp_hash_string(1, "a") != pp_hash_string(0, "a"), "seed changes the hash");
    CHECK(pp_hash_string(0, NULL) == pp_hash_string(0, ""), "NULL hashes like \"\"");
}

int main(void)
{
    test_streams();
    test_uniform_map();
    test_normal_splits();
    test_normal_accuracy();
    test_normal_moments();
    const double shapes[] = {0.3, 1.0, 2.5, 1000.0, 5e5};
    for (int i = 0; i < 5; i++)
        check_gamma(shapes[i], 2.0, 100 + (uint64_t)i);
    const double mus[] = {0.5, 4.0, 9.99, 10.0, 30.0, 1e4, 1e6, 1e12};
    for (int i = 0; i < 8; i++)
        check_poisson(mus[i], 200 + (uint64_t)i);
    test_invalid();
    test_hash();
    return pp_test_done();
}
