/* pixpost command line — --above T (repeatable) and --rsd: the posterior
 * probability maps P(x_i > T) the sampler counts (OUTDIR/above_<T>.tif) and
 * the relative uncertainty sd / mean (OUTDIR/rsd.tif), written after the
 * run's other outputs (src/pixpost/probmaps.h). Cost: one pass per map. */
#include "cli.h"
#include "pixpost/probmaps.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int cli_maps_parse(const cli_args *a, cli_sample_opts *o)
{
    const char *v[CLI_MAX_REPEAT + 1];
    o->rsd = cli_given(a, "rsd");
    o->nabove = cli_strs(a, "above", v, CLI_MAX_REPEAT + 1);
    if (o->nabove > PP_MAX_ABOVE)
        return cli_opt_error("above", "given %zu times; at most %d thresholds", o->nabove,
                             PP_MAX_ABOVE);
    for (size_t k = 0; k < o->nabove; k++) {
        char *e;
        double t = strtod(v[k], &e);
        if (!v[k][0] || *e || !isfinite(t))
            return cli_opt_error("above", "'%s' is not accepted (expected --above T, a finite "
                                          "number in the frame's units, e.g. 150)",
                                 v[k]);
        o->above[k] = t;
        char n1[64], n2[64];
        pp_above_name(t, n1, sizeof n1);
        for (size_t j = 0; j < k; j++) {
            pp_above_name(o->above[j], n2, sizeof n2);
            if (strcmp(n1, n2) == 0)
                return cli_opt_error("above", "'%s' gives the same file %s as an earlier "
                                              "threshold (give each threshold once)",
                                     v[k], n1);
        }
    }
    return 0;
}

int cli_maps_write(const cli_sample_opts *o, cli_frame_run *r)
{
    const pp_sampler_config *cfg = pp_sampler_config_used(r->sampler);
    char path[4096], name[64];
    pp_status st = PP_OK;
    for (size_t t = 0; t < o->nabove && st == PP_OK; t++) {
        pp_above_name(o->above[t], name, sizeof name);
        snprintf(path, sizeof path, "%s/%s", r->outdir, name);
        st = pp_map_write_f32(path, pp_sampler_above_map(r->sampler, t), cfg->voxel, "above");
    }
    if (st == PP_OK && o->rsd) {
        pp_image *rsd = NULL;
        snprintf(path, sizeof path, "%s/rsd.tif", r->outdir);
        if ((st = pp_rsd_map(pp_sampler_mean(r->sampler), pp_sampler_sd(r->sampler), &rsd)) ==
            PP_OK)
            st = pp_map_write_f32(path, rsd, cfg->voxel, "rsd");
        pp_image_free(rsd);
    }
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "%s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}
