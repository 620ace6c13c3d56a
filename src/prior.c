/* pixpost — GMRF prior specs and their Fourier-space eigenvalues.
 *
 * Cost: pp_prior_eigen is one pass over the H x (W/2+1) half spectrum with
 * two cosines per row/column precomputed (O(H + W) cos calls). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "pixpost/prior.h"
#include "pixpost/setting.h"
#include "pixpost/spec.h"
#include "pixpost/prior_extra.h"
#include "pixpost/setting_extra.h"

static pp_status common_keys(pp_spec *s, const char *what, pp_prior_spec *out, int allow_mean)
{
    pp_status st;
    out->delta_set = pp_spec_number(s, "delta", what, &out->delta, NULL, &st);
    if (st != PP_OK)
        return st;
    if (out->delta_set && !(out->delta > 0))
        return pp_fail(PP_ERR_ARG, "%s %s: delta must be > 0 (prior precision)", what, s->name);
    if (allow_mean) {
        out->mean_set = pp_spec_number(s, "mean", what, &out->mean, NULL, &st);
        if (st != PP_OK)
            return st;
    }
    return PP_OK;
}

pp_status pp_prior_parse(const char *text, const char *const *names, pp_prior_spec *out)
{
    const char *what = pp_setting_name(names, PP_SET_PRIOR);
    memset(out, 0, sizeof *out);
    pp_spec s;
    pp_status st = pp_spec_split(text, what, 0, &s);
    if (st != PP_OK)
        return st;
    if (strcmp(s.name, "gmrf1") == 0 || strcmp(s.name, "gmrf2") == 0) {
        static const char *const gmrf_keys[] = {"delta", NULL};
        out->kind = s.name[4] == '1' ? PP_PRIOR_GMRF1 : PP_PRIOR_GMRF2;
        if ((st = pp_spec_check_known(&s, what, gmrf_keys)) != PP_OK)
            return st;
        return common_keys(&s, what, out, 0);
    }
    if (strcmp(s.name, "matern") == 0) {
        static const char *const matern_keys[] = {"range", "nu", "mean", "delta", NULL};
        out->kind = PP_PRIOR_MATERN;
        out->range = 6.0;
        out->nu = 1.0;
        if ((st = pp_spec_check_known(&s, what, matern_keys)) != PP_OK)
            return st;
        if (pp_spec_number(&s, "range", what, &out->range, NULL, &st), st != PP_OK)
            return st;
        if (pp_spec_number(&s, "nu", what, &out->nu, NULL, &st), st != PP_OK)
            return st;
        if ((st = common_keys(&s, what, out, 1)) != PP_OK)
            return st;
        if (!(out->range > 0))
            return pp_fail(PP_ERR_ARG, "%s matern: range must be > 0 (pixels)", what);
        if (!(out->nu > 0 && out->nu <= 8))
            return pp_fail(PP_ERR_ARG, "%s matern: nu must be in (0, 8] (smoothness)", what);
        return PP_OK;
    }
    if (strcmp(s.name, "adaptive") == 0) {
        static const char *const adaptive_keys[] = {"nu", "block", NULL};
        out->kind = PP_PRIOR_ADAPTIVE;
        out->nu = 2.0;
        double block = 8;
        if ((st = pp_spec_check_known(&s, what, adaptive_keys)) != PP_OK)
            return st;
        if (pp_spec_number(&s, "nu", what, &out->nu, NULL, &st), st != PP_OK)
            return st;
        if (pp_spec_number(&s, "block", what, &block, NULL, &st), st != PP_OK)
            return st;
        if (!(out->nu >= 0.5 && out->nu <= 100))
            return pp_fail(PP_ERR_ARG,
                           "%s adaptive: nu must be in [0.5, 100] (Student-t degrees of "
                           "freedom of the local weights)",
                           what);
        if (!(block >= 2 && block <= 256 && block == floor(block)))
            return pp_fail(PP_ERR_ARG,
                           "%s adaptive: block must be a whole number of pixels in [2, 256]", what);
        out->block = (size_t)block;
        return PP_OK;
    }
    static const char *const priors[] = {"adaptive", "gmrf1", "gmrf2", "matern", NULL};
    const char *near = pp_spec_closest(s.name, priors);
    return pp_fail(PP_ERR_ARG,
                   "%s '%s': unknown prior '%s' (%s%s%saccepted: gmrf1, gmrf2, "
                   "matern:range=R,nu=V, each may add ,delta=D; adaptive:nu=V,block=B, "
                   "the default)",
                   what, text, s.name, near ? "did you mean " : "", near ? near : "",
                   near ? "? " : "");
}

void pp_prior_format(const pp_prior_spec *s, char *buf, size_t len)
{
    char extra[96] = "";
    if (s->kind == PP_PRIOR_MATERN && s->mean_set)
        snprintf(extra, sizeof extra, ",mean=%.15g", s->mean);
    if (s->delta_set) {
        size_t used = strlen(extra);
        snprintf(extra + used, sizeof extra - used, "%sdelta=%.15g",
                 s->kind == PP_PRIOR_MATERN ? "," : "", s->delta);
    }
    switch (s->kind) {
    case PP_PRIOR_GMRF1:
    case PP_PRIOR_GMRF2:
        snprintf(buf, len, "gmrf%c%s%s", s->kind == PP_PRIOR_GMRF1 ? '1' : '2',
                 extra[0] ? ":" : "", extra);
        break;
    case PP_PRIOR_MATERN:
        snprintf(buf, len, "matern:range=%.15g,nu=%.15g%s", s->range, s->nu, extra);
        break;
    case PP_PRIOR_ADAPTIVE:
        snprintf(buf, len, "adaptive:nu=%.15g,block=%zu", s->nu, s->block);
        break;
    case PP_PRIOR_DEFAULT:
        snprintf(buf, len, "default");
        break;
    }
}

void pp_prior_resolve(pp_prior_spec *p, const pp_noise_spec *noise)
{
    if (p->kind != PP_PRIOR_DEFAULT)
        return;
    int photon = noise && (noise->kind == PP_NOISE_POISSON || noise->kind == PP_NOISE_CAMERA);
    /* the parser's own defaults for each form (cannot fail) */
    pp_prior_parse(photon ? "matern" : "adaptive", NULL, p);
}

pp_status pp_prior_eigen_shape(const pp_prior_spec *s, const pp_shape *shape,
                               const double *spacing, double *q, double *rank)
{
    const int d = shape->rank;
    if (d < 1 || d > PP_MAX_RANK)
        return pp_fail(PP_ERR_ARG, "pp_prior_eigen_shape: rank %d (1 to %d)", d, PP_MAX_RANK);
    if (s->kind == PP_PRIOR_DEFAULT)
        return pp_fail(PP_ERR_ARG, "pp_prior_eigen_shape: the default prior is not resolved "
                                   "(pp_prior_resolve it for the noise model first)");
    /* the weight of each axis' increments: (x spacing / its spacing)^2 */
    double w[PP_MAX_RANK];
    for (int a = 0; a < d; a++) {
        double sa = spacing ? spacing[a] : 0, sx = spacing ? spacing[d - 1] : 0;
        w[a] = sa > 0 && sx > 0 ? (sx / sa) * (sx / sa) : 1.0;
        if (!isfinite(w[a]))
            return pp_fail(PP_ERR_ARG, "voxel size: axis %d's spacing %g gives no finite weight",
                           a, sa);
    }
    size_t rows = 1, sum = 0;
    for (int a = 0; a + 1 < d; a++) {
        rows *= shape->n[a];
        sum += shape->n[a];
    }
    const size_t width = shape->n[d - 1], wh = width / 2 + 1;
    double *ax = malloc((sum ? sum : 1) * sizeof *ax), *cr = malloc(rows * sizeof *cr),
           *cc = malloc(wh * sizeof *cc);
    if (!ax || !cr || !cc) {
        free(ax);
        free(cr);
        free(cc);
        return pp_fail(PP_ERR_NOMEM, "out of memory for the prior eigenvalues");
    }
    /* per axis but the last: its weighted 1-D Laplacian eigenvalues; per row
     * (every index but the last) their sum, slowest axis first (rank 2: the
     * row axis' alone, so a frame's eigenvalues are those of before) */
    double *axa[PP_MAX_RANK];
    size_t off = 0;
    for (int a = 0; a + 1 < d; a++) {
        axa[a] = ax + off;
        for (size_t i = 0; i < shape->n[a]; i++)
            axa[a][i] = w[a] * (2.0 - 2.0 * cos(2.0 * PP_PI * (double)i / (double)shape->n[a]));
        off += shape->n[a];
    }
    for (size_t r = 0; r < rows; r++) {
        size_t rem = r, idx[PP_MAX_RANK] = {0};
        for (int a = d - 2; a >= 0; a--) {
            idx[a] = rem % shape->n[a];
            rem /= shape->n[a];
        }
        double v = 0;
        for (int a = 0; a + 1 < d; a++)
            v = a == 0 ? axa[0][idx[0]] : v + axa[a][idx[a]];
        cr[r] = v;
    }
    for (size_t j = 0; j < wh; j++)
        cc[j] = w[d - 1] * (2.0 - 2.0 * cos(2.0 * PP_PI * (double)j / (double)width));
    /* Matern: alpha = nu + d/2 (Lindgren, Rue & Lindstrom 2011, eq. 2) */
    double kappa2 = 0, alpha = 1;
    if (s->kind == PP_PRIOR_MATERN) {
        double kappa = sqrt(8.0 * s->nu) / s->range;
        kappa2 = kappa * kappa;
        alpha = s->nu + 0.5 * (double)d;
    }
    for (size_t i = 0; i < rows; i++)
        for (size_t j = 0; j < wh; j++) {
            double lap = cr[i] + cc[j];
            double v = lap;
            if (s->kind == PP_PRIOR_GMRF2)
                v = lap * lap;
            else if (s->kind == PP_PRIOR_MATERN)
                v = pow(kappa2 + lap, alpha);
            q[i * wh + j] = v;
        }
    free(ax);
    free(cr);
    free(cc);
    int free_mean = !(s->kind == PP_PRIOR_MATERN && s->mean_set);
    if (free_mean)
        q[0] = 0.0;
    double n = 1;
    for (int a = 0; a < d; a++)
        n *= (double)shape->n[a];
    *rank = n - (free_mean ? 1.0 : 0.0);
    return PP_OK;
}

pp_status pp_prior_eigen(const pp_prior_spec *s, size_t height, size_t width, double *q,
                         double *rank)
{
    pp_shape sh = pp_shape_2d(height, width);
    return pp_prior_eigen_shape(s, &sh, NULL, q, rank);
}
