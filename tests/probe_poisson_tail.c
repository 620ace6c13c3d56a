/* Probe for tests/ref_poisson_tail.py: src/poisson_tail.c on the command
 * line. For each pair A X: "logP dlogP" (%.17g) on one line.
 *
 *   probe_poisson_tail A X [A X ...]
 */
#include "poisson_tail.h"
#include <stdio.h>
#include <stdlib.h>

int main(int argc, char **argv)
{
    if (argc < 3 || argc % 2 == 0) {
        fprintf(stderr, "usage: probe_poisson_tail A X [A X ...]\n");
        return 1;
    }
    for (int i = 1; i + 1 < argc; i += 2) {
        double d, l = pp_poisson_logtail(strtod(argv[i], NULL), strtod(argv[i + 1], NULL), &d);
        printf("%.17g %.17g\n", l, d);
    }
    return 0;
}
