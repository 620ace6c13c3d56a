/* pixpost — SPEC strings: "name" or "name:key=value,key=value".
 *
 * Shared by the PSF, noise and prior parsers. Unknown keys, repeated keys,
 * missing values and malformed numbers are errors that name the key and the
 * accepted form.
 */
#ifndef PIXPOST_SPEC_H
#define PIXPOST_SPEC_H

#include <stddef.h>
#include "pixpost/status.h"

#define PP_SPEC_MAX_KEYS 16
#define PP_SPEC_MAX_TEXT 4096

typedef struct pp_spec {
    char name[64];
    size_t nkeys;
    char key[PP_SPEC_MAX_KEYS][32];
    char value[PP_SPEC_MAX_KEYS][PP_SPEC_MAX_TEXT];
    int used[PP_SPEC_MAX_KEYS];
} pp_spec;

/* Splits text into name and key=value pairs. `what` ("--psf") is used in
 * messages. A name with no ':' has no keys. For "file:PATH" specs call with
 * raw_after_colon = 1: everything after the first ':' becomes key "path". */
pp_status pp_spec_split(const char *text, const char *what, int raw_after_colon,
                        pp_spec *out);

/* Looks up a numeric key. Returns 1 and sets *v if present, 0 if absent;
 * PP_ERR_ARG status through *st for a malformed number. The string "auto"
 * is reported with *is_auto = 1 when is_auto is not NULL (else an error). */
int pp_spec_number(pp_spec *s, const char *key, const char *what, double *v,
                   int *is_auto, pp_status *st);

/* Fails naming the first key that no lookup used; `accepted` lists them. */
pp_status pp_spec_check_used(const pp_spec *s, const char *what,
                             const char *accepted);

#endif
