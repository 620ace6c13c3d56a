/* pixpost fuzz target — the command-line parser of `pixpost sample`
 * (cli_sample_opts_parse: cli_parse, the typed getters, the SPEC parsers).
 * The input is split at NUL bytes into at most 40 arguments after "sample".
 * Checks beyond "no crash": the result is 0, CLI_HELP or CLI_EXIT_USAGE; on
 * success the required FRAME, -o and --psf are there, thin <= iters and
 * chains >= 1. Messages go to stderr (run with -close_fd_mask=3 to hide
 * them). Cost: microseconds per input. */
#include "cli.h"
#include <stdlib.h>
#include <string.h>

#define MAX_ARGS 40

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    if (size > 16384)
        return 0;
    char *buf = malloc(size + 1);
    if (!buf)
        return 0;
    memcpy(buf, data, size);
    buf[size] = '\0';
    char *argv[MAX_ARGS + 2];
    int argc = 0;
    argv[argc++] = "sample";
    for (size_t i = 0; i <= size && argc <= MAX_ARGS;) {
        argv[argc++] = buf + i;
        i += strlen(buf + i) + 1;
    }
    argv[argc] = NULL;
    cli_sample_opts *o = malloc(sizeof *o);
    int rc = o ? cli_sample_opts_parse(argc, argv, o) : 0;
    if (o && rc == 0) {
        if (!o->frame || !o->outdir || !o->outdir[0] || !o->psf_text || o->cfg.thin > o->cfg.iters ||
            o->cfg.thin < 1 || o->cfg.chains < 1 || o->cfg.iters < 1 ||
            !(o->cfg.level > 0 && o->cfg.level < 1))
            abort();
    } else if (o && rc != CLI_HELP && rc != CLI_EXIT_USAGE) {
        abort();
    }
    free(o);
    free(buf);
    return 0;
}
