/* probe_mtc — exposes the mtc sampler's log marginal density and runs the
 * samplers with a PSF model (for the uncertain-width checks), for
 * tests/ref_mtc*.py and bench/mtc_bench.py. Output is plain text (%.17g).
 *
 *   probe_mtc logmarg FRAME PSF PRIOR LAM DEL [LAM DEL ...]
 *       log p(y | lam, del) (periodic grid, the frame's own size) per pair
 *   probe_mtc run FRAME PSF OUTDIR [key=value ...]
 *       runs a sampler and writes the usual outputs (pp_output_write);
 *       keys: sampler, prior, noise, boundary, chains, burn, iters, thin,
 *       seed, threads. The PSF spec is passed to the sampler as its model,
 *       so sigma=auto / na=auto are sampled. Prints the sampling seconds.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "sampler_mtc.h"
#include "pixpost/io.h"
#include "pixpost/output.h"
#include "pixpost/psf.h"
#include "pixpost/sampler_extra.h"

static int fail(const char *what)
{
    fprintf(stderr, "probe_mtc: %s: %s\n", what, pp_error_message());
    return 1;
}

/* Applies one key=value to cfg; returns 0 if the key is unknown. */
static int apply(pp_sampler_config *cfg, const char *kv, const char **prior_text)
{
    const char *eq = strchr(kv, '=');
    if (!eq)
        return 0;
    size_t n = (size_t)(eq - kv);
    const char *v = eq + 1;
    pp_status st = PP_OK;
    if (n == 7 && !strncmp(kv, "sampler", n))
        st = pp_sampler_kind_parse(v, NULL, &cfg->kind);
    else if (n == 5 && !strncmp(kv, "prior", n)) {
        st = pp_prior_parse(v, NULL, &cfg->prior);
        *prior_text = v;
    } else if (n == 5 && !strncmp(kv, "noise", n))
        st = pp_noise_parse(v, NULL, &cfg->noise);
    else if (n == 8 && !strncmp(kv, "boundary", n))
        st = pp_boundary_parse(v, NULL, &cfg->boundary);
    else if (n == 6 && !strncmp(kv, "chains", n))
        cfg->chains = (unsigned)strtoul(v, NULL, 10);
    else if (n == 4 && !strncmp(kv, "burn", n))
        cfg->burn = strtoul(v, NULL, 10);
    else if (n == 5 && !strncmp(kv, "iters", n))
        cfg->iters = strtoul(v, NULL, 10);
    else if (n == 4 && !strncmp(kv, "thin", n))
        cfg->thin = strtoul(v, NULL, 10);
    else if (n == 4 && !strncmp(kv, "seed", n))
        cfg->seed = strtoull(v, NULL, 10);
    else if (n == 7 && !strncmp(kv, "threads", n))
        cfg->threads = atoi(v);
    else
        return 0;
    return st == PP_OK;
}

static int load(const char *frame_path, const char *psf_text, pp_image **frame,
                pp_psf_spec *spec, pp_image **psf)
{
    if (pp_image_read(frame_path, NULL, frame, NULL) != PP_OK)
        return fail(frame_path);
    if (pp_psf_parse(psf_text, NULL, spec) != PP_OK || pp_psf_make(spec, 0, psf) != PP_OK)
        return fail(psf_text);
    return 0;
}

static int do_logmarg(int argc, char **argv)
{
    pp_image *frame = NULL, *psf = NULL;
    pp_sampler *s = NULL;
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    cfg.kind = PP_SAMPLER_MTC;
    cfg.boundary = PP_BOUNDARY_PERIODIC;
    cfg.chains = 1;
    cfg.iters = 1;
    cfg.burn = 0;
    if (load(argv[0], argv[1], &frame, &cfg.psf, &psf))
        return 1;
    if (pp_prior_parse(argv[2], NULL, &cfg.prior) != PP_OK)
        return fail(argv[2]);
    if (pp_sampler_create(&cfg, frame, psf, &s) != PP_OK)
        return fail("create");
    for (int i = 3; i + 1 < argc; i += 2)
        printf("%.17g\n", pp_mtc_log_marginal(s, s->otf2, strtod(argv[i], NULL),
                                              strtod(argv[i + 1], NULL)));
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(frame);
    return 0;
}

static int do_run(int argc, char **argv)
{
    pp_image *frame = NULL, *psf = NULL;
    pp_sampler *s = NULL;
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0; /* exactly burn + iters */
    cfg.prior.kind = PP_PRIOR_GMRF1; /* a stationary prior: these check its samplers */
    const char *prior_text = "gmrf1";
    if (load(argv[0], argv[1], &frame, &cfg.psf, &psf))
        return 1;
    for (int i = 3; i < argc; i++)
        if (!apply(&cfg, argv[i], &prior_text)) {
            fprintf(stderr, "probe_mtc: bad option '%s': %s\n", argv[i], pp_error_message());
            return 1;
        }
    if (pp_sampler_create(&cfg, frame, psf, &s) != PP_OK)
        return fail("create");
    if (pp_sampler_run(s) != PP_OK)
        return fail("run");
    pp_run_info ri = {.input_path = argv[0], .psf_spec = argv[1], .noise_spec = "gaussian",
                      .prior_spec = prior_text, .command_line = "probe_mtc run"};
    pp_result res;
    if (pp_sampler_result(s, &res) != PP_OK)
        return fail("result");
    pp_status wst = pp_output_write(argv[2], &res, frame, &ri);
    pp_result_free(&res);
    if (wst != PP_OK)
        return fail(argv[2]);
    printf("%.17g\n", pp_sampler_seconds(s));
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(frame);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc >= 6 && !strcmp(argv[1], "logmarg"))
        return do_logmarg(argc - 2, argv + 2);
    if (argc >= 5 && !strcmp(argv[1], "run"))
        return do_run(argc - 2, argv + 2);
    fprintf(stderr, "usage: probe_mtc logmarg FRAME PSF PRIOR LAM DEL ... | "
                    "run FRAME PSF OUTDIR [key=value ...]\n");
    return 2;
}
