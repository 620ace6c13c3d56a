/* pixpost fuzzing — writes the fuzzer's bytes to a per-process scratch file,
 * because the frame readers take a path (they never read from memory).
 * Cost: one small file write per input. */
#ifndef PIXPOST_FUZZ_FILE_H
#define PIXPOST_FUZZ_FILE_H

#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

/* Path of this process's scratch file (static buffer, made once). */
static const char *fuzz_path(void)
{
    static char path[256];
    if (!path[0]) {
        const char *dir = getenv("TMPDIR");
        snprintf(path, sizeof path, "%s/pp_fuzz_%ld.bin", dir && dir[0] ? dir : "/tmp",
                 (long)getpid());
    }
    return path;
}

/* Writes data to the scratch file; returns 0 on success. */
static int fuzz_write(const unsigned char *data, size_t size)
{
    FILE *fp = fopen(fuzz_path(), "wb");
    if (!fp)
        return -1;
    size_t n = size ? fwrite(data, 1, size, fp) : 0;
    return (fclose(fp) != 0 || n != size) ? -1 : 0;
}

#endif
