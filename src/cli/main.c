/* pixpost command line — entry point: picks the command and hands it argv.
 *
 * `pixpost <command> [options]` with commands simulate, sample, batch, psf,
 * calibrate and demo; `pixpost --help`, `pixpost <command> --help`, `pixpost
 * --version`. Each command gets (argc - 1, argv + 1), so its argv[0] is its
 * own name. Exit statuses are listed in cli.h. Cost: nothing measurable.
 */
#include "cli.h"
#include <stdio.h>
#include <string.h>

typedef struct command {
    const char *name;
    int (*run)(int argc, char **argv);
    const char *summary;
} command;

static const command commands[] = {
    {"simulate", cli_cmd_simulate, "blur a sharp TRUTH image with a PSF and add noise"},
    {"sample", cli_cmd_sample, "draw posterior samples for one frame; write mean, sd, bounds"},
    {"batch", cli_cmd_batch, "run sample on every frame of a folder (sharded, resumable)"},
    {"psf", cli_cmd_psf, "write a point-spread function kernel as a float TIFF"},
    {"calibrate", cli_cmd_calibrate, "measure camera offset, gain and read noise (--noise spec)"},
    {"demo", cli_cmd_demo, "run on the bundled demonstration frames"},
    {NULL, NULL, NULL},
};

static void usage(FILE *fp)
{
    fprintf(fp, "pixpost %s - posterior sampling for deblurring microscopy frames\n\n", pp_version());
    fputs("Usage: pixpost <command> [options]\n"
          "       pixpost <command> --help   options of one command, with their defaults\n"
          "       pixpost --version\n\nCommands:\n",
          fp);
    for (const command *c = commands; c->name; c++)
        fprintf(fp, "  %-9s %s\n", c->name, c->summary);
    fputs("\nExamples:\n"
          "  pixpost psf airy:na=1.4,wavelength=0.52,pixel=0.065 -o psf.tif\n"
          "  pixpost simulate truth.tif --psf gaussian:sigma=1.6 --noise gaussian:sigma=2.5 "
          "-o frame.tif\n"
          "  pixpost calibrate --dark dark.tif --flat dim.tif --flat mid.tif --flat bright.tif\n"
          "  pixpost sample frame.tif --psf gaussian:sigma=1.6 --noise gaussian -o out/\n"
          "  pixpost demo -o pixpost-demo\n\n"
          "Exit status: 0 success; 1 bad usage or bad input (one line on stderr naming the file\n"
          "or option); 2 a batch in which some frames failed; 3 convergence warnings with "
          "--strict;\n128 + the signal number when stopped by SIGINT (130) or SIGTERM (143).\n"
          "Outputs never replace files pixpost did not write, unless --overwrite is given.\n",
          fp);
}

int main(int argc, char **argv)
{
    pp_sampler_return_memory(); /* frame-sized buffers back to the system when freed */
    if (argc < 2) {
        usage(stderr);
        return CLI_EXIT_USAGE;
    }
    const char *name = argv[1];
    if (strcmp(name, "--help") == 0 || strcmp(name, "-h") == 0 || strcmp(name, "help") == 0) {
        usage(stdout);
        return CLI_EXIT_OK;
    }
    if (strcmp(name, "--version") == 0) {
        printf("pixpost %s (GPL-3.0-or-later)\nMPI: %s\n", pp_version(), cli_mpi_support());
        return CLI_EXIT_OK;
    }
    for (const command *c = commands; c->name; c++)
        if (strcmp(name, c->name) == 0)
            return c->run(argc - 1, argv + 1);
    if (name[0] == '-')
        return cli_error("unknown option '%s' before the command (see 'pixpost --help')", name);
    return cli_error("unknown command '%s' (commands: simulate, sample, batch, psf, calibrate, "
                     "demo; see 'pixpost --help')",
                     name);
}
