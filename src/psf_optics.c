/* pixpost — the optics checks and the Airy pixel-average rule shared by
 * the airy (src/psf.c) and widefield (src/psf_widefield.c) models; declared
 * in psf_internal.h. Kept apart from psf.c so that calls point one way:
 * psf.c -> psf_widefield.c -> this file. */
#include <math.h>
#include "internal.h"
#include "psf_internal.h"

/* Checks the optics ranges (psf.c explains them); for na=auto the narrowest PSF (NA at hi). Shared
 * with widefield (psf_internal.h). */
pp_status pp_psf_check_optics(const pp_psf_spec *s, const char *what)
{
    const char *m = s->kind == PP_PSF_WIDEFIELD ? "widefield" : "airy";
    double na = s->width_auto ? s->width_hi : s->na;
    if (!(s->na > 0 && s->na <= PP_PSF_NA_MAX))
        return pp_fail(PP_ERR_ARG,
                       "%s %s: na=%g must be in (0, 1.7] (a numerical aperture, no unit: "
                       "dry objectives reach ~0.95, oil immersion ~1.4-1.5)",
                       what, m, s->na);
    if (s->wavelength >= 100)
        return pp_fail(PP_ERR_ARG,
                       "%s %s: wavelength=%g is in micrometres; that looks like "
                       "nanometres (e.g. 520 nm is wavelength=0.52)",
                       what, m, s->wavelength);
    if (!(s->wavelength >= PP_PSF_WAVELENGTH_MIN && s->wavelength <= PP_PSF_WAVELENGTH_MAX))
        return pp_fail(PP_ERR_ARG,
                       "%s %s: wavelength=%g must be in [%g, %g] micrometres, ultraviolet "
                       "to near-infrared light (e.g. 520 nm is wavelength=0.52)",
                       what, m, s->wavelength, PP_PSF_WAVELENGTH_MIN, PP_PSF_WAVELENGTH_MAX);
    if (s->pixel > PP_PSF_PIXEL_MAX)
        return pp_fail(PP_ERR_ARG,
                       "%s %s: pixel=%g is in micrometres, larger than any sample-plane "
                       "pixel (at most %g); that looks like nanometres (e.g. 65 nm is "
                       "pixel=0.065)",
                       what, m, s->pixel, PP_PSF_PIXEL_MAX);
    if (!(s->pixel >= PP_PSF_PIXEL_MIN))
        return pp_fail(PP_ERR_ARG,
                       "%s %s: pixel=%g must be in [%g, %g] micrometres, the "
                       "sample-plane pixel sizes of light microscopy (e.g. 65 nm is "
                       "pixel=0.065)",
                       what, m, s->pixel, PP_PSF_PIXEL_MIN, PP_PSF_PIXEL_MAX);
    double ring = 0.61 * s->wavelength / na;
    if (ring < PP_PSF_RINGS_PER_PIXEL_MIN * s->pixel)
        return pp_fail(PP_ERR_ARG,
                       "%s %s: pixel=%g micrometres is %.0f times the Airy first dark-ring "
                       "radius 0.61 wavelength/na = %.3g um (at most %g): the PSF would "
                       "fall in one pixel and deblur nothing; pixel is the sample-plane "
                       "pixel, the camera's pixel / magnification (6.5 um at 100x is "
                       "pixel=0.065)",
                       what, m, s->pixel, s->pixel / ring, ring, 1 / PP_PSF_RINGS_PER_PIXEL_MIN);
    return PP_OK;
}

/* Sub-pixels per side for the Airy pixel average. An s-point midpoint rule
 * over a pixel of side p multiplies a spatial frequency f by
 * sin(pi f p) / (s sin(pi f p / s)) instead of the exact box average's
 * sinc(f p); their ratio is about 1 + (pi f p / s)^2 / 6. The Airy intensity
 * has no frequency above 2 NA / lambda (the incoherent cut-off), so keeping
 * the sub-pixel spacing p/s <= lambda / (32 NA) bounds the error at the
 * cut-off by (pi/16)^2/6 = 0.6 % and far less for the low frequencies that
 * carry the energy. For na=1.4, lambda=0.52, pixel=0.065 that gives s = 8
 * (tests/test_psf.c measures 8 vs 64 sub-pixels). */
int pp_psf_airy_supersampling(const pp_psf_spec *s)
{
    double need = ceil(s->pixel * 32.0 * s->na / s->wavelength);
    if (need < 8)
        return 8;
    return need > 64 ? 64 : (int)need;
}
