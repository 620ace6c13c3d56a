/* Probe for tests/ref_truncnorm.py: src/truncnorm.c on the command line,
 * one value per line (%.17g). Cost: O(N).
 *
 *   probe_truncnorm draw  SEED N A     (N draws of N(0,1) given >= A)
 *   probe_truncnorm logsf A [A ...]    (log(1 - Phi(A)) for each A)
 *   probe_truncnorm hazard A [A ...]   (phi(A) / (1 - Phi(A)) for each A)
 */
#include "truncnorm.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int main(int argc, char **argv)
{
    if (argc == 5 && strcmp(argv[1], "draw") == 0) {
        pp_rng r;
        pp_rng_seed(&r, strtoull(argv[2], NULL, 0), 0);
        long n = strtol(argv[3], NULL, 10);
        double a = strtod(argv[4], NULL);
        for (long i = 0; i < n; i++)
            printf("%.17g\n", pp_truncnorm_tail(&r, a));
        return 0;
    }
    if (argc >= 3 && strcmp(argv[1], "logsf") == 0) {
        for (int i = 2; i < argc; i++)
            printf("%.17g\n", pp_normal_logsf(strtod(argv[i], NULL)));
        return 0;
    }
    if (argc >= 3 && strcmp(argv[1], "hazard") == 0) {
        for (int i = 2; i < argc; i++)
            printf("%.17g\n", pp_normal_hazard(strtod(argv[i], NULL)));
        return 0;
    }
    fprintf(stderr, "usage: probe_truncnorm draw SEED N A | logsf A [A ...] | hazard A [A ...]\n");
    return 1;
}
