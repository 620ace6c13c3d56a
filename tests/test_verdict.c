/* Unit tests of the verdict (src/verdict.c: pp_convergence_verdict,
 * pp_convergence_failed) and of the report's verdict banner and warnings
 * order (src/report_verdict.c, src/report.c), on hand-made figures:
 *  - each of the five cases (converged; hyperparameters only; pixels only;
 *    both; other warnings only) gets its label and its sentence, and the
 *    hyperparameters-only case says the pixel bounds are sound while the
 *    failing columns are still moving, naming them;
 *  - the suggested --iters appears as "run about N iterations: --iters N"
 *    when the figures name the setting (iters_name), as "run about N
 *    iterations" when they do not;
 *  - a short buffer is truncated and terminated;
 *  - report.html: the banner comes first with the right counts in its
 *    data attributes and text, the warnings section comes before the
 *    images when there are warnings (grouped by part) and after the
 *    settings when there are none; no banner without figures. */
#include "pixpost/report.h"
#include "pixpost/sampler.h"
#include "testutil.h"
#include "pixpost/sampler_extra.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

static int has(const char *s, const char *sub)
{
    return s && strstr(s, sub) != NULL;
}

static pp_convergence figures(size_t hyper, size_t pixels, size_t other, unsigned long iters,
                              const char *failing)
{
    pp_convergence cv;
    memset(&cv, 0, sizeof cv);
    cv.rhat_max = 1.2;
    cv.ess_bulk_min = 18;
    cv.hyper_warnings = hyper;
    cv.pixel_warnings = pixels;
    cv.warnings = hyper + pixels + other;
    cv.converged = cv.warnings == 0;
    cv.hyper_converged = hyper == 0;
    cv.pixels_converged = pixels == 0;
    snprintf(cv.hyper_failing, sizeof cv.hyper_failing, "%s", failing);
    cv.iters_name = "--iters"; /* as the command line names the setting */
    cv.iters_suggested = iters;
    return cv;
}

static void test_sentences(void)
{
    char buf[PP_VERDICT_MAX];
    pp_convergence cv = figures(0, 0, 0, 0, "");
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(strncmp(buf, "converged: ", 11) == 0 && !has(buf, "--iters"), "converged: %s", buf);
    CHECK(strcmp(pp_convergence_failed(&cv), "") == 0, "converged label");

    cv = figures(3, 0, 0, 86000, "delta");
    cv.iters_name = NULL;
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(strncmp(buf, "not converged: the hyperparameters have not converged (delta)", 61) == 0,
          "hyper only: %s", buf);
    CHECK(has(buf, "the pixel bounds are sound as far as the diagnostics can tell while delta "
                   "is still moving"),
          "hyper only says the bounds are sound: %s", buf);
    /* no name for the setting: the library's words only; the caller's name
     * (the command line's flag) when given */
    CHECK(has(buf, "; run about 86000 iterations") && !has(buf, "--iters") && !has(buf, ": "
          "iterations"), "hyper only, iters, no names: %s", buf);
    cv.iters_name = "--iters";
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(has(buf, "run about 86000 iterations: --iters 86000"), "hyper only, iters: %s", buf);
    CHECK(strcmp(pp_convergence_failed(&cv), "hyperparameters") == 0, "hyper label");

    cv = figures(4, 0, 0, 5000, "delta, kappa");
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(has(buf, "while delta, kappa are still moving (their own"), "two names: %s", buf);

    cv = figures(0, 2, 0, 1200, "");
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(has(buf, "the pixel estimates have not converged (2 warnings); the hyperparameters "
                   "pass every check; run about 1200 iterations: --iters 1200"),
          "pixels only: %s", buf);
    CHECK(!has(buf, "sound"), "pixels only never says the bounds are sound: %s", buf);
    CHECK(strcmp(pp_convergence_failed(&cv), "pixels") == 0, "pixels label");

    cv = figures(2, 1, 1, 400, "lambda");
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(has(buf, "neither the hyperparameters (lambda) nor the pixel estimates have converged; "
                   "run about 400 iterations: --iters 400; 1 other warning applies too"),
          "both: %s", buf);
    CHECK(!has(buf, "sound"), "both never says the bounds are sound: %s", buf);
    CHECK(strcmp(pp_convergence_failed(&cv), "hyperparameters and pixels") == 0, "both label");

    cv = figures(0, 0, 2, 0, "");
    pp_convergence_verdict(&cv, buf, sizeof buf);
    CHECK(has(buf, "pass every convergence check, but 2 other warnings apply"), "other: %s", buf);
    CHECK(strcmp(pp_convergence_failed(&cv), "other") == 0, "other label");

    char small[12];
    cv = figures(3, 0, 0, 86000, "delta");
    pp_convergence_verdict(&cv, small, sizeof small);
    CHECK(strcmp(small, "not converg") == 0, "truncated and terminated: '%s'", small);
}

/* Position of s in html, or a huge value when absent. */
static size_t at(const char *html, const char *s)
{
    const char *p = html ? strstr(html, s) : NULL;
    return p ? (size_t)(p - html) : (size_t)-1;
}

static char *page(const char *dir, const char *name, const pp_convergence *cv,
                  const char *const *warn, const pp_warning_part *parts, size_t nw)
{
    pp_image *img = NULL;
    pp_image_create(6, 8, &img);
    for (size_t i = 0; i < 48; i++)
        img->data[i] = (double)i;
    char verdict[PP_VERDICT_MAX] = "";
    if (cv)
        pp_convergence_verdict(cv, verdict, sizeof verdict);
    pp_report_input in;
    pp_report_input_init(&in);
    in.mean = img;
    in.warnings = warn;
    in.warning_parts = parts;
    in.nwarnings = nw;
    in.convergence = cv;
    in.verdict = verdict;
    char path[1200];
    snprintf(path, sizeof path, "%s/%s.html", dir, name);
    pp_status st = pp_report_write(path, &in);
    CHECK(st == PP_OK, "%s: write failed: %s", name, pp_error_message());
    pp_image_free(img);
    return pp_test_slurp(path);
}

static void test_banner(const char *dir)
{
    const char *warn[4] = {"hyperparameters: R-hat of delta is 1.2", "pixels: probes",
                           "hyperparameters: bulk-ESS of delta is 18", "acceptance <low>"};
    const pp_warning_part parts[4] = {PP_WARN_HYPER, PP_WARN_PIXELS, PP_WARN_HYPER, PP_WARN_OTHER};
    pp_convergence cv = figures(2, 1, 1, 86000, "delta");
    cv.iters_name = NULL;
    char *h0 = page(dir, "bad", &cv, warn, parts, 4); /* no name for the setting */
    CHECK(has(h0, "<code>86000 iterations</code>") && !has(h0, "--iters"),
          "banner's suggestion without a setting name");
    free(h0);
    cv.iters_name = "--iters";
    char *h = page(dir, "bad", &cv, warn, parts, 4);
    CHECK(has(h, "<div id=\"verdict\" class=\"verdict bad\" data-converged=\"false\" "
                 "data-warnings=\"4\" data-hyper-warnings=\"2\" data-pixel-warnings=\"1\" "
                 "data-iters-suggested=\"86000\">"),
          "banner with the counts");
    CHECK(has(h, "4 warnings: 2 on hyperparameters, 1 on pixel estimates, 1 other"),
          "banner text counts");
    CHECK(has(h, "Not converged") && has(h, "<code>--iters 86000</code>"), "banner words");
    CHECK(at(h, "id=\"verdict\"") < at(h, "<section id=\"warnings\"") &&
              at(h, "<section id=\"warnings\"") < at(h, "<section id=\"images\"") &&
              at(h, "<section id=\"images\"") != (size_t)-1,
          "banner, then warnings, then images");
    CHECK(at(h, "<nav><a href=\"#warnings\">") != (size_t)-1, "warnings first in the menu");
    /* grouped: hyperparameters (2), pixels (1), other (1), each in its list */
    size_t hy = at(h, "<ul id=\"warnings-hyper\">"), px = at(h, "<ul id=\"warnings-pixels\">"),
           ot = at(h, "<ul id=\"warnings-other\">");
    CHECK(hy < px && px < ot && ot != (size_t)-1, "groups in order");
    CHECK(hy < at(h, "bulk-ESS of delta is 18") && at(h, "bulk-ESS of delta is 18") < px,
          "the third warning listed with the hyperparameters");
    CHECK(has(h, "acceptance &lt;low&gt;"), "warnings escaped");
    free(h);

    cv = figures(0, 0, 0, 0, "");
    h = page(dir, "good", &cv, NULL, NULL, 0);
    /* converged, no warning: one quiet line, no box, nothing to ask for (issue #19) */
    CHECK(has(h, "<p id=\"verdict\" class=\"verdict-quiet\" data-converged=\"true\" "
                 "data-warnings=\"0\">") &&
              has(h, ">Converged<") && has(h, "no warnings") && !has(h, "id=\"verdict-iters\"") &&
              !has(h, "class=\"verdict ") && !has(h, "id=\"verdict-hyper\""),
          "converged: a quiet line, not the banner");
    CHECK(at(h, "<section id=\"images\"") < at(h, "<section id=\"warnings\"") &&
              at(h, "<section id=\"warnings\"") != (size_t)-1 && has(h, "id=\"warnings-none\""),
          "no warnings: the section stays near the end");
    free(h);

    h = page(dir, "none", NULL, warn, NULL, 1);
    CHECK(h && !has(h, "id=\"verdict\"") && has(h, "<ul id=\"warnings-list\">"),
          "no figures: no banner, one plain list");
    free(h);
}

int main(void)
{
    const char *dir = pp_test_tmpdir();
    test_sentences();
    test_banner(dir);
    return pp_test_done();
}
