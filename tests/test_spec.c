/* Unit tests of the SPEC splitter (src/spec.c), including the broken forms
 * the parser must refuse, and the messages of the PSF, noise and prior
 * parsers for typos, spaces, case and missing keys (issue 14, items 3 and
 * 5). */
#include "pixpost/noise.h"
#include "pixpost/prior.h"
#include "pixpost/psf.h"
#include "pixpost/setting.h"
#include "pixpost/spec.h"
#include "testutil.h"
#include <string.h>

/* A program's names for the settings, as the command line gives them
 * (src/cli/flag_names.c): the parsers that take a names table use it. */
static const char *const flags[PP_SET_COUNT] = {
    [PP_SET_NOISE] = "--noise", [PP_SET_PSF] = "--psf", [PP_SET_PRIOR] = "--prior"};

/* Parses text with the parser for `what` (--psf, --noise, --prior). */
static pp_status parse_any(const char *what, const char *text)
{
    static pp_psf_spec psf;
    pp_noise_spec noise;
    pp_prior_spec prior;
    if (strcmp(what, "--psf") == 0)
        return pp_psf_parse(text, flags, &psf);
    if (strcmp(what, "--noise") == 0)
        return pp_noise_parse(text, flags, &noise);
    return pp_prior_parse(text, flags, &prior);
}

/* text is refused with a message holding every one of the needles (up to
 * three; NULL ends the list early) and not holding `absent` (or NULL). */
static void refused(const char *what, const char *text, const char *n1, const char *n2,
                    const char *n3, const char *absent)
{
    pp_status st = parse_any(what, text);
    const char *m = st == PP_OK ? "(accepted)" : pp_error_message();
    int ok = st == PP_ERR_ARG && strstr(m, what) != NULL;
    const char *needles[] = {n1, n2, n3};
    for (int i = 0; i < 3 && needles[i]; i++)
        ok = ok && strstr(m, needles[i]) != NULL;
    ok = ok && (!absent || !strstr(m, absent));
    CHECK(ok, "%s '%s' refused naming '%s' '%s' '%s'%s%s: %s", what, text, n1, n2 ? n2 : "",
          n3 ? n3 : "", absent ? ", not " : "", absent ? absent : "", m);
}

static void accepted(const char *what, const char *text)
{
    pp_status st = parse_any(what, text);
    CHECK(st == PP_OK, "%s '%s' accepted: %s", what, text, st ? pp_error_message() : "");
}

/* Item 5: a typo, a space or a capital is reported as itself, never as a
 * "missing sigma=", in every SPEC kind. */
static void check_typos(void)
{
    refused("--psf", "gaussian:sigam=1.6", "unknown key 'sigam'", "did you mean sigma?",
            "accepted: sigma", "missing");
    refused("--psf", "gaussian: sigma=1.6", "stray space after 'gaussian:'", "remove it", NULL,
            "missing");
    refused("--psf", "gaussian:sigma=1.6 ", "stray space after 'gaussian:sigma=1.6'", NULL, NULL,
            NULL);
    refused("--psf", " gaussian:sigma=1.6", "stray space at the start", NULL, NULL, NULL);
    refused("--psf", "gaussian:sigma =1.6", "stray space after 'gaussian:sigma'", NULL, NULL, NULL);
    refused("--psf", "airy:NA=1.4,wavelength=0.52,pixel=0.065", "unknown key 'NA'",
            "keys are lower case: did you mean na?", NULL, "missing");
    refused("--psf", "airy:na=1.4,wavelenght=0.52,pixel=0.065", "unknown key 'wavelenght'",
            "did you mean wavelength?", NULL, "missing");
    refused("--psf", "airy:na=1.4,wavelength=0.52,pixel=0.065,colour=red", "unknown key 'colour'",
            "accepted: na, wavelength, pixel", NULL, "did you mean");
    refused("--psf", "gaussain:sigma=1.6", "unknown PSF model 'gaussain'", "did you mean gaussian?",
            NULL, NULL);
    refused("--psf", "Airy:na=1.4,wavelength=0.52,pixel=0.065", "did you mean airy?", NULL, NULL,
            NULL);
    refused("--psf", "gaussian:", "nothing after ':'", "remove the space", NULL, NULL);
    refused("--psf", "file: bead.tif", "stray space after 'file:'", NULL, NULL, NULL);
    accepted("--psf", "file:/my beads/bead 1.tif"); /* a path may hold spaces */
    refused("--noise", "gaussian:Sigma=2", "keys are lower case: did you mean sigma?", NULL, NULL,
            NULL);
    refused("--noise", "camera:gain=2,ofset=100,read=1", "unknown key 'ofset'",
            "did you mean offset?", NULL, "missing");
    refused("--noise", "poisson: gain=2,offset=100", "stray space after 'poisson:'", NULL, NULL,
            NULL);
    refused("--noise", "poison:gain=2,offset=100", "did you mean poisson?", NULL, NULL, NULL);
    refused("--prior", "matern:rnage=3", "unknown key 'rnage'", "did you mean range?", NULL, NULL);
    refused("--prior", "gmrf1:Delta=2", "keys are lower case: did you mean delta?", NULL, NULL,
            NULL);
    refused("--prior", "gmrf1: delta=2", "stray space after 'gmrf1:'", NULL, NULL, NULL);
    refused("--prior", "matren", "did you mean matern?", NULL, NULL, NULL);
    refused("--prior", "gmrf3", "unknown prior 'gmrf3'", "accepted: gmrf1, gmrf2", NULL,
            "did you mean"); /* two equally close: no guess */
}

/* Item 3: gain and offset are required for poisson and camera, read for
 * camera; e_per_adu=E is the alternative to gain (gain = 1/E). */
static void check_photon_keys(void)
{
    refused("--noise", "poisson:gain=2", "missing offset=", "dark level in ADU", NULL, NULL);
    refused("--noise", "poisson:offset=100", "missing gain=", "ADU per electron",
            "e_per_adu=", NULL);
    refused("--noise", "poisson", "missing gain=", NULL, NULL, NULL);
    refused("--noise", "camera:gain=2,offset=100", "missing read=", "electrons", NULL, NULL);
    refused("--noise", "camera:read=1.6,offset=100", "missing gain=", "electrons-per-ADU", NULL,
            NULL);
    refused("--noise", "camera:gain=2,e_per_adu=0.5,offset=100,read=1",
            "gain= and e_per_adu= are both given", "gain = 1/e_per_adu", NULL, NULL);
    refused("--noise", "poisson:e_per_adu=0,offset=100", "e_per_adu=0", "> 0", NULL, NULL);
    refused("--noise", "poisson:gain=2,offset=100,read=1", "unknown key 'read'", NULL, NULL, NULL);
    pp_noise_spec n;
    char buf[128];
    CHECK(pp_noise_parse("camera:e_per_adu=0.25,offset=100,read=1.6", NULL, &n) == PP_OK &&
              n.gain == 4.0 && n.offset == 100 && n.read == 1.6,
          "e_per_adu=0.25 gives gain 4: %s", pp_error_message());
    pp_noise_format(&n, buf, sizeof buf);
    CHECK(strcmp(buf, "camera:gain=4,offset=100,read=1.6") == 0,
          "canonical text keeps the gain= form: %s", buf);
    CHECK(pp_noise_parse("poisson:gain=0.5,offset=0", NULL, &n) == PP_OK && n.gain == 0.5 &&
              n.offset == 0,
          "an explicit offset=0 is accepted");
    /* a library caller without a names table gets the library's words */
    const char *bad[] = {"poisson:offset=1", "gaussian:sigma=0", "camera:gain=1,offset=0,read=-1",
                         "gauss", "gaussian:sigam=1", "gaussian:sigma=x"};
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        pp_status st = pp_noise_parse(bad[i], NULL, &n);
        const char *m = pp_error_message();
        CHECK(st == PP_ERR_ARG && strstr(m, "noise model") && !strstr(m, "--"),
              "'%s' refused in the library's words: %s", bad[i], m);
    }
}

/* Without names the spec parsers speak the library's words: each refusal
 * starts with the setting's word and names no command-line flag ("--",
 * which every one of them had before issue 18). */
static void check_library_words(void)
{
    static const struct {
        const char *what, *text, *word;
    } cases[] = {
        {"psf", "gaussian:sigam=1.6", "PSF gaussian: unknown key 'sigam'"},
        {"psf", "airy:na=1.4,wavelength=520,pixel=0.065", "PSF airy: wavelength=520"},
        {"psf", "widefield:na=1.4,wavelength=0.52,pixel=0.065,n=1.515",
         "PSF widefield: missing step="},
        {"psf", "lorentz:gamma=2", "PSF 'lorentz:gamma=2': unknown PSF model"},
        {"prior", "gmrf3", "prior 'gmrf3': unknown prior"},
        {"prior", "matern:range=-1", "prior matern: range must be > 0"},
        {"prior", "adaptive:block=1", "prior adaptive: block must be"},
        {"prior", "gmrf1:delta=0", "prior gmrf1: delta must be > 0"},
        {"prior", "gmrf1:mean=3", "prior gmrf1: unknown key 'mean'"},
        {"noise", "camera:gain=1,offset=0", "noise model camera: missing read="},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        pp_psf_spec psf;
        pp_prior_spec prior;
        pp_noise_spec noise;
        const char *w = cases[i].what;
        pp_status st = strcmp(w, "psf") == 0     ? pp_psf_parse(cases[i].text, NULL, &psf)
                       : strcmp(w, "prior") == 0 ? pp_prior_parse(cases[i].text, NULL, &prior)
                                                 : pp_noise_parse(cases[i].text, NULL, &noise);
        const char *m = pp_error_message();
        CHECK(st == PP_ERR_ARG && strncmp(m, cases[i].word, strlen(cases[i].word)) == 0 &&
                  !strstr(m, "--"),
              "%s '%s' without names: '%s...', no flag: %s", w, cases[i].text, cases[i].word, m);
    }
}

int main(void)
{
    pp_spec s;
    pp_status st;
    double v = 0;
    CHECK(pp_spec_split("gaussian:sigma=1.6", "--psf", 0, &s) == PP_OK, "plain spec");
    CHECK(strcmp(s.name, "gaussian") == 0 && s.nkeys == 1, "name and one key");
    CHECK(pp_spec_number(&s, "sigma", "--psf", &v, NULL, &st) == 1 && st == PP_OK && v == 1.6,
          "sigma read as 1.6");
    static const char *const sigma_only[] = {"sigma", NULL};
    CHECK(pp_spec_check_used(&s, "--psf", sigma_only) == PP_OK, "all keys used");

    CHECK(pp_spec_split("gmrf1", "--prior", 0, &s) == PP_OK && s.nkeys == 0, "bare name");
    CHECK(pp_spec_split("file:/a/b:c.tif", "--psf", 1, &s) == PP_OK &&
              strcmp(s.value[0], "/a/b:c.tif") == 0,
          "raw path keeps colons");

    /* Broken specs must be refused, each with a message naming the problem. */
    CHECK(pp_spec_split("", "--psf", 0, &s) == PP_ERR_ARG, "empty refused");
    CHECK(pp_spec_split(":sigma=1", "--psf", 0, &s) == PP_ERR_ARG, "missing name refused");
    CHECK(pp_spec_split("gaussian:", "--psf", 0, &s) == PP_ERR_ARG, "dangling colon refused");
    CHECK(pp_spec_split("gaussian:sigma", "--psf", 0, &s) == PP_ERR_ARG, "missing = refused");
    CHECK(pp_spec_split("gaussian:sigma=", "--psf", 0, &s) == PP_ERR_ARG, "missing value refused");
    CHECK(pp_spec_split("gaussian:sigma=1,", "--psf", 0, &s) == PP_ERR_ARG, "trailing comma refused");
    CHECK(pp_spec_split("gaussian:sigma=1,sigma=2", "--psf", 0, &s) == PP_ERR_ARG &&
              strstr(pp_error_message(), "twice"),
          "duplicate key refused: %s", pp_error_message());
    CHECK(pp_spec_split("gaussian:sigma=1x", "--psf", 0, &s) == PP_OK, "split ok");
    pp_spec_number(&s, "sigma", "--psf", &v, NULL, &st);
    CHECK(st == PP_ERR_ARG && strstr(pp_error_message(), "not a number"), "malformed number: %s",
          pp_error_message());
    CHECK(pp_spec_split("gaussian:sigma=nan", "--psf", 0, &s) == PP_OK, "split ok");
    pp_spec_number(&s, "sigma", "--psf", &v, NULL, &st);
    CHECK(st == PP_ERR_ARG, "nan refused as a number");
    CHECK(pp_spec_split("gaussian:sigma=1,colour=red", "--psf", 0, &s) == PP_OK, "split ok");
    pp_spec_number(&s, "sigma", "--psf", &v, NULL, &st);
    CHECK(pp_spec_check_used(&s, "--psf", sigma_only) == PP_ERR_ARG &&
              strstr(pp_error_message(), "colour"),
          "unknown key named: %s", pp_error_message());
    CHECK(pp_spec_check_known(&s, "--psf", sigma_only) == PP_ERR_ARG &&
              strstr(pp_error_message(), "unknown key 'colour' (accepted: sigma)"),
          "unknown key named before any lookup: %s", pp_error_message());

    /* the spelling suggestions (also used for the CLI's option names) */
    static const char *const opts[] = {"iters", "chains",  "seed",   "burn",
                                       "thin",  "threads", "output", NULL};
    const char *near;
    CHECK((near = pp_spec_closest("iter", opts)) && strcmp(near, "iters") == 0, "iter -> iters");
    CHECK((near = pp_spec_closest("chain", opts)) && strcmp(near, "chains") == 0,
          "chain -> chains");
    CHECK((near = pp_spec_closest("sed", opts)) && strcmp(near, "seed") == 0, "sed -> seed");
    CHECK((near = pp_spec_closest("ITERS", opts)) && strcmp(near, "iters") == 0,
          "ITERS -> iters (case)");
    CHECK((near = pp_spec_closest("thraeds", opts)) && strcmp(near, "threads") == 0,
          "thraeds -> threads (a swap is one edit)");
    CHECK(pp_spec_closest("colour", opts) == NULL, "colour: nothing close");
    CHECK(pp_spec_closest("xyz", opts) == NULL, "xyz: nothing close");
    static const char *const tie[] = {"gmrf1", "gmrf2", NULL};
    CHECK(pp_spec_closest("gmrf3", tie) == NULL, "gmrf3: two equally close, no guess");
    int is_auto = 0;
    CHECK(pp_spec_split("gaussian:sigma=auto", "--psf", 0, &s) == PP_OK, "split ok");
    CHECK(pp_spec_number(&s, "sigma", "--psf", &v, &is_auto, &st) == 1 && is_auto, "auto seen");
    check_typos();
    check_photon_keys();
    check_library_words();
    return pp_test_done();
}
