/* pixpost command line — the frame list of `pixpost batch`: every PNG/TIFF
 * name in INDIR (subfolders with --recursive; hidden names skipped; symlinks
 * followed, at most 64 folders deep), narrowed by --pattern (fnmatch on the
 * file name, or on the relative path when the pattern holds a '/'), sorted
 * bytewise by relative path so every process, shard and rank sees the same
 * list. A multi-page TIFF becomes one frame per page, output "<stem>_p<k>"
 * with k counted from 1. Two frames with the same output folder (a.png and
 * a.tif) are both marked as clashing rather than silently overwriting.
 * What is left out because of its type (other extensions; subfolders
 * without --recursive) is counted and named, for batch to say so once.
 * Cost: one readdir per folder and one TIFF directory count per TIFF file.
 */
#include "batch.h"
#include "pixpost/rng.h"
#include <dirent.h>
#include <errno.h>
#include <fnmatch.h>
#include <limits.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <sys/stat.h>

char *realpath(const char *path, char *resolved); /* POSIX (XSI), hidden by strict modes */

typedef struct name_list {
    char (*v)[BATCH_PATH];
    size_t n, cap;
} name_list;

static int frame_ext(const char *name)
{
    size_t n = strlen(name);
    const char *exts[] = {".png", ".tif", ".tiff"};
    for (int i = 0; i < 3; i++) {
        size_t e = strlen(exts[i]);
        if (n > e && strcasecmp(name + n - e, exts[i]) == 0)
            return 1;
    }
    return 0;
}

static int wanted(const char *rel, const char *name, const char *pattern)
{
    if (!pattern)
        return 1;
    return fnmatch(pattern, strchr(pattern, '/') ? rel : name, 0) == 0;
}

static int push(name_list *l, const char *rel)
{
    if (l->n == l->cap) {
        size_t cap = l->cap ? 2 * l->cap : 64;
        void *p = realloc(l->v, cap * sizeof *l->v);
        if (!p)
            return cli_error("batch: out of memory listing the input folder");
        l->v = p;
        l->cap = cap;
    }
    snprintf(l->v[l->n++], BATCH_PATH, "%s", rel);
    return 0;
}

/* Frames go to l; entries left out by type to skip (folders with '/'). */
static int walk(const char *root, const char *sub, int recursive, const char *pattern, name_list *l,
                name_list *skip, int depth)
{
    char dir[BATCH_PATH * 2];
    snprintf(dir, sizeof dir, "%s%s%s", root, sub[0] ? "/" : "", sub);
    DIR *d = opendir(dir);
    if (!d)
        return cli_error("%s: cannot read the folder: %s", dir, strerror(errno));
    int rc = 0;
    struct dirent *e;
    while (!rc && (e = readdir(d)) != NULL) {
        if (e->d_name[0] == '.')
            continue;
        char rel[BATCH_PATH], full[BATCH_PATH * 3];
        if (snprintf(rel, sizeof rel, "%s%s%s", sub, sub[0] ? "/" : "", e->d_name) >=
            (int)sizeof rel) {
            rc = cli_error("%s/%s: path too long", dir, e->d_name);
            break;
        }
        snprintf(full, sizeof full, "%s/%s", root, rel);
        struct stat sb;
        if (stat(full, &sb) != 0)
            continue; /* a dangling link: not a frame */
        if (S_ISDIR(sb.st_mode) && recursive && depth < 64) {
            rc = walk(root, rel, recursive, pattern, l, skip, depth + 1);
        } else if (S_ISDIR(sb.st_mode)) {
            char dirname[BATCH_PATH];
            snprintf(dirname, sizeof dirname, "%.*s/", BATCH_PATH - 2, rel);
            rc = push(skip, dirname);
        } else if (!frame_ext(e->d_name)) {
            rc = push(skip, rel);
        } else if (S_ISREG(sb.st_mode) && wanted(rel, e->d_name, pattern)) {
            rc = push(l, rel);
        }
    }
    closedir(d);
    return rc;
}

static int cmp_name(const void *a, const void *b)
{
    return strcmp(a, b);
}

static int is_tiff_name(const char *rel)
{
    size_t n = strlen(rel);
    return (n > 4 && strcasecmp(rel + n - 4, ".tif") == 0) ||
           (n > 5 && strcasecmp(rel + n - 5, ".tiff") == 0);
}

/* Frames of a TIFF: its pages when they are time points or channels
 * (--pages t or c, or the OME metadata; units.c), 1 when it is not a
 * readable TIFF (the worker reports) or a volume (*kind 'z': z-slices by
 * --pages z or the metadata). Other multi-page files are an error
 * (printed). */
static int count_pages(const char *indir, const char *rel, char given, size_t npsf,
                       unsigned *frames, char *kind)
{
    char full[BATCH_PATH * 2], msg[1024];
    snprintf(full, sizeof full, "%s/%s", indir, rel);
    *frames = 1;
    *kind = 0;
    if (!is_tiff_name(rel) && npsf > 1)
        return cli_error("batch: %s: one frame, and --psf gives %zu PSFs (one per channel): "
                         "give one --psf, or put only multi-channel TIFFs in the folder",
                         full, npsf);
    if (is_tiff_name(rel) &&
        cli_units_batch_pages(full, given, npsf, frames, kind, msg, sizeof msg))
        return cli_error("batch: %s", msg);
    return 0;
}

static void fill_frame(batch_frame *f, const char *rel, unsigned page, unsigned pages, char kind,
                       size_t npsf, uint64_t seed)
{
    memset(f, 0, sizeof *f);
    f->kind = kind;
    f->psf = kind == 'c' && npsf > 1 ? page : 0;
    snprintf(f->rel, sizeof f->rel, "%s", rel);
    f->page = page;
    f->pages = pages;
    char key[BATCH_PATH + 32], stem[BATCH_PATH];
    snprintf(stem, sizeof stem, "%s", rel);
    char *dot = strrchr(stem, '.'), *slash = strrchr(stem, '/');
    if (dot && (!slash || dot > slash))
        *dot = '\0';
    if (pages > 1 && kind == 'c') { /* channels counted from 0, as sample's c<k> */
        snprintf(key, sizeof key, "%s#c%u", rel, page);
        snprintf(f->stem, sizeof f->stem, "%.*s_c%u", BATCH_PATH - 16, stem, page);
    } else if (pages > 1) {
        snprintf(key, sizeof key, "%s#p%u", rel, page + 1);
        snprintf(f->stem, sizeof f->stem, "%.*s_p%u", BATCH_PATH - 16, stem, page + 1);
    } else {
        snprintf(key, sizeof key, "%s", rel);
        snprintf(f->stem, sizeof f->stem, "%s", stem);
    }
    f->seed = pp_hash_string(seed, key);
}

static int cmp_stem(const void *a, const void *b)
{
    const batch_frame *const *x = a, *const *y = b;
    return strcmp((*x)->stem, (*y)->stem);
}

/* Marks frames whose output folders coincide. */
static int mark_clashes(batch_frame *f, size_t n)
{
    batch_frame **by = malloc((n ? n : 1) * sizeof *by);
    if (!by)
        return cli_error("batch: out of memory");
    for (size_t i = 0; i < n; i++)
        by[i] = &f[i];
    qsort(by, n, sizeof *by, cmp_stem);
    for (size_t i = 0; i + 1 < n; i++)
        if (strcmp(by[i]->stem, by[i + 1]->stem) == 0) {
            snprintf(by[i]->clash, BATCH_MSG,
                     "%.300s: its output folder %.300s/ is also the output of %.300s; rename one "
                     "of them",
                     by[i]->rel, by[i]->stem, by[i + 1]->rel);
            snprintf(by[i + 1]->clash, BATCH_MSG,
                     "%.300s: its output folder %.300s/ is also the output of %.300s; rename one "
                     "of them",
                     by[i + 1]->rel, by[i + 1]->stem, by[i]->rel);
        }
    free(by);
    return 0;
}

static int expand_pages(const char *indir, const name_list *l, char given, size_t npsf,
                        uint64_t seed, batch_frame **out, size_t *n)
{
    unsigned *pages = malloc((l->n ? l->n : 1) * sizeof *pages);
    char *kind = malloc(l->n ? l->n : 1);
    if (!pages || !kind) {
        free(pages);
        free(kind);
        return cli_error("batch: out of memory");
    }
    size_t total = 0;
    for (size_t i = 0; i < l->n; i++) {
        if (count_pages(indir, l->v[i], given, npsf, &pages[i], &kind[i])) {
            free(pages);
            free(kind);
            return CLI_EXIT_USAGE;
        }
        total += pages[i];
    }
    batch_frame *f = calloc(total ? total : 1, sizeof *f);
    if (!f) {
        free(pages);
        free(kind);
        return cli_error("batch: out of memory (%zu frames)", total);
    }
    size_t k = 0;
    for (size_t i = 0; i < l->n; i++)
        for (unsigned p = 0; p < pages[i]; p++)
            fill_frame(&f[k++], l->v[i], p, pages[i], kind[i], npsf, seed);
    free(pages);
    free(kind);
    *out = f;
    *n = total;
    return mark_clashes(f, total);
}

/* "a.jpg, notes.txt, sub/ (a folder: add --recursive), and 4 more". */
static void describe_skipped(name_list *skip, int recursive, batch_skipped *out)
{
    enum { SHOWN = 8 };
    if (skip->n) /* qsort's base must not be NULL, even for no elements */
        qsort(skip->v, skip->n, sizeof *skip->v, cmp_name);
    out->count = skip->n;
    out->names[0] = '\0';
    size_t used = 0, folders = 0;
    for (size_t i = 0; i < skip->n; i++) {
        const char *name = skip->v[i];
        folders += name[strlen(name) - 1] == '/';
        if (i < SHOWN && used < sizeof out->names)
            used += (size_t)snprintf(out->names + used, sizeof out->names - used, "%s%.200s",
                                     i ? ", " : "", name);
    }
    if (skip->n > SHOWN && used < sizeof out->names)
        used += (size_t)snprintf(out->names + used, sizeof out->names - used, ", and %zu more",
                                 skip->n - SHOWN);
    if (folders && !recursive && used < sizeof out->names)
        snprintf(out->names + used, sizeof out->names - used,
                 " (names ending in / are folders: add --recursive to take their frames)");
}

int batch_list(const char *indir, int recursive, const char *pattern, char pages, size_t npsf,
               uint64_t seed, batch_frame **out, size_t *n, batch_skipped *skipped)
{
    *out = NULL;
    *n = 0;
    name_list l = {NULL, 0, 0}, skip = {NULL, 0, 0};
    int rc = walk(indir, "", recursive, pattern, &l, &skip, 0);
    if (!rc) {
        describe_skipped(&skip, recursive, skipped);
        if (l.n)
            qsort(l.v, l.n, sizeof *l.v, cmp_name);
        rc = expand_pages(indir, &l, pages, npsf, seed, out, n);
    }
    free(l.v);
    free(skip.v);
    return rc;
}

/* realpath of path, or of its deepest existing ancestor plus the rest. */
static int resolve(const char *path, char *out)
{
    char buf[PATH_MAX], tail[PATH_MAX] = "";
    snprintf(buf, sizeof buf, "%s", path);
    for (;;) {
        char r[PATH_MAX];
        if (realpath(buf, r)) {
            snprintf(out, PATH_MAX, "%s%s", r, tail);
            return 0;
        }
        char *slash = strrchr(buf, '/');
        char t2[PATH_MAX];
        if (snprintf(t2, sizeof t2, "/%s%s", slash ? slash + 1 : buf, tail) >= (int)sizeof t2)
            return -1;
        memcpy(tail, t2, sizeof tail);
        if (!slash) {
            snprintf(buf, sizeof buf, ".");
        } else if (slash == buf) {
            buf[1] = '\0';
        } else {
            *slash = '\0';
        }
    }
}

int batch_check_outdir(const char *indir, const char *outdir)
{
    char in[PATH_MAX], out[PATH_MAX];
    struct stat sb;
    if (stat(indir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return cli_error("%s: not a folder (batch takes a folder of frames; use 'pixpost "
                         "sample' for one file)",
                         indir);
    if (!realpath(indir, in))
        return cli_error("%s: cannot resolve the folder: %s", indir, strerror(errno));
    if (resolve(outdir, out) != 0)
        return cli_error("%s: path too long", outdir);
    size_t n = strlen(in);
    if (strcmp(in, "/") == 0 || (strncmp(out, in, n) == 0 && (out[n] == '\0' || out[n] == '/')))
        return cli_error("%s: the output folder is inside the input folder %s (batch never "
                         "writes into INDIR; choose an -o outside it)",
                         outdir, indir);
    return 0;
}
