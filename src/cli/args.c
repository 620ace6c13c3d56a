/* pixpost command line — table-driven option parser and typed getters.
 *
 * cli_parse() collects raw strings into a cli_args (pointers into argv, no
 * allocation); the getters convert them and print one-line errors that name
 * the option and its accepted form. Cost: O(argc * options), negligible.
 */
#include "cli.h"
#include "pixpost/spec.h"
#include <ctype.h>
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

static void vline(const char *prefix, const char *fmt, va_list ap)
{
    char buf[2048];
    vsnprintf(buf, sizeof buf, fmt, ap);
    for (char *p = buf; *p; p++) /* one line, whatever the message held */
        if (*p == '\n' || *p == '\r')
            *p = ' ';
    fprintf(stderr, "pixpost: %s%s\n", prefix, buf);
}

int cli_error(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vline("", fmt, ap);
    va_end(ap);
    return CLI_EXIT_USAGE;
}

int cli_opt_error(const char *name, const char *fmt, ...)
{
    char prefix[96];
    snprintf(prefix, sizeof prefix, "--%s: ", name);
    va_list ap;
    va_start(ap, fmt);
    vline(prefix, fmt, ap);
    va_end(ap);
    return CLI_EXIT_USAGE;
}

int cli_refuse(char *msg, size_t len, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, len, fmt, ap);
    va_end(ap);
    return CLI_EXIT_USAGE;
}

int cli_exit_code(pp_status st)
{
    return st == PP_OK ? CLI_EXIT_OK : CLI_EXIT_USAGE;
}

int cli_fail(pp_status st)
{
    const char *m = pp_error_message();
    if (!m || !m[0])
        m = pp_status_name(st);
    cli_error("%s", m);
    return cli_exit_code(st);
}

/* Index of the option called name (long) or with short name c, or -1. */
static int find_long(const cli_args *a, const char *name, size_t len)
{
    for (size_t i = 0; i < a->nopts; i++)
        if (strlen(a->opt[i]->name) == len && strncmp(a->opt[i]->name, name, len) == 0)
            return (int)i;
    return -1;
}

static int find_short(const cli_args *a, char c)
{
    for (size_t i = 0; i < a->nopts; i++)
        if (a->opt[i]->short_name == c)
            return (int)i;
    return -1;
}

static int index_of(const cli_args *a, const char *name)
{
    int i = find_long(a, name, strlen(name));
    if (i < 0) {
        fprintf(stderr, "pixpost: internal error: option --%s is not in the table\n", name);
        abort();
    }
    return i;
}

static int load_tables(cli_args *a, const char *command, const cli_opt *const *tables)
{
    memset(a, 0, sizeof *a);
    a->command = command;
    for (size_t t = 0; tables[t]; t++)
        for (const cli_opt *o = tables[t]; o->name; o++) {
            if (a->nopts == CLI_MAX_OPTS)
                return cli_error("internal error: too many options for %s", command);
            a->opt[a->nopts++] = o;
        }
    return 0;
}

static int is_help(const char *s)
{
    return strcmp(s, "--help") == 0 || strcmp(s, "-h") == 0;
}

/* The length of an option's form without the " ..." of a repeatable one,
 * for messages ("expected --psf SPEC"). */
static int form_len(const cli_opt *o)
{
    size_t n = strlen(o->form);
    return (int)(cli_opt_repeats(o) ? n - 4 : n);
}

/* Stores value for option i, refusing a repeat. shown is how the user wrote it. */
static int store(cli_args *a, int i, const char *value)
{
    const cli_opt *o = a->opt[i];
    if (a->value[i] && !cli_opt_repeats(o))
        return cli_opt_error(o->name, "given twice (give each option once)");
    if (a->value[i]) {
        if (a->nmore == CLI_MAX_REPEAT)
            return cli_opt_error(o->name, "given more than %d times", CLI_MAX_REPEAT + 1);
        a->more_opt[a->nmore] = i;
        a->more[a->nmore++] = value;
        return 0;
    }
    a->value[i] = value;
    return 0;
}

/* Takes the value of option i from "=value" (inline) or the next argument. */
static int take_value(cli_args *a, int i, const char *inline_value, int argc, char **argv, int *k)
{
    const cli_opt *o = a->opt[i];
    if (!o->takes_value) {
        if (inline_value)
            return cli_opt_error(o->name, "takes no value (write just --%s)", o->name);
        return store(a, i, "");
    }
    if (inline_value)
        return store(a, i, inline_value);
    if (*k + 1 >= argc || strncmp(argv[*k + 1], "--", 2) == 0)
        return cli_opt_error(o->name, "needs a value (expected --%s %.*s)", o->name,
                             form_len(o), o->form);
    (*k)++;
    return store(a, i, argv[*k]);
}

/* The option name (without dashes) that `word` most likely misspells, or
 * NULL (pp_spec_closest: one edit for short words, two for longer). */
static const char *closest_option(const cli_args *a, const char *word, size_t len)
{
    char w[64];
    const char *names[CLI_MAX_OPTS + 1];
    if (len >= sizeof w)
        return NULL;
    memcpy(w, word, len);
    w[len] = '\0';
    for (size_t i = 0; i < a->nopts; i++)
        names[i] = a->opt[i]->name;
    names[a->nopts] = NULL;
    return pp_spec_closest(w, names);
}

/* "unknown option" with a "did you mean --X?" when one option is close. */
static int unknown_option(const cli_args *a, const char *shown, int shown_len, const char *near)
{
    if (near)
        return cli_error("%s: unknown option '%.*s' (did you mean --%s? see 'pixpost %s --help')",
                         a->command, shown_len, shown, near, a->command);
    return cli_error("%s: unknown option '%.*s' (see 'pixpost %s --help')", a->command, shown_len,
                     shown, a->command);
}

static int parse_long(cli_args *a, int argc, char **argv, int *k)
{
    const char *arg = argv[*k] + 2;
    const char *eq = strchr(arg, '=');
    size_t len = eq ? (size_t)(eq - arg) : strlen(arg);
    int i = find_long(a, arg, len);
    if (i < 0)
        return unknown_option(a, argv[*k], (int)len + 2, closest_option(a, arg, len));
    return take_value(a, i, eq ? eq + 1 : NULL, argc, argv, k);
}

/* An unknown short form: "-O" may be "-o" (case); "-iters" is a long
 * option typed with one dash. */
static int unknown_short(const cli_args *a, const char *arg)
{
    const char *near = NULL;
    if (arg[2]) {
        const char *eq = strchr(arg + 1, '=');
        size_t len = eq ? (size_t)(eq - arg - 1) : strlen(arg + 1);
        near = closest_option(a, arg + 1, len);
    } else {
        for (size_t i = 0; i < a->nopts && !near; i++)
            if (a->opt[i]->short_name &&
                tolower((unsigned char)a->opt[i]->short_name) == tolower((unsigned char)arg[1]))
                return cli_error("%s: unknown option '%s' (did you mean -%c? see 'pixpost %s "
                                 "--help')",
                                 a->command, arg, a->opt[i]->short_name, a->command);
    }
    return unknown_option(a, arg, (int)strlen(arg), near);
}

static int parse_short(cli_args *a, int argc, char **argv, int *k)
{
    const char *arg = argv[*k];
    int i = find_short(a, arg[1]);
    if (i < 0 || (arg[2] && !a->opt[i]->takes_value))
        return unknown_short(a, arg);
    return take_value(a, i, arg[2] ? arg + 2 : NULL, argc, argv, k);
}

static int add_positional(cli_args *a, const char *s)
{
    if (a->npos == CLI_MAX_POS)
        return cli_error("%s: too many arguments (see 'pixpost %s --help')", a->command,
                         a->command);
    a->pos[a->npos++] = s;
    return 0;
}

int cli_parse(cli_args *a, const char *command, const cli_opt *const *tables, int argc, char **argv)
{
    int rc = load_tables(a, command, tables);
    if (rc)
        return rc;
    for (int k = 1; k < argc && strcmp(argv[k], "--") != 0; k++)
        if (is_help(argv[k]))
            return CLI_HELP;
    int only_pos = 0;
    for (int k = 1; k < argc && rc == 0; k++) {
        const char *s = argv[k];
        if (only_pos || s[0] != '-' || s[1] == '\0')
            rc = add_positional(a, s); /* "-" alone is a positional */
        else if (strcmp(s, "--") == 0)
            only_pos = 1;
        else if (s[1] == '-')
            rc = parse_long(a, argc, argv, &k);
        else
            rc = parse_short(a, argc, argv, &k);
    }
    return rc;
}

int cli_given(const cli_args *a, const char *name)
{
    return a->value[index_of(a, name)] != NULL;
}

const char *cli_str(const cli_args *a, const char *name)
{
    return a->value[index_of(a, name)];
}

int cli_opt_repeats(const cli_opt *o)
{
    size_t n = strlen(o->form);
    return n >= 4 && strcmp(o->form + n - 4, " ...") == 0;
}

size_t cli_strs(const cli_args *a, const char *name, const char **out, size_t max)
{
    int i = index_of(a, name);
    size_t n = 0;
    if (a->value[i] && n < max)
        out[n++] = a->value[i];
    for (size_t k = 0; k < a->nmore && n < max; k++)
        if (a->more_opt[k] == i)
            out[n++] = a->more[k];
    return n;
}

static int bad_value(const cli_args *a, const char *name, const char *v, const char *why,
                     const char *expect)
{
    const cli_opt *o = a->opt[index_of(a, name)];
    return cli_opt_error(name, "'%s' %s (expected --%s %.*s, %s)", v, why, name, form_len(o),
                         o->form, expect);
}

/* Digits only, no sign, no spaces. 0 on success, -1 malformed, -2 overflow. */
static int parse_unsigned(const char *v, unsigned long long *out)
{
    if (!v[0])
        return -1;
    for (const char *p = v; *p; p++)
        if (!isdigit((unsigned char)*p))
            return -1;
    errno = 0;
    char *end;
    unsigned long long x = strtoull(v, &end, 10);
    if (errno == ERANGE)
        return -2;
    if (*end)
        return -1;
    *out = x;
    return 0;
}

static const char *unsigned_problem(const char *v, int rc, unsigned long long x,
                                    unsigned long long min, unsigned long long max)
{
    if (rc == -1)
        return v[0] == '-' ? "is negative" : "is not a whole number";
    if (rc == -2 || x > max)
        return "is too large";
    if (x < min)
        return x == 0 ? "is zero, which is not allowed here" : "is too small";
    return NULL;
}

static int get_unsigned(const cli_args *a, const char *name, unsigned long long min,
                        unsigned long long max, unsigned long long *out)
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    char expect[128];
    if (max == ULLONG_MAX)
        snprintf(expect, sizeof expect, "a whole number >= %llu", min);
    else
        snprintf(expect, sizeof expect, "a whole number from %llu to %llu", min, max);
    unsigned long long x = 0;
    int rc = parse_unsigned(v, &x);
    const char *why = unsigned_problem(v, rc, x, min, max);
    if (why)
        return bad_value(a, name, v, why, expect);
    *out = x;
    return 0;
}

int cli_get_ulong(const cli_args *a, const char *name, unsigned long min, unsigned long max,
                  unsigned long *out)
{
    unsigned long long x = *out;
    int rc = get_unsigned(a, name, min, max, &x);
    if (rc == 0)
        *out = (unsigned long)x;
    return rc;
}

int cli_get_u64(const cli_args *a, const char *name, uint64_t *out)
{
    unsigned long long x = *out;
    int rc = get_unsigned(a, name, 0, UINT64_MAX, &x);
    if (rc == 0)
        *out = (uint64_t)x;
    return rc;
}

int cli_get_size(const cli_args *a, const char *name, size_t min, size_t *out)
{
    unsigned long long x = *out;
    int rc = get_unsigned(a, name, min, SIZE_MAX, &x);
    if (rc == 0)
        *out = (size_t)x;
    return rc;
}

/* A finite number filling the whole of s; 0 on success. */
static int parse_double(const char *s, const char *stop, double *out)
{
    if (s == stop || isspace((unsigned char)*s))
        return -1;
    errno = 0;
    char *end;
    double x = strtod(s, &end);
    if (end != stop || errno == ERANGE || !isfinite(x))
        return -1;
    *out = x;
    return 0;
}

int cli_get_double(const cli_args *a, const char *name, double lo, double hi, int open, double *out)
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    double x;
    int ok = parse_double(v, v + strlen(v), &x) == 0;
    ok = ok && (open ? (x > lo && x < hi) : (x >= lo && x <= hi));
    if (!ok) {
        char expect[128];
        snprintf(expect, sizeof expect, "a number %s %g and %s %g", open ? ">" : ">=", lo,
                 open ? "<" : "<=", hi);
        return bad_value(a, name, v, "is not accepted", expect);
    }
    *out = x;
    return 0;
}

int cli_get_seconds(const cli_args *a, const char *name, double *out)
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    size_t n = strlen(v);
    double unit = 1, x;
    if (n > 0 && strchr("smh", v[n - 1])) {
        unit = v[n - 1] == 'h' ? 3600 : v[n - 1] == 'm' ? 60 : 1;
        n--;
    }
    if (parse_double(v, v + n, &x) || !(x > 0) || !isfinite(x * unit))
        return bad_value(a, name, v, "is not accepted",
                         "a time > 0: seconds, or a number with the unit s, m or h");
    *out = x * unit;
    return 0;
}

int cli_get_bytes(const cli_args *a, const char *name, size_t *out)
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    size_t n = strlen(v);
    const char *units = "KMGT", *u = n > 0 ? strchr(units, v[n - 1]) : NULL;
    double unit = 1, x;
    if (u && *u) {
        for (const char *k = units; k <= u; k++)
            unit *= 1024.0;
        n--;
    }
    /* below 2^60 bytes: fits size_t with room for a batch's multiples */
    if (parse_double(v, v + n, &x) || !(x * unit >= 1.0) || !(x * unit < 0x1p60))
        return bad_value(a, name, v, "is not accepted",
                         "a size >= 1 byte: bytes, or a number with K, M, G or T (powers of "
                         "1024: 512M, 8G)");
    *out = (size_t)(x * unit);
    return 0;
}

int cli_get_pair(const cli_args *a, const char *name, double min, double out[2])
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    const char *comma = strchr(v, ',');
    double x, y;
    if (!comma || parse_double(v, comma, &x) || parse_double(comma + 1, v + strlen(v), &y) ||
        x < min || y < min) {
        char expect[96];
        snprintf(expect, sizeof expect, "two numbers >= %g separated by a comma", min);
        return bad_value(a, name, v, "is not accepted", expect);
    }
    out[0] = x;
    out[1] = y;
    return 0;
}

int cli_get_shard(const cli_args *a, const char *name, unsigned *k, unsigned *n)
{
    const char *v = cli_str(a, name);
    if (!v)
        return 0;
    const char *slash = strchr(v, '/');
    char left[32];
    unsigned long long x, y;
    int ok = slash && (size_t)(slash - v) < sizeof left;
    if (ok) {
        memcpy(left, v, (size_t)(slash - v));
        left[slash - v] = '\0';
        ok = parse_unsigned(left, &x) == 0 && parse_unsigned(slash + 1, &y) == 0 && x >= 1 &&
             x <= y && y <= UINT_MAX;
    }
    if (!ok)
        return bad_value(a, name, v, "is not accepted", "shard K of N with 1 <= K <= N, e.g. 2/8");
    *k = (unsigned)x;
    *n = (unsigned)y;
    return 0;
}

int cli_conflict(const cli_args *a, const char *name1, const char *name2)
{
    if (cli_given(a, name1) && cli_given(a, name2))
        return cli_error("--%s and --%s cannot be used together", name1, name2);
    return 0;
}

int cli_require(const cli_args *a, const char *name)
{
    if (cli_given(a, name))
        return 0;
    const cli_opt *o = a->opt[index_of(a, name)];
    if (o->short_name)
        return cli_error("%s: -%c %.*s is required (see 'pixpost %s --help')", a->command,
                         o->short_name, form_len(o), o->form, a->command);
    return cli_error("%s: --%s %.*s is required (see 'pixpost %s --help')", a->command, name,
                     form_len(o), o->form, a->command);
}

int cli_positionals(const cli_args *a, size_t n, const char *what)
{
    if (a->npos < n)
        return cli_error("%s: missing %s (usage: see 'pixpost %s --help')", a->command, what,
                         a->command);
    /* "--psf gaussian: sigma=1.6" unquoted: the shell made "sigma=1.6" an
     * argument of its own */
    if (a->npos > n && strchr(a->pos[n], '=') && a->pos[n][0] != '-')
        return cli_error("%s: unexpected argument '%s' (only %s is taken; it looks like part "
                         "of a SPEC that the shell split at a space: remove the space, or "
                         "quote the whole SPEC)",
                         a->command, a->pos[n], what);
    if (a->npos > n)
        return cli_error("%s: unexpected argument '%s' (only %s is taken; see 'pixpost %s "
                         "--help')",
                         a->command, a->pos[n], what, a->command);
    return 0;
}

/* Prints text indented by `indent` spaces, broken at spaces before `cols`. */
static void print_wrapped(FILE *fp, const char *text, int indent, int cols)
{
    const char *p = text;
    while (*p) {
        int room = cols - indent, n = (int)strlen(p);
        if (n > room) {
            n = room;
            while (n > 0 && p[n] != ' ')
                n--;
            if (n == 0) /* one long word: let it run over */
                for (n = room; p[n] && p[n] != ' '; n++)
                    ;
        }
        fprintf(fp, "%*s%.*s\n", indent, "", n, p);
        p += n;
        while (*p == ' ')
            p++;
    }
}

void cli_print_options(FILE *fp, const cli_opt *const *tables, cli_default_fn defaults, void *ctx)
{
    for (size_t t = 0; tables[t]; t++)
        for (const cli_opt *o = tables[t]; o->name; o++) {
            char head[96], def[256] = "";
            if (o->short_name)
                snprintf(head, sizeof head, "-%c, --%s%s%s", o->short_name, o->name,
                         o->takes_value ? " " : "", o->takes_value ? o->form : "");
            else
                snprintf(head, sizeof head, "--%s%s%s", o->name, o->takes_value ? " " : "",
                         o->takes_value ? o->form : "");
            if (defaults)
                defaults(o->name, def, sizeof def, ctx);
            char text[1024];
            snprintf(text, sizeof text, "%s%s%s%s", o->help, def[0] ? " Default: " : "", def,
                     def[0] ? "." : "");
            fprintf(fp, "  %s\n", head);
            print_wrapped(fp, text, 6, 79);
        }
}

int cli_has_ext(const char *path, const char *ext)
{
    size_t n = strlen(path), e = strlen(ext);
    return n > e && strcmp(path + n - e, ext) == 0;
}

int cli_check_not_same(const char *out, const char *in)
{
    struct stat so, si;
    if (stat(out, &so) == 0 && stat(in, &si) == 0 && so.st_dev == si.st_dev &&
        so.st_ino == si.st_ino)
        return cli_error("%s: the output would overwrite the input %s (inputs are never "
                         "modified; choose another output name)",
                         out, in);
    return 0;
}

int cli_check_parent_dir(const char *path)
{
    char dir[4096];
    const char *slash = strrchr(path, '/');
    if (!slash)
        return 0;
    size_t n = (size_t)(slash - path);
    if (n == 0)
        return 0; /* the root folder */
    if (n >= sizeof dir)
        return cli_error("%s: path is too long", path);
    memcpy(dir, path, n);
    dir[n] = '\0';
    struct stat st;
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode))
        return cli_error("%s: the folder %s does not exist (create it first)", path, dir);
    return 0;
}
