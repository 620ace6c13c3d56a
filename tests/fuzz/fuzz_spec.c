/* pixpost fuzz target — the SPEC parsers: pp_psf_parse, pp_noise_parse,
 * pp_prior_parse (and pp_spec_split under them) on arbitrary text. The first
 * byte picks the parser, the rest is the text (cut at the first NUL).
 * Checks beyond "no crash": a failure sets a message; a success formats to
 * a canonical string that parses again to the same spec kind (the
 * summary.json round trip). Cost: microseconds per input. */
#include "pixpost/pixpost.h"
#include "pixpost/prior_extra.h"
#include <stdlib.h>
#include <string.h>

static void check_fail(pp_status st)
{
    if (st != PP_OK && !pp_error_message()[0])
        abort();
}

static void fuzz_psf(const char *text)
{
    pp_psf_spec s, t;
    pp_status st = pp_psf_parse(text, NULL, &s);
    check_fail(st);
    if (st != PP_OK)
        return;
    char buf[8192];
    pp_psf_format(&s, buf, sizeof buf);
    if (pp_psf_parse(buf, NULL, &t) != PP_OK || t.kind != s.kind)
        abort();
}

static void fuzz_noise(const char *text)
{
    pp_noise_spec s, t;
    pp_status st = pp_noise_parse(text, NULL, &s);
    check_fail(st);
    if (st != PP_OK)
        return;
    char buf[1024];
    pp_noise_format(&s, buf, sizeof buf);
    if (pp_noise_parse(buf, NULL, &t) != PP_OK || t.kind != s.kind)
        abort();
}

static void fuzz_prior(const char *text)
{
    pp_prior_spec s, t;
    pp_status st = pp_prior_parse(text, NULL, &s);
    check_fail(st);
    if (st != PP_OK)
        return;
    char buf[1024];
    pp_prior_format(&s, buf, sizeof buf);
    if (pp_prior_parse(buf, NULL, &t) != PP_OK || t.kind != s.kind)
        abort();
    /* the eigenvalues of a small grid must be finite and >= 0 */
    double q[4 * 3], rank = 0;
    if (pp_prior_eigen(&s, 4, 4, q, &rank) == PP_OK)
        for (int i = 0; i < 12; i++)
            if (!(q[i] >= 0.0) || q[i] > 1e308)
                abort();
}

int LLVMFuzzerTestOneInput(const unsigned char *data, size_t size)
{
    if (size < 1 || size > 9000)
        return 0;
    char *text = malloc(size);
    if (!text)
        return 0;
    memcpy(text, data + 1, size - 1);
    text[size - 1] = '\0';
    switch (data[0] % 3) {
    case 0:
        fuzz_psf(text);
        break;
    case 1:
        fuzz_noise(text);
        break;
    default:
        fuzz_prior(text);
        break;
    }
    free(text);
    return 0;
}
