/* pixpost — noise model specs (parsing and canonical text). */
#include "pixpost/noise.h"
#include "internal.h"
#include "pixpost/setting.h"
#include "pixpost/spec.h"
#include "pixpost/setting_extra.h"
#include <math.h>
#include <stdio.h>
#include <string.h>

static pp_status get(pp_spec *s, const char *what, const char *key, double *v, int *set)
{
    pp_status st;
    int found = pp_spec_number(s, key, what, v, NULL, &st);
    if (set)
        *set = found;
    return st;
}

/* A required key's absence, with what the key means and where to find it. */
static pp_status missing(const pp_spec *s, const char *what, const char *key, const char *meaning)
{
    return pp_fail(PP_ERR_ARG, "%s %s: missing %s= (%s; expected %s)", what, s->name, key, meaning,
                   strcmp(s->name, "camera") == 0 ? "camera:gain=G,offset=O,read=R"
                                                  : "poisson:gain=G,offset=O");
}

/* gain=G or e_per_adu=E (G = 1/E): data sheets print electrons per ADU, the
 * model and the canonical text use its inverse. */
static pp_status parse_gain(pp_spec *s, const char *what, pp_noise_spec *out)
{
    double e_per_adu = 0;
    int has_gain = 0, has_e = 0;
    pp_status st;
    if ((st = get(s, what, "gain", &out->gain, &has_gain)) != PP_OK ||
        (st = get(s, what, "e_per_adu", &e_per_adu, &has_e)) != PP_OK)
        return st;
    if (has_gain && has_e)
        return pp_fail(PP_ERR_ARG,
                       "%s %s: gain= and e_per_adu= are both given; give one "
                       "(gain = 1/e_per_adu)",
                       what, s->name);
    if (!has_gain && !has_e)
        return missing(s, what, "gain",
                       "ADU per electron, the inverse of the electrons-per-ADU "
                       "figure most camera data sheets print; or give that figure "
                       "as e_per_adu=E");
    if (has_e) {
        if (!(e_per_adu > 0))
            return pp_fail(PP_ERR_ARG, "%s %s: e_per_adu=%g must be > 0 (electrons per ADU)", what,
                           s->name, e_per_adu);
        out->gain = 1.0 / e_per_adu;
    }
    if (!(out->gain > 0 && isfinite(out->gain)))
        return pp_fail(PP_ERR_ARG, "%s %s: gain must be > 0 (ADU per photo-electron)", what,
                       s->name);
    return PP_OK;
}

/* gain (or e_per_adu) and offset are required, and read for camera: a
 * default of gain 1, offset 0 once turned a camera's dark level into ~50
 * photons per pixel of "fluorescence" without a word. */
static pp_status parse_photon(pp_spec *s, const char *what, pp_noise_spec *out, int camera)
{
    static const char *const photon_keys[] = {"gain", "e_per_adu", "offset", NULL};
    static const char *const camera_keys[] = {"gain", "e_per_adu", "offset", "read", NULL};
    pp_status st;
    int set = 0;
    if ((st = pp_spec_check_known(s, what, camera ? camera_keys : photon_keys)) != PP_OK ||
        (st = parse_gain(s, what, out)) != PP_OK ||
        (st = get(s, what, "offset", &out->offset, &set)) != PP_OK)
        return st;
    if (!set)
        return missing(s, what, "offset",
                       "the camera's dark level in ADU, what a pixel reads with "
                       "no light");
    if (!camera)
        return PP_OK;
    if ((st = get(s, what, "read", &out->read, &set)) != PP_OK)
        return st;
    if (!set)
        return missing(s, what, "read",
                       "the read noise in electrons rms, from the camera's data sheet");
    if (!(out->read >= 0))
        return pp_fail(PP_ERR_ARG, "%s camera: read must be >= 0 (electrons rms)", what);
    return PP_OK;
}

pp_status pp_noise_parse(const char *text, const char *const *names, pp_noise_spec *out)
{
    const char *what = pp_setting_name(names, PP_SET_NOISE);
    memset(out, 0, sizeof *out);
    out->gain = 1.0;
    pp_spec s;
    pp_status st = pp_spec_split(text, what, 0, &s);
    if (st != PP_OK)
        return st;
    if (strcmp(s.name, "none") == 0) {
        static const char *const none_keys[] = {NULL};
        out->kind = PP_NOISE_NONE;
        return pp_spec_check_known(&s, what, none_keys);
    }
    if (strcmp(s.name, "gaussian") == 0) {
        static const char *const gaussian_keys[] = {"sigma", NULL};
        out->kind = PP_NOISE_GAUSSIAN;
        if ((st = pp_spec_check_known(&s, what, gaussian_keys)) != PP_OK ||
            (st = get(&s, what, "sigma", &out->sigma, &out->sigma_set)) != PP_OK)
            return st;
        if (out->sigma_set && !(out->sigma > 0))
            return pp_fail(PP_ERR_ARG, "%s gaussian: sigma must be > 0 (camera units)", what);
        return PP_OK;
    }
    if (strcmp(s.name, "poisson") == 0) {
        out->kind = PP_NOISE_POISSON;
        return parse_photon(&s, what, out, 0);
    }
    if (strcmp(s.name, "camera") == 0) {
        out->kind = PP_NOISE_CAMERA;
        return parse_photon(&s, what, out, 1);
    }
    static const char *const models[] = {"none", "gaussian", "poisson", "camera", NULL};
    const char *near = pp_spec_closest(s.name, models);
    return pp_fail(PP_ERR_ARG,
                   "%s '%s': unknown model '%s' (%s%s%saccepted: none, gaussian[:sigma=S], "
                   "poisson:gain=G,offset=O, camera:gain=G,offset=O,read=R; gain=G may be "
                   "given as e_per_adu=1/G)",
                   what, text, s.name, near ? "did you mean " : "", near ? near : "",
                   near ? "? " : "");
}

/* The canonical text always says gain=, even when the user gave
 * e_per_adu= (gain = 1/e_per_adu): one form in summary.json, whatever was
 * typed, so two runs with the same camera compare equal. */
void pp_noise_format(const pp_noise_spec *s, char *buf, size_t len)
{
    switch (s->kind) {
    case PP_NOISE_NONE:
        snprintf(buf, len, "none");
        break;
    case PP_NOISE_GAUSSIAN:
        if (s->sigma_set)
            snprintf(buf, len, "gaussian:sigma=%.15g", s->sigma);
        else
            snprintf(buf, len, "gaussian");
        break;
    case PP_NOISE_POISSON:
        snprintf(buf, len, "poisson:gain=%.15g,offset=%.15g", s->gain, s->offset);
        break;
    case PP_NOISE_CAMERA:
        snprintf(buf, len, "camera:gain=%.15g,offset=%.15g,read=%.15g", s->gain, s->offset,
                 s->read);
        break;
    }
}
