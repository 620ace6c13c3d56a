/* pixpost command line — what `pixpost batch` writes besides the frames'
 * outputs: the manifest (index.csv and index.json, or the per-shard
 * index.shard-K-of-N.*), each written to ".<name>.tmp.XXXXXX" and renamed
 * into place so a reader (or a kill -9) never sees half a manifest; the
 * completion marker ".done" written last in each frame folder, holding a
 * hash of everything that decides the frame's result; and the few numbers
 * the manifest takes from a frame's summary.json.
 *
 * Crash consistency: rename(2) is atomic for other processes, which is what
 * kill -9 needs; we do not fsync (a power cut may lose the last frames,
 * which --resume then redoes because their marker is missing too).
 * Cost: O(frames) text per manifest rewrite, one small read per frame.
 */
#include "batch.h"
#include "pixpost/output.h"
#include "pixpost/output_extra.h"
#include "pixpost/sampler_extra.h"
#include "pixpost/rng.h"
#include <dirent.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static const char marker_name[] = ".done";

const char *batch_status_name(int status)
{
    switch (status) {
    case BATCH_DONE:
        return "done";
    case BATCH_FAILED:
        return "failed";
    case BATCH_SKIPPED:
        return "skipped";
    case BATCH_FAILED_STRICT:
        return "failed-strict";
    default:
        return "pending";
    }
}

void batch_row_init(batch_row *r, const batch_frame *f)
{
    memset(r, 0, sizeof *r);
    snprintf(r->path, sizeof r->path, "%s", f->rel);
    snprintf(r->output, sizeof r->output, "%s", f->stem);
    r->page = f->pages > 1 ? (int)f->page + 1 : 0;
    r->status = BATCH_PENDING;
    r->seconds = r->lambda_mean = r->delta_mean = r->rhat_max = r->ess_bulk_min = NAN;
    r->warnings = r->converged = -1;
}

void batch_row_convergence(batch_row *r, const pp_convergence *cv)
{
    r->rhat_max = cv->rhat_max;
    r->ess_bulk_min = cv->ess_bulk_min;
    r->warnings = (int)cv->warnings;
    r->converged = cv->converged;
    snprintf(r->failed, sizeof r->failed, "%s", pp_convergence_failed(cv));
    r->iters_suggested = cv->iters_suggested;
}

void batch_row_checks(batch_row *r, const pp_datacheck *d, const pp_ppcheck *p)
{
    char *b = r->checks;
    size_t len = sizeof r->checks, used = 0;
    b[0] = '\0';
    for (size_t i = 0; d && i < d->count && used < len; i++)
        if (d->finding[i].severity == PP_CHECK_WARNING)
            used += (size_t)snprintf(b + used, len - used, "%s%s",
                                     used ? ", " : "data checks: ", d->finding[i].check);
    if (p && p->nwarnings && used < len)
        snprintf(b + used, len - used, "%spredictive check: %zu warning%s", used ? "; " : "",
                 p->nwarnings, p->nwarnings == 1 ? "" : "s");
}

void batch_row_verdict(const batch_row *r, char *buf, size_t len)
{
    char warn[32] = "no warnings";
    if (r->warnings > 0)
        snprintf(warn, sizeof warn, "%d warning%s", r->warnings, r->warnings == 1 ? "" : "s");
    size_t used;
    if (r->converged > 0)
        used = (size_t)snprintf(buf, len, "%s, converged", warn);
    else if (r->converged == 0 && r->iters_suggested)
        used = (size_t)snprintf(buf, len,
                                "%s, not converged (%s): run about %lu iterations: --iters %lu",
                                warn, r->failed, r->iters_suggested, r->iters_suggested);
    else if (r->converged == 0)
        used = (size_t)snprintf(buf, len, "%s, not converged (%s)", warn, r->failed);
    else
        used = (size_t)snprintf(buf, len, "%s", warn);
    if (r->checks[0] && used < len)
        snprintf(buf + used, len - used, "; %s", r->checks);
}

void batch_apply_strict(const batch_ctx *c, batch_row *r)
{
    if (!c->opts->strict || r->converged != 0 ||
        (r->status != BATCH_DONE && r->status != BATCH_SKIPPED))
        return;
    snprintf(r->message, sizeof r->message,
             "%d convergence warning%s under --strict, not converged (%s) (outputs written; "
             "the warnings are in %.600s/summary.json)",
             r->warnings, r->warnings == 1 ? "" : "s", r->failed[0] ? r->failed : "unknown part",
             r->output);
    r->status = BATCH_FAILED_STRICT;
}

/* ---- atomic text files ---- */

static FILE *atomic_open(const char *path, char *tmp, size_t len)
{
    const char *slash = strrchr(path, '/');
    int dl = slash ? (int)(slash - path + 1) : 0;
    if (snprintf(tmp, len, "%.*s.%s.tmp.XXXXXX", dl, path, slash ? slash + 1 : path) >= (int)len)
        return NULL;
    int fd = mkstemp(tmp);
    if (fd < 0)
        return NULL;
    fchmod(fd, 0644);
    FILE *f = fdopen(fd, "w");
    if (!f) {
        close(fd);
        remove(tmp);
    }
    return f;
}

static int atomic_close(FILE *f, const char *tmp, const char *path, char *msg, size_t len)
{
    int bad = ferror(f);
    bad |= fclose(f) != 0;
    if (bad || rename(tmp, path) != 0) {
        snprintf(msg, len, "%.700s: cannot write: %s", path, strerror(errno));
        remove(tmp);
        return CLI_EXIT_USAGE;
    }
    return 0;
}

/* ---- completion marker ---- */

uint64_t batch_settings_hash(const batch_ctx *c, const batch_frame *f)
{
    char full[BATCH_PATH * 2], key[BATCH_PATH + 128];
    snprintf(full, sizeof full, "%s/%s", c->indir, f->rel);
    struct stat sb;
    memset(&sb, 0, sizeof sb);
    stat(full, &sb);
    snprintf(key, sizeof key, "%s\n%u\n%llu\n%lld.%09ld\n", f->rel, f->page,
             (unsigned long long)sb.st_size, (long long)sb.st_mtim.tv_sec,
             (long)sb.st_mtim.tv_nsec);
    return pp_hash_string(pp_hash_string(f->seed, c->settings), key);
}

static void marker_path(const batch_ctx *c, const batch_frame *f, char *buf, size_t len)
{
    snprintf(buf, len, "%s/%s/%s", c->outdir, f->stem, marker_name);
}

batch_marker batch_marker_state(const batch_ctx *c, const batch_frame *f)
{
    char path[BATCH_PATH * 2], want[64], got[128] = "";
    marker_path(c, f, path, sizeof path);
    FILE *fp = fopen(path, "r");
    if (!fp)
        return BATCH_MARKER_NONE;
    size_t n = fread(got, 1, sizeof got - 1, fp);
    got[n] = '\0';
    fclose(fp);
    snprintf(want, sizeof want, "settings %016llx\n",
             (unsigned long long)batch_settings_hash(c, f));
    return strstr(got, want) ? BATCH_MARKER_SAME : BATCH_MARKER_OTHER;
}

int batch_write_marker(const batch_ctx *c, const batch_frame *f, char *msg, size_t len)
{
    char path[BATCH_PATH * 2], tmp[BATCH_PATH * 2 + 32];
    marker_path(c, f, path, sizeof path);
    FILE *fp = atomic_open(path, tmp, sizeof tmp);
    if (!fp) {
        snprintf(msg, len, "%.700s: cannot create the completion marker: %s", path,
                 strerror(errno));
        return CLI_EXIT_USAGE;
    }
    fprintf(fp, "pixpost batch: frame complete\nsettings %016llx\n",
            (unsigned long long)batch_settings_hash(c, f));
    return atomic_close(fp, tmp, path, msg, len);
}

void batch_clean_folder(const char *dir)
{
    char path[BATCH_PATH * 3];
    snprintf(path, sizeof path, "%s/%s", dir, marker_name);
    remove(path);
    DIR *d = opendir(dir);
    if (!d)
        return;
    struct dirent *e;
    while ((e = readdir(d)) != NULL)
        if (e->d_name[0] == '.' && strstr(e->d_name, ".tmp.")) {
            snprintf(path, sizeof path, "%s/%s", dir, e->d_name);
            remove(path);
        }
    closedir(d);
}

/* ---- summary.json numbers ---- */

static double number_after(const char *text, const char *pattern)
{
    const char *p = strstr(text, pattern);
    if (!p)
        return NAN;
    char *end;
    double v = strtod(p + strlen(pattern), &end);
    return end == p + strlen(pattern) ? NAN : v;
}

/* The "convergence" object written by pp_output_write, read by its exact
 * keys in their written order. */
static void read_convergence(const char *text, batch_row *r)
{
    const char *p = strstr(text, "\n  \"convergence\": {");
    if (!p)
        return;
    r->rhat_max = number_after(p, "{\"rhat_max\": ");
    r->ess_bulk_min = number_after(p, ", \"ess_bulk_min\": ");
    double w = number_after(p, ", \"warnings\": ");
    const char *cv = strstr(p, ", \"converged\": ");
    if (!isfinite(w) || !cv)
        return;
    r->warnings = (int)w;
    cv += strlen(", \"converged\": ");
    r->converged = strncmp(cv, "true", 4) == 0 ? 1 : strncmp(cv, "false", 5) == 0 ? 0 : -1;
    double n = number_after(p, "\n    \"iters_suggested\": ");
    r->iters_suggested = isfinite(n) && n > 0 ? (unsigned long)n : 0;
    const char *fl = strstr(p, "\n    \"failed\": \"");
    if (fl) {
        fl += strlen("\n    \"failed\": \"");
        size_t k = strcspn(fl, "\"\n");
        snprintf(r->failed, sizeof r->failed, "%.*s", (int)k, fl);
    }
}

void batch_read_summary(const char *dir, int convergence, batch_row *r)
{
    char path[BATCH_PATH * 3];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    FILE *f = fopen(path, "r");
    if (!f)
        return;
    size_t cap = 1 << 20;
    char *text = malloc(cap);
    if (text) {
        size_t n = fread(text, 1, cap - 1, f);
        text[n] = '\0';
        r->lambda_mean = number_after(text, "\"lambda\": {\"mean\": ");
        r->delta_mean = number_after(text, "\"delta\": {\"mean\": ");
        if (!isfinite(r->seconds))
            r->seconds = number_after(text, "\"seconds_total\": ");
        if (convergence)
            read_convergence(text, r);
    }
    free(text);
    fclose(f);
}

/* ---- manifest ---- */

static void csv_text(FILE *f, const char *s)
{
    fputc('"', f);
    for (; *s; s++) {
        if (*s == '"')
            fputc('"', f);
        fputc(*s == '\n' || *s == '\r' ? ' ' : *s, f);
    }
    fputc('"', f);
}

static void csv_num(FILE *f, double v)
{
    fputc(',', f);
    if (isfinite(v))
        fprintf(f, "%.10g", v);
}

static const char csv_header[] = "path,page,output,status,seconds,lambda_mean,delta_mean,"
                                 "rhat_max,ess_bulk_min,warnings,converged,failed,"
                                 "iters_suggested,message\n";
#define CSV_FIELDS 14

static void write_csv(FILE *f, const batch_row *rows, size_t n)
{
    fputs(csv_header, f);
    for (size_t i = 0; i < n; i++) {
        const batch_row *r = &rows[i];
        csv_text(f, r->path);
        if (r->page)
            fprintf(f, ",%d,", r->page);
        else
            fputs(",,", f);
        csv_text(f, r->output);
        fprintf(f, ",%s", batch_status_name(r->status));
        csv_num(f, r->seconds);
        csv_num(f, r->lambda_mean);
        csv_num(f, r->delta_mean);
        csv_num(f, r->rhat_max);
        csv_num(f, r->ess_bulk_min);
        csv_num(f, r->warnings >= 0 ? r->warnings : NAN);
        fputs(r->converged > 0 ? ",true," : r->converged == 0 ? ",false," : ",,", f);
        csv_text(f, r->failed);
        csv_num(f, r->iters_suggested ? (double)r->iters_suggested : NAN);
        fputc(',', f);
        csv_text(f, r->message);
        fputc('\n', f);
    }
}

static void json_num(FILE *f, const char *key, double v)
{
    fprintf(f, ", \"%s\": ", key);
    if (isfinite(v))
        fprintf(f, "%.10g", v);
    else
        fputs("null", f);
}

static void write_json(FILE *f, const batch_row *rows, size_t n, const char *indir,
                       const char *shard)
{
    size_t count[BATCH_NSTATUS] = {0};
    for (size_t i = 0; i < n; i++)
        count[rows[i].status]++;
    fputs("{\n  \"input\": ", f);
    pp_json_write_string(f, indir);
    fputs(",\n  \"shard\": ", f);
    if (shard)
        pp_json_write_string(f, shard);
    else
        fputs("null", f);
    fprintf(f,
            ",\n  \"counts\": {\"done\": %zu, \"failed\": %zu, \"failed_strict\": %zu, "
            "\"skipped\": %zu, \"pending\": %zu},\n  \"frames\": [",
            count[BATCH_DONE], count[BATCH_FAILED], count[BATCH_FAILED_STRICT],
            count[BATCH_SKIPPED], count[BATCH_PENDING]);
    for (size_t i = 0; i < n; i++) {
        const batch_row *r = &rows[i];
        fputs(i ? ",\n    {\"path\": " : "\n    {\"path\": ", f);
        pp_json_write_string(f, r->path);
        if (r->page)
            fprintf(f, ", \"page\": %d", r->page);
        else
            fputs(", \"page\": null", f);
        fputs(", \"output\": ", f);
        pp_json_write_string(f, r->output);
        fprintf(f, ", \"status\": \"%s\"", batch_status_name(r->status));
        json_num(f, "seconds", r->seconds);
        json_num(f, "lambda_mean", r->lambda_mean);
        json_num(f, "delta_mean", r->delta_mean);
        json_num(f, "rhat_max", r->rhat_max);
        json_num(f, "ess_bulk_min", r->ess_bulk_min);
        json_num(f, "warnings", r->warnings >= 0 ? r->warnings : NAN);
        fprintf(f, ", \"converged\": %s",
                r->converged > 0    ? "true"
                : r->converged == 0 ? "false"
                                    : "null");
        fputs(", \"failed\": ", f);
        if (r->converged == 0)
            pp_json_write_string(f, r->failed);
        else
            fputs("null", f);
        json_num(f, "iters_suggested", r->iters_suggested ? (double)r->iters_suggested : NAN);
        fputs(", \"message\": ", f);
        pp_json_write_string(f, r->message);
        fputc('}', f);
    }
    fputs("\n  ]\n}\n", f);
}

int batch_write_manifest(const char *outdir, const char *base, const batch_row *rows, size_t n,
                         const char *indir, const char *shard)
{
    char msg[BATCH_MSG];
    for (int k = 0; k < 2; k++) {
        char path[BATCH_PATH * 2], tmp[BATCH_PATH * 2 + 32];
        snprintf(path, sizeof path, "%s/%s.%s", outdir, base, k ? "json" : "csv");
        FILE *f = atomic_open(path, tmp, sizeof tmp);
        if (!f)
            return cli_error("%s: cannot write the manifest: %s", path, strerror(errno));
        if (k)
            write_json(f, rows, n, indir, shard);
        else
            write_csv(f, rows, n);
        if (atomic_close(f, tmp, path, msg, sizeof msg))
            return cli_error("%s", msg);
    }
    return 0;
}

/* ---- reading a manifest back (for --merge) ---- */

/* Reads one CSV field starting at *p into out; advances past the comma. */
static void csv_field(const char **p, char *out, size_t len)
{
    const char *s = *p;
    size_t k = 0;
    if (*s == '"') {
        for (s++; *s && !(*s == '"' && s[1] != '"'); s++) {
            if (*s == '"')
                s++;
            if (k + 1 < len)
                out[k++] = *s;
        }
        if (*s == '"')
            s++;
    } else {
        for (; *s && *s != ',' && *s != '\n'; s++)
            if (k + 1 < len)
                out[k++] = *s;
    }
    out[k] = '\0';
    if (*s == ',')
        s++;
    *p = s;
}

static double field_num(const char *s)
{
    char *end;
    double v = strtod(s, &end);
    return s[0] && !*end ? v : NAN;
}

static int parse_status(const char *s)
{
    for (int k = 0; k < BATCH_NSTATUS; k++)
        if (strcmp(s, batch_status_name(k)) == 0)
            return k;
    return -1;
}

static int parse_line(const char *line, batch_row *r)
{
    char f[CSV_FIELDS][BATCH_MSG];
    const char *p = line;
    for (int k = 0; k < CSV_FIELDS; k++)
        csv_field(&p, f[k], sizeof f[k]);
    memset(r, 0, sizeof *r);
    snprintf(r->path, sizeof r->path, "%s", f[0]);
    r->page = atoi(f[1]);
    snprintf(r->output, sizeof r->output, "%s", f[2]);
    r->status = parse_status(f[3]);
    r->seconds = field_num(f[4]);
    r->lambda_mean = field_num(f[5]);
    r->delta_mean = field_num(f[6]);
    r->rhat_max = field_num(f[7]);
    r->ess_bulk_min = field_num(f[8]);
    double w = field_num(f[9]);
    r->warnings = isfinite(w) ? (int)w : -1;
    r->converged = strcmp(f[10], "true") == 0 ? 1 : strcmp(f[10], "false") == 0 ? 0 : -1;
    snprintf(r->failed, sizeof r->failed, "%.31s", f[11]);
    double it = field_num(f[12]);
    r->iters_suggested = isfinite(it) && it > 0 ? (unsigned long)it : 0;
    snprintf(r->message, sizeof r->message, "%s", f[13]);
    return r->status < 0 || !r->path[0] ? -1 : 0;
}

int batch_read_csv(const char *path, batch_row **rows, size_t *n)
{
    FILE *f = fopen(path, "r");
    if (!f)
        return cli_error("%s: cannot open the manifest: %s", path, strerror(errno));
    const size_t line_max = BATCH_PATH * 2 + BATCH_MSG * 3;
    char *line = malloc(line_max);
    int rc = line ? 0 : cli_error("batch: out of memory");
    for (size_t no = 1; !rc && fgets(line, (int)line_max, f); no++) {
        if (no == 1) {
            if (strcmp(line, csv_header) != 0) {
                rc = cli_error("%s: not a manifest of this pixpost version (its first line is "
                               "not the expected header); rerun that shard",
                               path);
                break;
            }
            continue;
        }
        batch_row r;
        if (parse_line(line, &r) != 0) {
            rc = cli_error("%s: line %zu is not a manifest row (a damaged or foreign file)", path,
                           no);
            break;
        }
        batch_row *v = realloc(*rows, (*n + 1) * sizeof *v);
        if (!v) {
            rc = cli_error("batch: out of memory");
            break;
        }
        *rows = v;
        v[(*n)++] = r;
    }
    free(line);
    fclose(f);
    return rc;
}
