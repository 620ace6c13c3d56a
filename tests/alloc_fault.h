/* pixpost tests — allocation-failure injection (issue 20, item 4).
 *
 * How: the test executable that includes tests/alloc_fault.c is linked with
 * GNU ld's --wrap for malloc, calloc, realloc, strdup, free, fftw_malloc,
 * fftw_alloc_real, fftw_alloc_complex and fftw_free (tests/CMakeLists.txt,
 * target test_alloc_sweep). --wrap redirects every undefined reference to
 * those names in the objects of that link, the members of the static
 * libpixpost.a included, to __wrap_<name> here, which counts the call and
 * forwards to the real function (under ASan, ASan's allocator). So the
 * release library is not touched at all: no build option, no indirection,
 * no cost; only this one test binary counts.
 *
 * What is counted: every allocation the library itself asks for. Not
 * counted (and never failed): allocations made inside shared libraries
 * (FFTW's planner, libtiff, libpng, libgomp, glibc's stdio buffers), since
 * their calls are resolved inside those libraries, not in our link.
 *
 * Use: pp_fault_arm(n) makes the n-th counted allocation from now fail
 * (returns NULL; n = 0: none fails, only count), pp_fault_disarm() stops and
 * returns how many allocations were counted; pp_fault_fired() says whether
 * the n-th was reached. pp_fault_live() is the number of blocks handed out
 * by the counted functions and not yet given back to the counted free
 * functions: a run that frees everything it allocated leaves it unchanged
 * (a leak check that works without LeakSanitizer). Thread-safe (atomics),
 * but the order of allocations, hence n, is only reproducible when the
 * library runs on one thread.
 */
#ifndef PIXPOST_ALLOC_FAULT_H
#define PIXPOST_ALLOC_FAULT_H

void pp_fault_arm(unsigned long n);
unsigned long pp_fault_disarm(void);
int pp_fault_fired(void);
/* The code address the failed allocation would have returned to (for
 * addr2line: which allocation site it was); NULL before any failure. */
void *pp_fault_site(void);
long pp_fault_live(void);

#endif
