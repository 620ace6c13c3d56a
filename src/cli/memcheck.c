/* pixpost — the memory check before sampling (--memory-limit).
 *
 * Why: the samplers allocate their working memory when they are made, but
 * Linux hands out pages only when they are first written, so a run too
 * large for the machine (a 64 x 1024 x 1024 photon stack under hmc needs
 * about 33 GB: bench/NOTES.md, 2026-12-04) is not refused by malloc: it
 * starts, and the kernel's out-of-memory killer ends it minutes later
 * with nothing written and no message. This check refuses it before
 * sampling, with the numbers and the ways out.
 *
 * The estimate is measured, not modelled: after pp_sampler_create, the
 * bytes this process has allocated (glibc's mallinfo2: in-use heap blocks
 * plus mmap'ed blocks, which is where every grid-sized buffer goes) plus
 * what the run will still allocate (pp_sampler_memory_plan: park stores
 * and the R-hat map of --iters auto, the result maps) plus 8 MiB for the
 * program. Measured against the peak resident memory of whole runs
 * (tests/ref_memory_check.py, frames and a volume, gibbs, mtc, hmc, gpcn,
 * the adaptive prior, fixed and auto lengths): 1.07-1.14 times the peak
 * (the test holds it within 0.97-2). What counts as available:
 * MemAvailable of /proc/meminfo (free memory plus what the kernel can
 * reclaim without swapping) plus what this process already holds, and
 * under a cgroup v2 memory limit (a batch system's job), the room left
 * below it. Without glibc or /proc the check is skipped (said in the
 * README). */
#include "cli.h"
#include "pixpost/sampler_extra.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#if defined(__SANITIZE_ADDRESS__)
#define MEMCHECK_ASAN 1
#elif defined(__has_feature)
#if __has_feature(address_sanitizer)
#define MEMCHECK_ASAN 1
#endif
#endif
#ifdef MEMCHECK_ASAN
/* the sanitizer runtime's count (sanitizer/allocator_interface.h, which
 * not every compiler installs) */
size_t __sanitizer_get_current_allocated_bytes(void);
#elif defined(__GLIBC__)
#include <malloc.h>
#endif

/* The program itself: code, shared libraries, FFTW's plans, stacks (3.5-7
 * MiB of resident memory measured before and beside the allocations). */
#define PROGRAM_BYTES ((size_t)8 << 20)

/* Bytes this process has allocated and not freed; 0 when unknown. Under
 * AddressSanitizer (the sanitizer build), which replaces malloc, its own
 * count. */
static size_t allocated_bytes(void)
{
#if defined(MEMCHECK_ASAN)
    return __sanitizer_get_current_allocated_bytes();
#elif defined(__GLIBC__) && (__GLIBC__ > 2 || (__GLIBC__ == 2 && __GLIBC_MINOR__ >= 33))
    struct mallinfo2 mi = mallinfo2();
    return mi.uordblks + mi.hblkhd;
#else
    return 0;
#endif
}

/* The number after "key" (followed by ':' or a blank) on a line of a
 * text file such as /proc/meminfo ("MemAvailable:  N kB") or a cgroup's
 * memory.stat ("anon N"), times unit; 0 when missing. */
static size_t keyed_number(const char *path, const char *key, size_t unit)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return 0;
    char line[256];
    size_t n = strlen(key), v = 0;
    while (fgets(line, sizeof line, f))
        if (strncmp(line, key, n) == 0 && (line[n] == ':' || line[n] == ' ')) {
            v = (size_t)strtoull(line + n + 1, NULL, 10) * unit;
            break;
        }
    fclose(f);
    return v;
}

/* One number in a file (cgroup v2's memory.max holds "max" when there is
 * no limit); 0 when missing or not a number. */
static size_t file_number(const char *path)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return 0;
    char buf[64] = "";
    size_t v = 0;
    if (fgets(buf, sizeof buf, f) && buf[0] >= '0' && buf[0] <= '9')
        v = (size_t)strtoull(buf, NULL, 10);
    fclose(f);
    return v;
}

/* Resident bytes of this process now (/proc/self/statm); 0 when unknown. */
static size_t resident_bytes(void)
{
    FILE *f = fopen("/proc/self/statm", "r");
    if (!f)
        return 0;
    unsigned long long size = 0, res = 0;
    int ok = fscanf(f, "%llu %llu", &size, &res) == 2;
    fclose(f);
    return ok ? (size_t)res * 4096 : 0;
}

/* Memory the process may hold in all: what it holds now plus what the
 * machine (or the cgroup's limit) can still give; 0 when unknown. */
static size_t machine_room(size_t held)
{
    size_t avail = keyed_number("/proc/meminfo", "MemAvailable", 1024);
    if (avail == 0)
        return 0;
    size_t room = held + avail;
    /* under a cgroup v2 limit, the room below it left by the group's
     * anonymous memory (its page cache can be reclaimed, as MemAvailable
     * assumes too) */
    size_t max = file_number("/sys/fs/cgroup/memory.max");
    size_t anon = keyed_number("/sys/fs/cgroup/memory.stat", "anon", 1);
    if (max > 0 && anon > 0 && max > anon && held + (max - anon) < room)
        room = held + (max - anon);
    return room;
}

/* "1.23 GiB", "456.7 MiB" or "12 KiB" into buf. */
static const char *amount(size_t b, char *buf, size_t len)
{
    double k = (double)b / 1024.0;
    if (k >= 1024.0 * 1024.0)
        snprintf(buf, len, "%.2f GiB", k / (1024.0 * 1024.0));
    else if (k >= 1024.0)
        snprintf(buf, len, "%.1f MiB", k / 1024.0);
    else
        snprintf(buf, len, "%.0f KiB", k);
    return buf;
}

int cli_memory_check(const cli_sample_opts *o, cli_frame_run *r)
{
    if (o->memory_limit == CLI_MEMORY_OFF)
        return 0;
    size_t alloc = allocated_bytes();
    if (alloc == 0)
        return 0; /* not glibc: nothing to measure */
    size_t run = 0;
    unsigned threads = 1;
    pp_sampler_memory_plan(r->sampler, &run, &threads);
    size_t need = alloc + run + PROGRAM_BYTES;
    /* batch --jobs N: N frames (each in its own process) at once, each
     * about this size; the room is theirs together */
    unsigned frames = o->memory_frames > 1 ? o->memory_frames : 1;
    int automatic = o->memory_limit == CLI_MEMORY_AUTO;
    size_t room = automatic ? machine_room(resident_bytes()) : o->memory_limit;
    if (room == 0 || need * frames <= room)
        return 0;
    unsigned chains = pp_sampler_config_used(r->sampler)->chains;
    char a[32], b[32], c[32], many[96] = "";
    if (frames > 1)
        snprintf(many, sizeof many, "; %s for the %u frames --jobs runs at once",
                 amount(need * frames, c, sizeof c), frames);
    snprintf(r->message, sizeof r->message,
             "%s: this run needs about %s of memory (%u chains on %u thread%s%s), %s %s; use "
             "%s%sfewer --chains or a crop of the frame, or %s",
             r->frame, amount(need, a, sizeof a), chains, threads, threads == 1 ? "" : "s", many,
             automatic ? "and this machine has room for" : "above --memory-limit",
             amount(room, b, sizeof b), frames > 1 ? "fewer --jobs, " : "",
             threads > 1 ? "--threads 1 (each thread keeps its own working buffers), " : "",
             automatic ? "--memory-limit off to run it anyway" : "raise --memory-limit");
    return CLI_EXIT_USAGE;
}
