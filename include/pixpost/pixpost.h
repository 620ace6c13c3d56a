/* pixpost — Bayesian deconvolution with uncertainty, by MCMC. One include.
 *
 * The public API, in the order a caller uses it:
 *   read a frame     pp_image_read (io.h); or build one: pp_image_create,
 *                    pp_image_create3 (image.h); saturated pixels:
 *                    pp_saturation_find / _mark (saturation.h)
 *   build a model    from spec strings: pp_psf_parse, pp_noise_parse,
 *                    pp_prior_parse, pp_boundary_parse; or fill the structs
 *                    (pp_psf_spec, pp_noise_spec, pp_prior_spec) by hand;
 *                    the kernel: pp_psf_make / pp_psf_make3 (psf.h)
 *   run              pp_sampler_defaults, pp_sampler_create, pp_sampler_run
 *                    (sampler.h); regions to total: pp_regions_plan
 *   get results      pp_sampler_result (result.h: everything a run gives),
 *                    or the maps one by one (pp_sampler_mean, ...)
 *   write outputs    pp_output_write (output.h), pp_tiff_write_f32 (io.h),
 *                    pp_regions_write_csv (regions.h)
 *   free             pp_result_free, pp_sampler_free, pp_regions_free,
 *                    pp_image_free
 * plus pp_model_simulate (model.h), pp_version (version.h) and the FFTW
 * wisdom (fft_plans.h). Everything else the library holds is internal
 * (not declared here, not exported from libpixpost.so).
 *
 * Contracts shared by every public function (each function's comment says
 * where it differs):
 *   - Failure: a function returning pp_status returns PP_OK or an error
 *     code (status.h) and then sets a one-sentence message for the calling
 *     thread, read with pp_error_message(); the library never prints and
 *     never exits. An output pointer (`**out`) is set to NULL on failure,
 *     and a failed call leaves no partial file behind.
 *   - Pointers: every pointer argument must be non-NULL unless its
 *     comment says it may be NULL. Arguments are read only and not kept
 *     after the call returns unless the comment says otherwise.
 *   - Ownership: an object a function creates (`**out`) belongs to the
 *     caller and is freed with its module's _free function, which accepts
 *     NULL. Pointers returned by an accessor point into the object and stay
 *     valid until it is freed; never free them.
 *   - Threads: there is no hidden global state (the error message is per
 *     thread; FFTW planning is serialised inside the library), so calls on
 *     different objects may run on different threads at once. One object
 *     (a sampler, an image being written) must not be used from two threads
 *     at once; const accessors of a finished sampler may. pp_sampler_run
 *     itself runs its chains on OpenMP threads (cfg.threads).
 */
#ifndef PIXPOST_H
#define PIXPOST_H
#include "pixpost/version.h"
#include "pixpost/status.h"
#include "pixpost/shape.h"
#include "pixpost/image.h"
#include "pixpost/io.h"
#include "pixpost/fft_plans.h"
#include "pixpost/psf.h"
#include "pixpost/noise.h"
#include "pixpost/prior.h"
#include "pixpost/model.h"
#include "pixpost/setting.h"
#include "pixpost/sampler.h"
#include "pixpost/result.h"
#include "pixpost/saturation.h"
#include "pixpost/diag.h"
#include "pixpost/regions.h"
#include "pixpost/output.h"
#endif
