/* Probe for tests/ref_rng.py: prints draws of src/rng.c one per line (%.17g,
 * raw words as unsigned decimal). Cost: O(N).
 *
 *   probe_rng raw     SEED STREAM N [C]    (C: start value of counter words
 *                                          0, 1, 2, to exercise the carry)
 *   probe_rng normal  SEED STREAM N          (bulk pp_rng_normals)
 *   probe_rng gamma   SEED STREAM N SHAPE RATE
 *   probe_rng poisson SEED STREAM N MU
 *   probe_rng hash    SEED STRING            (pp_hash_string, one line)
 *   probe_rng hash64  X                      (pp_hash64, one line)
 */
#include "pixpost/rng.h"
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int usage(void)
{
    fprintf(stderr, "usage: probe_rng raw|normal|gamma|poisson SEED STREAM N [PARAMS]\n"
                    "       probe_rng hash SEED STRING | hash64 X\n");
    return 1;
}

static uint64_t to_u64(const char *s)
{
    return strtoull(s, NULL, 0);
}

static int print_normals(pp_rng *r, size_t n)
{
    double *z = malloc((n ? n : 1) * sizeof *z);
    if (!z)
        return 1;
    pp_rng_normals(r, z, n);
    for (size_t i = 0; i < n; i++)
        printf("%.17g\n", z[i]);
    free(z);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc == 3 && strcmp(argv[1], "hash64") == 0) {
        printf("%" PRIu64 "\n", pp_hash64(to_u64(argv[2])));
        return 0;
    }
    if (argc == 4 && strcmp(argv[1], "hash") == 0) {
        printf("%" PRIu64 "\n", pp_hash_string(to_u64(argv[2]), argv[3]));
        return 0;
    }
    if (argc < 5)
        return usage();
    pp_rng r;
    pp_rng_seed(&r, to_u64(argv[2]), to_u64(argv[3]));
    size_t n = (size_t)to_u64(argv[4]);
    const char *what = argv[1];
    if (strcmp(what, "raw") == 0 && (argc == 5 || argc == 6)) {
        if (argc == 6) /* test-only write of a private field */
            r.ctr[0] = r.ctr[1] = r.ctr[2] = to_u64(argv[5]);
        for (size_t i = 0; i < n; i++)
            printf("%" PRIu64 "\n", pp_rng_u64(&r));
    } else if (strcmp(what, "normal") == 0 && argc == 5) {
        return print_normals(&r, n);
    } else if (strcmp(what, "gamma") == 0 && argc == 7) {
        double a = atof(argv[5]), b = atof(argv[6]);
        for (size_t i = 0; i < n; i++)
            printf("%.17g\n", pp_rng_gamma(&r, a, b));
    } else if (strcmp(what, "poisson") == 0 && argc == 6) {
        double mu = atof(argv[5]);
        for (size_t i = 0; i < n; i++)
            printf("%.17g\n", pp_rng_poisson(&r, mu));
    } else {
        return usage();
    }
    return 0;
}
