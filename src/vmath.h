/* pixpost — branch-free log and exp that gcc vectorises (internal).
 *
 * libm's log and exp are calls that a loop cannot vectorise; on photon
 * frames they were a fifth of an hmc run (perf: exp 14 %, log 5.5 %). These
 * are written from integer operations on the bits, one division (log) and
 * polynomials, with no branch, so that loops over pixels vectorise; their
 * error against long-double libm is checked in tests/test_rng.c (log) and
 * tests/test_vmath.c (both).
 */
#ifndef PIXPOST_VMATH_H
#define PIXPOST_VMATH_H

#include <math.h>
#include <stdint.h>
#include <string.h>

/* Loops written to vectorise are compiled for AVX-512 and AVX2 as well as
 * the baseline, the copy picked once at load time from the CPU (gcc
 * function multiversioning). Strict C11 has no FMA contraction, so every
 * copy gives bit-identical results. */
#if defined(__GNUC__) && !defined(__clang__) && defined(__x86_64__) && defined(__linux__)
#define PP_VECTOR_CLONES __attribute__((target_clones("avx512f", "avx2", "default")))
#else
#define PP_VECTOR_CLONES
#endif

static inline double pp_bits_to_double(uint64_t b)
{
    double d;
    memcpy(&d, &b, sizeof d);
    return d;
}

static inline uint64_t pp_double_to_bits(double d)
{
    uint64_t b;
    memcpy(&b, &d, sizeof b);
    return b;
}

/* sum_j c[j] x^j by Horner's rule; n is a constant at every call, so gcc
 * unrolls it completely and the callers' loops still vectorise. */
static inline double pp_horner(const double *c, size_t n, double x)
{
    double y = c[n - 1];
    for (size_t j = n - 1; j-- > 0;)
        y = y * x + c[j];
    return y;
}

/* 2/(2j+1), j = 1..10: the atanh series of log (see pp_vlog). */
static const double PP_LOG_C[] = {2.0 / 3,  2.0 / 5,  2.0 / 7,  2.0 / 9,  2.0 / 11,
                                  2.0 / 13, 2.0 / 15, 2.0 / 17, 2.0 / 19, 2.0 / 21};

/* log(x) for a positive normal double x. Reduction x = 2^k m with m in
 * [sqrt(1/2), sqrt(2)) by integer arithmetic on the bits; then
 * log(m) = 2 atanh(s), s = f/(2+f), f = m - 1, written as
 * f - (f^2/2 - s (f^2/2 + R)), R = sum_{j>=1} 2 s^(2j)/(2j+1) (Taylor series;
 * |s| <= 0.1716 so ten terms leave < 1e-18 relative). ln 2 is split hi/lo
 * (hi has 31 significant bits, so k*hi is exact) — constants computed with
 * Python's decimal module. Zero, negative, subnormal, inf and NaN inputs
 * give garbage: callers pass positive normal values only. */
static inline double pp_vlog(double x)
{
    const double ln2_hi = 0x1.62e42fee00000p-1, ln2_lo = 0x1.a39ef35793c76p-33;
    uint64_t ix = pp_double_to_bits(x) + (0x3FF0000000000000ULL - 0x3FE6A09E667F3BCDULL);
    /* exponent field (0..2047) to double exactly via the 2^52 magic */
    double k = pp_bits_to_double(0x4330000000000000ULL | (ix >> 52)) - (0x1p52 + 1023.0);
    double m = pp_bits_to_double((ix & 0x000FFFFFFFFFFFFFULL) + 0x3FE6A09E667F3BCDULL);
    double f = m - 1.0;
    double s = f / (2.0 + f);
    double z = s * s;
    double R = z * pp_horner(PP_LOG_C, sizeof PP_LOG_C / sizeof PP_LOG_C[0], z);
    double hfsq = 0.5 * f * f;
    return k * ln2_hi - ((hfsq - (s * (hfsq + R) + k * ln2_lo)) - f);
}

/* log(1 + x) for finite x >= 0: with u = 1 + x rounded, log(u) * x / (u - 1)
 * corrects the rounding of u to first order (Goldberg, ACM Comput. Surv. 23,
 * 1991, theorem 4; from memory), and x itself where u rounds to 1 (x below
 * 2^-53, where log1p(x) = x to double precision). Checked against log1pl
 * in tests/test_vmath.c. */
static inline double pp_vlog1p(double x)
{
    double u = 1.0 + x, d = u - 1.0;
    double l = pp_vlog(u) * (x / (d == 0.0 ? 1.0 : d));
    return d == 0.0 ? x : l;
}

/* Sums in a fixed order that vectorise: acc[l] += v[b + l] over the whole
 * groups of PP_LANES entries of v[0..m), the rest into acc[0];
 * pp_lanes_total adds the lanes in order. The order does not depend on the
 * clone (PP_VECTOR_CLONES), so every copy gives the same sum. */
#define PP_LANES 8
static inline void pp_lanes_add(double *restrict acc, const double *restrict v, size_t m)
{
    size_t mb = m - m % PP_LANES;
    for (size_t b = 0; b < mb; b += PP_LANES)
        for (size_t l = 0; l < PP_LANES; l++)
            acc[l] += v[b + l];
    for (size_t j = mb; j < m; j++)
        acc[0] += v[j];
}

static inline double pp_lanes_total(const double *acc)
{
    double s = 0;
    for (size_t l = 0; l < PP_LANES; l++)
        s += acc[l];
    return s;
}

/* 1/j!, j = 0..13: exp's Taylor series on |r| <= ln 2 / 2 (the first
 * omitted term, r^14/14!, is < 4e-18 relative). */
static const double PP_EXP_C[] = {1.0,
                                  1.0,
                                  1.0 / 2,
                                  1.0 / 6,
                                  1.0 / 24,
                                  1.0 / 120,
                                  1.0 / 720,
                                  1.0 / 5040,
                                  1.0 / 40320,
                                  1.0 / 362880,
                                  1.0 / 3628800,
                                  1.0 / 39916800,
                                  1.0 / 479001600,
                                  1.0 / 6227020800.0};

/* exp(x). x = n ln 2 + r with n = round(x / ln 2) (the 1.5 2^52 rounding
 * trick: the low mantissa bits of t then hold 2^51 + n) and
 * r = x - n ln2_hi - n ln2_lo (n ln2_hi exact), exp(r) by the series, times
 * 2^(n-1) built in the exponent bits, times 2 (n reaches 1024 at the top of
 * the range). x > 709.78 gives +inf, x < -708 gives 0 (results below
 * 3.3e-308 are flushed: nothing here needs the subnormal range), NaN gives
 * NaN. */
static inline double pp_vexp(double x)
{
    const double ln2_hi = 0x1.62e42fee00000p-1, ln2_lo = 0x1.a39ef35793c76p-33;
    double xc = x > 709.78 ? 709.78 : (x < -708.0 ? -708.0 : x);
    double t = xc * 0x1.71547652b82fep0 + 0x1.8p52; /* x / ln 2 + 1.5 2^52 */
    double n = t - 0x1.8p52;
    double r = (xc - n * ln2_hi) - n * ln2_lo;
    double p = pp_horner(PP_EXP_C, sizeof PP_EXP_C / sizeof PP_EXP_C[0], r);
    int64_t ni = (int64_t)(pp_double_to_bits(t) & 0x000FFFFFFFFFFFFFULL) - (INT64_C(1) << 51);
    double y = p * pp_bits_to_double((uint64_t)(ni + 1022) << 52) * 2.0;
    y = x > 709.78 ? INFINITY : y;
    y = x < -708.0 ? 0.0 : y;
    return x == x ? y : x;
}

#endif
