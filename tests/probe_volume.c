/* probe_volume — runs the sampler on a volume (or a frame) given as raw
 * little-endian float64 files, for tests/ref_volume*.py while the command
 * line does not read z-stacks yet. Output is plain text (%.17g) and raw
 * float64 files.
 *
 *   probe_volume run FRAME D H W PSF KD KH KW OUT [key=value ...]
 *       FRAME: D*H*W doubles, slice-major (D = 1: a frame); PSF: KD*KH*KW
 *       doubles (KD = 1: a 2-D kernel). Keys: sampler, prior, noise,
 *       boundary, chains, burn, iters, thin, seed, threads, level,
 *       background, hyper_delta=SHAPE,RATE, voxel=Z,Y,X (µm). A fixed-length run (no rounds). Writes
 *       OUT.mean, OUT.sd, OUT.lo, OUT.hi (and OUT.rhat, OUT.mcse when
 *       made) as raw doubles and OUT.trace (a header line of column names,
 *       then one line per kept draw, chain-major); prints "kind K",
 *       "frame a b [c]", "grid a b [c]" and the notes and warnings.
 *   Exit 0, or 2 with "probe_volume: MESSAGE" on stderr when the library
 *   refuses (the refusal's own message).
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "pixpost/model.h"
#include "pixpost/noise.h"
#include "pixpost/prior.h"
#include "pixpost/result.h"
#include "pixpost/sampler.h"

static int refuse(const char *what)
{
    fprintf(stderr, "probe_volume: %s%s%s\n", what ? what : "", what ? ": " : "",
            pp_error_message());
    return 2;
}

static pp_image *load(const char *path, size_t d, size_t h, size_t w)
{
    pp_image *img = NULL;
    if (pp_image_create3(d, h, w, &img) != PP_OK)
        return NULL;
    FILE *f = fopen(path, "rb");
    size_t n = d * h * w;
    if (!f || fread(img->data, sizeof(double), n, f) != n) {
        if (f)
            fclose(f);
        pp_image_free(img);
        return NULL;
    }
    fclose(f);
    return img;
}

static int save(const char *out, const char *ext, const pp_image *img)
{
    if (!img)
        return 0;
    char path[4096];
    snprintf(path, sizeof path, "%s.%s", out, ext);
    FILE *f = fopen(path, "wb");
    size_t n = pp_image_count(img);
    int bad = !f || fwrite(img->data, sizeof(double), n, f) != n;
    if (f)
        bad |= fclose(f) != 0;
    return bad;
}

static int apply(pp_sampler_config *cfg, const char *kv)
{
    const char *eq = strchr(kv, '=');
    if (!eq)
        return 0;
    size_t n = (size_t)(eq - kv);
    const char *v = eq + 1;
    pp_status st = PP_OK;
#define KEY(s) (n == strlen(s) && !strncmp(kv, s, n))
    if (KEY("sampler"))
        st = pp_sampler_kind_parse(v, NULL, &cfg->kind);
    else if (KEY("prior"))
        st = pp_prior_parse(v, NULL, &cfg->prior);
    else if (KEY("noise"))
        st = pp_noise_parse(v, NULL, &cfg->noise);
    else if (KEY("boundary"))
        st = pp_boundary_parse(v, NULL, &cfg->boundary);
    else if (KEY("chains"))
        cfg->chains = (unsigned)strtoul(v, NULL, 10);
    else if (KEY("burn"))
        cfg->burn = strtoul(v, NULL, 10);
    else if (KEY("iters"))
        cfg->iters = strtoul(v, NULL, 10);
    else if (KEY("thin"))
        cfg->thin = strtoul(v, NULL, 10);
    else if (KEY("seed"))
        cfg->seed = strtoull(v, NULL, 10);
    else if (KEY("threads"))
        cfg->threads = atoi(v);
    else if (KEY("level"))
        cfg->level = strtod(v, NULL);
    else if (KEY("psf")) /* a model for sigma=auto (refusal checks) */
        st = pp_psf_parse(v, NULL, &cfg->psf);
    else if (KEY("hyper_delta"))
        return sscanf(v, "%lf,%lf", &cfg->hyper_delta[0], &cfg->hyper_delta[1]) == 2;
    else if (KEY("background"))
        cfg->background = strtod(v, NULL);
    else if (KEY("voxel"))
        return sscanf(v, "%lf,%lf,%lf", &cfg->voxel[0], &cfg->voxel[1], &cfg->voxel[2]) == 3;
    else
        return 0;
#undef KEY
    return st == PP_OK;
}

static void print_shape(const char *what, pp_shape s)
{
    printf("%s", what);
    for (int a = 0; a < s.rank; a++)
        printf(" %zu", s.n[a]);
    printf("\n");
}

int main(int argc, char **argv)
{
    if (argc < 11 || strcmp(argv[1], "run") != 0) {
        fprintf(stderr, "usage: probe_volume run FRAME D H W PSF KD KH KW OUT [key=value ...]\n");
        return 1;
    }
    size_t d = strtoul(argv[3], NULL, 10), h = strtoul(argv[4], NULL, 10),
           w = strtoul(argv[5], NULL, 10);
    size_t kd = strtoul(argv[7], NULL, 10), kh = strtoul(argv[8], NULL, 10),
           kw = strtoul(argv[9], NULL, 10);
    const char *out = argv[10];
    pp_sampler_config cfg;
    pp_sampler_defaults(&cfg);
    cfg.iters_auto = 0;
    for (int i = 11; i < argc; i++)
        if (!apply(&cfg, argv[i])) {
            fprintf(stderr, "probe_volume: bad key %s (%s)\n", argv[i], pp_error_message());
            return 1;
        }
    pp_image *frame = load(argv[2], d, h, w), *psf = load(argv[6], kd, kh, kw);
    if (!frame || !psf) {
        fprintf(stderr, "probe_volume: cannot read the frame or the PSF\n");
        return 1;
    }
    pp_sampler *s = NULL;
    pp_status st = pp_sampler_create(&cfg, frame, psf, &s);
    pp_image_free(frame);
    pp_image_free(psf);
    if (st != PP_OK)
        return refuse(NULL);
    if (pp_sampler_run(s) != PP_OK) {
        int rc = refuse("run");
        pp_sampler_free(s);
        return rc;
    }
    pp_result r;
    if (pp_sampler_result(s, &r) != PP_OK) {
        pp_sampler_free(s);
        return refuse("result");
    }
    printf("kind %s\n", pp_sampler_kind_name(r.config.kind));
    print_shape("frame", r.frame);
    print_shape("grid", r.grid);
    for (size_t i = 0; i < r.nnotes; i++)
        printf("note %s\n", r.notes[i]);
    for (size_t i = 0; i < r.nwarnings; i++)
        printf("warning %s\n", r.warnings[i]);
    int bad = save(out, "mean", r.mean) | save(out, "sd", r.sd) | save(out, "lo", r.lo) |
              save(out, "hi", r.hi) | save(out, "rhat", r.rhat_map) |
              save(out, "mcse", r.mcse_map);
    char path[4096];
    snprintf(path, sizeof path, "%s.trace", out);
    FILE *f = fopen(path, "w");
    if (f) {
        for (size_t j = 0; j < r.trace.ncols; j++)
            fprintf(f, "%s%s", j ? " " : "", r.trace.names[j]);
        fprintf(f, "\n");
        size_t rows = (size_t)r.trace.chains * r.trace.kept;
        for (size_t i = 0; i < rows; i++)
            for (size_t j = 0; j < r.trace.ncols; j++)
                fprintf(f, "%.17g%s", r.trace.values[i * r.trace.ncols + j],
                        j + 1 < r.trace.ncols ? " " : "\n");
        bad |= fclose(f) != 0;
    } else
        bad = 1;
    pp_result_free(&r);
    pp_sampler_free(s);
    if (bad) {
        fprintf(stderr, "probe_volume: cannot write %s.*\n", out);
        return 1;
    }
    return 0;
}
