/* pixpost — point-spread functions.
 *
 * Specs (lengths of airy in micrometres, gaussian in pixels):
 *   gaussian:sigma=S
 *   airy:na=NA,wavelength=L,pixel=P     in-focus Airy pattern (2 J1(v)/v)^2,
 *                                       v = 2 pi NA r / L, averaged over each
 *                                       pixel's area by supersampling
 *   file:PATH                           a measured bead image: its border
 *                                       median is subtracted, negatives
 *                                       clipped, centred on its centroid
 * Every kernel is odd-sized (2R+1 square), centred at (R, R), finite,
 * non-negative and normalised to sum 1.
 *
 * 3-D PSFs (volumes, slowest axis first {nz, ny, nx}; pp_psf_make refuses
 * them, pp_psf_make3 builds them, `pixpost psf` writes them as multi-page
 * float TIFF; pp_sampler_create samples a volume with one given as a
 * pp_image of that depth, include/pixpost/sampler.h "Volumes"):
 *   gaussian:sigma=S,sigma_z=Z          sigma_z in slices (z-steps)
 *   widefield:na=NA,wavelength=L,pixel=P,step=DZ,n=N[,sample_n=NS,depth=D]
 *                                       scalar diffraction (Born & Wolf
 *                                       section 8.8), L, P, DZ, D in
 *                                       micrometres; n the immersion
 *                                       index; sample_n and depth give the
 *                                       Gibson & Lanni index-mismatch term
 *                                       (src/psf_widefield.c)
 *   file:STACK.tif                      a multi-page bead stack
 *
 * An uncertain width: gaussian:sigma=auto[,lo=A,hi=B] (default bounds 0.5
 * and 4 pixels) and airy:na=auto[,lo=A,hi=B],wavelength=L,pixel=P (default
 * 0.4 and 1.5) give the width a uniform prior on [lo, hi]; the sampler
 * draws it (pp_sampler_config.psf). The parsed spec then holds the
 * midpoint as its sigma/na (the starting width), and pp_psf_make with
 * size 0 sizes the kernel for the widest PSF in the range.
 */
#ifndef PIXPOST_PSF_H
#define PIXPOST_PSF_H

#include <stddef.h>
#include "pixpost/image.h"
#include "pixpost/shape.h"

typedef enum pp_psf_kind {
    PP_PSF_GAUSSIAN,
    PP_PSF_AIRY,
    PP_PSF_FILE,
    PP_PSF_WIDEFIELD
} pp_psf_kind;

typedef struct pp_psf_spec {
    pp_psf_kind kind;
    double sigma;                  /* gaussian, pixels */
    double na, wavelength, pixel;  /* airy: numerical aperture, um, um */
    char path[4096];               /* file */
    int width_auto;                /* sigma=auto / na=auto: width is sampled */
    double width_lo, width_hi;     /* its uniform prior (pixels / NA) */
    double sigma_z;                /* gaussian, slices; 0 = a 2-D gaussian */
    double step;                   /* widefield: z-step between slices, um */
    double n;                      /* widefield: immersion refractive index */
    double sample_n, depth;        /* widefield: sample index and depth (um)
                                      below the coverslip; sample_n 0 = the
                                      sample matches the immersion */
} pp_psf_spec;

/* Parses a spec (the forms above) into *out (not NULL); text may be NULL
 * or empty (refused). Only parses: a file: spec's file is not opened here
 * (pp_psf_make does). Errors: PP_ERR_ARG, the message naming the setting
 * by names (a PP_SET_COUNT table, include/pixpost/setting.h, e.g. a
 * command line's "--psf"; NULL: the library's word "PSF"), the key and the
 * accepted form; PP_ERR_NOMEM. The functions below take no names: their
 * refusals (of a spec that parsed, at make time) say "PSF". On failure
 * *out is zeroed but for the kind. Thread-safe. */
pp_status pp_psf_parse(const char *text, const char *const *names, pp_psf_spec *out);

/* Writes a canonical spec string of s (not NULL; for summary.json) into
 * buf, at most len bytes with the NUL (truncated when short; buf NULL or
 * len 0: nothing). Never fails; thread-safe. */
void pp_psf_format(const pp_psf_spec *s, char *buf, size_t len);

/* 1 when s (not NULL) describes a 3-D PSF (gaussian with sigma_z,
 * widefield), else 0; a file: spec counts as 2-D here (its TIFF is not
 * opened: it is 3-D when it has more than one page, which only
 * pp_psf_make3 reads). Never fails; thread-safe. */
int pp_psf_is_3d(const pp_psf_spec *s);

/* Makes a 3-D kernel: *data (nz*ny*nx doubles, slice-major, owned by the
 * caller, free()) and *shape = {nz, ny, nx}, every extent odd, centred at
 * the middle voxel, non-negative, summing to 1 over the whole volume.
 * size and depth are the odd extents in xy and z (0 = from the model:
 * gaussian radius ceil(4 sigma) and ceil(4 sigma_z); widefield see
 * src/psf_widefield.c; file its own support). A 2-D spec gives depth 1
 * (gaussian, airy) or is read as a one-page stack (file). s, shape, data:
 * not NULL. On failure *data is NULL (*shape undefined). Errors: PP_ERR_ARG
 * (even size or depth, a bad parameter of s), PP_ERR_LIMIT (a kernel past
 * the size limit), for file: the reader's errors (pp_image_read, naming
 * the file) and PP_ERR_FORMAT when the stack is not one compact bead;
 * PP_ERR_NOMEM. Thread-safe. (src/psf3.c) */
pp_status pp_psf_make3(const pp_psf_spec *s, size_t size, size_t depth, pp_shape *shape,
                       double **data);

/* Makes the kernel. size = 0 chooses the size from the model (gaussian:
 * radius ceil(4 sigma); airy: radius of the 5th dark ring), otherwise size
 * must be odd. A file PSF keeps its own support when size = 0. A 3-D spec
 * (pp_psf_is_3d) is refused with PP_ERR_UNSUPPORTED: it blurs volumes,
 * and this makes a frame's kernel (pp_psf_make3 makes a volume's). s, out:
 * not NULL; *out receives a new kernel owned by the caller
 * (pp_image_free), NULL on failure. Other errors as pp_psf_make3's.
 * Thread-safe. */
pp_status pp_psf_make(const pp_psf_spec *s, size_t size, pp_image **out);

#endif
