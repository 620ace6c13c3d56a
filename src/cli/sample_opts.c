/* pixpost command line — the options of `pixpost sample`, parsed into a
 * cli_sample_opts (a pp_sampler_config plus what the command itself needs).
 *
 * batch reuses cli_sample_table() and cli_sample_opts_from_args() and adds
 * its own table on top. Defaults come from pp_sampler_defaults() so the help
 * text can never disagree with the library. Cost: negligible.
 */
#include "cli.h"
#include <limits.h>
#include <string.h>
#include <unistd.h>

static const cli_opt sample_table[] = {
    {
        "output",
        'o',
        1,
        "OUTDIR",
        "Folder for mean/sd/lo/hi/residual .tif, mean/sd .png, summary.json, trace.csv, "
        "report.html; "
        "created if missing. It must be new, empty or one pixpost wrote before (it holds "
        "pixpost's marker file .pixpost-output); a folder with other files needs --overwrite. "
        "Required.",
    },
    {"psf", 0, 1, "SPEC ...",
     "Point-spread function (give it once per channel, in channel order, for multi-channel "
     "input; one --psf serves every channel): gaussian:sigma=S (pixels, 0.3 to 20), "
     "airy:na=NA,wavelength=L,pixel=P (L 0.2 to 2 and P 0.001 to 20 micrometres; P is the "
     "sample-plane pixel, camera pixel / magnification) or file:PATH (an image of one bead). "
     "An uncertain width is sampled with "
     "gaussian:sigma=auto[,lo=A,hi=B] (default 0.5..4 px) or airy:na=auto[,lo=A,hi=B],"
     "wavelength=L,pixel=P (default 0.4..1.5), gibbs or mtc only. Volumes (--pages z) also "
     "take 3-D PSFs: gaussian:sigma=S,sigma_z=Z (slices), widefield:na=NA,wavelength=L,"
     "pixel=P,step=DZ,n=N or file:STACK (a bead stack); a 2-D PSF blurs each z-slice alone "
     "(pixpost psf --help). One spec with wavelength=L1/L2/.. (airy, widefield) stands for "
     "one per channel, in order. Required."},
    {"noise", 0, 1, "SPEC",
     "Noise model: gaussian (precision sampled), gaussian:sigma=S (fixed, camera units), "
     "poisson:gain=G,offset=O or camera:gain=G,offset=O,read=R. Required keys: gain G in ADU "
     "per electron (or e_per_adu=E, the electrons per ADU that camera data sheets print; "
     "G = 1/E), offset O the camera's dark level in ADU, read R the read noise in electrons. "
     "auto: estimated from the frame (camera:gain,offset,read by the single-frame fit of "
     "'pixpost calibrate --frame'; gaussian when the noise does not grow with the signal; "
     "a volume's slices pooled); "
     "the estimate is printed and recorded in summary.json (\"noise_estimate\")."},
    {"prior", 0, 1, "SPEC",
     "Prior: adaptive[:nu=V,block=B] (a GMRF whose precision varies over the frame: "
     "Student-t increments with nu degrees of freedom times one log-precision per B x B "
     "block; gibbs, and hmc for photon counts), or the stationary gmrf1, gmrf2 or "
     "matern:range=R,nu=V, each of which also takes delta=D to fix the prior precision "
     "(README, \"Which prior\"). A volume (--pages z) takes each of them (adaptive with "
     "gibbs or hmc; its blocks span about as far along z as across)."},
    {"positivity", 0, 1, "log|none",
     "pcn/gpcn/hmc: log samples the log intensity z (x = exp(z) > 0; default for poisson/camera), "
     "none samples x itself (default for gaussian). With log, the prior and mean=M apply to z."},
    {"background", 0, 1, "B",
     "Known background in photons per pixel added to A x (poisson/camera only; B >= 0)."},
    {"sampler", 0, 1, "auto|gibbs|mtc|pcn|gpcn|hmc",
     "MCMC method. auto: gibbs for gaussian noise (mtc instead with --boundary periodic and "
     "a stationary prior), hmc for poisson/camera (gibbs/mtc need gaussian noise; mtc, pcn "
     "and gpcn need a stationary prior)."},
    {"chains", 0, 1, "N", "Independent chains run in parallel (whole number >= 1)."},
    {"iters", 0, 1, "auto|N",
     "Iterations per chain after burn-in. auto: sample in rounds (the first 1000 "
     "iterations, then doubling the kept draws) until R-hat <= 1.01 and bulk- and tail-ESS "
     ">= 100 per chain hold for every trace column and the R-hat map, or a cap is reached "
     "(--max-time, --max-iters); a burn-in after which the chains still disagree (R-hat "
     "above 1.1) is lengthened. N (whole number >= 1): exactly N, no rounds."},
    {"burn", 0, 1, "N",
     "Burn-in iterations per chain, discarded (whole number >= 0); the samplers tune their "
     "steps during it. With --iters auto the first burn-in, which may grow."},
    {"thin", 0, 1, "N",
     "Keep every N-th iteration (1 <= N <= --iters; with --iters auto every round keeps every "
     "N-th iteration and the ESS criteria count kept draws)."},
    {"max-time", 0, 1, "T",
     "--iters auto: stop starting rounds that would end after T of sampling (T: seconds, or "
     "with a unit s, m or h: 90, 5m, 1.5h). The run then ends not converged, with warnings."},
    {"max-iters", 0, 1, "N",
     "--iters auto: at most N iterations per chain, burn-in included (whole number >= "
     "--burn + 1000)."},
    {"seed", 0, 1, "N",
     "Random seed (whole number 0 to 2^64-1); the same seed gives the same result whatever "
     "the thread count."},
    {"boundary", 0, 1, "pad|periodic",
     "pad treats pixels beyond the frame as unobserved; periodic wraps the frame around."},
    {"threads", 0, 1, "N", "Worker threads (0 = OpenMP's default, usually one per core)."},
    {"level", 0, 1, "L", "Central credible level of lo.tif/hi.tif, 0 < L < 1."},
    {"hyper-lambda", 0, 1, "A,B",
     "Gamma(shape A, rate B) hyperprior of the noise precision; A, B >= 0."},
    {"hyper-delta", 0, 1, "A,B",
     "Gamma(shape A, rate B) hyperprior of the prior precision; A, B >= 0."},
    {"channel", 0, 1, "r|g|b|luma|all",
     "Channel to take from a colour image (colour input is refused without it). all: every "
     "channel of an RGB image, each sampled as a frame with its own --psf into OUTDIR/c0 (r), "
     "c1 (g), c2 (b), listed in OUTDIR/channels.json."},
    {"pages", 0, 1, "z|t|c",
     "What the pages of a multi-page TIFF are: z (z-slices of one volume, sampled as a whole "
     "into OUTDIR; with OME channels or time points, one volume each into OUTDIR/c<k>/ or "
     "t<k>/), t (time points: each page sampled as a frame into OUTDIR/t<k>/) or c "
     "(channels: each page with its own --psf into OUTDIR/c<k>/). OME-TIFF metadata decides when present (a different --pages is an "
     "error); a multi-page TIFF with neither is refused. A single-page file is one frame "
     "whatever --pages says."},
    {"plane", 0, 1, "K",
     "Sample only page K (from 0) of a multi-page TIFF, as one frame into OUTDIR (e.g. one "
     "z-slice of a volume)."},
    {"voxel", 0, 1, "XY,Z",
     "Voxel size in micrometres (pixel size in the plane, z spacing) when the OME metadata "
     "does not give it (a volume without either takes the PSF spec's pixel= and step=); "
     "weighs the prior's increments along each axis of a volume; recorded in summary.json "
     "(\"voxel_um\")."},
    {"max-pixels", 0, 1, "N",
     "Refuse frames with more than N pixels, volumes with more than N voxels (whole number "
     ">= 1)."},
    {"mask", 0, 1, "FILE",
     "Pixels to ignore: a grayscale PNG or TIFF of the frame's size where NONZERO marks a "
     "pixel that is not data (a hot pixel, a scratch, a saturated nucleus) and zero a pixel "
     "that is; for a volume one page (the same pixels in every z-slice) or one page per "
     "z-slice. Ignored pixels are unobserved: left out of the likelihood, still estimated "
     "(from their neighbours, with wider bounds)."},
    {"regions", 0, 1, "FILE",
     "Integer label image of the frame's size (PNG or 8/16/32-bit TIFF; a volume: one page "
     "per z-slice), 0 = no region: for every label the posterior of its total and mean "
     "intensity from every kept draw (mean, sd, interval at --level, R-hat, ESS, MCSE) in "
     "OUTDIR/regions.csv (README, \"Regions, profiles and probability maps\")."},
    {"compare", 0, 1, "A/B ...",
     "With --regions: the posterior of mean_A - mean_B and mean_A / mean_B and P(mean_A > "
     "mean_B) for labels A and B, as rows of regions.csv (repeatable)."},
    {"profile", 0, 1, "R0,C0,R1,C1 ...",
     "Intensity along the line from row R0, column C0 to R1, C1 (from 0; fractions allowed); "
     "on a volume Z0,R0,C0,Z1,R1,C1 with the slices: one point per pixel (voxel) step along "
     "the longest axis, bilinear (trilinear) between pixels, with the posterior mean, sd and "
     "interval at --level from every kept draw in OUTDIR/profile_<k>.csv (k from 1 in the "
     "order given; repeatable)."},
    {"spots", 0, 1, "R[,RZ]|auto",
     "Candidate spots (beads, puncta): the local maxima of the frame's 3x3 box mean that "
     "stand above the ring of pixels R from them (R in pixels, 1 to 50, about the PSF's "
     "width or the spot's size); on a volume the 3x3x3 box mean's maxima and a shell of "
     "axial radius RZ slices (default R x pixel / z-step, a sphere in um; R when the voxel "
     "size is not known); auto: R = 3 sds of the PSF (and RZ = 3 axial sds of a 3-D PSF). "
     "For each, the posterior of its contrast C = centre - ring mean from every kept draw "
     "and P(C > 0), the probability that it is a real peak above its surroundings, in "
     "OUTDIR/spots.csv and in the report."},
    {"above", 0, 1, "T ...",
     "Posterior probability map P(x > T) per pixel, the share of kept draws above T, in "
     "OUTDIR/above_<T>.tif (T written as %g; repeatable, at most 16)."},
    {"rsd", 0, 0, "",
     "Also write OUTDIR/rsd.tif, the relative uncertainty sd / mean where the mean is "
     "positive (NaN elsewhere)."},
    {"keep-saturated", 0, 0, "",
     "Use saturated pixels as data. Without it, pixels at the format's maximum (255 for "
     "8-bit, 65535 for 16-bit integer input) or on a flat top of the histogram (README, "
     "\"Saturated pixels\") are censored (their value is only known to be at least the "
     "level), and their count is reported."},
    {"saturated-missing", 0, 0, "",
     "Treat saturated pixels as missing (no information, like --mask) instead of censored "
     "(at least the saturation level; every sampler censors, under every noise model)."},
    {"wisdom", 0, 1, "FILE",
     "FFTW wisdom file used instead of the plan cache: loaded if present, saved after new "
     "plans were measured."},
    {"no-plan-cache", 0, 0, "",
     "Do not use the per-user FFT plan cache ($XDG_CACHE_HOME/pixpost, else ~/.cache/pixpost): "
     "plans are estimated, which involves no timing (slower at some sizes)."},
    {"memory-limit", 0, 1, "auto|off|SIZE",
     "Refuse, before sampling, a run whose memory would exceed the limit, naming what it "
     "needs and the ways out (--threads 1, fewer --chains, a crop). auto: what this machine "
     "has available (MemAvailable, or a batch job's cgroup limit when lower); SIZE: bytes, "
     "or with a unit K, M, G or T (powers of 1024: 512M, 8G, 1.5T), e.g. a cluster job's "
     "memory; off: no check."},
    {"quiet", 0, 0, "", "Print nothing but errors (no progress, no summary)."},
    {"progress", 0, 1, "bar|plain|none", "How progress is shown on stderr."},
    {"strict", 0, 0, "",
     "Exit with status 3 when convergence warnings were raised (R-hat, ESS, acceptance)."},
    {"overwrite", 0, 0, "",
     "Allow writing into an output folder that holds other files, or replacing results "
     "made with other settings."},
    {NULL, 0, 0, NULL, NULL},
};

const cli_opt *cli_sample_table(void)
{
    return sample_table;
}

void cli_sample_default(const char *name, char *buf, size_t len, void *ctx)
{
    (void)ctx;
    pp_sampler_config d;
    pp_sampler_defaults(&d);
    buf[0] = '\0';
    if (strcmp(name, "noise") == 0)
        pp_noise_format(&d.noise, buf, len);
    else if (strcmp(name, "prior") == 0) { /* the library's default for each noise model */
        pp_prior_spec g = d.prior, p = d.prior;
        pp_noise_spec photon = d.noise;
        photon.kind = PP_NOISE_POISSON;
        pp_prior_resolve(&g, &d.noise);
        pp_prior_resolve(&p, &photon);
        pp_prior_format(&g, buf, len);
        size_t used = strlen(buf);
        used += (size_t)snprintf(buf + used, len - used, " for gaussian, ");
        if (used < len)
            pp_prior_format(&p, buf + used, len - used);
        used = strlen(buf);
        snprintf(buf + used, len - used, " for poisson/camera");
    }
    else if (strcmp(name, "positivity") == 0)
        snprintf(buf, len, "log for poisson/camera, none for gaussian");
    else if (strcmp(name, "background") == 0)
        snprintf(buf, len, "%g", d.background);
    else if (strcmp(name, "sampler") == 0)
        snprintf(buf, len, "%s", pp_sampler_kind_name(d.kind));
    else if (strcmp(name, "chains") == 0)
        snprintf(buf, len, "%u", d.chains);
    else if (strcmp(name, "iters") == 0)
        snprintf(buf, len, "auto");
    else if (strcmp(name, "max-time") == 0)
        snprintf(buf, len, "%gs per megapixel of frame, at least %gs", PP_MAX_SECONDS_PER_MP,
                 PP_MAX_SECONDS_FLOOR);
    else if (strcmp(name, "max-iters") == 0)
        snprintf(buf, len, "none");
    else if (strcmp(name, "burn") == 0)
        snprintf(buf, len, "%lu", d.burn);
    else if (strcmp(name, "thin") == 0)
        snprintf(buf, len, "%lu", d.thin);
    else if (strcmp(name, "seed") == 0)
        snprintf(buf, len, "%llu", (unsigned long long)d.seed);
    else if (strcmp(name, "boundary") == 0)
        snprintf(buf, len, "%s", pp_boundary_name(d.boundary));
    else if (strcmp(name, "threads") == 0)
        snprintf(buf, len, "%d", d.threads);
    else if (strcmp(name, "level") == 0)
        snprintf(buf, len, "%g", d.level);
    else if (strcmp(name, "hyper-lambda") == 0)
        snprintf(buf, len, "%g,%g", d.hyper_lambda[0], d.hyper_lambda[1]);
    else if (strcmp(name, "hyper-delta") == 0)
        snprintf(buf, len, "%g,%g", d.hyper_delta[0], d.hyper_delta[1]);
    else if (strcmp(name, "channel") == 0)
        snprintf(buf, len, "none (grayscale only)");
    else if (strcmp(name, "max-pixels") == 0)
        snprintf(buf, len, "%zu", (size_t)PP_DEFAULT_MAX_PIXELS);
    else if (strcmp(name, "wisdom") == 0)
        snprintf(buf, len, "none (the plan cache)");
    else if (strcmp(name, "progress") == 0)
        snprintf(buf, len, "bar on a terminal, none otherwise");
    else if (strcmp(name, "memory-limit") == 0)
        snprintf(buf, len, "auto");
    else if (strcmp(name, "quiet") == 0 || strcmp(name, "strict") == 0 ||
             strcmp(name, "overwrite") == 0)
        snprintf(buf, len, "off");
    else if (strcmp(name, "no-plan-cache") == 0 || strcmp(name, "keep-saturated") == 0 ||
             strcmp(name, "saturated-missing") == 0 || strcmp(name, "rsd") == 0)
        snprintf(buf, len, "off");
    else if (strcmp(name, "mask") == 0 || strcmp(name, "plane") == 0 ||
             strcmp(name, "regions") == 0 || strcmp(name, "compare") == 0 ||
             strcmp(name, "above") == 0 || strcmp(name, "profile") == 0 ||
             strcmp(name, "spots") == 0)
        snprintf(buf, len, "none");
    else if (strcmp(name, "pages") == 0)
        snprintf(buf, len, "from the OME metadata; none for a file without it");
    else if (strcmp(name, "voxel") == 0)
        snprintf(buf, len, "from the OME metadata; unknown without it");
}

/* Runs a library parser on an option's value; prints its message on failure. */
static int lib_check(pp_status st)
{
    return st == PP_OK ? 0 : cli_fail(st);
}

/* One --psf whose wavelength= is a list L1/L2/.. (our own syntax) stands
 * for one spec per channel, in order, each with one of the wavelengths:
 * o->psf_texts then point at o->psf_bufs. Nothing to do without a '/'
 * in the value of a wavelength= key. */
static int expand_wavelengths(cli_sample_opts *o)
{
    const char *t = o->psf_texts[0], *key = strstr(t, "wavelength=");
    while (key && key > t && key[-1] != ':' && key[-1] != ',')
        key = strstr(key + 1, "wavelength=");
    if (!key)
        return 0;
    const char *v = key + strlen("wavelength="), *end = strchr(v, ',');
    size_t vlen = end ? (size_t)(end - v) : strlen(v);
    if (!memchr(v, '/', vlen))
        return 0;
    if (strlen(t) >= sizeof o->psf_bufs[0])
        return cli_opt_error("psf", "'%.60s...' is too long for a wavelength list", t);
    size_t n = 0;
    for (const char *a = v; a <= v + vlen; n++) {
        const char *b = memchr(a, '/', (size_t)(v + vlen - a));
        size_t alen = b ? (size_t)(b - a) : (size_t)(v + vlen - a);
        if (!alen || n == CLI_MAX_PSF)
            return cli_opt_error("psf",
                                 "'%s': wavelength=%.*s is not a list of up to %d wavelengths "
                                 "(expected wavelength=L1/L2/..., one per channel in channel "
                                 "order, e.g. 0.52/0.61)",
                                 t, (int)vlen, v, CLI_MAX_PSF);
        snprintf(o->psf_bufs[n], sizeof o->psf_bufs[n], "%.*s%.*s%s", (int)(v - t), t, (int)alen,
                 a, v + vlen);
        o->psf_texts[n] = o->psf_bufs[n];
        a += alen + 1;
    }
    o->npsf = n;
    return 0;
}

static int parse_specs(const cli_args *a, cli_sample_opts *o)
{
    int rc;
    if ((rc = cli_require(a, "psf")) != 0)
        return rc;
    o->npsf = cli_strs(a, "psf", o->psf_texts, CLI_MAX_PSF);
    if (o->npsf == CLI_MAX_PSF && cli_strs(a, "psf", o->psf_texts, CLI_MAX_PSF + 1) > CLI_MAX_PSF)
        return cli_opt_error("psf", "given more than %d times (one per channel)", CLI_MAX_PSF);
    if (o->npsf == 1 && (rc = expand_wavelengths(o)) != 0)
        return rc;
    for (size_t k = 0; k < o->npsf; k++)
        if ((rc = lib_check(pp_psf_parse(o->psf_texts[k], cli_flag_names, &o->psfs[k]))) != 0)
            return rc;
    o->psf_text = o->psf_texts[0];
    o->psf = o->psfs[0];
    o->cfg.psf = o->psf; /* the sampler reads it when the width is sampled */
    o->prior_given = cli_given(a, "prior");
    o->noise_auto = cli_given(a, "noise") && strcmp(cli_str(a, "noise"), "auto") == 0;
    if (o->noise_auto) /* the model is chosen per frame (noise_auto.c) */
        o->noise_text = "auto";
    else if (cli_given(a, "noise")) {
        o->noise_text = cli_str(a, "noise");
        if ((rc = lib_check(pp_noise_parse(o->noise_text, cli_flag_names, &o->cfg.noise))) != 0)
            return rc;
        if (o->cfg.noise.kind == PP_NOISE_NONE)
            return cli_opt_error("noise", "'none' is for simulate only (expected gaussian, "
                                          "gaussian:sigma=S, poisson:... or camera:...)");
    }
    if (cli_given(a, "prior")) {
        o->prior_text = cli_str(a, "prior");
        if ((rc = lib_check(pp_prior_parse(o->prior_text, cli_flag_names, &o->cfg.prior))) != 0)
            return rc;
    }
    if (!cli_given(a, "prior")) { /* the library's default for the noise model */
        pp_prior_resolve(&o->cfg.prior, &o->cfg.noise);
        pp_prior_format(&o->cfg.prior, o->prior_buf, sizeof o->prior_buf);
    }
    if (cli_given(a, "positivity")) {
        const char *p = cli_str(a, "positivity");
        if (strcmp(p, "log") == 0)
            o->cfg.positivity = PP_POSITIVITY_LOG;
        else if (strcmp(p, "none") == 0)
            o->cfg.positivity = PP_POSITIVITY_NONE;
        else
            return cli_opt_error("positivity", "'%s' is not accepted (expected log or none)", p);
    }
    if (cli_given(a, "sampler") &&
        (rc = lib_check(pp_sampler_kind_parse(cli_str(a, "sampler"), cli_flag_names, &o->cfg.kind))) != 0)
        return rc;
    if (cli_given(a, "boundary") &&
        (rc = lib_check(pp_boundary_parse(cli_str(a, "boundary"), cli_flag_names, &o->cfg.boundary))) != 0)
        return rc;
    if (cli_given(a, "channel") && strcmp(cli_str(a, "channel"), "all") != 0 &&
        (rc = lib_check(pp_channel_parse(cli_str(a, "channel"), cli_flag_names, &o->read.channel))) != 0)
        return rc;
    return cli_units_opts(a, o);
}

static int parse_counts(const cli_args *a, cli_sample_opts *o)
{
    pp_sampler_config *c = &o->cfg;
    unsigned long chains = c->chains, threads = (unsigned long)c->threads;
    int rc = 0;
    rc = rc ? rc : cli_get_ulong(a, "chains", 1, 4096, &chains);
    const char *iv = cli_str(a, "iters");
    if (iv && strcmp(iv, "auto") != 0) {
        c->iters_auto = 0;
        rc = cli_get_ulong(a, "iters", 1, ULONG_MAX, &c->iters);
        if (rc)
            return rc;
    }
    rc = rc ? rc : cli_get_ulong(a, "burn", 0, ULONG_MAX, &c->burn);
    rc = rc ? rc : cli_get_ulong(a, "thin", 1, ULONG_MAX, &c->thin);
    rc = rc ? rc : cli_get_u64(a, "seed", &c->seed);
    rc = rc ? rc : cli_get_ulong(a, "threads", 0, 4096, &threads);
    rc = rc ? rc : cli_get_size(a, "max-pixels", 1, &o->read.max_pixels);
    rc = rc ? rc : cli_get_ulong(a, "max-iters", 1, ULONG_MAX, &c->max_iters);
    rc = rc ? rc : cli_get_seconds(a, "max-time", &c->max_seconds);
    if (rc)
        return rc;
    c->chains = (unsigned)chains;
    c->threads = (int)threads;
    const char *capped = cli_given(a, "max-time") ? "max-time" : "max-iters";
    if (!c->iters_auto && (cli_given(a, "max-time") || cli_given(a, "max-iters")))
        return cli_opt_error(capped,
                             "applies to --iters auto only (--iters %lu runs exactly "
                             "that many iterations)",
                             c->iters);
    if (c->iters_auto && c->max_iters && c->max_iters < c->burn + c->iters)
        return cli_opt_error("max-iters",
                             "%lu is below --burn + the first round (%lu + %lu; expected "
                             "a whole number >= %lu)",
                             c->max_iters, c->burn, c->iters, c->burn + c->iters);
    if (!c->iters_auto && c->thin > c->iters)
        return cli_opt_error("thin",
                             "%lu is larger than --iters %lu (no draw would be kept; "
                             "expected 1 <= N <= --iters)",
                             c->thin, c->iters);
    return 0;
}

static int parse_reals(const cli_args *a, cli_sample_opts *o)
{
    int rc = cli_get_double(a, "level", 0.0, 1.0, 1, &o->cfg.level);
    rc = rc ? rc : cli_get_pair(a, "hyper-lambda", 0.0, o->cfg.hyper_lambda);
    rc = rc ? rc : cli_get_pair(a, "hyper-delta", 0.0, o->cfg.hyper_delta);
    rc = rc ? rc : cli_get_double(a, "background", 0.0, 1e300, 0, &o->cfg.background);
    if (!rc && cli_given(a, "background") && o->cfg.noise.kind == PP_NOISE_GAUSSIAN)
        return cli_opt_error("background", "applies to the photon models only (use --noise "
                                           "poisson:... or camera:...)");
    return rc;
}

/* --memory-limit auto|off|SIZE (cli_get_bytes). */
static int parse_memory_limit(const cli_args *a, cli_sample_opts *o)
{
    const char *v = cli_str(a, "memory-limit");
    o->memory_limit = v && strcmp(v, "off") == 0 ? CLI_MEMORY_OFF : CLI_MEMORY_AUTO;
    if (!v || strcmp(v, "auto") == 0 || strcmp(v, "off") == 0)
        return 0;
    return cli_get_bytes(a, "memory-limit", &o->memory_limit);
}

static int parse_output_flags(const cli_args *a, cli_sample_opts *o)
{
    o->quiet = cli_given(a, "quiet");
    o->strict = cli_given(a, "strict");
    o->overwrite = cli_given(a, "overwrite");
    o->wisdom = cli_str(a, "wisdom");
    o->no_plan_cache = cli_given(a, "no-plan-cache");
    o->mask = cli_str(a, "mask");
    o->keep_saturated = cli_given(a, "keep-saturated");
    o->saturated_missing = cli_given(a, "saturated-missing");
    if (o->keep_saturated && o->saturated_missing)
        return cli_opt_error("saturated-missing", "cannot be given with --keep-saturated "
                                                  "(saturated pixels are either data or missing)");
    if (o->wisdom && !o->wisdom[0])
        return cli_opt_error("wisdom", "empty file name (expected --wisdom FILE)");
    if (o->mask && !o->mask[0])
        return cli_opt_error("mask", "empty file name (expected --mask FILE)");
    int rc = cli_regions_parse(a, o);
    if (!rc)
        rc = cli_maps_parse(a, o);
    if (!rc)
        rc = cli_profiles_parse(a, o);
    if (!rc)
        rc = cli_spots_parse(a, o);
    if (rc)
        return rc;
    /* MEASURE plans unless turned off; cli_plans_load may still fall back
     * to ESTIMATE for one run when the cache cannot be read */
    o->cfg.fft_effort = o->wisdom || !o->no_plan_cache ? PP_FFT_MEASURE : PP_FFT_ESTIMATE;
    const char *p = cli_str(a, "progress");
    o->progress = o->quiet ? CLI_PROGRESS_NONE : CLI_PROGRESS_AUTO;
    if (!p)
        return 0;
    if (strcmp(p, "bar") == 0)
        o->progress = CLI_PROGRESS_BAR;
    else if (strcmp(p, "plain") == 0)
        o->progress = CLI_PROGRESS_PLAIN;
    else if (strcmp(p, "none") == 0)
        o->progress = CLI_PROGRESS_NONE;
    else
        return cli_opt_error("progress",
                             "'%s' is not accepted (expected --progress "
                             "bar|plain|none)",
                             p);
    if (o->quiet && o->progress != CLI_PROGRESS_NONE)
        return cli_error("--quiet and --progress %s cannot be used together", p);
    return 0;
}

int cli_sample_opts_from_args(const cli_args *a, cli_sample_opts *o)
{
    memset(o, 0, sizeof *o);
    pp_sampler_defaults(&o->cfg);
    o->cfg.setting_names = cli_flag_names; /* messages name the flags */
    cli_read_defaults(&o->read);
    pp_noise_format(&o->cfg.noise, o->noise_buf, sizeof o->noise_buf);
    pp_prior_format(&o->cfg.prior, o->prior_buf, sizeof o->prior_buf);
    o->noise_text = o->noise_buf;
    o->prior_text = o->prior_buf;
    int rc = cli_require(a, "output");
    if (rc)
        return rc;
    o->outdir = cli_str(a, "output");
    if (!o->outdir[0])
        return cli_opt_error("output", "empty folder name (expected -o OUTDIR)");
    if ((rc = parse_specs(a, o)) != 0 || (rc = parse_counts(a, o)) != 0 ||
        (rc = parse_reals(a, o)) != 0 || (rc = parse_output_flags(a, o)) != 0 ||
        (rc = parse_memory_limit(a, o)) != 0)
        return rc;
    if (o->progress == CLI_PROGRESS_AUTO)
        o->progress = isatty(STDERR_FILENO) ? CLI_PROGRESS_BAR : CLI_PROGRESS_NONE;
    return 0;
}

void cli_sample_help(FILE *fp)
{
    const cli_opt *tables[] = {sample_table, NULL};
    fputs("Usage: pixpost sample FRAME --psf SPEC -o OUTDIR [options]\n\n"
          "Draws MCMC samples from the posterior of the sharp image behind FRAME (a grayscale\n"
          "PNG or TIFF in camera units) and writes the posterior mean, sd, credible bounds,\n"
          "traces and diagnostics into OUTDIR. At the end it prints a verdict: converged, or\n"
          "which part did not converge (the hyperparameters, global quantities such as delta;\n"
          "or the pixel estimates) and about how many iterations to ask for (--iters N; an\n"
          "estimate from the measured ESS per draw, a lower bound while R-hat fails).\n"
          "Before sampling the frame is checked against the noise model and the PSF (e.g.\n"
          "most pixels below the offset: an error, exit 1); after it, the fit against the\n"
          "frame (standardised residuals, residual.tif): a misfit is a warning naming the\n"
          "likely cause (README \"Checks of the data and the fit\").\n"
          "A multi-page TIFF needs --pages z|t|c unless its OME metadata says what the pages\n"
          "are; channels and time points go to OUTDIR/c<k>/ and OUTDIR/t<k>/; z-slices are\n"
          "sampled as one volume (--plane K samples one slice as a frame).\n\n"
          "Options:\n",
          fp);
    cli_print_options(fp, tables, cli_sample_default, NULL);
    fputs("\nExit status: 0 success; 1 bad usage or input (a data check's error too); 3 "
          "convergence\nwarnings with --strict (notes, such as frequencies the PSF removes, "
          "and the\nchecks' warnings are not convergence warnings); "
          "128 + the signal\nnumber when stopped by SIGINT (130) or SIGTERM (143), with no "
          "outputs written.\n",
          fp);
}

int cli_sample_opts_parse(int argc, char **argv, cli_sample_opts *o)
{
    const cli_opt *tables[] = {sample_table, NULL};
    cli_args a;
    int rc = cli_parse(&a, "sample", tables, argc, argv);
    if (rc == CLI_HELP) {
        cli_sample_help(stdout);
        return CLI_HELP;
    }
    if (rc || (rc = cli_positionals(&a, 1, "FRAME")) != 0 ||
        (rc = cli_sample_opts_from_args(&a, o)) != 0)
        return rc;
    o->frame = a.pos[0];
    return 0;
}
