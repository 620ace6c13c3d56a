/* pixpost — report.html for a finished run: gathers the run's images,
 * traces, diagnostics, settings, verdict and warnings into the plain-data input of
 * pp_report_write (src/report.c). Cost: formatting a dozen strings. */
#include <stdio.h>
#include <stdlib.h>
#include "internal.h"
#include "output_internal.h"
#include "pixpost/diag.h"
#include "pixpost/datacheck.h"
#include "pixpost/output.h"
#include "pixpost/ppcheck.h"
#include "pixpost/report.h"
#include "pixpost/setting.h"
#include "pixpost/sampler_extra.h"

enum { NSET = 13, NSET_MAX = 15 };

pp_status pp_output_report(const char *path, const pp_result *r, const pp_image *frame,
                           const pp_run_info *info)
{
    const pp_sampler_config *c = &r->config;
    static const char *const keys[NSET_MAX] = {
        "input", "sampler", "chains", "burn-in / iterations / thin", "seed", "boundary",
        "grid", "PSF", "noise", "prior", "hyperpriors Gamma(shape, rate)", "bounds",
        "unobserved pixels", "noise estimate", "voxel size (z, y, x)"};
    const char *key[NSET_MAX];
    for (size_t i = 0; i < NSET_MAX; i++)
        key[i] = keys[i];
    char val[NSET_MAX][600];
    size_t nset = NSET;
    if (info && info->noise_note) /* --noise auto: what was estimated and chosen */
        snprintf(val[nset++], sizeof val[0], "%s", info->noise_note);
    const double *vx = c->voxel;
    int volume = r->frame.rank == 3;
    if (volume) { /* a volume: its voxel size, as the run used it */
        key[nset] = keys[NSET_MAX - 1];
        if (vx[0] > 0 && vx[1] > 0 && vx[2] > 0)
            snprintf(val[nset++], sizeof val[0], "%g, %g, %g \xc2\xb5m", vx[0], vx[1], vx[2]);
        else
            snprintf(val[nset++], sizeof val[0], "not known (cubic voxels assumed)");
    }
    snprintf(val[0], sizeof val[0], "%s", info && info->input_path ? info->input_path : "-");
    snprintf(val[1], sizeof val[1], "%s", pp_sampler_kind_name(c->kind));
    snprintf(val[2], sizeof val[2], "%u (kept %zu draws each)", c->chains, r->trace.kept);
    const pp_run_length *L = &r->length; /* the lengths used (--iters auto chooses them) */
    /* automatic lengths by the caller's name of the setting ("--iters auto"),
     * when it gave names (include/pixpost/setting.h) */
    char how[64];
    if (!L->iters_auto)
        snprintf(how, sizeof how, "fixed");
    else if (c->setting_names && c->setting_names[PP_SET_ITERS])
        snprintf(how, sizeof how, "%s auto", c->setting_names[PP_SET_ITERS]);
    else
        snprintf(how, sizeof how, "automatic");
    snprintf(val[3], sizeof val[3], "%lu / %lu / %lu (%s: %s)", L->burn, L->iters, c->thin, how,
             pp_stop_reason_name(L->stop));
    snprintf(val[4], sizeof val[4], "%llu", (unsigned long long)c->seed);
    snprintf(val[5], sizeof val[5], "%s", pp_boundary_name(c->boundary));
    if (volume) /* x, y, z as the frames' width x height */
        snprintf(val[6], sizeof val[6], "%zu x %zu x %zu (volume %zu x %zu x %zu)", r->grid.n[2],
                 r->grid.n[1], r->grid.n[0], r->frame.n[2], r->frame.n[1], r->frame.n[0]);
    else
        snprintf(val[6], sizeof val[6], "%zu x %zu (frame %zu x %zu)", r->grid.n[1],
                 r->grid.n[0], r->frame.n[1], r->frame.n[0]);
    snprintf(val[7], sizeof val[7], "%s", info && info->psf_spec ? info->psf_spec : "-");
    pp_noise_format(&c->noise, val[8], sizeof val[8]);
    pp_prior_format(&c->prior, val[9], sizeof val[9]);
    snprintf(val[10], sizeof val[10], "lambda (%g, %g), delta (%g, %g)", c->hyper_lambda[0],
             c->hyper_lambda[1], c->hyper_delta[0], c->hyper_delta[1]);
    snprintf(val[11], sizeof val[11], "%g %% central; %s", 100 * c->level, r->bound_method);
    size_t nobs = r->observed, nmiss = r->unobserved;
    snprintf(val[12], sizeof val[12],
             "%zu of %zu (masked %zu, saturated %zu); estimated there from their neighbours "
             "(wider bounds)",
             nmiss, nobs + nmiss, info ? info->masked : 0, info ? info->saturated : 0);
    const char *vals[NSET_MAX];
    for (size_t i = 0; i < nset; i++)
        vals[i] = val[i];

    pp_report_scalar *rows = calloc(r->trace.ncols, sizeof *rows);
    if (!rows)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the report");
    for (size_t j = 0; j < r->trace.ncols; j++) {
        const pp_diag_scalar *d = &r->diag[j];
        rows[j] = (pp_report_scalar){r->trace.names[j], d->mean, d->sd, d->rhat,
                                     d->ess_bulk, d->ess_tail, d->mcse_mean};
    }
    pp_report_input in;
    pp_report_input_init(&in);
    in.title = info && info->input_path ? info->input_path : NULL;
    in.frame = frame;
    in.mean = r->mean;
    in.sd = r->sd;
    in.lo = r->lo;
    in.hi = r->hi;
    /* a frame's pixel for the scale bar: the run's (--voxel, the file's
     * metadata), else the PSF's pixel= (airy, widefield); 0: no bar */
    double px[3] = {0, 0, vx[2] > 0 ? vx[2] : c->psf.pixel > 0 ? c->psf.pixel : 0.0};
    in.voxel = volume ? vx : px;
    in.trace = &r->trace;
    in.lambda_fixed = c->noise.kind != PP_NOISE_GAUSSIAN || c->noise.sigma_set;
    in.delta_fixed = c->prior.delta_set;
    in.scalars = rows;
    in.nscalars = r->trace.ncols;
    in.chains = c->chains;
    in.setting_names = c->setting_names;
    in.regions = info ? info->regions : NULL;
    in.settings_keys = key;
    in.settings_values = vals;
    in.nsettings = nset;
    in.warnings = r->warnings;
    in.nwarnings = r->nwarnings;
    in.warning_parts = r->warning_part;
    char verdict[PP_VERDICT_MAX];
    pp_convergence_verdict(&r->convergence, verdict, sizeof verdict);
    in.convergence = &r->convergence;
    in.verdict = verdict;
    in.notes = r->notes;
    in.nnotes = r->nnotes;
    in.level = c->level;
    /* Photon models: the frame is in ADU, x (mean, sd, bounds) in photons
     * per pixel, the intensity whose blur plus background is the expected
     * count. */
    int photons = c->noise.kind != PP_NOISE_GAUSSIAN;
    in.units = photons ? "photons per pixel" : "input units";
    in.frame_units = photons ? "camera units (ADU)" : "input units";
    if (c->prior.kind == PP_PRIOR_ADAPTIVE)
        in.sd_caption = "the spread of each pixel's posterior under the adaptive prior: it is "
                        "larger where the data leave the image freer (edges, spots, detail the "
                        "blur removed) and follows the actual error better than a stationary "
                        "prior's, but it is still model-based. On real test images it was "
                        "conservative on flat areas (errors there about half the sd; README, "
                        "\"Which prior\"). Squares of the prior's block size (8 px by default) "
                        "are the prior's blocks, not features of the specimen.";
    else if (!photons)
        in.sd_caption = "under a stationary prior and Gaussian noise the posterior sd does not "
                        "depend on the data: it is nearly the same everywhere (apart from the "
                        "frame's edges with padding), a frame-wide scale rather than a map of "
                        "where the estimate is unsure.";
    /* the checks of the data and the fit: their warnings, in that order */
    const char *checks[PP_DATACHECK_MAX + PP_PPCHECK_MAX_WARNINGS];
    char summary[400];
    const pp_datacheck *dc = info ? info->data_checks : NULL;
    const pp_ppcheck *pc = info ? info->predictive : NULL;
    for (size_t i = 0; dc && i < dc->count; i++)
        checks[in.nchecks++] = dc->finding[i].text;
    for (size_t i = 0; pc && i < pc->nwarnings; i++)
        checks[in.nchecks++] = pc->warning[i];
    in.checks = checks;
    if (pc) {
        in.residual = pc->residual;
        snprintf(summary, sizeof summary,
                 "Predictive check (%s) over %zu pixels: standardised residuals' mean %.3f "
                 "(0 expected), variance %.3f (1), beyond +-3 sd %.2f %% (0.27 %%), lag-1 "
                 "correlation %.3f along rows and %.3f down columns, power in the PSF's band "
                 "%.2fx white noise's, correlation with the fit's curvature %.3f.",
                 pp_ppcheck_verdict(pc), pc->used, pc->mean, pc->var, 100 * pc->beyond3,
                 pc->lag1_row, pc->lag1_col, pc->band_ratio, pc->curvature);
        in.checks_summary = summary;
    }
    pp_status st = pp_report_write(path, &in);
    free(rows);
    return st;
}
