/* examples/sample_frame.c — sample the posterior of one frame through
 * libpixpost's public API and write its posterior mean as a 32-bit float
 * TIFF. Built against an installed pixpost only:
 *
 *   cc -o sample_frame sample_frame.c $(pkg-config --cflags --libs pixpost)
 *
 * or with CMake: find_package(pixpost) and link pixpost::pixpost
 * (examples/CMakeLists.txt).
 *
 *   sample_frame FRAME PSF NOISE PRIOR SEED ITERS BURN CHAINS OUT.tif [BOUNDARY]
 *
 * PSF, NOISE and PRIOR are spec strings as `pixpost sample` takes them
 * (e.g. gaussian:sigma=1.6, camera:gain=0.5,offset=100,read=1.6,
 * matern:range=6,nu=1); PRIOR "default" leaves the choice to the library
 * (pp_prior_resolve: adaptive for gaussian noise, matern for photon
 * counts). BOUNDARY is pad (the default) or periodic. The steps are those
 * of `pixpost sample FRAME --psf PSF --noise NOISE [--prior PRIOR] --seed
 * SEED --iters ITERS --burn BURN --chains CHAINS --boundary BOUNDARY
 * --threads 1` (saturated pixels left out of the likelihood, one thread),
 * so its mean equals that command's mean.tif value for value.
 * Exit 0, or 1 with one line on stderr naming what failed.
 */
#include <pixpost/pixpost.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int fail(const char *what, pp_status st)
{
    fprintf(stderr, "sample_frame: %s: %s\n", what,
            pp_error_message()[0] ? pp_error_message() : pp_status_name(st));
    return 1;
}

static int parse_count(const char *text, const char *name, unsigned long *out)
{
    char *end;
    *out = strtoul(text, &end, 10);
    if (!text[0] || *end) {
        fprintf(stderr, "sample_frame: %s '%s': expected a whole number\n", name, text);
        return 1;
    }
    return 0;
}

int main(int argc, char **argv)
{
    if (argc != 10 && argc != 11) {
        fprintf(stderr, "usage: sample_frame FRAME PSF NOISE PRIOR SEED ITERS BURN CHAINS "
                        "OUT.tif [BOUNDARY] (libpixpost %s)\n",
                pp_version());
        return 1;
    }
    const char *frame_path = argv[1], *out_path = argv[9];
    unsigned long seed, iters, burn, chains;
    if (parse_count(argv[5], "SEED", &seed) || parse_count(argv[6], "ITERS", &iters) ||
        parse_count(argv[7], "BURN", &burn) || parse_count(argv[8], "CHAINS", &chains))
        return 1;

    /* the model from spec strings */
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    pp_psf_spec psf_spec;
    pp_status st = pp_psf_parse(argv[2], NULL, &psf_spec);
    if (st != PP_OK)
        return fail("PSF", st);
    if ((st = pp_noise_parse(argv[3], NULL, &cfg.noise)) != PP_OK)
        return fail("NOISE", st);
    if (strcmp(argv[4], "default") != 0 && (st = pp_prior_parse(argv[4], NULL, &cfg.prior)) != PP_OK)
        return fail("PRIOR", st);
    if (argc == 11 && (st = pp_boundary_parse(argv[10], NULL, &cfg.boundary)) != PP_OK)
        return fail("BOUNDARY", st);
    cfg.seed = seed;
    cfg.iters = iters;
    cfg.burn = burn;
    cfg.chains = (unsigned)chains;
    cfg.iters_auto = 0; /* exactly burn + iters iterations per chain */
    cfg.threads = 1;
    cfg.psf = psf_spec;

    /* the frame, its saturated pixels marked unobserved (NaN) */
    pp_read_options ro;
    pp_read_options_defaults(&ro);
    pp_read_info info;
    pp_image *frame = NULL, *psf = NULL;
    if ((st = pp_image_read(frame_path, &ro, &frame, &info)) != PP_OK)
        return fail(frame_path, st);
    if (info.nonfinite) {
        fprintf(stderr, "sample_frame: %s: %zu pixels are NaN or infinite\n", frame_path,
                info.nonfinite);
        pp_image_free(frame);
        return 1;
    }
    pp_saturation sat;
    pp_saturation_find(frame, info.bits, info.is_float, &sat);
    pp_saturation_mark(frame, &sat);
    if ((st = pp_psf_make(&psf_spec, 0, &psf)) != PP_OK) {
        pp_image_free(frame);
        return fail("PSF", st);
    }

    /* sample, then write the posterior mean */
    pp_sampler *s = NULL;
    pp_result res;
    memset(&res, 0, sizeof res);
    int rc = 0;
    if ((st = pp_sampler_create(&cfg, frame, psf, &s)) != PP_OK)
        rc = fail("sampler", st);
    else if ((st = pp_sampler_run(s)) != PP_OK)
        rc = fail("sampling", st);
    else if ((st = pp_sampler_result(s, &res)) != PP_OK)
        rc = fail("result", st);
    else if ((st = pp_tiff_write_f32(out_path, res.mean)) != PP_OK)
        rc = fail(out_path, st);
    if (!rc) {
        char prior[128];
        pp_prior_format(&res.config.prior, prior, sizeof prior);
        printf("sample_frame: %s: %s %lu x %lu, prior %s -> %s\n", frame_path,
               pp_sampler_kind_name(res.config.kind), chains, iters, prior, out_path);
    }
    pp_result_free(&res);
    pp_sampler_free(s);
    pp_image_free(psf);
    pp_image_free(frame);
    return rc;
}
