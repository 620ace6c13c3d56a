/* pixpost — SPEC string splitting: "name" or "name:key=value,...". */
#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/spec.h"

static pp_status copy_bounded(char *dst, size_t cap, const char *src, size_t n,
                              const char *what, const char *text)
{
    if (n >= cap)
        return pp_fail(PP_ERR_ARG, "%s '%s': a part is too long", what, text);
    memcpy(dst, src, n);
    dst[n] = '\0';
    return PP_OK;
}

pp_status pp_spec_split(const char *text, const char *what, int raw_after_colon,
                        pp_spec *out)
{
    memset(out, 0, sizeof *out);
    if (!text || !text[0])
        return pp_fail(PP_ERR_ARG, "%s: empty value", what);
    const char *colon = strchr(text, ':');
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
        return pp_fail(PP_ERR_ARG, "%s '%s': nothing after ':' (expected key=value)", what,
                       text);
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

pp_status pp_spec_check_used(const pp_spec *s, const char *what, const char *accepted)
{
    for (size_t i = 0; i < s->nkeys; i++)
        if (!s->used[i])
            return pp_fail(PP_ERR_ARG, "%s %s: unknown key '%s' (accepted: %s)", what, s->name,
                           s->key[i], accepted);
    return PP_OK;
}
