/* pixpost — error messages: one thread-local buffer per thread. */
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "internal.h"

static _Thread_local char pp_message[1024];

const char *pp_error_message(void) { return pp_message; }

pp_status pp_fail(pp_status s, const char *fmt, ...)
{
    /* Format into a local buffer first: an argument may be the current
     * message itself (re-raising it with more context). */
    char buf[sizeof pp_message];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    memcpy(pp_message, buf, sizeof pp_message);
    return s;
}

const char *pp_status_name(pp_status s)
{
    switch (s) {
    case PP_OK: return "ok";
    case PP_ERR_ARG: return "bad argument";
    case PP_ERR_IO: return "I/O error";
    case PP_ERR_FORMAT: return "not a readable image";
    case PP_ERR_UNSUPPORTED: return "unsupported image";
    case PP_ERR_LIMIT: return "over a limit";
    case PP_ERR_NOMEM: return "out of memory";
    case PP_ERR_NUMERIC: return "numerical failure";
    case PP_ERR_INTERRUPTED: return "interrupted";
    }
    return "unknown status";
}

int pp_mul_ok(size_t n, size_t size, size_t *bytes)
{
    if (size != 0 && n > SIZE_MAX / size)
        return 0;
    *bytes = n * size;
    return 1;
}
