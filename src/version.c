/* pixpost — the library's version (include/pixpost/version.h): the CMake
 * project version, passed in as PIXPOST_VERSION by CMakeLists.txt. */
#include "pixpost/version.h"

#ifndef PIXPOST_VERSION
#error "PIXPOST_VERSION must be defined by the build (CMakeLists.txt)"
#endif

const char *pp_version(void)
{
    return PIXPOST_VERSION;
}
