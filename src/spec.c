/* pixpost — SPEC string splitting: "name" or "name:key=value,...", the key
 * checks and the spelling suggestions shared by every SPEC parser (and the
 * CLI's option names). Cost: negligible (specs are a few dozen bytes). */
#include "pixpost/spec.h"
#include "internal.h"
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

static pp_status copy_bounded(char *dst, size_t cap, const char *src, size_t n,
                              const char *what, const char *text)
{
    if (n >= cap)
        return pp_fail(PP_ERR_ARG, "%s '%s': a part is too long", what, text);
    memcpy(dst, src, n);
    dst[n] = '\0';
    return PP_OK;
}

/* Refuses the first white-space character of text[0..n), saying where it
 * is. A SPEC never holds one: "gaussian: sigma=1.6" would otherwise give an
 * unknown key " sigma" and a message that hides the space. */
static pp_status no_space(const char *text, size_t n, const char *what)
{
    for (size_t i = 0; i < n; i++) {
        if (!isspace((unsigned char)text[i]))
            continue;
        if (i == 0)
            return pp_fail(PP_ERR_ARG,
                           "%s '%s': stray space at the start (a SPEC has no "
                           "spaces: remove it)",
                           what, text);
        return pp_fail(PP_ERR_ARG,
                       "%s '%s': stray space after '%.*s' (a SPEC has no "
                       "spaces: remove it)",
                       what, text, (int)i, text);
    }
    return PP_OK;
}

pp_status pp_spec_split(const char *text, const char *what, int raw_after_colon,
                        pp_spec *out)
{
    memset(out, 0, sizeof *out);
    if (!text || !text[0])
        return pp_fail(PP_ERR_ARG, "%s: empty value", what);
    const char *colon = strchr(text, ':');
    /* a file path may hold spaces, but not begin with one */
    size_t plain = raw_after_colon && colon ? (size_t)(colon - text) + 2 : strlen(text);
    pp_status sp = no_space(text, plain < strlen(text) ? plain : strlen(text), what);
    if (sp != PP_OK)
        return sp;
    size_t nlen = colon ? (size_t)(colon - text) : strlen(text);
    pp_status st = copy_bounded(out->name, sizeof out->name, text, nlen, what, text);
    if (st != PP_OK)
        return st;
    if (nlen == 0)
        return pp_fail(PP_ERR_ARG, "%s '%s': missing the model name before ':'", what, text);
    if (!colon)
        return PP_OK;
    const char *p = colon + 1;
    if (raw_after_colon) {
        if (!*p)
            return pp_fail(PP_ERR_ARG, "%s '%s': missing the path after ':'", what, text);
        strcpy(out->key[0], "path");
        out->nkeys = 1;
        return copy_bounded(out->value[0], PP_SPEC_MAX_TEXT, p, strlen(p), what, text);
    }
    if (!*p)
        return pp_fail(PP_ERR_ARG,
                       "%s '%s': nothing after ':' (expected key=value; if the shell split "
                       "the SPEC at a space, remove the space)",
                       what, text);
    while (*p) {
        const char *end = strchr(p, ',');
        size_t len = end ? (size_t)(end - p) : strlen(p);
        const char *eq = memchr(p, '=', len);
        if (!eq || eq == p || eq == p + len - 1)
            return pp_fail(PP_ERR_ARG, "%s '%s': '%.*s' is not of the form key=value", what,
                           text, (int)len, p);
        if (out->nkeys == PP_SPEC_MAX_KEYS)
            return pp_fail(PP_ERR_ARG, "%s '%s': too many keys", what, text);
        size_t k = out->nkeys;
        size_t klen = (size_t)(eq - p);
        if ((st = copy_bounded(out->key[k], sizeof out->key[k], p, klen, what, text)) != PP_OK)
            return st;
        if ((st = copy_bounded(out->value[k], PP_SPEC_MAX_TEXT, eq + 1, len - klen - 1, what,
                               text)) != PP_OK)
            return st;
        for (size_t j = 0; j < k; j++)
            if (strcmp(out->key[j], out->key[k]) == 0)
                return pp_fail(PP_ERR_ARG, "%s '%s': key '%s' is given twice", what, text,
                               out->key[k]);
        out->nkeys++;
        p += len;
        if (*p == ',') {
            p++;
            if (!*p)
                return pp_fail(PP_ERR_ARG, "%s '%s': trailing ','", what, text);
        }
    }
    return PP_OK;
}

int pp_spec_number(pp_spec *s, const char *key, const char *what, double *v, int *is_auto,
                   pp_status *st)
{
    *st = PP_OK;
    if (is_auto)
        *is_auto = 0;
    for (size_t i = 0; i < s->nkeys; i++) {
        if (strcmp(s->key[i], key) != 0)
            continue;
        s->used[i] = 1;
        const char *t = s->value[i];
        if (strcmp(t, "auto") == 0) {
            if (is_auto) {
                *is_auto = 1;
                return 1;
            }
            *st = pp_fail(PP_ERR_ARG, "%s %s: '%s=auto' is not accepted here", what, s->name,
                          key);
            return 1;
        }
        char *end;
        errno = 0;
        double x = strtod(t, &end);
        if (end == t || *end != '\0' || errno == ERANGE || !isfinite(x)) {
            *st = pp_fail(PP_ERR_ARG, "%s %s: '%s=%s' is not a number", what, s->name, key, t);
            return 1;
        }
        *v = x;
        return 1;
    }
    return 0;
}

/* Optimal-string-alignment distance of a and b compared in lower case
 * (Damerau's four edits, no substring edited twice). Words longer than 63
 * characters count as far from everything. */
static size_t osa_distance(const char *a, const char *b)
{
    size_t n = strlen(a), m = strlen(b);
    if (n > 63 || m > 63)
        return (size_t)-1;
    size_t d[64][64];
    for (size_t i = 0; i <= n; i++)
        d[i][0] = i;
    for (size_t j = 0; j <= m; j++)
        d[0][j] = j;
    for (size_t i = 1; i <= n; i++)
        for (size_t j = 1; j <= m; j++) {
            int ai = tolower((unsigned char)a[i - 1]), bj = tolower((unsigned char)b[j - 1]);
            size_t best = d[i - 1][j - 1] + (ai != bj);
            if (d[i - 1][j] + 1 < best)
                best = d[i - 1][j] + 1;
            if (d[i][j - 1] + 1 < best)
                best = d[i][j - 1] + 1;
            if (i > 1 && j > 1 && ai == tolower((unsigned char)b[j - 2]) &&
                tolower((unsigned char)a[i - 2]) == bj && d[i - 2][j - 2] + 1 < best)
                best = d[i - 2][j - 2] + 1;
            d[i][j] = best;
        }
    return d[n][m];
}

const char *pp_spec_closest(const char *word, const char *const *names)
{
    size_t limit = strlen(word) <= 4 ? 1 : 2, best = limit + 1;
    const char *pick = NULL;
    int ties = 0;
    for (size_t i = 0; names[i]; i++) {
        if (strcasecmp(word, names[i]) == 0)
            return names[i];
        size_t d = osa_distance(word, names[i]);
        if (d < best) {
            best = d;
            pick = names[i];
            ties = 0;
        } else if (d == best) {
            ties = 1;
        }
    }
    return ties ? NULL : pick;
}

/* "a, b, c" (or "no keys") into buf. */
static void join_names(const char *const *names, char *buf, size_t len)
{
    size_t used = 0;
    buf[0] = '\0';
    if (!names[0])
        snprintf(buf, len, "no keys");
    for (size_t i = 0; names[i] && used < len; i++)
        used += (size_t)snprintf(buf + used, len - used, "%s%s", i ? ", " : "", names[i]);
}

/* The message for key k of s, which is not among `accepted`. */
static pp_status unknown_key(const pp_spec *s, size_t k, const char *what,
                             const char *const *accepted)
{
    char list[256], hint[96] = "";
    join_names(accepted, list, sizeof list);
    const char *near = pp_spec_closest(s->key[k], accepted);
    if (near && strcasecmp(near, s->key[k]) == 0)
        snprintf(hint, sizeof hint, "keys are lower case: did you mean %s? ", near);
    else if (near)
        snprintf(hint, sizeof hint, "did you mean %s? ", near);
    return pp_fail(PP_ERR_ARG, "%s %s: unknown key '%s' (%saccepted: %s)", what, s->name, s->key[k],
                   hint, list);
}

pp_status pp_spec_check_known(const pp_spec *s, const char *what, const char *const *accepted)
{
    for (size_t i = 0; i < s->nkeys; i++) {
        size_t j = 0;
        while (accepted[j] && strcmp(accepted[j], s->key[i]) != 0)
            j++;
        if (!accepted[j])
            return unknown_key(s, i, what, accepted);
    }
    return PP_OK;
}

pp_status pp_spec_check_used(const pp_spec *s, const char *what, const char *const *accepted)
{
    for (size_t i = 0; i < s->nkeys; i++)
        if (!s->used[i])
            return unknown_key(s, i, what, accepted);
    return PP_OK;
}
