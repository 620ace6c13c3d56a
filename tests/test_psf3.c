/* Unit tests of the 3-D PSFs (src/psf3.c, src/psf_widefield.c,
 * src/psf_bead3.c): spec parsing and refusals, the
 * refusal of 3-D specs where a 2-D PSF is needed, kernel shapes and sums,
 * the convergence of the widefield pupil quadrature, Gibson & Lanni with
 * matched indices. (The stack round trip is tested in ref_stack.) The comparisons with
 * outside sources are in tests/ref_psf3.py and tests/ref_psf_widefield.py. */
#include "pixpost/psf.h"
#include "pixpost/setting.h"
#include "pixpost/stack.h"
#include "psf_internal.h"
#include "testutil.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define WF "widefield:na=1.4,wavelength=0.52,pixel=0.065,step=0.2,n=1.515"

/* A program's name for the PSF setting (as src/cli/flag_names.c's). */
static const char *const flags[PP_SET_COUNT] = {[PP_SET_PSF] = "--psf"};

/* spec is refused naming the setting and needle: in the library's word
 * "PSF" without names (no command-line flag: no "--"), and by the
 * caller's name with a names table. */
static void refused(const char *spec, const char *needle)
{
    pp_psf_spec s;
    pp_status st = pp_psf_parse(spec, NULL, &s);
    const char *m = pp_error_message();
    CHECK(st == PP_ERR_ARG && strncmp(m, "PSF", 3) == 0 && !strstr(m, "--") && strstr(m, needle),
          "'%s' refused without names, in the library's words and naming '%s': %s", spec, needle,
          m);
    st = pp_psf_parse(spec, flags, &s);
    m = pp_error_message();
    CHECK(st == PP_ERR_ARG && strncmp(m, "--psf", 5) == 0 && strstr(m, needle),
          "'%s' refused with a names table, naming --psf and '%s': %s", spec, needle, m);
}

static void check_parse(void)
{
    pp_psf_spec s, t;
    char buf[256];
    CHECK(pp_psf_parse("gaussian:sigma=1.5,sigma_z=2.5", NULL, &s) == PP_OK && s.sigma_z == 2.5 &&
              pp_psf_is_3d(&s),
          "gaussian with sigma_z parsed as 3-D");
    pp_psf_format(&s, buf, sizeof buf);
    CHECK(strcmp(buf, "gaussian:sigma=1.5,sigma_z=2.5") == 0, "formatted: %s", buf);
    CHECK(pp_psf_parse("gaussian:sigma=1.5", NULL, &s) == PP_OK && !pp_psf_is_3d(&s),
          "plain gaussian stays 2-D");
    CHECK(pp_psf_parse(WF ",sample_n=1.33,depth=10", NULL, &s) == PP_OK &&
              s.kind == PP_PSF_WIDEFIELD && s.step == 0.2 && s.n == 1.515 && s.sample_n == 1.33 &&
              s.depth == 10 && pp_psf_is_3d(&s),
          "widefield with sample_n, depth parsed");
    pp_psf_format(&s, buf, sizeof buf);
    CHECK(pp_psf_parse(buf, NULL, &t) == PP_OK && t.na == s.na && t.step == s.step &&
              t.sample_n == s.sample_n && t.depth == s.depth,
          "widefield format round-trips: %s", buf);
    refused("widefield:na=1.4,wavelength=0.52,pixel=0.065,n=1.515", "step=");
    refused(WF ",sample_n=1.33", "depth=");
    refused("widefield:na=1.4,wavelength=0.52,pixel=0.065,step=0.2,n=1.33", "below the immersion");
    refused("widefield:na=1.4,wavelength=0.52,pixel=0.065,step=200,n=1.515", "step=200");
    refused("widefield:na=1.4,wavelength=520,pixel=0.065,step=0.2,n=1.515",
            "widefield: wavelength");
    refused(WF ",sample_n=13.3,depth=1", "sample_n=13.3");
    refused("gaussian:sigma=1,sigma_z=0.01", "sigma_z=0.01");
    refused("gaussian:sigma=auto,sigma_z=2", "sigma_z");
    refused("widefeld:na=1", "did you mean widefield");
}

/* pp_psf_make (the 2-D path of sample and simulate) refuses 3-D specs. */
static void check_refuse_2d(void)
{
    const char *specs[] = {"gaussian:sigma=1,sigma_z=2", WF};
    for (int i = 0; i < 2; i++) {
        pp_psf_spec s;
        pp_image *k = (pp_image *)1;
        pp_status st = pp_psf_parse(specs[i], NULL, &s);
        if (st == PP_OK)
            st = pp_psf_make(&s, 0, &k);
        const char *m = pp_error_message();
        CHECK(st == PP_ERR_UNSUPPORTED && k == NULL && strstr(m, "3-D PSF, which blurs a volume"),
              "%s refused by pp_psf_make: %s", specs[i], m);
    }
}

static double vsum(const double *v, size_t n)
{
    double s = 0;
    for (size_t i = 0; i < n; i++)
        s += v[i];
    return s;
}

static void check_shapes(void)
{
    pp_psf_spec s;
    pp_shape sh;
    double *k = NULL;
    /* made kernels take no names: their refusals say "PSF", no flag */
    pp_psf_parse("gaussian:sigma=1.5", NULL, &s);
    CHECK(pp_psf_make3(&s, 0, 3, &sh, &k) == PP_ERR_ARG && !k &&
              strncmp(pp_error_message(), "PSF: a 2-D PSF has one slice", 28) == 0 &&
              !strstr(pp_error_message(), "--"),
          "depth 3 of a 2-D spec refused in the library's words: %s", pp_error_message());
    pp_psf_parse("gaussian:sigma=20,sigma_z=20", NULL, &s);
    CHECK(pp_psf_make3(&s, 4001, 0, &sh, &k) == PP_ERR_LIMIT && !k &&
              strstr(pp_error_message(), "give a smaller size and depth") &&
              !strstr(pp_error_message(), "--"),
          "an over-large kernel refused in the library's words: %s", pp_error_message());
    pp_psf_parse("gaussian:sigma=1.5,sigma_z=2", NULL, &s);
    CHECK(pp_psf_make3(&s, 0, 0, &sh, &k) == PP_OK && sh.rank == 3 && sh.n[0] == 17 &&
              sh.n[1] == 13 && sh.n[2] == 13 && fabs(vsum(k, 17 * 13 * 13) - 1) < 1e-12,
          "gaussian 3-D: 17 x 13 x 13 (radius ceil(4 sigma)), sum 1");
    free(k);
    CHECK(pp_psf_make3(&s, 7, 4, &sh, &k) == PP_ERR_ARG && k == NULL, "even depth refused");
    pp_psf_parse("airy:na=1.4,wavelength=0.52,pixel=0.065", NULL, &s);
    CHECK(pp_psf_make3(&s, 0, 0, &sh, &k) == PP_OK && sh.n[0] == 1 && sh.n[1] == 31,
          "a 2-D spec gives one slice");
    free(k);
    k = NULL;
    CHECK(pp_psf_make3(&s, 0, 3, &sh, &k) == PP_ERR_ARG && k == NULL,
          "a 2-D spec with depth 3 refused");
}

/* Default Gauss-Legendre node count vs four times as many (and 600): the
 * kernel must not move beyond 1e-9 of its peak. */
static void check_nodes(void)
{
    pp_psf_spec s;
    pp_shape sh = pp_shape_3d(21, 41, 41);
    size_t n = 21 * 41 * 41;
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    pp_psf_parse(WF ",sample_n=1.33,depth=50", NULL, &s);
    pp_psf_widefield_fill(&s, &sh, 0, a);
    pp_psf_widefield_fill(&s, &sh, 600, b);
    double d = 0, peak = 0;
    for (size_t i = 0; i < n; i++) {
        d = fmax(d, fabs(a[i] - b[i]));
        peak = fmax(peak, a[i]);
    }
    CHECK(d < 1e-9 * peak, "default nodes vs 600: max diff %.3g of the peak", d / peak);
    printf("widefield quadrature: default nodes vs 600 differ by %.3g of the peak\n", d / peak);
    /* a deliberately starved rule must be caught by the same measure */
    pp_psf_widefield_fill(&s, &sh, 8, b);
    d = 0;
    for (size_t i = 0; i < n; i++)
        d = fmax(d, fabs(a[i] - b[i]));
    CHECK(d > 1e-3 * peak, "8 nodes are visibly wrong (%.3g of the peak)", d / peak);
    free(a);
    free(b);
}

/* sample_n equal to n: the mismatch term vanishes exactly. */
static void check_matched(void)
{
    pp_psf_spec s, t;
    pp_shape sa, sb;
    double *a = NULL, *b = NULL;
    pp_psf_parse(WF, NULL, &s);
    pp_psf_parse(WF ",sample_n=1.515,depth=20", NULL, &t);
    CHECK(pp_psf_make3(&s, 31, 9, &sa, &a) == PP_OK && pp_psf_make3(&t, 31, 9, &sb, &b) == PP_OK &&
              memcmp(a, b, 9 * 31 * 31 * sizeof *a) == 0,
          "matched indices give the plain widefield PSF bit for bit");
    free(a);
    free(b);
}

int main(void)
{
    check_parse();
    check_refuse_2d();
    check_shapes();
    check_nodes();
    check_matched();
    return pp_test_done();
}
