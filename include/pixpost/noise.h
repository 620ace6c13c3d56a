/* pixpost — noise models.
 *
 * Specs:
 *   none                            (simulate only)
 *   gaussian                        y = Ax + e, e ~ N(0, 1/lambda), lambda sampled
 *   gaussian:sigma=S                the same with lambda fixed at 1/S^2
 *   poisson:gain=G,offset=O         ADU = O + G * Poisson(photons)
 *   camera:gain=G,offset=O,read=R   ADU = O + G * (Poisson(photons) + N(0, R^2))
 *                                   (read noise R in electrons)
 * gain (ADU per electron) and offset (the dark level, ADU) are required for
 * poisson and camera, read too for camera: there is no silent default. The
 * gain may be given as e_per_adu=E (electrons per ADU, the figure camera
 * data sheets print; G = 1/E), not both; pp_noise_format always writes
 * gain=.
 */
#ifndef PIXPOST_NOISE_H
#define PIXPOST_NOISE_H

#include <stddef.h>
#include "pixpost/status.h"

typedef enum pp_noise_kind {
    PP_NOISE_NONE,
    PP_NOISE_GAUSSIAN,
    PP_NOISE_POISSON,
    PP_NOISE_CAMERA
} pp_noise_kind;

typedef struct pp_noise_spec {
    pp_noise_kind kind;
    double sigma;   /* gaussian: fixed sd when sigma_set */
    int sigma_set;
    double gain;    /* ADU per photo-electron */
    double offset;  /* ADU, the camera's dark level */
    double read;    /* electrons rms (camera) */
} pp_noise_spec;

/* Parses a noise spec (the forms above) into *out (not NULL; cleared
 * first, so on failure it holds no half-parsed model). text may be NULL or
 * empty (refused). Errors: PP_ERR_ARG, the message naming the setting by
 * names (PP_SET_NOISE, include/pixpost/setting.h; NULL: the library's
 * words, "noise model"), the key and the accepted form. Thread-safe. */
pp_status pp_noise_parse(const char *text, const char *const *names, pp_noise_spec *out);

/* Writes s (not NULL) in the form pp_noise_parse reads into buf, at most
 * len bytes with the NUL (truncated when short; buf, len >= 1, the
 * caller's). Never fails; thread-safe. */
void pp_noise_format(const pp_noise_spec *s, char *buf, size_t len);

#endif
