/* pixpost command line — where a command may write: the one rule for output
 * folders (sample, demo, batch's frame folders) and the one for single
 * output files (simulate, psf), so that a user's own files are never
 * replaced unless they said so with --overwrite.
 *
 * A folder is pixpost's when it holds the marker PP_OUTPUT_MARKER, which
 * pp_output_write() (every run's outputs) and pp_output_mark() put there
 * before anything else. Both checks only look (stat, one directory listing,
 * one small read): they run before any sampling and create nothing, so a
 * refusal leaves the disk as it was. Cost: negligible.
 */
#include "cli.h"
#include "pixpost/output.h"
#include "pixpost/output_extra.h"
#include <dirent.h>
#include <errno.h>
#include <string.h>
#include <sys/stat.h>

int cli_check_outdir(const char *dir, int overwrite, char *msg, size_t len)
{
    struct stat sb;
    if (stat(dir, &sb) != 0)
        return 0; /* missing (created later) or unreachable: cli_make_dirs says why */
    if (!S_ISDIR(sb.st_mode))
        return cli_refuse(msg, len,
                      "%s: exists and is not a folder (the output is a folder of files; "
                      "choose a new or empty folder with -o)",
                      dir);
    if (pp_output_is_marked(dir))
        return 0;
    DIR *d = opendir(dir);
    if (!d)
        return cli_refuse(msg, len, "%s: cannot list the output folder: %s", dir, strerror(errno));
    char first[256] = "";
    struct dirent *e;
    while (!first[0] && (e = readdir(d)) != NULL)
        if (strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, ".."))
            snprintf(first, sizeof first, "%s", e->d_name);
    closedir(d);
    if (!first[0] || overwrite)
        return 0;
    return cli_refuse(msg, len,
                  "%s: the output folder holds files pixpost did not write (such as %s); "
                  "choose a new or empty folder, or give --overwrite to write into it "
                  "(pixpost's files of the same names are then replaced, others kept)",
                  dir, first);
}

int cli_check_outfile(const char *path, int overwrite)
{
    struct stat sb;
    if (stat(path, &sb) != 0)
        return 0;
    if (S_ISDIR(sb.st_mode))
        return cli_error("%s: is a folder (expected the name of an output file)", path);
    if (overwrite)
        return 0;
    return cli_error("%s: the file exists (pixpost does not replace files; choose another "
                     "name, or give --overwrite to replace it)",
                     path);
}
