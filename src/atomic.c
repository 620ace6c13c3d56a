/* pixpost — atomic output files: write to a temporary name in the target's
 * folder, then rename(2), which replaces the target in one step on POSIX
 * file systems. A crash or a full disk leaves at most a ".<name>.tmp.*"
 * file, never a truncated output under the final name. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include "internal.h"

int mkstemp(char *template); /* POSIX; declared here for strict C11 */

/* mkstemp creates files with mode 0600; give outputs the usual 0666 less
 * the umask, like fopen would. (Reading the umask means setting it back.) */
static int temp_file(char *tmp)
{
    int fd = mkstemp(tmp);
    if (fd >= 0) {
        mode_t m = umask(022);
        umask(m);
        if (fchmod(fd, 0666 & ~m) != 0) {
            /* keep 0600: the file is still correct, only less shared */
        }
    }
    return fd;
}

static pp_status make_template(const char *path, char *tmp)
{
    const char *slash = strrchr(path, '/');
    size_t dirlen = slash ? (size_t)(slash - path + 1) : 0;
    const char *base = slash ? slash + 1 : path;
    int n = snprintf(tmp, PP_PATH_MAX, "%.*s.%s.tmp.XXXXXX", (int)dirlen, path, base);
    if (n < 0 || n >= PP_PATH_MAX)
        return pp_fail(PP_ERR_ARG, "%s: path too long", path);
    return PP_OK;
}

pp_status pp_atomic_reserve(const char *path, char *tmp)
{
    pp_status st = make_template(path, tmp);
    if (st != PP_OK)
        return st;
    int fd = temp_file(tmp);
    if (fd < 0)
        return pp_fail(PP_ERR_IO, "%s: cannot create a file in its folder: %s", path,
                       strerror(errno));
    close(fd);
    return PP_OK;
}

pp_status pp_atomic_open(const char *path, char *tmp, FILE **fp)
{
    *fp = NULL;
    pp_status st = make_template(path, tmp);
    if (st != PP_OK)
        return st;
    int fd = temp_file(tmp);
    if (fd < 0)
        return pp_fail(PP_ERR_IO, "%s: cannot create a file in its folder: %s", path,
                       strerror(errno));
    *fp = fdopen(fd, "wb");
    if (!*fp) {
        close(fd);
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: cannot open for writing: %s", path, strerror(errno));
    }
    return PP_OK;
}

pp_status pp_atomic_rename(const char *tmp, const char *path)
{
    if (rename(tmp, path) != 0) {
        int e = errno;
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: cannot move the finished file into place: %s", path,
                       strerror(e));
    }
    return PP_OK;
}

pp_status pp_atomic_commit(const char *path, const char *tmp, FILE *fp)
{
    int bad = ferror(fp);
    if (fflush(fp) != 0)
        bad = 1;
    int e = errno;
    if (fclose(fp) != 0) {
        bad = 1;
        e = errno;
    }
    if (bad) {
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: write failed: %s", path, strerror(e));
    }
    return pp_atomic_rename(tmp, path);
}

void pp_atomic_abort(const char *tmp, FILE *fp)
{
    if (fp)
        fclose(fp);
    if (tmp && tmp[0])
        remove(tmp);
}
