/* pixpost — internals of the PSF module shared between psf.c,
 * psf_bead.c and psf_kernel.c (not installed). */
#ifndef PIXPOST_PSF_INTERNAL_H
#define PIXPOST_PSF_INTERNAL_H

#include "pixpost/psf.h"
#include "pixpost/spec.h"

/* The widest gaussian PSF accepted, sigma in pixels (the reason is in
 * psf.c); a bead image's spot may be as wide at half its peak as this
 * PSF's FWHM, 2 sqrt(2 ln 2) * 20 = 47.1 px (psf_bead.c). */
#define PP_PSF_SIGMA_MAX 20.0

/* Largest kernel radius, in pixels (a 4097-pixel square, far beyond any
 * real frame); a bigger model kernel is almost surely a unit mistake (nm
 * for um, um for pixels). */
#define PP_PSF_MAX_RADIUS 2048

/* Kernel radius from an explicit size (must be odd, PP_ERR_ARG otherwise)
 * or, for size 0, ceil(model_radius) (at least 1). PP_ERR_LIMIT above
 * PP_PSF_MAX_RADIUS. (psf_kernel.c) */
pp_status pp_psf_pick_radius(size_t size, double model_radius, size_t *radius);

/* Divides k by its sum (which must be positive and finite). (psf_kernel.c) */
void pp_psf_normalise(pp_image *k);

/* The kernel of the bead image at path: read, background handled, checked
 * to be one compact bead (PP_ERR_FORMAT naming the file and what was
 * measured otherwise), centred on its centroid, size 0 = its own support
 * (else odd), normalised. *out is owned by the caller. (psf_bead.c) */
pp_status pp_psf_bead_make(const char *path, size_t size, pp_image **out);

/* Physical ranges of the optics keys (airy, widefield); why these values:
 * the "Physical ranges" comment in src/psf.c. */
#define PP_PSF_WAVELENGTH_MIN 0.2
#define PP_PSF_WAVELENGTH_MAX 2.0
#define PP_PSF_PIXEL_MIN 0.001
#define PP_PSF_PIXEL_MAX 20.0
#define PP_PSF_RINGS_PER_PIXEL_MIN 0.25
#define PP_PSF_NA_MAX 1.7
/* The na/wavelength/pixel range checks of airy and widefield, naming the
 * setting (what: "--psf", "PSF", see pp_psf_parse) and the model
 * (psf_optics.c). */
pp_status pp_psf_check_optics(const pp_psf_spec *s, const char *what);

/* Sub-pixels per side of the Airy pixel average (psf.c, where the rule is
 * explained); widefield uses the same rule. */
int pp_psf_airy_supersampling(const pp_psf_spec *s);

/* Parses the keys of a widefield: spec, messages naming the setting by
 * what (psf_widefield.c). */
pp_status pp_psf_widefield_parse(pp_spec *sp, const char *what, pp_psf_spec *out);

/* Canonical widefield spec string (psf_widefield.c). */
void pp_psf_widefield_format(const pp_psf_spec *s, char *buf, size_t len);

/* The widefield kernel (nz, ny, nx odd; ny == nx) into data, summing to 1
 * over the volume; nodes = Gauss-Legendre nodes of the pupil integral, 0
 * = the default rule (psf_widefield.c). */
pp_status pp_psf_widefield_fill(const pp_psf_spec *s, const pp_shape *shape, int nodes,
                                double *data);

/* The default kernel extents of a widefield spec (odd; psf_widefield.c). */
pp_status pp_psf_widefield_extent(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape);

/* Checks that img (background-subtracted, maximum 1; a frame or a volume)
 * holds one spot and, a frame, a compact one, by the criteria at the top of
 * psf_bead.c; noise_sd is the background's robust noise sd on img's scale.
 * PP_ERR_FORMAT naming path and what was found. Does not modify img.
 * (psf_bead.c) */
pp_status pp_psf_one_spot(const pp_image *img, double noise_sd, const char *path);

/* The 3-D bead stack at path, cleaned and centred (psf_bead3.c). */
pp_status pp_psf_bead3_make(const char *path, size_t size, size_t depth, pp_shape *shape,
                            double **data);

/* The shortest %g form of v that reads back as the same double (spec
 * strings written back by pp_psf_format; psf_kernel.c). */
void pp_psf_format_number(char *buf, size_t len, double v);

#endif
