/* pixpost — camera calibrations as JSON: the file `pixpost calibrate -o`
 * writes and the "noise_estimate" object of summary.json (contract in
 * src/pixpost/calib.h). Numbers with 10 significant digits; a value
 * that is not finite is null. Cost: a few hundred bytes of text. */
#include "internal.h"
#include "pixpost/calib.h"
#include "pixpost/output.h"
#include "pixpost/output_extra.h"
#include <math.h>

/* ",\n<indent>\"key\": value" */
static void key_num(FILE *f, int indent, const char *key, double v)
{
    fprintf(f, ",\n%*s\"%s\": ", indent, "", key);
    pp_json_write_number(f, v);
}

static void ci95(FILE *f, int indent, const char *key, double v, double se)
{
    fprintf(f, ",\n%*s\"%s\": [", indent, "", key);
    pp_json_write_number(f, v - 1.959963984540054 * se); /* normal 97.5 % point */
    fputs(", ", f);
    pp_json_write_number(f, v + 1.959963984540054 * se);
    fputc(']', f);
}

void pp_noise_fit_json(FILE *f, const pp_noise_fit *fit, const pp_noise_spec *chosen, int indent)
{
    int in = indent;
    fprintf(f,
            "{\n%*s\"method\": \"single-frame Poisson-Gaussian fit (Foi, Trimeche, "
            "Katkovnik & Egiazarian, IEEE TIP 2008): var = a * mean + b over smooth "
            "2x2 blocks\"",
            in, "");
    key_num(f, in, "a", fit->a);
    key_num(f, in, "a_se", fit->a_se);
    ci95(f, in, "a_ci95", fit->a, fit->a_se);
    key_num(f, in, "b", fit->b);
    key_num(f, in, "b_se", fit->b_se);
    key_num(f, in, "cov_ab", fit->cov_ab);
    key_num(f, in, "chi2_red", fit->chi2_red);
    key_num(f, in, "zero_level", fit->zero_level);
    key_num(f, in, "zero_level_se", fit->zero_level_se);
    key_num(f, in, "darkest_level", fit->darkest);
    fprintf(f, ",\n%*s\"gain_determined\": %s", in, "", fit->gain_determined ? "true" : "false");
    fprintf(f, ",\n%*s\"blocks\": %zu,\n%*s\"smooth_blocks\": %zu", in, "", fit->blocks, in, "",
            fit->smooth);
    fprintf(f, ",\n%*s\"levels\": [", in, "");
    for (size_t s = 0; s < fit->nlevels; s++) {
        fprintf(f, "%s{\"mean\": ", s ? ", " : "");
        pp_json_write_number(f, fit->level_mean[s]);
        fputs(", \"var\": ", f);
        pp_json_write_number(f, fit->level_var[s]);
        fputs(", \"var_se\": ", f);
        pp_json_write_number(f, fit->level_var_se[s]);
        fprintf(f, ", \"n\": %zu}", fit->level_n[s]);
    }
    fputc(']', f);
    if (chosen) {
        char spec[256];
        pp_noise_format(chosen, spec, sizeof spec);
        fprintf(f, ",\n%*s\"chosen\": ", in, "");
        pp_json_write_string(f, spec);
        fprintf(f, ",\n%*s\"choice\": ", in, "");
        pp_json_write_string(
            f, chosen->kind == PP_NOISE_CAMERA
                   ? "gain = a; offset = the darkest smooth level set's mean (not below the "
                     "zero-signal level -b/a): one frame cannot separate offset and read "
                     "noise; read noise = sqrt(a * offset + b) / a, so the fitted variance is "
                     "kept at every level"
                   : "no significant signal-dependent noise (a < 3 standard errors): gaussian "
                     "noise with its variance sampled");
    }
    fprintf(f, "\n%*s}", in > 2 ? in - 2 : 0, "");
}

static void series_json(FILE *f, const pp_series_stats *s, double exposure, double residual)
{
    fprintf(f, "{\"frames\": %zu, \"pixels\": %zu, \"saturated\": %zu, \"mean\": ", s->frames,
            s->pixels, s->saturated);
    pp_json_write_number(f, s->mean);
    fputs(", \"temporal_var\": ", f);
    pp_json_write_number(f, s->temporal_var);
    fputs(", \"temporal_var_se\": ", f);
    pp_json_write_number(f, s->temporal_var_se);
    fputs(", \"spatial_var\": ", f);
    pp_json_write_number(f, s->spatial_var);
    if (!isnan(exposure) || !isnan(residual)) {
        fputs(", \"exposure\": ", f);
        pp_json_write_number(f, exposure);
        fputs(", \"relative_residual\": ", f);
        pp_json_write_number(f, residual);
    }
    fputc('}', f);
}

static void ptc_json(FILE *f, const pp_ptc_result *r)
{
    const int in = 4;
    fputs("{\n    \"method\": \"EMVA 1288 photon transfer (release 3.1): temporal variance "
          "against mean signal above the darks, weighted least squares with the darks as "
          "a point\"",
          f);
    key_num(f, in, "offset", r->offset);
    key_num(f, in, "offset_se", r->offset_se);
    key_num(f, in, "gain", r->gain);
    key_num(f, in, "gain_se", r->gain_se);
    ci95(f, in, "gain_ci95", r->gain, r->gain_se);
    key_num(f, in, "e_per_adu", 1 / r->gain);
    key_num(f, in, "read_noise_e", r->read);
    key_num(f, in, "read_noise_e_se", r->read_se);
    key_num(f, in, "read_noise_e_emva", r->read_emva);
    fputs(",\n    \"quantisation\": \"read_noise_e includes the 1/12 ADU^2 of rounding to "
          "integers (the camera model has no other place for it); read_noise_e_emva is "
          "EMVA 1288's sigma_d, with it removed\"",
          f);
    key_num(f, in, "dark_temporal_var", r->dark.temporal_var);
    key_num(f, in, "dark_fixed_pattern_e", r->dsnu);
    key_num(f, in, "intercept", r->intercept);
    key_num(f, in, "intercept_se", r->intercept_se);
    key_num(f, in, "chi2_red", r->chi2_red);
    key_num(f, in, "linearity_error_percent", r->linearity_error);
    fputs(",\n    \"linearity_basis\": ", f);
    pp_json_write_string(f, r->linearity_from_exposure
                                ? "mean signal against exposure (EMVA 1288 linearity error)"
                                : "relative residuals of the variance fit (no exposures given)");
    fputs(",\n    \"darks\": ", f);
    series_json(f, &r->dark, NAN, NAN);
    fputs(",\n    \"levels\": [", f);
    for (size_t i = 0; i < r->nlevels; i++) {
        fputs(i ? ",\n      " : "\n      ", f);
        series_json(f, &r->level[i], r->exposure[i], r->residual[i]);
    }
    fputs("]\n  }", f);
}

pp_status pp_calib_write_json(const char *path, const pp_ptc_result *ptc, const pp_noise_fit *fit,
                              const pp_noise_spec *spec)
{
    char tmp[PP_PATH_MAX], text[256];
    FILE *f;
    pp_status st = pp_atomic_open(path, tmp, &f);
    if (st != PP_OK)
        return st;
    pp_noise_format(spec, text, sizeof text);
    fputs("{\n  \"pixpost_calibration\": 1,\n  \"noise\": ", f);
    pp_json_write_string(f, text);
    if (ptc) {
        fputs(",\n  \"photon_transfer\": ", f);
        ptc_json(f, ptc);
    } else {
        fputs(",\n  \"single_frame\": ", f);
        pp_noise_fit_json(f, fit, spec, 4);
    }
    fputs("\n}\n", f);
    return pp_atomic_commit(path, tmp, f);
}
