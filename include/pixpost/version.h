/* pixpost — the library's version.
 *
 * pp_version() returns the version of the library the program runs with,
 * "MAJOR.MINOR.PATCH", the CMake project version (CMakeLists.txt, the one
 * place it is set). The string is static: never NULL, never freed, safe to
 * call from any thread at any time.
 */
#ifndef PIXPOST_VERSION_H
#define PIXPOST_VERSION_H

const char *pp_version(void);

#endif
