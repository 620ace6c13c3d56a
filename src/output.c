/* pixpost — a run's outputs: images, summary.json, trace.csv. Every file is
 * written to a temporary name in the folder and renamed into place.
 * Cost: one pass over each image, one sort of each hyperparameter trace. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include "display.h"
#include "internal.h"
#include "output_internal.h"
#include "stats.h"
#include "pixpost/calib.h"
#include "pixpost/datacheck.h"
#include "pixpost/diag.h"
#include "pixpost/io.h"
#include "pixpost/ppcheck.h"
#include "pixpost/output.h"
#include "pixpost/psf.h"
#include "pixpost/result.h"
#include "pixpost/saturation.h"
#include "pixpost/stack.h"
#include "pixpost/io_extra.h"
#include "pixpost/output_extra.h"
#include "pixpost/sampler_extra.h"
#include "pixpost/saturation_extra.h"
#include "pixpost/shape_extra.h"

/* "run_length": what pp_sampler_run did about its length (sampler.h). */
static void json_run_length(FILE *f, const pp_result *r)
{
    const pp_run_length *L = &r->length;
    fprintf(f,
            "  \"run_length\": {\"mode\": \"%s\", \"stop\": \"%s\", \"burn\": %lu, "
            "\"iters\": %lu, \"kept_per_chain\": %zu, \"rounds\": %u, "
            "\"burn_extensions\": %u, \"max_seconds\": ",
            L->iters_auto ? "auto" : "fixed", pp_stop_reason_name(L->stop), L->burn, L->iters,
            L->kept, L->rounds, L->burn_extensions);
    pp_json_write_number(f, L->iters_auto ? L->max_seconds : NAN);
    fprintf(f, ", \"max_iters\": %lu, \"failed\": ", L->max_iters);
    pp_json_write_string(f, L->failed);
    fprintf(f, ", \"iters_needed\": %lu},\n", L->iters_needed);
}

/* Diagnostics of one trace column: R-hat, ESS, MCSE, ESS per second. */
static void json_diag(FILE *f, const pp_diag_scalar *d, double seconds)
{
    fputs("\"rhat\": ", f);
    pp_json_write_number(f, d->rhat);
    fputs(", \"ess_bulk\": ", f);
    pp_json_write_number(f, d->ess_bulk);
    fputs(", \"ess_tail\": ", f);
    pp_json_write_number(f, d->ess_tail);
    fputs(", \"mcse\": ", f);
    pp_json_write_number(f, d->mcse_mean);
    fputs(", \"ess_bulk_per_second\": ", f);
    pp_json_write_number(f, seconds > 0 ? d->ess_bulk / seconds : NAN);
}

/* Pooled posterior summary of one trace column, with its diagnostics. */
static pp_status json_hyper(FILE *f, const char *name, const pp_result *r, size_t col, int fixed)
{
    const pp_trace *t = &r->trace;
    size_t n = (size_t)t->chains * t->kept;
    double *v = malloc(n * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    double sum = 0, ss = 0;
    for (size_t i = 0; i < n; i++) {
        v[i] = t->values[i * t->ncols + col];
        sum += v[i];
    }
    double mean = sum / (double)n;
    for (size_t i = 0; i < n; i++)
        ss += (v[i] - mean) * (v[i] - mean);
    pp_sort_doubles(v, n);
    fprintf(f, "    \"%s\": {\"mean\": ", name);
    pp_json_write_number(f, mean);
    fputs(", \"sd\": ", f);
    pp_json_write_number(f, n > 1 ? sqrt(ss / (double)(n - 1)) : 0.0);
    fputs(", \"q05\": ", f);
    pp_json_write_number(f, pp_quantile_sorted(v, n, 0.05));
    fputs(", \"q95\": ", f);
    pp_json_write_number(f, pp_quantile_sorted(v, n, 0.95));
    fprintf(f, ", \"fixed\": %s, ", fixed ? "true" : "false");
    json_diag(f, &r->diag[col], r->seconds);
    fputc('}', f);
    free(v);
    return PP_OK;
}

/* 50th/99th percentile and maximum of the finite values of a map. */
static pp_status json_map_percentiles(FILE *f, const char *name, const pp_image *m)
{
    size_t n = pp_image_count(m), k = 0;
    double *v = malloc(n * sizeof *v);
    if (!v)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the percentiles of the %s map", name);
    for (size_t i = 0; i < n; i++)
        if (isfinite(m->data[i]))
            v[k++] = m->data[i];
    fprintf(f, "\"%s\": {\"p50\": ", name);
    if (k) {
        pp_sort_doubles(v, k);
        pp_json_write_number(f, pp_quantile_sorted(v, k, 0.5));
        fputs(", \"p99\": ", f);
        pp_json_write_number(f, pp_quantile_sorted(v, k, 0.99));
        fputs(", \"max\": ", f);
        pp_json_write_number(f, v[k - 1]);
    } else {
        fputs("null, \"p99\": null, \"max\": null", f);
    }
    fprintf(f, ", \"nonfinite\": %zu}", n - k);
    free(v);
    return PP_OK;
}

/* The diagnostics block: every trace column, the pixel maps, thresholds. */
static pp_status json_diagnostics(FILE *f, const pp_result *r)
{
    pp_status st = PP_OK;
    const pp_trace *t = &r->trace;
    fputs("  \"diagnostics\": {\n    \"method\": \"rank-normalised split-R-hat, bulk- and "
          "tail-ESS (Vehtari et al. 2021); MCSE = sd/sqrt(ESS)\",\n"
          "    \"thresholds\": {\"rhat\": 1.01, \"ess_per_chain\": 100},\n"
          "    \"scalars\": {",
          f);
    for (size_t j = 0; j < t->ncols; j++) {
        fprintf(f, "%s\n      \"%s\": {\"mean\": ", j ? "," : "", t->names[j]);
        pp_json_write_number(f, r->diag[j].mean);
        fputs(", \"sd\": ", f);
        pp_json_write_number(f, r->diag[j].sd);
        fputs(", ", f);
        json_diag(f, &r->diag[j], r->seconds);
        fputc('}', f);
    }
    fputs("\n    },\n    \"pixel_maps\": ", f);
    if (r->rhat_map) {
        fputs("{", f);
        if ((st = json_map_percentiles(f, "rhat", r->rhat_map)) != PP_OK)
            return st;
        fputs(", ", f);
        if ((st = json_map_percentiles(f, "mcse", r->mcse_map)) != PP_OK)
            return st;
        fputs(", \"method\": \"classic split-R-hat of the draws (Rao-Blackwellised where "
              "the sampler has a conditional mean) and batch-means MCSE of the posterior-mean "
              "estimate, over the 2 x chains half-chains\"}",
              f);
    } else {
        fputs("null", f);
    }
    fputs("\n  },\n", f);
    return st;
}

/* Per-chain acceptance rate (after burn-in) and step of the sampler's
 * Metropolis move: pcn/gpcn's field move and its beta; mtc's (lambda,
 * delta) move and its proposal scale (in log units). */
static void json_chain_moves(FILE *f, const pp_result *r)
{
    fputs("  \"chain_moves\": [", f);
    for (unsigned k = 0; k < r->config.chains; k++) {
        fputs(k ? ", " : "", f);
        fputs("{\"acceptance\": ", f);
        pp_json_write_number(f, r->chain[k].acceptance);
        fputs(", \"step\": ", f);
        pp_json_write_number(f, r->chain[k].step);
        fputc('}', f);
    }
    fputs("],\n", f);
}

/* pcn/gpcn/hmc: the likelihood, positivity, background, the field move and
 * per chain its acceptance and step (adapted in burn-in only). */
static void json_pcn(FILE *f, const pp_result *r)
{
    const pp_sampler_config *c = &r->config;
    const char *move =
        c->kind == PP_SAMPLER_PCN
            ? "pCN on the prior (step = beta)"
        : c->kind == PP_SAMPLER_GPCN
            ? "gpCN on a Fourier-diagonal Gaussian approximation (step = beta)"
            : "split HMC: the Fourier-diagonal Gaussian approximation integrated exactly, "
              "the rest by leapfrog kicks; step = eps, round(pi/(2 eps)) steps per trajectory, "
              "eps jittered by 20 %";
    fputs("  \"field_move\": ", f);
    pp_json_write_string(f, move);
    fputs(",\n  \"likelihood\": ", f);
    pp_json_write_string(f, r->likelihood);
    fprintf(f, ",\n  \"positivity\": \"%s\",\n  \"background\": ",
            c->positivity == PP_POSITIVITY_LOG ? "log" : "none");
    pp_json_write_number(f, c->background);
    fputs(",\n", f);
    json_chain_moves(f, r);
}

/* mtc with periodic boundaries: which (lambda, delta) move ran, then its
 * per-chain acceptance and proposal scale. */
static void json_mtc(FILE *f, const pp_result *r)
{
    const pp_sampler_config *c = &r->config;
    const char *move = "random-walk Metropolis on the free log-precision (step = its sd, "
                       "adapted in burn-in only)";
    if (c->noise.sigma_set && c->prior.delta_set)
        move = "none (lambda and delta fixed)";
    else if (!c->noise.sigma_set && !c->prior.delta_set)
        move = "independence Metropolis on log(lambda/delta) from its marginal (Student-t "
               "proposal at the Laplace approximation; step = its scale), then lambda | "
               "lambda/delta exact (Gamma)";
    fputs("  \"hyper_move\": ", f);
    pp_json_write_string(f, move);
    fputs(",\n", f);
    json_chain_moves(f, r);
}

/* The adaptive prior (gibbs): the x-draws' inner solver over all chains
 * and the block moves' acceptance per chain. */
static void json_adaptive(FILE *f, const pp_result *r)
{
    const pp_solver_stats ss = r->solver;
    fputs("  \"x_solver\": {\"method\": \"reversible-jump perturbation-optimisation (exact: "
          "Metropolis-Hastings on a truncated solve), conjugate gradients with a Fourier "
          "preconditioner scaled by the weights\", \"draws\": ",
          f);
    fprintf(f, "%llu, \"acceptance\": ", ss.draws);
    pp_json_write_number(f, ss.draws ? (double)ss.accepted / (double)ss.draws : NAN);
    fputs(", \"cg_iterations_mean\": ", f);
    pp_json_write_number(f, ss.draws ? (double)ss.iterations / (double)ss.draws : NAN);
    fprintf(f, ", \"cg_iterations_max\": %zu, \"capped_after_burn_in\": %llu, \"converged_solve_draws\": %llu},\n",
            ss.most, ss.capped, ss.fallback);
    json_chain_moves(f, r); /* acceptance of the block log-precision moves */
}

/* The run's headline figures (pp_sampler_convergence), under one key that
 * batch reads back exactly when it resumes (its first four keys, in this
 * order), then the two parts, the iterations to ask for (null when none),
 * the part that failed (pp_convergence_failed; null when converged) and
 * the verdict sentence (pp_convergence_verdict). */
static void json_convergence(FILE *f, const pp_result *r)
{
    const pp_convergence cv = r->convergence;
    char verdict[PP_VERDICT_MAX];
    pp_convergence_verdict(&cv, verdict, sizeof verdict);
    fputs("  \"convergence\": {\"rhat_max\": ", f);
    pp_json_write_number(f, cv.rhat_max);
    fputs(", \"ess_bulk_min\": ", f);
    pp_json_write_number(f, cv.ess_bulk_min);
    fprintf(f, ", \"warnings\": %zu, \"converged\": %s,\n", cv.warnings,
            cv.converged ? "true" : "false");
    fprintf(f, "    \"hyperparameters\": {\"converged\": %s, \"warnings\": %zu, \"failing\": [",
            cv.hyper_converged ? "true" : "false", cv.hyper_warnings);
    /* hyper_failing is "name, name" (trace column names: no quotes or commas) */
    for (const char *p = cv.hyper_failing; *p;) {
        size_t n = strcspn(p, ",");
        fprintf(f, "%s\"%.*s\"", p == cv.hyper_failing ? "" : ", ", (int)n, p);
        p += n;
        p += strspn(p, ", ");
    }
    fprintf(f, "]},\n    \"pixels\": {\"converged\": %s, \"warnings\": %zu},\n",
            cv.pixels_converged ? "true" : "false", cv.pixel_warnings);
    if (cv.iters_suggested)
        fprintf(f, "    \"iters_suggested\": %lu,\n", cv.iters_suggested);
    else
        fputs("    \"iters_suggested\": null,\n", f);
    fputs("    \"failed\": ", f);
    if (cv.converged)
        fputs("null,\n", f);
    else
        fprintf(f, "\"%s\",\n", pp_convergence_failed(&cv));
    fputs("    \"verdict\": ", f);
    pp_json_write_string(f, verdict);
    fputs("},\n", f);
}

/* "  \"key\": [\"...\", ...]" (no trailing comma or newline). */
static void json_sentences(FILE *f, const char *key, const char *const *list, size_t n)
{
    fprintf(f, "  \"%s\": [", key);
    for (size_t i = 0; i < n; i++) {
        fputs(i ? ", " : "", f);
        pp_json_write_string(f, list[i]);
    }
    fputc(']', f);
}

/* "data_checks": the findings before sampling and their figures
 * (src/pixpost/datacheck.h); null when not made. */
static void json_data_checks(FILE *f, const pp_datacheck *d)
{
    fputs("  \"data_checks\": ", f);
    if (!d) {
        fputs("null", f);
        return;
    }
    fprintf(f, "{\"errors\": %zu, \"warnings\": %zu, \"observed_pixels\": %zu, ", d->errors,
            d->warnings, d->observed);
    static const char *const keys[] = {"dark_sd_adu", "share_below_offset", "share_impossible",
                                       "q001", "q01", "offset_suggested"};
    const double vals[] = {d->dark_sd, d->share_below_offset, d->share_impossible,
                           d->q001, d->q01, d->offset_suggested};
    for (size_t i = 0; i < sizeof vals / sizeof vals[0]; i++) {
        fprintf(f, "\"%s\": ", keys[i]);
        pp_json_write_number(f, vals[i]);
        fputs(", ", f);
    }
    fputs("\"findings\": [", f);
    for (size_t i = 0; i < d->count; i++) {
        fprintf(f, "%s{\"check\": \"%s\", \"severity\": \"%s\", \"text\": ", i ? ", " : "",
                d->finding[i].check,
                d->finding[i].severity == PP_CHECK_ERROR ? "error" : "warning");
        pp_json_write_string(f, d->finding[i].text);
        fputc('}', f);
    }
    fputs("]}", f);
}

/* "predictive": the posterior predictive check's figures, thresholds,
 * verdict and warnings (src/pixpost/ppcheck.h); null when not made. */
static void json_predictive(FILE *f, const pp_ppcheck *p)
{
    fputs("  \"predictive\": ", f);
    if (!p) {
        fputs("null", f);
        return;
    }
    fprintf(f, "{\"pixels\": %zu, \"quantised\": %s, ", p->used,
            p->quantised ? "true" : "false");
    static const char *const keys[] = {"mean",           "var",
                                       "beyond3",        "lag1_row",
                                       "lag1_col",       "psf_band_power",
                                       "psf_band_white_share", "curvature_corr"};
    const double vals[] = {p->mean,     p->var,        p->beyond3,    p->lag1_row,
                           p->lag1_col, p->band_ratio, p->band_white, p->curvature};
    for (size_t i = 0; i < sizeof vals / sizeof vals[0]; i++) {
        fprintf(f, "\"%s\": ", keys[i]);
        pp_json_write_number(f, vals[i]);
        fputs(", ", f);
    }
    fprintf(f,
            "\"thresholds\": {\"var_high\": %g, \"var_low\": %g, \"mean\": %g, "
            "\"beyond3\": %g, \"lag1\": %g, \"psf_band_power\": %g, \"otf_band\": [%g, %g], "
            "\"curvature_corr\": %g, "
            "\"significance_sd\": 4}, \"verdict\": \"%s\", ",
            PP_PPCHECK_VAR_HI, PP_PPCHECK_VAR_LO, PP_PPCHECK_MEAN, PP_PPCHECK_BEYOND3,
            PP_PPCHECK_LAG1, PP_PPCHECK_BAND, PP_PPCHECK_OTF_LO, PP_PPCHECK_OTF_HI,
            PP_PPCHECK_CURV, pp_ppcheck_verdict(p));
    fputs("\"residual\": \"residual.tif: (y - E[y | mean]) / sqrt(Var[y | mean]), NaN where "
          "left out\", \"warnings\": [",
          f);
    for (size_t i = 0; i < p->nwarnings; i++) {
        fputs(i ? ", " : "", f);
        pp_json_write_string(f, p->warning[i]);
    }
    fputs("]}", f);
}

typedef struct png_scales {
    double mean_offset, mean_scale, sd_offset, sd_scale;
} png_scales;

/* The 16-bit PNG's offset and scale for img: its display range
 * (src/display.h, the report's grey scales: the robust range, or 0 to the
 * top percentile for a spread map such as the sd) onto 0..65535, clipped
 * beyond; offset 0, scale 1 when no pixel is finite. */
static pp_status png_scale(const pp_image *img, int spread, double *offset, double *scale)
{
    double lo, hi;
    pp_status st = spread ? pp_display_spread_range(img, &lo, &hi)
                          : pp_display_range(img, &lo, &hi);
    if (st == PP_ERR_NUMERIC) {
        lo = 0.0;
        hi = 65535.0;
        st = PP_OK;
    }
    /* divided first so that hi - lo cannot overflow for extreme values */
    double s = hi / 65535.0 - lo / 65535.0;
    *offset = lo;
    *scale = s > 0.0 && isfinite(s) ? s : 1.0;
    return st;
}

/* "missing_data": the frame's observed and unobserved (NaN) pixels, and
 * the caller's reasons for the latter (pixpost/saturation.h, --mask). */
static void json_missing(FILE *f, const pp_result *r, const pp_run_info *info)
{
    size_t obs = r->observed, miss = r->unobserved;
    fprintf(f, "  \"missing_data\": {\"observed\": %zu, \"unobserved\": %zu, \"masked\": %zu, "
               "\"saturated\": %zu, \"saturation_level\": ",
            obs, miss, info ? info->masked : 0, info ? info->saturated : 0);
    pp_json_write_number(f, info && info->saturated ? info->saturation_level : NAN);
    fputs(", \"saturation_rule\": ", f);
    pp_json_write_string(f, pp_sat_rule_name(info ? (pp_sat_rule)info->saturation_rule
                                                  : PP_SAT_NONE));
    if (info && info->saturated_as && (info->saturated || !strcmp(info->saturated_as, "data"))) {
        fputs(", \"saturated_as\": ", f);
        pp_json_write_string(f, info->saturated_as);
    }
    fputs("},\n", f);
}

static pp_status write_summary(const char *path, const pp_result *r, const pp_run_info *info,
                               const png_scales *ps)
{
    const pp_sampler_config *c = &r->config;
    char tmp[PP_PATH_MAX], noise[256], prior[256];
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK)
        return st;
    pp_noise_format(&c->noise, noise, sizeof noise);
    pp_prior_format(&c->prior, prior, sizeof prior);
    fprintf(f, "{\n  \"version\": \"%s\",\n  \"command\": ", PIXPOST_VERSION);
    pp_json_write_string(f, info ? info->command_line : NULL);
    fputs(",\n  \"input\": ", f);
    pp_json_write_string(f, info ? info->input_path : NULL);
    if (info && info->input_part) {
        fputs(",\n  \"input_part\": ", f);
        pp_json_write_string(f, info->input_part);
    }
    int volume = r->frame.rank == 3;
    double vox[3];
    for (int i = 0; i < 3; i++) /* a volume's voxel: the run's (0: not known, null) */
        vox[i] = r->config.voxel[i] > 0 ? r->config.voxel[i] : NAN;
    const double *voxel = volume ? vox : info ? info->voxel_um : NULL;
    if (voxel) {
        fputs(",\n  \"voxel_um\": ", f);
        pp_json_write_zyx(f, voxel);
    }
    const pp_shape *fs = &r->frame, *gs = &r->grid;
    fprintf(f, ",\n  \"frame\": {\"width\": %zu, \"height\": %zu", fs->n[fs->rank - 1],
            fs->n[fs->rank - 2]);
    if (volume)
        fprintf(f, ", \"depth\": %zu", fs->n[0]);
    fprintf(f, "},\n  \"grid\": {\"width\": %zu, \"height\": %zu", gs->n[gs->rank - 1],
            gs->n[gs->rank - 2]);
    if (volume)
        fprintf(f, ", \"depth\": %zu", gs->n[0]);
    fputs("},\n", f);
    static const char *const plans[] = {"estimated", "measured", "measured, from wisdom"};
    fputs("  \"fft_plans\": ", f);
    pp_json_write_string(f, info && info->fft_plans ? info->fft_plans
                                                    : plans[r->fft_plans]);
    fputs(",\n", f);
    /* x's units: those of the frame for gaussian noise; photons per pixel
     * (before gain and offset) for the photon models */
    fprintf(f, "  \"estimate_units\": \"%s\",\n",
            c->noise.kind == PP_NOISE_GAUSSIAN ? "input units" : "photons per pixel");
    fprintf(f,
            "  \"sampler\": \"%s\",\n  \"chains\": %u,\n  \"burn\": %lu,\n"
            "  \"iters\": %lu,\n  \"thin\": %lu,\n  \"seed\": %llu,\n"
            "  \"kept_per_chain\": %zu,\n  \"boundary\": \"%s\",\n",
            pp_sampler_kind_name(c->kind), c->chains, r->length.burn, r->length.iters, c->thin,
            (unsigned long long)c->seed, r->trace.kept, pp_boundary_name(c->boundary));
    json_run_length(f, r);
    if (r->pad_scheme) {
        fputs("  \"pad_scheme\": ", f); /* how mtc handled the padding */
        pp_json_write_string(f, r->pad_scheme);
        fputs(",\n", f);
    }
    json_missing(f, r, info);
    fputs("  \"psf\": ", f);
    pp_json_write_string(f, info ? info->psf_spec : NULL);
    fputs(",\n  \"noise\": ", f);
    pp_json_write_string(f, noise);
    if (info && info->noise_estimate) { /* --noise auto: the fit and the choice */
        fputs(",\n  \"noise_estimate\": ", f);
        pp_noise_fit_json(f, info->noise_estimate, info->noise_chosen, 4);
        fputs(",\n  \"noise_estimate_note\": ", f);
        pp_json_write_string(f, info->noise_note);
    }
    fputs(",\n  \"prior\": ", f);
    pp_json_write_string(f, prior);
    fprintf(f, ",\n  \"hyperprior\": {\"lambda\": [%.10g, %.10g], \"delta\": [%.10g, %.10g], "
               "\"form\": \"Gamma(shape, rate)\"},\n",
            c->hyper_lambda[0], c->hyper_lambda[1], c->hyper_delta[0], c->hyper_delta[1]);
    fputs("  \"hyper\": {\n", f);
    st = json_hyper(f, "lambda", r, PP_COL_LAMBDA, c->noise.sigma_set);
    fputs(",\n", f);
    if (st == PP_OK)
        st = json_hyper(f, "delta", r, PP_COL_DELTA, c->prior.delta_set);
    if (st == PP_OK && r->col_width >= 0) { /* sampled PSF width (sigma or NA) */
        fputs(",\n", f);
        st = json_hyper(f, "psf_width", r, (size_t)r->col_width, 0);
    }
    if (st == PP_OK && r->col_kappa >= 0) { /* the adaptive prior's block-field precision */
        fputs(",\n", f);
        st = json_hyper(f, "kappa", r, (size_t)r->col_kappa, 0);
    }
    if (st == PP_OK && r->col_level >= 0) { /* pcn family: the free level m of z = m + u */
        fputs(",\n", f);
        st = json_hyper(f, "level", r, (size_t)r->col_level, 0);
    }
    fprintf(f, "\n  },\n  \"bounds\": {\"level\": %.10g, \"method\": ", c->level);
    pp_json_write_string(f, r->bound_method);
    unsigned long long iters = (unsigned long long)c->chains * (r->length.burn + r->length.iters);
    fputs("},\n  \"timing\": {\"seconds_total\": ", f);
    pp_json_write_number(f, info ? info->seconds_total : r->seconds);
    fputs(", \"seconds_sampling\": ", f);
    pp_json_write_number(f, r->seconds);
    fputs(", \"seconds_per_iteration\": ", f);
    pp_json_write_number(f, r->seconds / (double)iters * (double)c->chains);
    fprintf(f, "},\n  \"png_scale\": {\"formula\": \"value = offset + stored * scale; "
               "range (0..65535) as each image's 'range' says, values beyond are clipped (the "
               "report's grey scales)\", "
               "\"mean\": {\"offset\": %.10g, \"scale\": %.10g, \"range\": \"the %gth to "
               "%gth percentiles\"}, "
               "\"sd\": {\"offset\": %.10g, \"scale\": %.10g, \"range\": \"0 to the %gth "
               "percentile, so grey is proportional to the sd\"}",
            ps->mean_offset, ps->mean_scale, PP_DISPLAY_LO, PP_DISPLAY_HI, ps->sd_offset,
            ps->sd_scale, PP_DISPLAY_HI);
    if (volume)
        fputs(", \"images\": \"mean_mip.png, sd_mip.png: maximum-intensity projections over "
              "z (the largest finite value of each (y, x) column of the volume)\"",
              f);
    fputs("},\n", f);
    if (c->kind == PP_SAMPLER_PCN || c->kind == PP_SAMPLER_GPCN || c->kind == PP_SAMPLER_HMC)
        json_pcn(f, r);
    if (c->kind == PP_SAMPLER_MTC && !r->pad_scheme)
        json_mtc(f, r);
    if (c->kind == PP_SAMPLER_GIBBS && c->prior.kind == PP_PRIOR_ADAPTIVE)
        json_adaptive(f, r);
    if (st == PP_OK)
        st = json_diagnostics(f, r);
    json_convergence(f, r);
    json_sentences(f, "notes", r->notes, r->nnotes);
    fputs(",\n", f);
    json_sentences(f, "warnings", r->warnings, r->nwarnings);
    fputs(",\n", f);
    json_data_checks(f, info ? info->data_checks : NULL);
    fputs(",\n", f);
    json_predictive(f, info ? info->predictive : NULL);
    fputs("\n}\n", f);
    if (st != PP_OK) {
        pp_atomic_abort(tmp, f);
        return st;
    }
    return pp_atomic_commit(path, tmp, f);
}

static pp_status write_trace(const char *path, const pp_result *r)
{
    const pp_trace *t = &r->trace;
    char tmp[PP_PATH_MAX];
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK)
        return st;
    fputs("chain,iter", f);
    for (size_t j = 0; j < t->ncols; j++)
        fprintf(f, ",%s", t->names[j]);
    fputc('\n', f);
    for (unsigned c = 0; c < t->chains; c++)
        for (size_t i = 0; i < t->kept; i++) {
            const double *row = t->values + ((size_t)c * t->kept + i) * t->ncols;
            fprintf(f, "%u,%lu", c + 1, (unsigned long)((i + 1) * r->config.thin));
            for (size_t j = 0; j < t->ncols; j++)
                fprintf(f, ",%.10g", row[j]);
            fputc('\n', f);
        }
    return pp_atomic_commit(path, tmp, f);
}

static pp_status join(char *buf, const char *dir, const char *name)
{
    int n = snprintf(buf, PP_PATH_MAX, "%s/%s", dir, name);
    if (n < 0 || n >= PP_PATH_MAX)
        return pp_fail(PP_ERR_ARG, "%s: output folder path too long", dir);
    return PP_OK;
}

/* The outputs of a run. Each is first written (itself atomically) under a
 * staged name ".<name>.part" in the folder; only when every one succeeded
 * are they renamed onto their final names, so a failed re-run (full disk,
 * say) leaves the earlier run's files complete and consistent. A frame
 * writes mean.png and sd.png, a volume their projections mean_mip.png and
 * sd_mip.png instead (and the other's are removed as stale). */
enum { OUT_MEAN, OUT_SD, OUT_LO, OUT_HI, OUT_RHAT, OUT_MCSE, OUT_MEAN_PNG, OUT_SD_PNG,
       OUT_TRACE, OUT_SUMMARY, OUT_REPORT, OUT_RESIDUAL, OUT_MEAN_MIP, OUT_SD_MIP, OUT_COUNT };
static const char *const out_names[OUT_COUNT] = {
    "mean.tif", "sd.tif", "lo.tif", "hi.tif", "rhat.tif", "mcse.tif", "mean.png", "sd.png",
    "trace.csv", "summary.json", "report.html", "residual.tif", "mean_mip.png", "sd_mip.png"};

/* A float TIFF of a map: one page for a frame; for a volume a multi-page
 * OME-TIFF, one page per z-slice, with the run's voxel size (where known)
 * and the map's name. */
static pp_status write_f32(const char *path, const pp_image *img, const pp_result *r,
                           const char *name)
{
    if (img->depth == 1)
        return pp_tiff_write_f32(path, img);
    pp_shape s = pp_image_shape(img);
    return pp_ome_tiff_write_f32(path, &s, img->data, r->config.voxel, name);
}

/* Output k to path; png: the images the PNGs show (mean and sd, or their
 * projections). */
static pp_status write_one(int k, const char *path, const pp_result *r, const pp_image *frame,
                           const pp_run_info *info, const png_scales *ps, const pp_image *png[2])
{
    const pp_image *tif[6] = {r->mean, r->sd, r->lo, r->hi, r->rhat_map, r->mcse_map};
    static const char *const tif_names[6] = {"mean", "sd", "lo", "hi", "rhat", "mcse"};
    if (k <= OUT_MCSE)
        return write_f32(path, tif[k], r, tif_names[k]);
    if (k == OUT_MEAN_PNG || k == OUT_MEAN_MIP)
        return pp_png_write16(path, png[0], ps->mean_offset, ps->mean_scale);
    if (k == OUT_SD_PNG || k == OUT_SD_MIP)
        return pp_png_write16(path, png[1], ps->sd_offset, ps->sd_scale);
    if (k == OUT_TRACE)
        return write_trace(path, r);
    if (k == OUT_SUMMARY)
        return write_summary(path, r, info, ps);
    if (k == OUT_RESIDUAL)
        return write_f32(path, info->predictive->residual, r, "residual");
    return pp_output_report(path, r, frame, info);
}

/* The maximum-intensity projection of a volume over z: per (y, x) the
 * largest finite value of the column, NaN when it has none. */
static pp_status project_max(const pp_image *v, pp_image **out)
{
    pp_status st = pp_image_create(v->height, v->width, out);
    if (st != PP_OK)
        return st;
    size_t n = v->height * v->width;
    double *m = (*out)->data;
    for (size_t i = 0; i < n; i++)
        m[i] = NAN;
    for (size_t z = 0; z < v->depth; z++)
        for (size_t i = 0; i < n; i++) {
            double x = v->data[z * n + i];
            if (isfinite(x) && !(x <= m[i])) /* also when m[i] is still NaN */
                m[i] = x;
        }
    return PP_OK;
}

/* Every map of r (and the input and the residual, when given) has the
 * frame's shape. */
static pp_status check_shapes(const pp_result *r, const pp_image *frame, const pp_run_info *info)
{
    const pp_image *im[8] = {r->mean, r->sd, r->lo, r->hi, r->rhat_map, r->mcse_map, frame,
                             info && info->predictive ? info->predictive->residual : NULL};
    static const char *const names[8] = {"mean", "sd", "lo", "hi", "rhat", "mcse", "input",
                                         "residual"};
    if (r->frame.rank != 2 && r->frame.rank != 3)
        return pp_fail(PP_ERR_ARG, "outputs: the result's frame has rank %d (a frame has 2, a "
                                   "volume 3)",
                       r->frame.rank);
    for (int i = 0; i < 8; i++) {
        if (!im[i] && (i >= 6 || (i >= 4 && !r->rhat_map))) /* optional, or no R-hat maps */
            continue;
        pp_shape s = im[i] ? pp_image_shape(im[i]) : pp_shape_2d(0, 0);
        if (!im[i] || !pp_shape_equal(&s, &r->frame))
            return pp_fail(PP_ERR_ARG,
                           "outputs: the %s map is missing or its shape differs from the "
                           "result's frame (%zu x %zu x %zu, z y x)",
                           names[i], r->frame.rank == 3 ? r->frame.n[0] : 1,
                           r->frame.n[r->frame.rank - 2], r->frame.n[r->frame.rank - 1]);
    }
    return PP_OK;
}

/* A writer's message names the staged file; say the final name instead. */
static pp_status name_final(pp_status st, const char *staged, const char *dir, const char *name)
{
    const char *m = pp_error_message(), *at = strstr(m, staged);
    char final[PP_PATH_MAX];
    if (!at || join(final, dir, name) != PP_OK)
        return st;
    /* pp_fail formats into its own buffer first, so m may be an argument */
    return pp_fail(st, "%.*s%s%s", (int)(at - m), m, final, at + strlen(staged));
}

pp_status pp_output_mark(const char *dir, const char *writer)
{
    char path[PP_PATH_MAX], tmp[PP_PATH_MAX];
    FILE *f;
    pp_status st = join(path, dir, PP_OUTPUT_MARKER);
    if (st == PP_OK)
        st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK)
        return st;
    fprintf(f, "%s\nwritten by pixpost %s: %s\n", PP_OUTPUT_MARKER_LINE, PIXPOST_VERSION,
            writer && writer[0] ? writer : "(not recorded)");
    /* Says what the pixpost command does with this folder (src/cli/outdir.c
     * reads the marker), whoever wrote it: so it names that command's flag. */
    fputs("pixpost writes into this folder again without --overwrite and replaces its own "
          "outputs here (mean.tif, summary.json, ...); other files are kept. Delete this "
          "file to make pixpost treat the folder as not its own.\n",
          f);
    return pp_atomic_commit(path, tmp, f);
}

int pp_output_is_marked(const char *dir)
{
    char path[PP_PATH_MAX], line[sizeof PP_OUTPUT_MARKER_LINE + 1] = "";
    struct stat sb;
    if (join(path, dir, PP_OUTPUT_MARKER) != PP_OK || stat(path, &sb) != 0 ||
        !S_ISREG(sb.st_mode))
        return 0;
    FILE *f = fopen(path, "rb");
    if (!f)
        return 0;
    size_t n = fread(line, 1, sizeof line - 1, f);
    fclose(f);
    line[n] = '\0';
    return strcmp(line, PP_OUTPUT_MARKER_LINE "\n") == 0;
}

pp_status pp_output_write(const char *dir, const pp_result *r, const pp_image *frame,
                          const pp_run_info *info)
{
    pp_status st = check_shapes(r, frame, info);
    if (st != PP_OK)
        return st;
    /* the marker first: any output of this run found later comes with it */
    pp_status mst = pp_output_mark(dir, info ? info->command_line : NULL);
    if (mst != PP_OK)
        return mst;
    int volume = r->frame.rank == 3;
    pp_image *mip[2] = {NULL, NULL}; /* a volume's PNGs: projections over z */
    if (volume && (st = project_max(r->mean, &mip[0])) == PP_OK)
        st = project_max(r->sd, &mip[1]);
    if (st != PP_OK) {
        pp_image_free(mip[0]);
        return st;
    }
    const pp_image *shown[2] = {volume ? mip[0] : r->mean, volume ? mip[1] : r->sd};
    png_scales ps;
    if (st == PP_OK)
        st = png_scale(shown[0], 0, &ps.mean_offset, &ps.mean_scale);
    if (st == PP_OK)
        st = png_scale(shown[1], 1, &ps.sd_offset, &ps.sd_scale);
    if (st != PP_OK) {
        pp_image_free(mip[0]);
        pp_image_free(mip[1]);
        return st;
    }
    char staged[OUT_COUNT][PP_PATH_MAX], path[PP_PATH_MAX], part[80];
    int made[OUT_COUNT] = {0};
    for (int k = 0; k < OUT_COUNT && st == PP_OK; k++) {
        if ((k == OUT_RHAT || k == OUT_MCSE) && !r->rhat_map)
            continue;
        if (k == OUT_RESIDUAL && !(info && info->predictive))
            continue;
        if ((volume && (k == OUT_MEAN_PNG || k == OUT_SD_PNG)) ||
            (!volume && (k == OUT_MEAN_MIP || k == OUT_SD_MIP)))
            continue;
        snprintf(part, sizeof part, ".%s.part", out_names[k]);
        if ((st = join(staged[k], dir, part)) == PP_OK &&
            (st = write_one(k, staged[k], r, frame, info, &ps, shown)) != PP_OK)
            st = name_final(st, staged[k], dir, out_names[k]);
        made[k] = st == PP_OK;
    }
    pp_image_free(mip[0]);
    pp_image_free(mip[1]);
    for (int k = 0; k < OUT_COUNT; k++) {
        if (st != PP_OK) {
            if (made[k])
                remove(staged[k]);
            continue;
        }
        pp_status js = join(path, dir, out_names[k]);
        if (js == PP_OK && made[k])
            st = pp_atomic_rename(staged[k], path);
        else if (js == PP_OK)
            remove(path); /* not produced by this run: no stale file from an earlier one */
        else
            st = js;
    }
    return st;
}
