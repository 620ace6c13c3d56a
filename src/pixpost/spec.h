/* pixpost — SPEC strings: "name" or "name:key=value,key=value".
 *
 * Shared by the PSF, noise and prior parsers. Unknown keys, repeated keys,
 * missing values, malformed numbers and spaces are errors that name the key
 * and the accepted form; an unknown key or name close to an accepted one
 * (pp_spec_closest) gets a "did you mean".
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
 * raw_after_colon = 1: everything after the first ':' becomes key "path"
 * (and may hold spaces). Anywhere else a space is refused, saying where it
 * is: a SPEC has none, and one typed after ':' or ',' would otherwise make
 * an unknown key " sigma". */
pp_status pp_spec_split(const char *text, const char *what, int raw_after_colon,
                        pp_spec *out);

/* Looks up a numeric key. Returns 1 and sets *v if present, 0 if absent;
 * PP_ERR_ARG status through *st for a malformed number. The string "auto"
 * is reported with *is_auto = 1 when is_auto is not NULL (else an error). */
int pp_spec_number(pp_spec *s, const char *key, const char *what, double *v,
                   int *is_auto, pp_status *st);

/* Fails naming the first key of s that is not in `accepted` (a NULL-
 * terminated list), with the list and, when one accepted key is close, a
 * "did you mean" (pp_spec_closest; "keys are lower case" when only the
 * case differs). Call it before looking up required keys, so that a typo
 * ("sigam=1.6") is reported as itself and not as a missing sigma=. */
pp_status pp_spec_check_known(const pp_spec *s, const char *what, const char *const *accepted);

/* Fails naming the first key that no lookup used (one that is known but
 * does not apply here, e.g. lo= without sigma=auto); `accepted` (NULL-
 * terminated) lists the keys that apply, as in pp_spec_check_known. */
pp_status pp_spec_check_used(const pp_spec *s, const char *what, const char *const *accepted);

/* The entry of `names` (NULL-terminated) that `word` most likely
 * misspells, or NULL. Close means: equal but for case, or an optimal-
 * string-alignment edit distance (insertions, deletions, substitutions,
 * swaps of two neighbours; compared in lower case) of at most 1 for words
 * of up to 4 characters and at most 2 for longer ones; and no other entry
 * equally close (two candidates: no guess). The CLI uses it for option
 * names too. The result points into `names`. */
const char *pp_spec_closest(const char *word, const char *const *names);

#endif
