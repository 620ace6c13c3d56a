/* pixpost — random numbers.
 *
 * Generator: Philox4x64-10 (Salmon, Moraes, Dror & Shaw, "Parallel random
 * numbers: as easy as 1, 2, 3", SC 2011), a counter-based generator. The key
 * is (seed, stream), so every chain or frame gets an independent stream from
 * one user seed and the numbers never depend on the thread count. The raw
 * 64-bit output sequence equals numpy.random.Philox(key=seed + 2^64*stream)
 * .random_raw() (checked in tests/ref_rng.py).
 *
 * Variates: uniform on the open interval (0, 1) from the top 53 bits;
 * standard normal by the Box–Muller transform, two normals per raw word
 * (radius uniform from its high 40 bits, angle from its low 24: |z| <= 7.54,
 * the bulk routine is written to vectorise); Gamma by Marsaglia &
 * Tsang (ACM TOMS 26, 2000), with the shape < 1 boost; Poisson by inversion
 * for small means and the PTRS transformed rejection of Hörmann (Insurance:
 * Math. & Econ. 12, 1993) for mean >= 10.
 *
 * The state is a plain struct so it can live inside a chain without an
 * allocation; treat its fields as private.
 */
#ifndef PIXPOST_RNG_H
#define PIXPOST_RNG_H

#include <stddef.h>
#include <stdint.h>

typedef struct pp_rng {
    uint64_t key[2];
    uint64_t ctr[4];
    uint64_t buf[4];
    unsigned pos;     /* next unused word of buf (4 = empty) */
    int has_spare;    /* a cached second Box–Muller normal */
    double spare;
} pp_rng;

/* Stream `stream` of seed `seed`. */
void pp_rng_seed(pp_rng *r, uint64_t seed, uint64_t stream);

uint64_t pp_rng_u64(pp_rng *r);
double pp_rng_uniform(pp_rng *r);                      /* (0, 1) */
double pp_rng_normal(pp_rng *r);                       /* N(0, 1) */
void pp_rng_normals(pp_rng *r, double *out, size_t n); /* n draws of N(0,1) */
/* Normals come in Box–Muller pairs; an unused second half is kept as the
 * "spare" and returned first by the next normal call, so the normal sequence
 * of a state does not depend on how it is split between the two calls. */
/* Gamma with shape a > 0 and RATE b > 0 (mean a/b); NaN if either is not
 * finite and > 0. */
double pp_rng_gamma(pp_rng *r, double shape, double rate);
/* Poisson with mean mu >= 0 (returns a double holding an integer); NaN if
 * mu is negative, NaN or above 2^50 (draws must stay exact integers). */
double pp_rng_poisson(pp_rng *r, double mu);

/* A 64-bit hash (splitmix64 finaliser) to derive seeds, e.g. from a path. */
uint64_t pp_hash64(uint64_t x);
uint64_t pp_hash_string(uint64_t seed, const char *s);

#endif
