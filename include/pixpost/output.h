/* pixpost — writing a run's outputs into a folder.
 *
 * pp_output_write() writes, each atomically (temporary name, then rename):
 *   mean.tif sd.tif lo.tif hi.tif   32-bit float, input units, frame size
 *   mean.png sd.png                 16-bit, linear scale in summary.json:
 *                                   the 0.5th..99.5th percentiles on
 *                                   0..65535, clipped (the report's grey
 *                                   scale, src/display.h)
 *   summary.json                    settings, hyperparameter posteriors,
 *                                   bound method, timings, warnings
 *   trace.csv                       chain,iter,lambda,delta,loglik,p_<r>_<c>...
 *   residual.tif                    standardised residuals of the predictive
 *                                   check (when info->predictive is given)
 *   .pixpost-output                 the folder marker (PP_OUTPUT_MARKER),
 *                                   written first
 * The folder must exist. Nothing in it other than these names is touched.
 *
 * A volume (r->frame of rank 3, every map of depth > 1) gets the same files
 * with three differences: every float TIFF above (mean, sd, lo, hi, rhat,
 * mcse, residual) is a multi-page 32-bit float OME-TIFF, one page per
 * z-slice, whose OME-XML carries r->config.voxel as PhysicalSizeZ/Y/X
 * (axes with voxel 0, not known, are left out: pp_ome_tiff_write_f32);
 * the PNGs are maximum-intensity projections over z named mean_mip.png
 * and sd_mip.png (mean.png and sd.png are not written, and removed when an
 * earlier run left them; a frame likewise removes the _mip files);
 * summary.json's "frame" and "grid" gain "depth", "voxel_um" is
 * r->config.voxel (null where 0; info->voxel_um is not used for a volume)
 * and "png_scale" says the PNGs are projections. report.html shows the
 * volume as orthogonal views with sliders (src/pixpost/report.h).
 * A result whose maps (or frame, or residual) do not have r->frame's shape
 * is refused (PP_ERR_ARG) before anything is written.
 */
#ifndef PIXPOST_OUTPUT_H
#define PIXPOST_OUTPUT_H

#include <stdio.h>
#include "pixpost/result.h"
#include "pixpost/noise.h"

/* What the caller knows about the run that the sampler does not. Every
 * string may be NULL. */
typedef struct pp_run_info {
    const char *input_path;
    const char *input_part; /* the part of the input sampled, e.g. "page 2" or "channel 1
                             * (g)": summary.json "input_part"; NULL: the whole input */
    const double *voxel_um; /* voxel size z, y, x in micrometres: summary.json "voxel_um";
                             * NULL: not known */
    const char *psf_spec;   /* as given by the user */
    const char *noise_spec;
    const char *prior_spec;
    const char *command_line;
    double seconds_total;   /* wall time of the whole command so far */
    const char *fft_plans;  /* summary's "fft_plans" (how the plans were made and
                             * kept); NULL: "estimated", "measured" or
                             * "measured, from wisdom", from the sampler */
    /* The frame's unobserved pixels (summary.json "missing_data", one line of
     * the report): how many the caller masked and found saturated (at
     * saturation_level by saturation_rule, a pp_sat_rule), so NaN. */
    size_t masked, saturated;
    double saturation_level;
    int saturation_rule;
    /* The checks of the data before sampling and of the fit after it
     * (datacheck.h, ppcheck.h); NULL: not made. Their warnings go to
     * summary.json ("data_checks", "predictive") and the report; the
     * predictive check's residual map to residual.tif. */
    const struct pp_datacheck *data_checks;
    const struct pp_ppcheck *predictive;
    /* --noise auto (NULL otherwise): the single-frame fit, the model chosen
     * from it and the sentence saying so; summary.json's "noise_estimate"
     * and a line of the report's settings. */
    const struct pp_noise_fit *noise_estimate;
    const pp_noise_spec *noise_chosen;
    const char *noise_note;
    /* The regions' and profiles' draws (src/pixpost/report.h), shown
     * in the report; NULL: none. */
    const struct pp_report_regions *regions;
} pp_run_info;

/* Writes the outputs of the finished run r (pp_sampler_result, or a
 * pp_result filled by hand) into dir; frame is the input frame or volume
 * the run sampled (the report shows it; NULL: not shown).
 * Contract: dir (an existing folder) and r: not NULL; frame and info may
 * be NULL (info NULL: nothing known beyond r); everything is only read.
 * The marker is written first; then every file goes to a temporary name in
 * dir and all are renamed into place only once all are written, so a
 * failure leaves the earlier files of dir as they were (a file of these
 * names that this run does not produce, e.g. an old residual.tif, is
 * removed). Errors, the message naming the file: PP_ERR_ARG (a map whose
 * shape is not r->frame's), PP_ERR_IO (dir missing or not writable, a
 * write or rename failed), PP_ERR_LIMIT, PP_ERR_NOMEM. Thread-safe for
 * different folders; r's sampler must not be freed meanwhile. */
pp_status pp_output_write(const char *dir, const pp_result *r, const pp_image *frame,
                          const pp_run_info *info);

/* The marker of a folder pixpost wrote: a small text file whose first line
 * is PP_OUTPUT_MARKER_LINE, then what wrote it. Its presence tells a later
 * run (the command line's output-folder rule) that the files there are
 * pixpost's to replace; a user's folder does not have it. */
#define PP_OUTPUT_MARKER ".pixpost-output"
#define PP_OUTPUT_MARKER_LINE "pixpost output folder"

#endif
