/* pixpost — FFTW plans for one H x W grid (r2c and c2r), aligned buffers,
 * wisdom files and FFT-friendly sizes.
 *
 * Cost: planning allocates two scratch arrays (H*W doubles, H*(W/2+1)
 * complex) and, with PP_FFT_MEASURE, times a few candidate transforms on
 * them; ESTIMATE planning is cheap and deterministic. The arrays are freed
 * as soon as both plans exist: every execution goes through the new-array
 * functions, which never touch the planning arrays (FFTW 3.3 manual,
 * section 4.6; FFTW keeps them only for fftw_execute, which is not used).
 * A plan then holds no grid-sized memory. An execution is one O(N log N)
 * transform and allocates nothing.
 *
 * Thread safety: FFTW's executor is re-entrant, its planner is not. Every
 * call that touches the planner (plan creation and destruction, wisdom
 * import / export) takes planner_lock, the one writable global of the
 * library besides the thread-local error message. Execution takes no lock.
 *
 * Buffer contract: plans are made out of place on fftw_malloc'd arrays, so
 * the new-array execute functions require the caller's buffers to be
 * distinct (in != out) and SIMD-aligned like those, which is what
 * pp_fft_alloc_* guarantees. Pointers offset into such a buffer are NOT
 * valid arguments.
 */
#include "pixpost/fft.h"
#include "internal.h"
#include <complex.h> /* before fftw3.h: fftw_complex becomes double _Complex */
#include <errno.h>
#include <fftw3.h>
#include <limits.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct pp_fft {
    size_t height, width, half;
    fftw_plan r2c, c2r;
};

static pthread_mutex_t planner_lock = PTHREAD_MUTEX_INITIALIZER;

/* Frees the plans; caller holds planner_lock. */
static void destroy_locked(pp_fft *f)
{
    if (f->r2c)
        fftw_destroy_plan(f->r2c);
    if (f->c2r)
        fftw_destroy_plan(f->c2r);
    free(f);
}

/* Makes both plans on scratch arrays freed right after; caller holds planner_lock. */
static pp_status plan_locked(pp_fft *f, unsigned flags)
{
    int h = (int)f->height, w = (int)f->width;
    double *r = fftw_alloc_real(f->height * f->width);
    fftw_complex *c = fftw_alloc_complex(f->height * f->half);
    if (r && c) {
        f->r2c = fftw_plan_dft_r2c_2d(h, w, r, c, flags);
        f->c2r = fftw_plan_dft_c2r_2d(h, w, c, r, flags);
    }
    fftw_free(r);
    fftw_free(c);
    if (!r || !c)
        return pp_fail(PP_ERR_NOMEM, "out of memory for FFT buffers of %zux%zu", f->width,
                       f->height);
    if (!f->r2c || !f->c2r)
        return pp_fail(PP_ERR_NOMEM, "FFTW could not plan a %zux%zu transform", f->width,
                       f->height);
    return PP_OK;
}

pp_status pp_fft_create(size_t height, size_t width, int effort, pp_fft **out)
{
    *out = NULL;
    size_t n, half_n, bytes;
    if (height == 0 || width == 0)
        return pp_fail(PP_ERR_ARG, "FFT grid %zux%zu: both sides must be at least 1", width,
                       height);
    if (height > INT_MAX || width > INT_MAX || !pp_mul_ok(height, width, &n) ||
        !pp_mul_ok(height, width / 2 + 1, &half_n) ||
        !pp_mul_ok(half_n, sizeof(fftw_complex), &bytes) || n > (size_t)INT_MAX)
        return pp_fail(PP_ERR_LIMIT, "FFT grid %zux%zu is larger than FFTW's int sizes", width,
                       height);
    if (effort != PP_FFT_ESTIMATE && effort != PP_FFT_MEASURE)
        return pp_fail(PP_ERR_ARG, "FFT planner effort %d is neither ESTIMATE nor MEASURE", effort);
    pp_fft *f = calloc(1, sizeof *f);
    if (!f)
        return pp_fail(PP_ERR_NOMEM, "out of memory for an FFT plan");
    f->height = height;
    f->width = width;
    f->half = width / 2 + 1;
    unsigned flags = effort == PP_FFT_MEASURE ? FFTW_MEASURE : FFTW_ESTIMATE;
    pthread_mutex_lock(&planner_lock);
    pp_status st = plan_locked(f, flags);
    if (st != PP_OK)
        destroy_locked(f);
    pthread_mutex_unlock(&planner_lock);
    if (st == PP_OK)
        *out = f;
    return st;
}

void pp_fft_free(pp_fft *f)
{
    if (!f)
        return;
    pthread_mutex_lock(&planner_lock);
    destroy_locked(f);
    pthread_mutex_unlock(&planner_lock);
}

size_t pp_fft_height(const pp_fft *f)
{
    return f->height;
}
size_t pp_fft_width(const pp_fft *f)
{
    return f->width;
}
size_t pp_fft_half_width(const pp_fft *f)
{
    return f->half;
}

/* The r2c plan is made without FFTW_DESTROY_INPUT, and for r2c FFTW's
 * default is to preserve the input, so casting away const is safe. */
void pp_fft_forward(const pp_fft *f, const double *in, pp_complex *out)
{
    fftw_execute_dft_r2c(f->r2c, (double *)in, out);
}

void pp_fft_inverse(const pp_fft *f, pp_complex *in, double *out)
{
    fftw_execute_dft_c2r(f->c2r, in, out);
}

/* fftw_malloc is thread-safe (it is not part of the planner). */
double *pp_fft_alloc_real(size_t n)
{
    size_t bytes;
    if (n == 0 || !pp_mul_ok(n, sizeof(double), &bytes))
        return NULL;
    return fftw_malloc(bytes);
}

pp_complex *pp_fft_alloc_complex(size_t n)
{
    size_t bytes;
    if (n == 0 || !pp_mul_ok(n, sizeof(pp_complex), &bytes))
        return NULL;
    return fftw_malloc(bytes);
}

void pp_fft_free_buffer(void *p)
{
    fftw_free(p);
}

pp_status pp_fft_wisdom_load(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (!fp) {
        if (errno == ENOENT)
            return PP_OK;
        return pp_fail(PP_ERR_IO, "%s: cannot open the FFTW wisdom file: %s", path,
                       strerror(errno));
    }
    pthread_mutex_lock(&planner_lock);
    int ok = fftw_import_wisdom_from_file(fp);
    pthread_mutex_unlock(&planner_lock);
    fclose(fp);
    if (!ok)
        return pp_fail(PP_ERR_FORMAT,
                       "%s: not an FFTW wisdom file (or one from another FFTW build); delete it "
                       "and it will be made again",
                       path);
    return PP_OK;
}

pp_status pp_fft_wisdom_save(const char *path)
{
    char tmp[PP_PATH_MAX];
    pp_status st = pp_atomic_reserve(path, tmp);
    if (st != PP_OK)
        return st;
    pthread_mutex_lock(&planner_lock);
    int ok = fftw_export_wisdom_to_filename(tmp);
    pthread_mutex_unlock(&planner_lock);
    if (!ok) {
        remove(tmp);
        return pp_fail(PP_ERR_IO, "%s: cannot write the FFTW wisdom file", path);
    }
    return pp_atomic_rename(tmp, path);
}

/* 1 when n has no prime factor above 7. */
static int is_smooth7(size_t n)
{
    static const size_t primes[] = {2, 3, 5, 7};
    for (size_t i = 0; i < 4; i++)
        while (n % primes[i] == 0)
            n /= primes[i];
    return n == 1;
}

size_t pp_fft_good_size(size_t n)
{
    if (n <= 1)
        return 1;
    /* Even sizes only: FFTW's r2c / c2r of an odd length take slower
     * paths (ESTIMATE plans, pair of 2-D transforms, best of 6 runs: 525^2
     * 5.3 ms, 540^2 2.9 ms, 512^2 1.8 ms; bench/NOTES.md). 7-smooth numbers
     * are dense (gaps grow like n^(1-eps)), so a linear scan ends within a
     * few hundred steps for any frame size in use. */
    n += n % 2;
    while (!is_smooth7(n))
        n += 2;
    return n;
}
