/* pixpost tests — tiny assertion helpers shared by tests/test_*.c.
 *
 * CHECK(cond, fmt, ...) records a failure with its line and message and goes
 * on; pp_test_done() prints "N passed, N failed" and returns the exit code. */
#ifndef PIXPOST_TESTUTIL_H
#define PIXPOST_TESTUTIL_H

#include <stdio.h>

extern int pp_test_passed, pp_test_failed;

#define CHECK(cond, ...)                                                      \
    do {                                                                      \
        if (cond) {                                                           \
            pp_test_passed++;                                                 \
        } else {                                                              \
            pp_test_failed++;                                                 \
            fprintf(stderr, "%s:%d: FAIL: ", __FILE__, __LINE__);             \
            fprintf(stderr, __VA_ARGS__);                                     \
            fputc('\n', stderr);                                              \
        }                                                                     \
    } while (0)

int pp_test_done(void);

/* Writes a hand-made PNG: signature, IHDR declaring w x h 8-bit gray, a
 * 2-byte IDAT (a zlib header, no pixel data) and IEND, all with correct
 * CRCs (ISO 3309 polynomial): a header that promises pixels the file does
 * not hold. */
void pp_test_write_png_header(const char *path, unsigned w, unsigned h);

/* A scratch folder for this test (from PP_TEST_TMP, created fresh). The
 * returned string is static. */
const char *pp_test_tmpdir(void);

/* The whole file at path as a NUL-terminated string (malloc'd; the caller
 * frees it), or NULL when it cannot be read. */
char *pp_test_slurp(const char *path);

#endif
