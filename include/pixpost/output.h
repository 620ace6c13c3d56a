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
 * volume as orthogonal views with sliders (include/pixpost/report.h).
 * A result whose maps (or frame, or residual) do not have r->frame's shape
 * is refused (PP_ERR_ARG) before anything is written.
 */
#ifndef PIXPOST_OUTPUT_H
#define PIXPOST_OUTPUT_H

#include <stdio.h>
#include "pixpost/result.h"
#include "pixpost/calib.h"

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
    const pp_noise_fit *noise_estimate;
    const pp_noise_spec *noise_chosen;
    const char *noise_note;
    /* The regions' and profiles' draws (include/pixpost/report.h), shown
     * in the report; NULL: none. */
    const struct pp_report_regions *regions;
    /* How the saturated pixels were treated (summary.json "missing_data"
     * "saturated_as", written when some were found or for "data"):
     * "censored", "missing" or "data"; NULL: omitted. */
    const char *saturated_as;
} pp_run_info;

/* Writes s (NULL: "") to f as a JSON string literal: quotes, with '"' and
 * '\\' escaped and control characters as \u00XX; other bytes (UTF-8) as
 * they are. Shared by summary.json and the batch manifest. */
void pp_json_write_string(FILE *f, const char *s);
/* Writes v to f as a JSON number with 10 significant digits ("%.10g"), or
 * null when v is not finite. */
void pp_json_write_number(FILE *f, double v);
/* A voxel size v = {z, y, x} (micrometres) as {"z": .., "y": .., "x": ..}. */
void pp_json_write_zyx(FILE *f, const double v[3]);

/* Writes the outputs of the finished run r (pp_sampler_result, or a
 * pp_result filled by hand) into dir; frame is the input frame or volume
 * the run sampled (the report shows it; NULL: not shown). */
pp_status pp_output_write(const char *dir, const pp_result *r, const pp_image *frame,
                          const pp_run_info *info);

/* The marker of a folder pixpost wrote: a small text file whose first line
 * is PP_OUTPUT_MARKER_LINE, then what wrote it. Its presence tells a later
 * run (the command line's output-folder rule) that the files there are
 * pixpost's to replace; a user's folder does not have it. */
#define PP_OUTPUT_MARKER ".pixpost-output"
#define PP_OUTPUT_MARKER_LINE "pixpost output folder"

/* Writes dir/PP_OUTPUT_MARKER atomically (replacing an earlier one); writer
 * says what wrote the folder, e.g. a command line (NULL: not recorded).
 * pp_output_write() calls it before writing any output, so a folder holding
 * any file of a run, even an interrupted write, holds the marker. */
pp_status pp_output_mark(const char *dir, const char *writer);

/* 1 if dir/PP_OUTPUT_MARKER is a regular file whose first line is
 * PP_OUTPUT_MARKER_LINE; 0 otherwise (missing, unreadable, or a file of
 * that name with other content). Only reads. */
int pp_output_is_marked(const char *dir);

#endif
