/* pixpost tests — pp_saturation_find / pp_saturation_mark (src/saturation.c)
 * on hand-made frames whose answer is known by construction: each rule
 * fires where pixpost/saturation.h says and nowhere else (the rule's
 * thresholds at their edges: 0.1 % share, 4x the next values' mean count). */
#include "pixpost/image.h"
#include "pixpost/saturation.h"
#include "testutil.h"
#include "pixpost/saturation_extra.h"
#include <math.h>
#include <string.h>

/* A w x h frame with pixel i = i % m (a flat histogram over 0..m-1). */
static pp_image *ramp(size_t w, size_t h, unsigned m)
{
    pp_image *f = NULL;
    if (pp_image_create(h, w, &f) != PP_OK)
        return NULL;
    for (size_t i = 0; i < w * h; i++)
        f->data[i] = (double)(i % m);
    return f;
}

int main(void)
{
    pp_saturation s;
    /* rule 1: 8-bit, any pixel at 255 counts, NaN ignored */
    pp_image *f = ramp(100, 100, 200); /* values 0..199, 50 pixels each */
    f->data[7] = 255;
    f->data[8] = NAN;
    pp_saturation_find(f, 8, 0, &s);
    CHECK(s.rule == PP_SAT_FORMAT_MAX && s.level == 255 && s.count == 1 && s.finite == 9999,
          "8-bit: one pixel at 255 (rule %d level %g count %zu finite %zu)", s.rule, s.level,
          s.count, s.finite);
    CHECK(pp_saturation_mark(f, &s) == 1 && isnan(f->data[7]), "mark sets it to NaN");
    /* the same frame read as 16-bit: 255 is not the format's maximum; the new
     * top (199) holds 50 pixels, as do the values below it: no flat top */
    pp_saturation_find(f, 16, 0, &s);
    CHECK(s.rule == PP_SAT_NONE && s.count == 0, "16-bit, flat histogram: none (rule %d)", s.rule);
    /* rule 2: 199 holds more than 4 x the mean count of 191..198 */
    for (size_t i = 0; i < 160; i++)
        f->data[1000 + i] = 199; /* + the 50 already there */
    pp_saturation_find(f, 16, 0, &s);
    CHECK(s.rule == PP_SAT_FLAT_TOP && s.level == 199 && s.count > 200,
          "flat top at 199 (rule %d level %g count %zu)", s.rule, s.level, s.count);
    pp_image_free(f);
    /* rule 2's threshold: the top must hold MORE than 4 x the mean count of
     * the 8 values below it (float frame: rule 1 never applies) */
    f = ramp(10, 10, 10);
    for (size_t top = 28; top <= 40; top += 12) {
        for (size_t i = 0; i < 100; i++) /* top pixels at 9, the rest over 1..8 */
            f->data[i] = i < top ? 9 : (double)(i % 8) + 1;
        double mean_next = (double)(100 - top) / 8.0; /* 9 or 7.5 */
        pp_saturation_find(f, 0, 1, &s);
        CHECK((s.rule == PP_SAT_FLAT_TOP) == ((double)top > 4.0 * mean_next) &&
                  (top == 40) == (s.rule == PP_SAT_FLAT_TOP),
              "float frame, %zu at the top vs 4 x %.2f: rule %d", top, mean_next, s.rule);
    }
    /* a constant frame has no value below its top: not a flat top */
    for (size_t i = 0; i < 100; i++)
        f->data[i] = 3;
    pp_saturation_find(f, 0, 1, &s);
    CHECK(s.rule == PP_SAT_NONE, "constant float frame: none (rule %d)", s.rule);
    /* below 0.1 % of the pixels: a 2-pixel top in 10000 is 0.02 % */
    pp_image_free(f);
    f = ramp(100, 100, 5000); /* 2 pixels per value */
    pp_saturation_find(f, 0, 1, &s);
    CHECK(s.rule == PP_SAT_NONE, "2 of 10000 at the top: none (rule %d)", s.rule);
    /* all NaN: nothing, no crash */
    for (size_t i = 0; i < 10000; i++)
        f->data[i] = NAN;
    pp_saturation_find(f, 8, 0, &s);
    CHECK(s.rule == PP_SAT_NONE && s.finite == 0 && pp_saturation_mark(f, &s) == 0,
          "all NaN: none");
    pp_image_free(f);
    CHECK(strcmp(pp_sat_rule_name(PP_SAT_FLAT_TOP), "flat top") == 0, "rule name");
    return pp_test_done();
}
