/* Unit tests of the SPEC splitter (src/spec.c), including the broken forms
 * the parser must refuse. */
#include <string.h>
#include "pixpost/spec.h"
#include "testutil.h"

int main(void)
{
    pp_spec s;
    pp_status st;
    double v = 0;
    CHECK(pp_spec_split("gaussian:sigma=1.6", "--psf", 0, &s) == PP_OK, "plain spec");
    CHECK(strcmp(s.name, "gaussian") == 0 && s.nkeys == 1, "name and one key");
    CHECK(pp_spec_number(&s, "sigma", "--psf", &v, NULL, &st) == 1 && st == PP_OK && v == 1.6,
          "sigma read as 1.6");
    CHECK(pp_spec_check_used(&s, "--psf", "sigma") == PP_OK, "all keys used");

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
    CHECK(pp_spec_check_used(&s, "--psf", "sigma") == PP_ERR_ARG &&
              strstr(pp_error_message(), "colour"),
          "unknown key named: %s", pp_error_message());
    int is_auto = 0;
    CHECK(pp_spec_split("gaussian:sigma=auto", "--psf", 0, &s) == PP_OK, "split ok");
    CHECK(pp_spec_number(&s, "sigma", "--psf", &v, &is_auto, &st) == 1 && is_auto, "auto seen");
    return pp_test_done();
}
