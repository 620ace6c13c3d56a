/* pixpost tests — the allocation wrappers of tests/alloc_fault.h. */
#include "alloc_fault.h"
#include <complex.h>
#include <fftw3.h>
#include <stdatomic.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

void *__real_malloc(size_t n);
void *__real_calloc(size_t k, size_t n);
void *__real_realloc(void *p, size_t n);
char *__real_strdup(const char *s);
void __real_free(void *p);
void *__real_fftw_malloc(size_t n);
double *__real_fftw_alloc_real(size_t n);
fftw_complex *__real_fftw_alloc_complex(size_t n);
void __real_fftw_free(void *p);

void *__wrap_malloc(size_t n);
void *__wrap_calloc(size_t k, size_t n);
void *__wrap_realloc(void *p, size_t n);
char *__wrap_strdup(const char *s);
void __wrap_free(void *p);
void *__wrap_fftw_malloc(size_t n);
double *__wrap_fftw_alloc_real(size_t n);
fftw_complex *__wrap_fftw_alloc_complex(size_t n);
void __wrap_fftw_free(void *p);

static atomic_ulong counted, fail_at;
static atomic_int counting, fired;
static void *_Atomic site;
static atomic_long live;

void pp_fault_arm(unsigned long n)
{
    atomic_store(&counted, 0);
    atomic_store(&fired, 0);
    atomic_store(&fail_at, n);
    atomic_store(&counting, 1);
}

unsigned long pp_fault_disarm(void)
{
    atomic_store(&counting, 0);
    atomic_store(&fail_at, 0);
    return atomic_load(&counted);
}

void *pp_fault_site(void)
{
    return atomic_load(&site);
}

int pp_fault_fired(void)
{
    return atomic_load(&fired);
}

long pp_fault_live(void)
{
    return atomic_load(&live);
}

/* 1 when this allocation is to fail; caller: the address the counted
 * function returns to (pp_fault_site). Inlined into each wrapper. */
#define fail_now() fail_at_site(__builtin_return_address(0))
static inline __attribute__((always_inline)) int fail_at_site(void *caller)
{
    if (!atomic_load(&counting))
        return 0;
    unsigned long k = atomic_fetch_add(&counted, 1) + 1;
    if (k == atomic_load(&fail_at)) {
        atomic_store(&fired, 1);
        atomic_store(&site, caller);
        return 1;
    }
    return 0;
}

static void *got(void *p)
{
    if (p)
        atomic_fetch_add(&live, 1);
    return p;
}

void *__wrap_malloc(size_t n)
{
    return fail_now() ? NULL : got(__real_malloc(n));
}

void *__wrap_calloc(size_t k, size_t n)
{
    return fail_now() ? NULL : got(__real_calloc(k, n));
}

void *__wrap_realloc(void *p, size_t n)
{
    if (fail_now())
        return NULL; /* the old block stays the caller's, as with a real failure */
    void *q = __real_realloc(p, n);
    if (!p && q)
        atomic_fetch_add(&live, 1);
    return q;
}

char *__wrap_strdup(const char *s)
{
    return fail_now() ? NULL : got(__real_strdup(s));
}

void __wrap_free(void *p)
{
    if (p)
        atomic_fetch_sub(&live, 1);
    __real_free(p);
}

void *__wrap_fftw_malloc(size_t n)
{
    return fail_now() ? NULL : got(__real_fftw_malloc(n));
}

double *__wrap_fftw_alloc_real(size_t n)
{
    return fail_now() ? NULL : got(__real_fftw_alloc_real(n));
}

fftw_complex *__wrap_fftw_alloc_complex(size_t n)
{
    return fail_now() ? NULL : got(__real_fftw_alloc_complex(n));
}

void __wrap_fftw_free(void *p)
{
    if (p)
        atomic_fetch_sub(&live, 1);
    __real_fftw_free(p);
}
