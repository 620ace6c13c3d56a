/* pixpost command line — where the FFT plans come from: the per-user plan
 * cache, a --wisdom FILE, or nowhere (--no-plan-cache).
 *
 * The cache is one FFTW wisdom file, $XDG_CACHE_HOME/pixpost/fftw-wisdom
 * (XDG Base Directory specification: the variable counts only when it is an
 * absolute path), else $HOME/.cache/pixpost/fftw-wisdom. The library never
 * looks for it: this file finds it, loads it before planning and saves it
 * after (pp_fft_wisdom_save merges under a lock, so concurrent runs and
 * batch workers are safe).
 *
 * Policy. With a wisdom file (the cache or --wisdom) plans are MEASURE
 * plans: from the wisdom when it holds this grid, else measured now (0.02-2
 * s below 1024^2, up to ~7 s at 2048^2; bench/fft_sizes.txt) and saved at
 * once, so the second run of a size plans in milliseconds. Measuring on the
 * first run rather than later: it pays for itself within that run at the
 * sizes where ESTIMATE plans are slow (144^2: 48 vs 2.7 ns per pixel per
 * pair), and costs a few per cent of a default run elsewhere. A cache that
 * cannot be read gives ESTIMATE plans and one note; one that cannot be
 * written, one note; neither is an error. A --wisdom FILE that cannot be
 * read or written is an error, as the user named it.
 * Cost: one small file read and, after a new measurement, written.
 */
#include "cli.h"
#include "pixpost/sampler_extra.h"
#include <errno.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

/* The cache file's path into buf; 0, or -1 (why in why) when neither
 * variable gives a folder. */
static int cache_path(char *buf, size_t len, const char **why)
{
    const char *xdg = getenv("XDG_CACHE_HOME"), *home = getenv("HOME");
    int n;
    if (xdg && xdg[0] == '/')
        n = snprintf(buf, len, "%s/pixpost/fftw-wisdom", xdg);
    else if (home && home[0])
        n = snprintf(buf, len, "%s/.cache/pixpost/fftw-wisdom", home);
    else {
        *why = "neither $XDG_CACHE_HOME (absolute) nor $HOME is set";
        return -1;
    }
    if (n < 0 || (size_t)n >= len) {
        *why = "path too long";
        return -1;
    }
    return 0;
}

/* mkdir -p of the folder holding file (mode 0700 for new folders, as the
 * XDG specification asks); 0 or -1 with errno set. */
static int make_parent(const char *file)
{
    char buf[sizeof ((cli_plans *)0)->path];
    snprintf(buf, sizeof buf, "%s", file);
    char *end = strrchr(buf, '/');
    if (!end || end == buf)
        return 0;
    *end = '\0';
    for (char *p = buf + 1;; p++) {
        if (*p == '/' || *p == '\0') {
            char c = *p;
            *p = '\0';
            if (mkdir(buf, 0700) != 0 && errno != EEXIST)
                return -1;
            *p = c;
            if (!c)
                return 0;
        }
    }
}

/* One line on stderr, "pixpost: note: ...", unless --quiet. */
static void note(const cli_sample_opts *o, const char *fmt, ...) CLI_PRINTF(2, 3);
static void note(const cli_sample_opts *o, const char *fmt, ...)
{
    if (o->quiet)
        return;
    va_list ap;
    va_start(ap, fmt);
    fputs("pixpost: note: ", stderr);
    vfprintf(stderr, fmt, ap);
    fputc('\n', stderr);
    va_end(ap);
}

int cli_plans_load(const cli_sample_opts *o, cli_plans *p, char *msg, size_t len)
{
    memset(p, 0, sizeof *p);
    p->effort = PP_FFT_ESTIMATE;
    snprintf(p->summary, sizeof p->summary, "estimated");
    const char *why = NULL;
    if (o->wisdom) {
        snprintf(p->path, sizeof p->path, "%s", o->wisdom);
        p->from_option = 1;
        if (pp_fft_wisdom_load(p->path) != PP_OK) {
            snprintf(msg, len, "%s", pp_error_message());
            return CLI_EXIT_USAGE;
        }
    }
    else if (o->no_plan_cache)
        return 0;
    else if (cache_path(p->path, sizeof p->path, &why) != 0) {
        note(o, "no FFT plan cache (%s); plans are estimated (--no-plan-cache turns the cache "
                "off)",
             why);
        p->path[0] = '\0';
        return 0;
    }
    else {
        pp_status st = pp_fft_wisdom_load(p->path);
        if (st == PP_ERR_FORMAT) /* replaced by the save after planning */
            note(o, "FFT plan cache %s: not FFTW wisdom of this FFTW build; it will be replaced",
                 p->path);
        else if (st != PP_OK) {
            note(o, "FFT plan cache: %s; plans are estimated this run (--no-plan-cache turns "
                    "the cache off)",
                 pp_error_message());
            p->path[0] = '\0';
            return 0;
        }
    }
    p->effort = PP_FFT_MEASURE;
    return 0;
}

int cli_plans_save(const cli_sample_opts *o, cli_plans *p, const pp_sampler *s, char *msg,
                   size_t len)
{
    const char *where = p->from_option ? "--wisdom file" : "cache";
    if (!p->path[0])
        return 0;
    if (pp_sampler_fft_plans(s) == PP_FFT_PLANS_WISDOM) {
        snprintf(p->summary, sizeof p->summary, "measured, from %s", where);
        return 0;
    }
    snprintf(p->summary, sizeof p->summary, "measured, saved to %s", where);
    if (p->from_option) {
        if (pp_fft_wisdom_save(p->path) == PP_OK)
            return 0;
        snprintf(msg, len, "%s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    if (make_parent(p->path) != 0) {
        note(o, "FFT plan cache %s: cannot create its folder: %s", p->path, strerror(errno));
        snprintf(p->summary, sizeof p->summary, "measured, not saved");
    }
    else if (pp_fft_wisdom_save(p->path) != PP_OK) {
        note(o, "FFT plan cache: %s; the plans will be measured again next time",
             pp_error_message());
        snprintf(p->summary, sizeof p->summary, "measured, not saved");
    }
    return 0;
}
