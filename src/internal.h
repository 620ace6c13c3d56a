/* pixpost — internals shared between library files (not installed). */
#ifndef PIXPOST_INTERNAL_H
#define PIXPOST_INTERNAL_H

#include <stdio.h>
#include <stddef.h>
#include "pixpost/status.h"

#if defined(__GNUC__)
#define PP_PRINTF(a, b) __attribute__((format(printf, a, b)))
#else
#define PP_PRINTF(a, b)
#endif

/* pi (M_PI is not in strict C11). */
#define PP_PI 3.14159265358979323846

/* Sets the thread's error message (printf-style) and returns s, so a
 * failure reads: return pp_fail(PP_ERR_IO, "%s: cannot open: %s", ...). */
pp_status pp_fail(pp_status s, const char *fmt, ...) PP_PRINTF(2, 3);

/* n * size in *bytes; 0 (and no write) when it would overflow size_t. */
int pp_mul_ok(size_t n, size_t size, size_t *bytes);

/* Atomic output files. pp_atomic_open() creates a unique temporary file
 * beside `path` (same folder, name ".<base>.tmp.XXXXXX") and opens it for
 * writing; pp_atomic_commit() flushes, closes and renames it onto path;
 * pp_atomic_abort() closes and removes it. tmp must hold PP_PATH_MAX. */
#define PP_PATH_MAX 4096
pp_status pp_atomic_open(const char *path, char *tmp, FILE **fp);
pp_status pp_atomic_commit(const char *path, const char *tmp, FILE *fp);
void pp_atomic_abort(const char *tmp, FILE *fp);
/* For writers that need a path rather than a FILE (libpng/libtiff open by
 * name): reserve a temporary name beside path (the file exists, empty). */
pp_status pp_atomic_reserve(const char *path, char *tmp);
/* Rename a finished temporary onto path (removes tmp on failure). */
pp_status pp_atomic_rename(const char *tmp, const char *path);

#endif
