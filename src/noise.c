/* pixpost — noise model specs (parsing and canonical text). */
#include <stdio.h>
#include <string.h>
#include "internal.h"
#include "pixpost/noise.h"
#include "pixpost/spec.h"

#define WHAT "--noise"

static pp_status get(pp_spec *s, const char *key, double *v, int *set)
{
    pp_status st;
    int found = pp_spec_number(s, key, WHAT, v, NULL, &st);
    if (set)
        *set = found;
    return st;
}

static pp_status parse_photon(pp_spec *s, pp_noise_spec *out, int camera)
{
    pp_status st;
    if ((st = get(s, "gain", &out->gain, NULL)) != PP_OK ||
        (st = get(s, "offset", &out->offset, NULL)) != PP_OK)
        return st;
    if (camera && (st = get(s, "read", &out->read, NULL)) != PP_OK)
        return st;
    if ((st = pp_spec_check_used(s, WHAT, camera ? "gain, offset, read" : "gain, offset")) !=
        PP_OK)
        return st;
    if (!(out->gain > 0))
        return pp_fail(PP_ERR_ARG, WHAT " %s: gain must be > 0 (ADU per photo-electron)",
                       s->name);
    if (!(out->read >= 0))
        return pp_fail(PP_ERR_ARG, WHAT " camera: read must be >= 0 (electrons rms)");
    return PP_OK;
}

pp_status pp_noise_parse(const char *text, pp_noise_spec *out)
{
    memset(out, 0, sizeof *out);
    out->gain = 1.0;
    pp_spec s;
    pp_status st = pp_spec_split(text, WHAT, 0, &s);
    if (st != PP_OK)
        return st;
    if (strcmp(s.name, "none") == 0) {
        out->kind = PP_NOISE_NONE;
        return pp_spec_check_used(&s, WHAT, "no keys");
    }
    if (strcmp(s.name, "gaussian") == 0) {
        out->kind = PP_NOISE_GAUSSIAN;
        if ((st = get(&s, "sigma", &out->sigma, &out->sigma_set)) != PP_OK ||
            (st = pp_spec_check_used(&s, WHAT, "sigma")) != PP_OK)
            return st;
        if (out->sigma_set && !(out->sigma > 0))
            return pp_fail(PP_ERR_ARG, WHAT " gaussian: sigma must be > 0 (camera units)");
        return PP_OK;
    }
    if (strcmp(s.name, "poisson") == 0) {
        out->kind = PP_NOISE_POISSON;
        return parse_photon(&s, out, 0);
    }
    if (strcmp(s.name, "camera") == 0) {
        out->kind = PP_NOISE_CAMERA;
        return parse_photon(&s, out, 1);
    }
    return pp_fail(PP_ERR_ARG,
                   WHAT " '%s': unknown model '%s' (accepted: none, gaussian[:sigma=S], "
                   "poisson:gain=G,offset=O, camera:gain=G,offset=O,read=R)",
                   text, s.name);
}

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
