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
    r->seconds = r->lambda_mean = r->delta_mean = r->rhat_max = r->ess_min = NAN;
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

int batch_is_complete(const batch_ctx *c, const batch_frame *f)
{
    char path[BATCH_PATH * 2], want[64], got[128] = "";
    marker_path(c, f, path, sizeof path);
    FILE *fp = fopen(path, "r");
    if (!fp)
        return 0;
    size_t n = fread(got, 1, sizeof got - 1, fp);
    got[n] = '\0';
    fclose(fp);
    snprintf(want, sizeof want, "settings %016llx\n",
             (unsigned long long)batch_settings_hash(c, f));
    return strstr(got, want) != NULL;
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

/* Worst R-hat (max over keys holding "rhat") and lowest ESS (min over keys
 * "ess", "ess_*" or "*_ess", not rates such as ess_per_second). */
static void scan_diagnostics(const char *text, batch_row *r)
{
    for (const char *p = strchr(text, '"'); p; p = strchr(p + 1, '"')) {
        const char *q = strchr(p + 1, '"');
        if (!q)
            break;
        char key[64];
        size_t n = (size_t)(q - p - 1);
        if (n == 0 || n >= sizeof key || q[1] != ':') {
            p = q;
            continue;
        }
        memcpy(key, p + 1, n);
        key[n] = '\0';
        char *end;
        double v = strtod(q + 2, &end);
        int num = end != q + 2 && isfinite(v);
        int rhat = strstr(key, "rhat") || strstr(key, "r_hat");
        int ess = !strstr(key, "per") && (strcmp(key, "ess") == 0 || strncmp(key, "ess_", 4) == 0 ||
                                          (n > 4 && strcmp(key + n - 4, "_ess") == 0));
        if (num && rhat && !(v <= r->rhat_max))
            r->rhat_max = v;
        if (num && ess && !(v >= r->ess_min))
            r->ess_min = v;
        p = q;
    }
}

void batch_read_summary(const char *dir, batch_row *r)
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
        scan_diagnostics(text, r);
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

static void write_csv(FILE *f, const batch_row *rows, size_t n)
{
    fputs("path,page,output,status,seconds,lambda_mean,delta_mean,rhat_max,ess_min,message\n", f);
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
        csv_num(f, r->ess_min);
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
    size_t count[4] = {0, 0, 0, 0};
    for (size_t i = 0; i < n; i++)
        count[rows[i].status & 3]++;
    fputs("{\n  \"input\": ", f);
    pp_json_write_string(f, indir);
    fputs(",\n  \"shard\": ", f);
    if (shard)
        pp_json_write_string(f, shard);
    else
        fputs("null", f);
    fprintf(f,
            ",\n  \"counts\": {\"done\": %zu, \"failed\": %zu, \"skipped\": %zu, "
            "\"pending\": %zu},\n  \"frames\": [",
            count[BATCH_DONE], count[BATCH_FAILED], count[BATCH_SKIPPED], count[BATCH_PENDING]);
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
        json_num(f, "ess_min", r->ess_min);
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
    for (int k = 0; k < 4; k++)
        if (strcmp(s, batch_status_name(k)) == 0)
            return k;
    return -1;
}

static int parse_line(const char *line, batch_row *r)
{
    char f[10][BATCH_MSG];
    const char *p = line;
    for (int k = 0; k < 10; k++)
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
    r->ess_min = field_num(f[8]);
    snprintf(r->message, sizeof r->message, "%s", f[9]);
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
        if (no == 1)
            continue; /* header */
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
