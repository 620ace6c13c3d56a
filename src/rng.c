/* pixpost — random numbers: Philox4x64-10 and the variates the samplers need.
 *
 * Generator: Philox4x64-10 (Salmon, Moraes, Dror & Shaw, SC 2011). Key =
 * (seed, stream); a 256-bit counter starts at 0 and is incremented before
 * each block; a block gives four 64-bit words, handed out in order. This is
 * numpy.random.Philox's convention (key=seed + 2^64*stream), checked against
 * numpy in tests/ref_rng.py. Cost: 20 64x64->128 multiplies per 4 words.
 *
 * Normals: Box–Muller, one raw word per pair (see bm_pair). The bulk routine
 * pp_rng_normals() is the hot path (a 1024x1024 frame draws ~1M normals per
 * iteration), so log and sin/cos of 2*pi*u are evaluated by our own
 * branch-free polynomials (below; log in src/vmath.h) that gcc vectorises with the
 * square root (rng.c is built with -fno-math-errno), in chunks of
 * PAIRS_PER_CHUNK pairs held on the stack. The scalar pp_rng_normal() uses
 * the same inline kernels,
 * so the normal sequence of a state is the same however the calls are
 * split between pp_rng_normal() and pp_rng_normals() (tested).
 *
 * Spare normal: each pair of uniforms gives two normals (r cos t, r sin t).
 * When a call needs only the first, the second is kept in r->spare and is
 * returned first by the next pp_rng_normal()/pp_rng_normals() call. Raw
 * draws (pp_rng_u64, pp_rng_uniform) do not touch the spare.
 *
 * Gamma: Marsaglia & Tsang (ACM TOMS 26, 2000); shape < 1 through
 * Gamma(a+1) * U^(1/a). Poisson: inversion (sequential search) for mu < 10,
 * PTRS transformed rejection (Hörmann, Insurance: Math. & Econ. 12, 1993)
 * for mu >= 10, with a Stirling-form log pmf so large means stay accurate.
 * Invalid arguments give NaN (the library never prints).
 *
 * No allocation, no globals: all state is the caller's pp_rng.
 */
#include "pixpost/rng.h"
#include "vmath.h"
#include <math.h>
#include <string.h>

/* ---- Philox4x64-10 --------------------------------------------------- */

/* Round multipliers and Weyl key increments of Philox4x64 (Salmon et al.
 * 2011; values from memory, pinned by the exact comparison with numpy in
 * tests/ref_rng.py and the known answer in tests/test_rng.c). */
#define PHILOX_M0 0xD2E7470EE14C6C93ULL
#define PHILOX_M1 0xCA5A826395121157ULL
#define PHILOX_W0 0x9E3779B97F4A7C15ULL
#define PHILOX_W1 0xBB67AE8584CAA73BULL

__extension__ typedef unsigned __int128 pp_u128;

static inline uint64_t mulhilo(uint64_t a, uint64_t b, uint64_t *hi)
{
    pp_u128 p = (pp_u128)a * b;
    *hi = (uint64_t)(p >> 64);
    return (uint64_t)p;
}

/* One Philox4x64-10 block of counter c under key k, into out[4]. */
static inline void philox_block(const uint64_t k[2], const uint64_t c[4], uint64_t out[4])
{
    uint64_t x0 = c[0], x1 = c[1], x2 = c[2], x3 = c[3];
    uint64_t k0 = k[0], k1 = k[1];
    for (int i = 0; i < 10; i++) {
        uint64_t hi0, hi1;
        uint64_t lo0 = mulhilo(PHILOX_M0, x0, &hi0);
        uint64_t lo1 = mulhilo(PHILOX_M1, x2, &hi1);
        x0 = hi1 ^ x1 ^ k0;
        x1 = lo1;
        x2 = hi0 ^ x3 ^ k1;
        x3 = lo0;
        k0 += PHILOX_W0;
        k1 += PHILOX_W1;
    }
    out[0] = x0;
    out[1] = x1;
    out[2] = x2;
    out[3] = x3;
}

/* Increment the 256-bit counter (little-endian words), then make a block.
 * About 4 ns per word on the 2.6 GHz bench machine, the same when four
 * blocks' rounds were interleaved by hand (tried, bench/NOTES.md): the
 * 64x64->128 multiplies' throughput, not their latency, is the limit. */
static inline void next_block(pp_rng *r, uint64_t out[4])
{
    if (++r->ctr[0] == 0 && ++r->ctr[1] == 0 && ++r->ctr[2] == 0)
        ++r->ctr[3];
    philox_block(r->key, r->ctr, out);
}

/* All functions below take a non-NULL r that pp_rng_seed() has set up; a
 * pp_rng must not be shared between threads (copy it or seed one per chain). */
void pp_rng_seed(pp_rng *r, uint64_t seed, uint64_t stream)
{
    memset(r, 0, sizeof *r);
    r->key[0] = seed;
    r->key[1] = stream;
    r->pos = 4;
}

uint64_t pp_rng_u64(pp_rng *r)
{
    if (r->pos >= 4) {
        next_block(r, r->buf);
        r->pos = 0;
    }
    return r->buf[r->pos++];
}

/* n raw words into w, exactly as n calls of pp_rng_u64 would give. */
static void fill_u64(pp_rng *r, uint64_t *w, size_t n)
{
    size_t i = 0;
    while (i < n && r->pos < 4)
        w[i++] = r->buf[r->pos++];
    for (; i + 4 <= n; i += 4)
        next_block(r, w + i);
    if (i < n) {
        next_block(r, r->buf);
        r->pos = 0;
        while (i < n)
            w[i++] = r->buf[r->pos++];
    }
}

/* ---- uniform --------------------------------------------------------- */

/* ((w>>11) + 0.5) * 2^-53 rounded once (ties to even), built from integer
 * operations only, so that it vectorises without a u64->double conversion
 * instruction: with k = w>>11, (k>>1)*2^-52 exactly, plus (2*(k&1) + 1)*2^-54
 * as a constructed double. Values >= 0.5 round to the 2^-53 grid, which would
 * map k = 2^53-1 to exactly 1.0; that one k is first replaced by 2^53-2 (the
 * xor), so the result lies in [2^-54, 1 - 2^-52], never 0 or 1. */
static inline double u64_to_open01(uint64_t w)
{
    uint64_t k = w >> 11;
    k ^= (k + 1) >> 53; /* 1 only when k = 2^53 - 1 */
    uint64_t b = k & 1;
    double hi = pp_bits_to_double(0x3FF0000000000000ULL | (k >> 1)) - 1.0;
    double lo = pp_bits_to_double(((uint64_t)(1023 - 54) + b) << 52 | b << 51);
    return hi + lo;
}

double pp_rng_uniform(pp_rng *r)
{
    return u64_to_open01(pp_rng_u64(r));
}

/* ---- vectorisable kernels for Box–Muller ----------------------------- */

/* (-1)^j (pi/2)^(2j+1) / (2j+1)!, j = 0..8, and (-1)^j (pi/2)^(2j) / (2j)!,
 * j = 0..9, rounded from 60-digit Python decimal values. */
static const double SIN_C[] = {
    0x1.921fb54442d18p+0,  -0x1.4abbce625be53p-1,  0x1.466bc6775aae2p-4,
    -0x1.32d2cce62bd86p-8, 0x1.50783487ee782p-13,  -0x1.e3074fde8871fp-19,
    0x1.e8f434d018d63p-25, -0x1.6fadb9f155744p-31, 0x1.aaec32af93359p-38};
static const double COS_C[] = {1.0,
                               -0x1.3bd3cc9be45dep+0,
                               0x1.03c1f081b5ac4p-2,
                               -0x1.55d3c7e3cbffap-6,
                               0x1.e1f506891babbp-11,
                               -0x1.a6d1f2a204a8cp-16,
                               0x1.f9d38a3763cc3p-22,
                               -0x1.b6e24f44b128fp-28,
                               0x1.20c62c2f2d7f5p-34,
                               -0x1.2a0c591af8314p-41};

/* -2 log(u) for u in (0, 1), a normal double (src/vmath.h; its error vs.
 * long-double libm is checked in test_rng.c). */
static inline double neg2log(double u)
{
    return -2.0 * pp_vlog(u);
}

/* sin and cos of 2*pi*v for v in (0, 1). 4v = n + w with n = round(4v) (the
 * 1.5*2^52 rounding trick; w in [-1/2, 1/2] exactly), so the angle is
 * n*pi/2 + w*pi/2. sin/cos(w*pi/2) by Taylor polynomials in w (coefficients
 * (pi/2)^j / j! from Python's decimal module; terms to w^17 and w^18, error
 * < 1e-18 relative), then the quadrant n mod 4 swaps and negates with bit
 * masks — no branches. */
static inline void sincos2pi(double v, double *sn, double *cs)
{
    double t = 4.0 * v + 0x1.8p52;
    uint64_t n = pp_double_to_bits(t); /* low bits hold round(4v) */
    double w = 4.0 * v - (t - 0x1.8p52);
    double ww = w * w;
    double s = w * pp_horner(SIN_C, sizeof SIN_C / sizeof SIN_C[0], ww);
    double c = pp_horner(COS_C, sizeof COS_C / sizeof COS_C[0], ww);
    uint64_t sb = pp_double_to_bits(s), cb = pp_double_to_bits(c);
    uint64_t swap = 0 - (n & 1);
    uint64_t so = (cb & swap) | (sb & ~swap);
    uint64_t co = (sb & swap) | (cb & ~swap);
    so ^= (n & 2) << 62;       /* quadrants 2, 3: sin < 0 side */
    co ^= ((n + 1) & 2) << 62; /* quadrants 1, 2: cos < 0 side */
    *sn = pp_bits_to_double(so);
    *cs = pp_bits_to_double(co);
}

/* ---- normals --------------------------------------------------------- */

#define PAIRS_PER_CHUNK 128

/* The two uniforms of a Box–Muller pair from ONE raw word: the radius's
 * from its high 40 bits, (k + 1/2) 2^-40, and the angle's from its low 24
 * bits, (j + 1/2) 2^-24 (both exact in a double, never 0 or 1; integer to
 * double through the 2^52 magic, so that it vectorises). Consequences, by
 * construction: |z| <= sqrt(-2 log 2^-41) = 7.54 (the normal mass beyond
 * is 5e-14), and angles on a grid of 2 pi / 2^24 = 3.7e-7 rad. One word
 * per pair halves the Philox cost per normal (~4 ns per word here). */
static inline double bits_to_unit(uint64_t k, double scale)
{
    return (pp_bits_to_double(0x4330000000000000ULL | k) - 0x1p52 + 0.5) * scale;
}

static inline double radius_u(uint64_t w)
{
    return bits_to_unit(w >> 24, 0x1p-40);
}

static inline double angle_u(uint64_t w)
{
    return bits_to_unit(w & 0xFFFFFFULL, 0x1p-24);
}

/* One Box–Muller pair from one raw word: (r cos t, r sin t). */
static inline void bm_pair(uint64_t a, double *z0, double *z1)
{
    double s, c;
    double rad = sqrt(neg2log(radius_u(a)));
    sincos2pi(angle_u(a), &s, &c);
    *z0 = rad * c;
    *z1 = rad * s;
}

double pp_rng_normal(pp_rng *r)
{
    if (r->has_spare) {
        r->has_spare = 0;
        return r->spare;
    }
    double z0, z1;
    bm_pair(pp_rng_u64(r), &z0, &z1);
    r->spare = z1;
    r->has_spare = 1;
    return z0;
}

/* np pairs into out[0 .. 2np) in one vectorised pass. Cloned for AVX-512 and
 * AVX2 (picked once at load time from the CPU; ~1.4x the SSE2 rate,
 * bench/NOTES.md). Strict C11 means no FMA contraction, so every clone
 * gives bit-identical normals (IEEE-exact +, *, /, sqrt in the same order;
 * tests/test_rng.c compares bulk with the uncloned scalar path). */
PP_VECTOR_CLONES static void normal_chunk(pp_rng *r, double *out, size_t np)
{
    uint64_t w[PAIRS_PER_CHUNK];
    fill_u64(r, w, np);
    for (size_t i = 0; i < np; i++) {
        double sn, cs, rad = sqrt(neg2log(radius_u(w[i])));
        sincos2pi(angle_u(w[i]), &sn, &cs);
        out[2 * i] = rad * cs;
        out[2 * i + 1] = rad * sn;
    }
}

/* out holds n doubles (may be NULL when n == 0) and must not alias r. */
void pp_rng_normals(pp_rng *r, double *out, size_t n)
{
    if (n == 0)
        return;
    if (r->has_spare) {
        r->has_spare = 0;
        *out++ = r->spare;
        n--;
    }
    size_t np = n / 2;
    while (np > 0) {
        size_t m = np < PAIRS_PER_CHUNK ? np : PAIRS_PER_CHUNK;
        normal_chunk(r, out, m);
        out += 2 * m;
        np -= m;
    }
    if (n & 1)
        *out = pp_rng_normal(r); /* leaves the pair's second half as spare */
}

/* ---- gamma ----------------------------------------------------------- */

/* Marsaglia & Tsang for shape a >= 1, rate 1. Acceptance is >= 0.95 for all
 * a >= 1 (their paper), so the loop runs ~1.05 times on average. */
static double gamma_mt(pp_rng *r, double a)
{
    double d = a - 1.0 / 3.0, c = 1.0 / sqrt(9.0 * d);
    for (;;) {
        double x = pp_rng_normal(r);
        double v = 1.0 + c * x;
        if (v <= 0.0)
            continue;
        v = v * v * v;
        double u = pp_rng_uniform(r);
        double x2 = x * x;
        if (u < 1.0 - 0.0331 * x2 * x2)
            return d * v;
        if (log(u) < 0.5 * x2 + d * (1.0 - v + log(v)))
            return d * v;
    }
}

/* NaN unless shape and rate are finite and > 0. For shape < 1 the draw is
 * Gamma(shape+1) * U^(1/shape), which can underflow to 0 for tiny shapes
 * (e.g. often at shape 1e-3, whose median is near 2^-1000). */
double pp_rng_gamma(pp_rng *r, double shape, double rate)
{
    if (!(shape > 0.0 && rate > 0.0 && isfinite(shape) && isfinite(rate)))
        return NAN;
    if (shape >= 1.0)
        return gamma_mt(r, shape) / rate;
    double g = gamma_mt(r, shape + 1.0);
    double u = pp_rng_uniform(r);
    return g * exp(log(u) / shape) / rate;
}

/* ---- Poisson --------------------------------------------------------- */

/* Inversion by sequential search, for mu < 10. The search is capped at
 * k = 200 (P(K > 200) < 1e-200 for mu < 10), which guards against the
 * accumulated cdf stalling just below a uniform near 1. */
static double poisson_inversion(pp_rng *r, double mu)
{
    double u = pp_rng_uniform(r);
    double p = exp(-mu), cdf = p;
    int k = 0;
    while (u > cdf && k < 200) {
        k++;
        p *= mu / k;
        cdf += p;
    }
    return k;
}

/* log P(K = k) for K ~ Poisson(mu), mu >= 10. For k >= 30 the Stirling form
 * -k log1p((k-mu)/mu) + (k-mu) - log(2 pi k)/2 - (1/(12k) - 1/(360k^3) +
 * 1/(1260k^5)) avoids the cancellation of k log mu - lgamma(k+1) at large mu
 * (series from memory; the omitted term 1/(1680k^7) < 3e-14 at k = 30). */
static double poisson_logpmf(double k, double mu, double logmu)
{
    const double LOG_2PI = 0x1.d67f1c864beb5p+0; /* log(2 pi), Python decimal */
    if (k < 30.0)
        return -mu + k * logmu - lgamma(k + 1.0);
    double ik = 1.0 / k, ik2 = ik * ik;
    double corr = ik * (1.0 / 12 - ik2 * (1.0 / 360 - ik2 / 1260));
    return -k * log1p((k - mu) / mu) + (k - mu) - 0.5 * (LOG_2PI + log(k)) - corr;
}

/* PTRS of Hörmann (1993), constants from his paper (from memory): transformed
 * rejection with squeeze; acceptance ~0.9 across mu. */
static double poisson_ptrs(pp_rng *r, double mu)
{
    double smu = sqrt(mu), logmu = log(mu);
    double b = 0.931 + 2.53 * smu;
    double a = -0.059 + 0.02483 * b;
    double inv_alpha = 1.1239 + 1.1328 / (b - 3.4);
    double vr = 0.9277 - 3.6224 / (b - 2.0);
    for (;;) {
        double u = pp_rng_uniform(r) - 0.5;
        double v = pp_rng_uniform(r);
        double us = 0.5 - fabs(u);
        double k = floor((2.0 * a / us + b) * u + mu + 0.43);
        if (us >= 0.07 && v <= vr)
            return k;
        if (k < 0.0 || (us < 0.013 && v > us))
            continue;
        if (log(v) + log(inv_alpha) - log(a / (us * us) + b) <= poisson_logpmf(k, mu, logmu))
            return k;
    }
}

/* Largest accepted mean: draws stay far below 2^53, so they are exact
 * integers in a double. */
#define POISSON_MU_MAX 0x1p50

/* NaN unless 0 <= mu <= 2^50 (about 1.1e15); mu = 0 gives 0. */
double pp_rng_poisson(pp_rng *r, double mu)
{
    if (!(mu >= 0.0 && mu <= POISSON_MU_MAX))
        return NAN;
    if (mu == 0.0)
        return 0.0;
    return mu < 10.0 ? poisson_inversion(r, mu) : poisson_ptrs(r, mu);
}

/* ---- hashing --------------------------------------------------------- */

/* splitmix64 (Steele, Lea & Flood, OOPSLA 2014): the output for state x,
 * i.e. add the golden-ratio increment, then the variant-13 finaliser. */
uint64_t pp_hash64(uint64_t x)
{
    uint64_t z = x + 0x9E3779B97F4A7C15ULL;
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

/* FNV-1a over the bytes of s (as unsigned char) from the offset basis xor
 * seed (seed 0 = plain 64-bit FNV-1a), then pp_hash64 to spread the bits.
 * s == NULL hashes like "". */
uint64_t pp_hash_string(uint64_t seed, const char *s)
{
    uint64_t h = 0xCBF29CE484222325ULL ^ seed;
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        h ^= *p;
        h *= 0x100000001B3ULL;
    }
    return pp_hash64(h);
}
