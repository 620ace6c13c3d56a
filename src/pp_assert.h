/* pixpost — debug-only checks of internal invariants (issue 20, item 4).
 *
 * PP_ASSERT(cond) states something the library's own code guarantees (a
 * grid at least as large as its frame, moments of equal length, a trace
 * row inside its store), never something a caller or a file can get wrong:
 * those are refused with a status and a message as everywhere else. Active
 * in builds without NDEBUG (CMAKE_BUILD_TYPE=Debug) and in the sanitizer
 * build (PIXPOST_SANITIZE defines PIXPOST_ASSERTS): a broken invariant
 * prints the file, line and condition on stderr and aborts, a bug report
 * rather than a wrong result. In Release and RelWithDebInfo builds (NDEBUG)
 * it compiles to nothing: the condition is not evaluated (sizeof only), so
 * release outputs and speed do not change.
 */
#ifndef PIXPOST_PP_ASSERT_H
#define PIXPOST_PP_ASSERT_H

#if defined(PIXPOST_ASSERTS) || !defined(NDEBUG)
#include <stdio.h>
#include <stdlib.h>
#define PP_ASSERT(cond)                                                                   \
    do {                                                                                  \
        if (!(cond)) {                                                                    \
            fprintf(stderr, "%s:%d: pixpost internal invariant broken: %s\n", __FILE__,   \
                    __LINE__, #cond);                                                     \
            abort();                                                                      \
        }                                                                                 \
    } while (0)
#else
#define PP_ASSERT(cond) ((void)sizeof(!(cond)))
#endif

#endif
