/* pixpost — saturated pixels (see pixpost/saturation.h for the rules). */
#include "pixpost/saturation.h"
#include "pixpost/saturation_extra.h"

#include <math.h>

/* Pixels of frame equal to v. */
static size_t count_equal(const pp_image *f, double v)
{
    size_t n = 0, count = pp_image_count(f); /* every voxel of a volume */
    for (size_t i = 0; i < count; i++)
        n += f->data[i] == v;
    return n;
}

/* The largest finite value below `below` (-INFINITY if none). */
static double max_below(const pp_image *f, double below)
{
    double m = -INFINITY;
    size_t count = pp_image_count(f);
    for (size_t i = 0; i < count; i++) {
        double v = f->data[i];
        if (isfinite(v) && v < below && v > m)
            m = v;
    }
    return m;
}

void pp_saturation_find(const pp_image *frame, unsigned bits, int is_float, pp_saturation *out)
{
    *out = (pp_saturation){PP_SAT_NONE, 0, 0, 0};
    size_t count = pp_image_count(frame);
    for (size_t i = 0; i < count; i++)
        out->finite += isfinite(frame->data[i]) != 0;
    if (!out->finite)
        return;
    if (!is_float && bits >= 1 && bits <= 32) {
        double top = ldexp(1.0, (int)bits) - 1.0;
        size_t n = count_equal(frame, top);
        if (n) {
            *out = (pp_saturation){PP_SAT_FORMAT_MAX, top, n, out->finite};
            return;
        }
    }
    double m = max_below(frame, INFINITY);
    size_t nm = count_equal(frame, m);
    if ((double)nm < PP_SAT_MIN_SHARE * (double)out->finite || nm < 2)
        return;
    double v = m, next = 0;
    int k = 0;
    for (; k < PP_SAT_NEXT; k++) {
        v = max_below(frame, v);
        if (v == -INFINITY)
            break;
        next += (double)count_equal(frame, v);
    }
    if (k == 0 || !((double)nm > PP_SAT_SPIKE * next / (double)k))
        return;
    *out = (pp_saturation){PP_SAT_FLAT_TOP, m, nm, out->finite};
}

size_t pp_saturation_mark(pp_image *frame, const pp_saturation *sat)
{
    if (sat->rule == PP_SAT_NONE)
        return 0;
    size_t n = 0, count = pp_image_count(frame);
    for (size_t i = 0; i < count; i++)
        if (frame->data[i] == sat->level) {
            frame->data[i] = NAN;
            n++;
        }
    return n;
}

const char *pp_sat_rule_name(pp_sat_rule r)
{
    return r == PP_SAT_FORMAT_MAX ? "format maximum" : r == PP_SAT_FLAT_TOP ? "flat top" : "none";
}
