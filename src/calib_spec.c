/* pixpost — the --noise spec `--noise auto` takes from a single-frame fit
 * (contract in src/pixpost/calib.h). One frame gives var = a y + b;
 * the camera model's var = K (y - O) + K^2 R^2 needs a split of b into
 * offset and read noise, which one frame cannot make: we put the offset at
 * the darkest smooth part of the frame (not below the zero-signal level)
 * and give the read noise what is left. Cost: nothing measurable. */
#include "pixpost/calib.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int pp_noise_from_frame_fit(const pp_noise_fit *fit, pp_noise_spec *out)
{
    memset(out, 0, sizeof *out);
    out->gain = 1.0;
    if (!fit->gain_determined) {
        out->kind = PP_NOISE_GAUSSIAN;
        return 0;
    }
    double a = fit->a, b = fit->b;
    double O = fmax(fit->darkest, fit->zero_level);
    out->kind = PP_NOISE_CAMERA;
    out->gain = a;
    out->offset = O;
    out->read = sqrt(fmax(a * O + b, 0)) / a;
    return 1;
}

/* Through text, so the printed spec and the numbers used are the same. */
static double round_digits(double v, int digits)
{
    char b[64];
    snprintf(b, sizeof b, "%.*g", digits, v);
    return strtod(b, NULL);
}

void pp_noise_round(pp_noise_spec *s)
{
    if (s->kind != PP_NOISE_CAMERA && s->kind != PP_NOISE_POISSON)
        return;
    s->gain = round_digits(s->gain, 4);
    s->offset = round_digits(s->offset, 6);
    s->read = round_digits(s->read, 4);
}
