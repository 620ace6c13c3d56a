/* pixpost — how the samplers' FFT plans are made, and FFTW wisdom.
 *
 * pp_sampler_config.fft_effort chooses the planner effort of a run:
 * PP_FFT_ESTIMATE (the default: deterministic plans, no planning time) or
 * PP_FFT_MEASURE (FFTW times candidate plans: faster to run, 0.02-2 s to
 * make below 1024^2, up to ~10 s at 2048^2, bench/NOTES.md, unless wisdom
 * already holds them). Results computed with different plans agree to
 * rounding, not bit for bit. pp_result.fft_plans says where a run's plans
 * came from. Wisdom (FFTW's store of measured plans) is process-wide:
 * load it once before creating samplers with PP_FFT_MEASURE, save it after.
 * The plans themselves are internal (src/pixpost/fft.h).
 */
#ifndef PIXPOST_FFT_PLANS_H
#define PIXPOST_FFT_PLANS_H

#include "pixpost/status.h"

enum { PP_FFT_ESTIMATE = 0, PP_FFT_MEASURE = 1 };

/* Where a run's plans came from: ESTIMATE planning, MEASURE planning
 * now, or MEASURE wisdom already loaded (pp_fft_wisdom_load) or made
 * earlier in this process. */
typedef enum pp_fft_plans {
    PP_FFT_PLANS_ESTIMATED = 0,
    PP_FFT_PLANS_MEASURED,
    PP_FFT_PLANS_WISDOM
} pp_fft_plans;

/* Loads FFTW wisdom from path into this process (merged with what it
 * holds). path: not NULL, read only. A missing or empty file is not an
 * error (PP_OK, nothing loaded). Errors (message by pp_error_message,
 * naming path): PP_ERR_IO when the file cannot be opened, PP_ERR_FORMAT
 * when it is not wisdom of this FFTW build. Thread-safe: serialised with
 * every plan creation of the process behind one lock. */
pp_status pp_fft_wisdom_load(const char *path);

/* Saves this process's wisdom merged with what path already holds, under a
 * POSIX lock on path, through a temporary file in path's folder renamed
 * over it: safe when several processes save to one file at once (none
 * loses its plans, a reader never sees a partial file). path: not NULL;
 * its folder must exist. Errors (naming path): PP_ERR_IO (cannot create,
 * write or rename the file; the temporary file is removed). Thread-safe
 * as pp_fft_wisdom_load. */
pp_status pp_fft_wisdom_save(const char *path);

#endif
