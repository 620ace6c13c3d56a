/* Unit tests of the plain result between the samplers and the output
 * writers (include/pixpost/result.h, src/sampler_result.c):
 *  - before a run pp_sampler_result refuses with a message and leaves
 *    nothing to free;
 *  - after a run the result holds what the sampler's accessors give (the
 *    same images and trace, the frame's and grid's shapes, one move entry
 *    per chain, the convergence figures, the pixel counts);
 *  - the writers read the result only: a result whose wording fields are
 *    changed by hand writes that wording into summary.json, and one
 *    written after the sampler's own fields were read gives the sampler's. */
#include <stdlib.h>
#include <string.h>
#include "pixpost/pixpost.h"
#include "pixpost/diag.h"
#include "pixpost/output.h"
#include "testutil.h"
#include "pixpost/sampler_extra.h"

static int has(const char *s, const char *sub) { return s && strstr(s, sub) != NULL; }

int main(void)
{
    const size_t h = 18, w = 14;
    pp_image *y = NULL, *k = NULL;
    pp_image_create(h, w, &y);
    for (size_t i = 0; i < h * w; i++)
        y->data[i] = 10 + (double)(i % 7) + 0.5 * (double)(i % 3);
    pp_psf_spec sp;
    pp_psf_parse("gaussian:sigma=1.2", NULL, &sp);
    pp_psf_make(&sp, 7, &k);
    pp_sampler_config c;
    pp_sampler_defaults(&c);
    c.iters_auto = 0;
    c.prior.kind = PP_PRIOR_GMRF1;
    c.kind = PP_SAMPLER_GIBBS;
    c.boundary = PP_BOUNDARY_PAD;
    c.chains = 3;
    c.burn = 20;
    c.iters = 40;
    c.threads = 1;
    pp_sampler *s = NULL;
    pp_result r;
    CHECK(pp_sampler_create(&c, y, k, &s) == PP_OK, "create: %s", pp_error_message());
    CHECK(pp_sampler_result(s, &r) == PP_ERR_ARG && has(pp_error_message(), "has not run") &&
              r.chain == NULL && r.mean == NULL,
          "refused before the run: %s", pp_error_message());
    pp_result_free(&r); /* nothing to free: must not crash */
    CHECK(pp_sampler_run(s) == PP_OK, "run: %s", pp_error_message());
    CHECK(pp_sampler_result(s, &r) == PP_OK, "result: %s", pp_error_message());
    pp_convergence cv;
    pp_sampler_convergence(s, &cv);
    size_t obs, miss;
    pp_sampler_observed(s, &obs, &miss);
    CHECK(r.mean == pp_sampler_mean(s) && r.sd == pp_sampler_sd(s) && r.lo == pp_sampler_lo(s) &&
              r.hi == pp_sampler_hi(s) && r.rhat_map == pp_sampler_rhat_map(s) &&
              r.diag == pp_sampler_diagnostics(s),
          "the estimates, maps and diagnostics are the sampler's");
    CHECK(r.trace.values == pp_sampler_trace(s)->values && r.trace.kept == 40 &&
              r.trace.chains == 3,
          "the trace is the sampler's");
    CHECK(r.frame.rank == 2 && r.frame.n[0] == h && r.frame.n[1] == w && r.grid.rank == 2 &&
              r.grid.n[0] > h && r.grid.n[1] > w,
          "frame %zu x %zu, padded grid %zu x %zu", r.frame.n[0], r.frame.n[1], r.grid.n[0],
          r.grid.n[1]);
    CHECK(r.chain != NULL && r.config.chains == 3, "one move entry per chain");
    CHECK(r.convergence.warnings == cv.warnings && r.convergence.rhat_max == cv.rhat_max &&
              r.nwarnings == pp_sampler_warning_count(s) && obs == r.observed &&
              miss == r.unobserved && r.observed == h * w,
          "figures and counts are the sampler's");
    CHECK(r.col_kappa == -1 && r.col_level == -1 && r.col_width == -1 && r.pad_scheme == NULL,
          "gibbs with a fixed PSF and gmrf1: no optional column, no pad scheme");

    const char *dir = pp_test_tmpdir();
    char path[512];
    snprintf(path, sizeof path, "%s/summary.json", dir);
    pp_result hand = r;
    hand.bound_method = "a hand-made bound method";
    hand.pad_scheme = "a hand-made pad scheme";
    CHECK(pp_output_write(dir, &hand, y, NULL) == PP_OK, "write: %s", pp_error_message());
    char *js = pp_test_slurp(path);
    CHECK(has(js, "\"method\": \"a hand-made bound method\"") &&
              has(js, "\"pad_scheme\": \"a hand-made pad scheme\""),
          "summary.json takes its wording from the result");
    free(js);
    CHECK(pp_output_write(dir, &r, y, NULL) == PP_OK, "write: %s", pp_error_message());
    js = pp_test_slurp(path);
    CHECK(has(js, pp_sampler_bound_method(s)) && !has(js, "hand-made") && !has(js, "pad_scheme"),
          "summary.json from the sampler's result has the sampler's wording");
    free(js);
    /* the report's settings name automatic lengths by the caller's name of
     * the iterations setting, or in the library's words (issue 18) */
    static const char *const flags[PP_SET_COUNT] = {[PP_SET_ITERS] = "--iters"};
    char rpath[512];
    snprintf(rpath, sizeof rpath, "%s/report.html", dir);
    hand = r;
    hand.length.iters_auto = 1;
    for (int named = 0; named < 2; named++) {
        hand.config.setting_names = named ? flags : NULL;
        CHECK(pp_output_write(dir, &hand, y, NULL) == PP_OK, "write: %s", pp_error_message());
        char *html = pp_test_slurp(rpath);
        CHECK(named ? has(html, "(--iters auto: ")
                    : has(html, "(automatic: ") && !has(html, "--iters"),
              "automatic lengths %s", named ? "by the caller's name" : "in the library's words");
        free(html);
    }
    pp_result_free(&r);
    CHECK(r.chain == NULL, "pp_result_free clears the per-chain array");
    pp_result_free(&r);
    pp_result_free(NULL);
    pp_sampler_free(s);
    pp_image_free(k);
    pp_image_free(y);
    return pp_test_done();
}
