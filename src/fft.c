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
#include "pixpost/shape_extra.h"
#include "internal.h"
#include "pp_assert.h"
#include <complex.h> /* before fftw3.h: fftw_complex becomes double _Complex */
#include <errno.h>
#include <fcntl.h>
#include <fftw3.h>
#include <limits.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

struct pp_fft {
    pp_shape shape;             /* extents, slowest first */
    size_t height, width, half; /* rows (all axes but the last), last axis, W/2+1 */
    fftw_plan r2c, c2r;
    pp_fft_plans source;
    int batch; /* pp_fft_create_rows: height independent 1-D transforms */
};

/* "W x H" or "W x H x D": sizes in messages are spoken fastest axis first,
 * as image sizes are (unchanged from the 2-D messages). */
static const char *dims(const pp_shape *s, char *buf, size_t len)
{
    if (s->rank == 3)
        snprintf(buf, len, "%zux%zux%zu", s->n[2], s->n[1], s->n[0]);
    else if (s->rank == 2)
        snprintf(buf, len, "%zux%zu", s->n[1], s->n[0]);
    else
        snprintf(buf, len, "%zu", s->n[0]);
    return buf;
}

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

/* A plan of f's kind: rank-n, or (f->batch) height 1-D transforms of the
 * last axis one after another (fftw_plan_many_dft_*, FFTW manual §4.4.1). */
static fftw_plan plan_r2c(const pp_fft *f, const int *n, double *r, fftw_complex *c,
                          unsigned flags)
{
    if (f->batch)
        return fftw_plan_many_dft_r2c(1, n + 1, n[0], r, NULL, 1, n[1], c, NULL, 1,
                                      (int)f->half, flags);
    return fftw_plan_dft_r2c(f->shape.rank, n, r, c, flags);
}

static fftw_plan plan_c2r(const pp_fft *f, const int *n, fftw_complex *c, double *r,
                          unsigned flags)
{
    if (f->batch)
        return fftw_plan_many_dft_c2r(1, n + 1, n[0], c, NULL, 1, (int)f->half, r, NULL, 1,
                                      n[1], flags);
    return fftw_plan_dft_c2r(f->shape.rank, n, c, r, flags);
}

/* Makes both plans on scratch arrays freed right after; caller holds
 * planner_lock. MEASURE first asks for plans from wisdom alone
 * (FFTW_WISDOM_ONLY, which fails at once when the wisdom has none), so that
 * f->source can tell loaded plans from newly measured ones. */
static pp_status plan_locked(pp_fft *f, unsigned flags)
{
    int rank = f->shape.rank, n[PP_MAX_RANK];
    for (int k = 0; k < rank; k++)
        n[k] = (int)f->shape.n[k];
    double *r = fftw_alloc_real(f->height * f->width);
    fftw_complex *c = fftw_alloc_complex(f->height * f->half);
    f->source = flags == FFTW_MEASURE ? PP_FFT_PLANS_WISDOM : PP_FFT_PLANS_ESTIMATED;
    /* fftw_plan_dft_r2c(rank, n, ...) is what FFTW's _2d convenience
     * planners call (FFTW manual §4.3.3), so rank-2 plans and their wisdom
     * are those of the earlier 2-D code. */
    if (r && c && flags == FFTW_MEASURE) {
        f->r2c = plan_r2c(f, n, r, c, flags | FFTW_WISDOM_ONLY);
        f->c2r = plan_c2r(f, n, c, r, flags | FFTW_WISDOM_ONLY);
        if (!f->r2c || !f->c2r) {
            if (f->r2c)
                fftw_destroy_plan(f->r2c);
            if (f->c2r)
                fftw_destroy_plan(f->c2r);
            f->r2c = f->c2r = NULL;
            f->source = PP_FFT_PLANS_MEASURED;
        }
    }
    if (r && c && !f->r2c) {
        f->r2c = plan_r2c(f, n, r, c, flags);
        f->c2r = plan_c2r(f, n, c, r, flags);
    }
    fftw_free(r);
    fftw_free(c);
    char d[96];
    if (!r || !c)
        return pp_fail(PP_ERR_NOMEM, "out of memory for FFT buffers of %s",
                       dims(&f->shape, d, sizeof d));
    if (!f->r2c || !f->c2r)
        return pp_fail(PP_ERR_NOMEM, "FFTW could not plan a %s transform",
                       dims(&f->shape, d, sizeof d));
    return PP_OK;
}

pp_status pp_fft_create(size_t height, size_t width, int effort, pp_fft **out)
{
    pp_shape s = pp_shape_2d(height, width);
    return pp_fft_create_shape(&s, effort, out);
}

static pp_status create(const pp_shape *shape, int batch, int effort, pp_fft **out)
{
    *out = NULL;
    size_t n, half_n, bytes;
    char d[96];
    if (shape->rank < 1 || shape->rank > PP_MAX_RANK)
        return pp_fail(PP_ERR_ARG, "FFT grid of rank %d: the rank must be 1 to %d", shape->rank,
                       PP_MAX_RANK);
    for (int k = 0; k < shape->rank; k++)
        if (shape->n[k] == 0)
            return pp_fail(PP_ERR_ARG, "FFT grid %s: every side must be at least 1",
                           dims(shape, d, sizeof d));
    pp_status cs = pp_shape_count(shape, 0, &n);
    int fits = cs == PP_OK && n <= (size_t)INT_MAX;
    for (int k = 0; k < shape->rank; k++)
        fits = fits && shape->n[k] <= INT_MAX;
    half_n = fits ? pp_shape_half_count(shape) : 0;
    if (!fits || !pp_mul_ok(half_n, sizeof(fftw_complex), &bytes))
        return pp_fail(PP_ERR_LIMIT, "FFT grid %s is larger than FFTW's int sizes",
                       dims(shape, d, sizeof d));
    if (effort != PP_FFT_ESTIMATE && effort != PP_FFT_MEASURE)
        return pp_fail(PP_ERR_ARG, "FFT planner effort %d is neither ESTIMATE nor MEASURE", effort);
    pp_fft *f = calloc(1, sizeof *f);
    if (!f)
        return pp_fail(PP_ERR_NOMEM, "out of memory for an FFT plan");
    f->shape = *shape;
    f->batch = batch;
    f->width = shape->n[shape->rank - 1];
    f->height = n / f->width;
    f->half = f->width / 2 + 1;
    PP_ASSERT(f->height * f->width == n && f->height * f->half == half_n); /* the plan's shape */
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

pp_status pp_fft_create_shape(const pp_shape *shape, int effort, pp_fft **out)
{
    return create(shape, 0, effort, out);
}

pp_status pp_fft_create_rows(size_t rows, size_t len, int effort, pp_fft **out)
{
    pp_shape s = pp_shape_2d(rows, len);
    return create(&s, 1, effort, out);
}

void pp_fft_free(pp_fft *f)
{
    if (!f)
        return;
    pthread_mutex_lock(&planner_lock);
    destroy_locked(f);
    pthread_mutex_unlock(&planner_lock);
}

pp_shape pp_fft_shape(const pp_fft *f)
{
    return f->shape;
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
pp_fft_plans pp_fft_plans_source(const pp_fft *f)
{
    return f->source;
}

/* The r2c plan is made without FFTW_DESTROY_INPUT, and for r2c FFTW's
 * default is to preserve the input, so casting away const is safe. */
void pp_fft_forward(const pp_fft *f, const double *in, pp_complex *out)
{
    PP_ASSERT((const void *)in != (const void *)out); /* out of place, as planned */
    fftw_execute_dft_r2c(f->r2c, (double *)in, out);
}

void pp_fft_inverse(const pp_fft *f, pp_complex *in, double *out)
{
    PP_ASSERT((const void *)in != (const void *)out); /* out of place, as planned */
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

/* An empty file counts as missing: pp_fft_wisdom_save() creates the file
 * empty to lock it when it does not exist yet, and a reader may see it then. */
pp_status pp_fft_wisdom_load(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (!fp) {
        if (errno == ENOENT)
            return PP_OK;
        return pp_fail(PP_ERR_IO, "%s: cannot open the FFTW wisdom file: %s", path,
                       strerror(errno));
    }
    int c = fgetc(fp);
    if (c == EOF) {
        fclose(fp);
        return PP_OK;
    }
    ungetc(c, fp);
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

/* Opens path (created empty if missing) and takes a POSIX write lock on it,
 * waiting for another process's; retries until the locked file is still the
 * one path names (a writer that held the lock has renamed a new file over
 * it). Returns the descriptor to close when done, or -1 when the file cannot
 * be opened or locked (a read-only file, a file system without locks): the
 * caller then goes on without the lock. */
static int lock_target(const char *path)
{
    for (int tries = 0; tries < 64; tries++) {
        int fd = open(path, O_RDWR | O_CREAT, 0666);
        if (fd < 0)
            return -1;
        struct flock l;
        memset(&l, 0, sizeof l);
        l.l_type = F_WRLCK;
        l.l_whence = SEEK_SET;
        if (fcntl(fd, F_SETLKW, &l) != 0) {
            close(fd);
            return -1;
        }
        struct stat a, b;
        if (fstat(fd, &a) == 0 && stat(path, &b) == 0 && a.st_dev == b.st_dev &&
            a.st_ino == b.st_ino)
            return fd;
        close(fd);
    }
    return -1;
}

/* The whole file behind fd as a NUL-terminated string (NULL when empty or
 * unreadable). Read through the locked descriptor itself: closing any other
 * descriptor of the file would drop this process's POSIX lock on it. */
static char *read_all(int fd)
{
    struct stat sb;
    if (fstat(fd, &sb) != 0 || sb.st_size <= 0 || sb.st_size > (1 << 26))
        return NULL;
    size_t n = (size_t)sb.st_size, got = 0;
    char *buf = malloc(n + 1);
    while (buf && got < n) {
        ssize_t r = pread(fd, buf + got, n - got, (off_t)got);
        if (r <= 0)
            break;
        got += (size_t)r;
    }
    if (buf)
        buf[got] = '\0';
    return buf;
}

/* Merge, then replace: under the lock, the wisdom already in the file is
 * imported (a junk or empty file is skipped: it is replaced), all of this
 * process's wisdom is written to a temporary file, which is renamed over
 * path. Two processes saving at once therefore both keep their plans, and a
 * reader sees the old file or the new one, never a partial one. */
pp_status pp_fft_wisdom_save(const char *path)
{
    char tmp[PP_PATH_MAX];
    pp_status st = pp_atomic_reserve(path, tmp);
    if (st != PP_OK)
        return st;
    int fd = lock_target(path);
    char *old = fd >= 0 ? read_all(fd) : NULL;
    pthread_mutex_lock(&planner_lock);
    if (old)
        (void)fftw_import_wisdom_from_string(old);
    else if (fd < 0) /* no lock to lose: merge what is there, if anything */
        (void)fftw_import_wisdom_from_filename(path);
    int ok = fftw_export_wisdom_to_filename(tmp);
    pthread_mutex_unlock(&planner_lock);
    free(old);
    if (!ok) {
        remove(tmp);
        if (fd >= 0)
            close(fd);
        return pp_fail(PP_ERR_IO, "%s: cannot write the FFTW wisdom file", path);
    }
    st = pp_atomic_rename(tmp, path);
    if (fd >= 0)
        close(fd); /* after the rename: releases the lock */
    return st;
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

/* The padded-grid table: every even 7-smooth side from 8 to 2100 whose
 * ESTIMATE pair (r2c + c2r) is at most 3x its MEASURE pair, with that
 * MEASURE pair's cost in hundredths of a nanosecond per pixel. Measured by
 * bench/bench_fft_sizes on square grids (AMD EPYC, 1 thread, the fastest of
 * two sweeps, 2026-12-03; the data and the sizes left out are in
 * bench/fft_sizes.txt, generated by bench/fft_table.py). Left out because
 * FFTW's ESTIMATE plans for them are 3-40x slower than measured ones (e.g.
 * 144: 48 vs 2.7 ns per pixel, 216: 57 vs 3.6, 1280: 289 vs 7.0), which is
 * what a run without the plan cache gets. Why: those plans allocate a
 * scratch buffer above 128 KiB in every execution, and with glibc's mmap
 * threshold fixed there (pp_sampler_return_memory, which the command calls)
 * each one is a fresh mmap: page faults in the kernel at every transform.
 * Without that call the same 144^2 ESTIMATE pair takes 4.7 ns per pixel,
 * 1280^2 25-31 (2026-12-03). MEASURE plans, timed under the same allocator
 * setting, avoid them. */
static const struct {
    unsigned short n, cost;
} grid_table[] = {
#include "fft_table.inc"
};
enum { GRID_TABLE_LEN = sizeof grid_table / sizeof grid_table[0] };

/* A gibbs kept draw with --boundary pad costs ~1.5 pairs plus ~15 ns per
 * grid pixel of other passes (normals, the Fourier-space pass, moments):
 * 500^2 frame on a 512^2 grid, 5.5 ms per iteration against a 1.0-1.1 ms
 * MEASURE pair (bench_sampler, bench_floor, 2026-12-03). In pair units that
 * is 10 ns per pixel on top of the pair's own cost, in the table's unit: */
#define GRID_OTHER_COST 1000.0

/* A larger grid also costs memory (every grid-sized buffer grows with it:
 * 1024^2 with pad on 1080^2 instead of 1050^2 took test_memory's gibbs pad
 * row from 151 to 155 bytes per frame pixel, past issue 8's bound), so it
 * is taken only when the table says it is clearly faster: its modelled
 * cost at least GRID_GAIN below the best so far. 5 % is about the
 * repeatability of the sweeps behind the table on the shared machine
 * (bench/NOTES.md); 1050^2 and 1080^2 differ by 0.4 %. */
#define GRID_GAIN 0.05

/* Index of the first table entry >= n, or GRID_TABLE_LEN. */
static size_t table_from(size_t n)
{
    size_t lo = 0, hi = GRID_TABLE_LEN;
    while (lo < hi) {
        size_t mid = (lo + hi) / 2;
        if (grid_table[mid].n < n)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

/* Candidates for one side: table entries from the first >= n up to 1.5 n
 * (a grid half as large again never wins against the 10 ns per pixel). */
static size_t table_until(size_t first, size_t n)
{
    size_t last = first;
    while (last < GRID_TABLE_LEN && (last == first || grid_table[last].n <= n + n / 2))
        last++;
    return last;
}

void pp_fft_good_grid(size_t h, size_t w, size_t *gh, size_t *gw)
{
    size_t h0 = table_from(h), w0 = table_from(w);
    *gh = pp_fft_good_size(h);
    *gw = pp_fft_good_size(w);
    if (h < grid_table[0].n || w < grid_table[0].n || h0 == GRID_TABLE_LEN ||
        w0 == GRID_TABLE_LEN)
        return; /* below or beyond the table: the smallest even 7-smooth sides */
    size_t h1 = table_until(h0, h), w1 = table_until(w0, w);
    double best = -1;
    for (size_t i = h0; i < h1; i++)
        for (size_t j = w0; j < w1; j++) {
            double a = grid_table[i].n, b = grid_table[j].n;
            double cost = a * b * (0.5 * (grid_table[i].cost + grid_table[j].cost) +
                                   GRID_OTHER_COST);
            if (best < 0 || cost < (1.0 - GRID_GAIN) * best) {
                best = cost;
                *gh = grid_table[i].n;
                *gw = grid_table[j].n;
            }
        }
}
