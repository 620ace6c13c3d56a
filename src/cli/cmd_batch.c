/* pixpost command line — `pixpost batch` (placeholder until the batch issue
 * lands: refuses politely so the command table is complete). */
#include "cli.h"

int cli_cmd_batch(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    return cli_error("batch: not available in this build yet");
}
