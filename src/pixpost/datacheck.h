/* pixpost — checks of a frame against the stated model before sampling.
 *
 * pp_datacheck_run() looks at the frame, the noise spec and the PSF kernel
 * and lists what makes the run meaningless (an error: do not sample) or
 * doubtful (a warning: sample, but say so). Non-finite pixels (NaN: the
 * shared convention for unobserved pixels) are skipped everywhere; a volume's
 * voxels all count, and psf_size compares the slices with the kernel's
 * slices (the sampler checks the depth). Saturated
 * pixels are not checked here (the missing-data helper's module does that).
 *
 * The checks and their rules (README "Checks of the data"; "our rule"
 * marks a threshold chosen here, not taken from elsewhere). With s the sd
 * of a pixel without light in ADU, s = sqrt(G^2 R^2 + 1/12) (read noise R
 * in electrons times the gain G, plus the rounding of the digitiser; R = 0
 * for poisson), for the photon models (poisson, camera) only:
 *   below_offset  share of the observed pixels below the offset. Under the
 *                 model a pixel without light is below it with probability
 *                 at most 1/2 (symmetric read noise) and one with light
 *                 less, so a share above 1/2 + max(0.1, 2/sqrt(N)) (N
 *                 observed pixels: 4 binomial sd of a fair coin; our rule)
 *                 is an error. The message names the offset and suggests
 *                 the one the data point to: the 1st percentile of the
 *                 frame plus 2.33 s (where the darkest 1 % would sit if
 *                 they had no light).
 *   impossible    pixels below offset - 5 s - 1 ADU (probability < 3e-7
 *                 each under the model). More than 1 % of the observed
 *                 pixels (our rule): an error (e.g. a float frame with
 *                 negative values under camera:gain=1,offset=0); fewer but
 *                 some: a warning (cold or defect pixels). Not reported
 *                 when below_offset already fired (the same cause).
 *   dark_level    the 1st percentile of the frame more than max(10 s,
 *                 10 G) above the offset (no pixel reads near the dark
 *                 level): a warning that the offset may be too low, since
 *                 a frame with areas without light has pixels at the
 *                 offset. (A frame lit everywhere fires it too: hence a
 *                 warning.)
 *   gain          the single-frame Poisson-Gaussian fit (pp_noise_fit_frame,
 *                 src/pixpost/calib.h; Foi et al. 2008) on a 2-D frame
 *                 gives the gain a +- se. When the stated gain G and a
 *                 differ by more than 2x either way AND G lies outside
 *                 a +- 2.576 se (99 %), a warning names both, the interval,
 *                 the likely cause (an inverted gain: data sheets print
 *                 electrons per ADU) and the fixes (e_per_adu=, pixpost
 *                 calibrate) (our rule). No word when the fit fails (frame
 *                 under 16x16, too few smooth patches) or cannot separate
 *                 gain and offset (a < 3 se); on a volume the fit pools
 *                 the slices (pp_noise_fit_frame). The fit
 *                 overestimates the gain on sharp scenes (unblurred
 *                 photographs: median +12 %, worst about 2x; README,
 *                 "Calibrating the camera"): hence the 2x margin; false
 *                 alarms measured in tests/ref_datacheck_gain.py.
 * For every noise model:
 *   psf_size      the frame smaller than the PSF kernel in either
 *                 direction: an error (the kernel must fit; the same rule
 *                 as pp_psf_check, checked first here for a message that
 *                 says what to do); smaller than twice the kernel in
 *                 either direction: a warning (most pixels then lie within
 *                 the PSF's reach of an edge, where the scene outside the
 *                 frame is unknown; our rule).
 * Cost: one copy and one sort of the observed pixels, and the gain fit (a
 * few passes over the frame and one sort of its smooth blocks).
 */
#ifndef PIXPOST_DATACHECK_H
#define PIXPOST_DATACHECK_H

#include "pixpost/image.h"
#include "pixpost/model.h"
#include "pixpost/noise.h"
#include <stddef.h>

typedef enum pp_check_severity { PP_CHECK_WARNING = 1, PP_CHECK_ERROR = 2 } pp_check_severity;

/* One finding: its severity, a short name of the check ("below_offset",
 * "impossible", "dark_level", "gain", "psf_size") and one plain sentence with the
 * numbers and the fix. */
typedef struct pp_check_finding {
    pp_check_severity severity;
    const char *check; /* static text */
    char text[640];
} pp_check_finding;

#define PP_DATACHECK_MAX 8

/* The findings and the figures behind them. Figures that a model does not
 * use are NaN (the offset figures under gaussian noise). */
typedef struct pp_datacheck {
    size_t count; /* findings, errors first */
    pp_check_finding finding[PP_DATACHECK_MAX];
    size_t errors, warnings;
    size_t observed; /* finite pixels */
    double dark_sd;  /* s above, ADU */
    double share_below_offset;
    double share_impossible; /* below offset - 5 s - 1 */
    double q001, q01;        /* 0.1 % and 1 % quantiles of the frame */
    double offset_suggested; /* 1st percentile + 2.33 s */
    double gain_fit, gain_fit_se; /* the gain check's single-frame fit, ADU per
                                   * electron; NaN when it gave no gain */
} pp_datacheck;

/* Runs the checks above on frame (NaN pixels skipped) under noise, for a
 * kernel psf used with boundary b. The findings name the noise model, PSF
 * and boundary settings by names (a PP_SET_COUNT table, include/pixpost/
 * setting.h; NULL: the library's words "noise model", "PSF", "boundary").
 * All other pointers must be valid; nothing is kept. out is overwritten. Fails with PP_ERR_ARG when the frame has no
 * finite pixel, PP_ERR_NOMEM when the sort's copy cannot be allocated;
 * findings are results, not failures (the call succeeds). */
pp_status pp_datacheck_run(const pp_image *frame, const pp_noise_spec *noise, const pp_image *psf,
                           pp_boundary b, const char *const *names, pp_datacheck *out);

#endif
