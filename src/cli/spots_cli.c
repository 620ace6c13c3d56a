/* pixpost command line — --spots R[,RZ] or --spots auto: the candidate
 * spots planned from the input frame or volume before sampling (its 3 x 3
 * (x 3) box mean is the pilot, so the candidates never depend on the draws
 * that judge them; src/pixpost/spots.h), recorded at every kept draw,
 * and OUTDIR/spots.csv written after the run. On a volume the ring is a
 * shell of lateral radius R (pixels) and axial radius RZ (slices; default
 * R x pixel / z-step when the voxel size is known, else R). auto: R = 3
 * sigma of the PSF (and RZ = 3 sigma_z for a 3-D PSF), see psf_sigma.
 * Cost: O(image x ring) to plan; the summaries' O(S log S) per spot at the
 * end. */
#include "cli.h"
#include "pixpost/spots.h"
#include "pixpost/sampler_extra.h"
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* --spots auto's ring radius in PSF sds: a Gaussian spot has fallen to
 * exp(-4.5) = 1.1 % of its peak at 3 sigma, so the ring lies on the
 * background (our rule; at Nyquist sampling, sigma = 0.84 pixels, it gives
 * 2.5 pixels). */
#define SPOTS_AUTO_SIGMAS 3.0

int cli_spots_parse(const cli_args *a, cli_sample_opts *o)
{
    o->spots_radius = 0;
    o->spots_radius_z = 0;
    const char *v = cli_str(a, "spots");
    if (!v)
        return 0;
    if (strcmp(v, "auto") == 0) {
        o->spots_radius = -1; /* from the PSF, in cli_spots_load */
        return 0;
    }
    char *end;
    double r = strtod(v, &end), rz = 0;
    int ok = end != v && r >= 1 && r <= 50;
    if (ok && *end == ',') {
        const char *p = end + 1;
        rz = strtod(p, &end);
        ok = end != p && rz >= 1 && rz <= 50;
    }
    if (!ok || *end != '\0')
        return cli_opt_error("spots",
                             "'%s' is not accepted (expected R, the ring's radius in pixels, 1 "
                             "to 50, about the PSF's width or the spot's size, e.g. 3; on a "
                             "volume optionally R,RZ with RZ the axial radius in slices, 1 to "
                             "50; or auto, 3 sds of the PSF)",
                             v);
    o->spots_radius = r;
    o->spots_radius_z = rz;
    return 0;
}

/* The pilot: the box mean (3 x 3, or 3 x 3 x 3 on a volume) of the observed
 * pixels, NaN at the unobserved ones. */
static pp_image *pilot_of(const pp_image *frame)
{
    size_t d = frame->depth, h = frame->height, w = frame->width;
    pp_image *pilot = NULL;
    if (pp_image_create3(d, h, w, &pilot) != PP_OK)
        return NULL;
    for (size_t z = 0; z < d; z++)
        for (size_t y = 0; y < h; y++)
            for (size_t x = 0; x < w; x++) {
                double s = 0;
                int n = 0;
                for (size_t zz = z ? z - 1 : 0; zz <= z + 1 && zz < d; zz++)
                    for (size_t yy = y ? y - 1 : 0; yy <= y + 1 && yy < h; yy++)
                        for (size_t xx = x ? x - 1 : 0; xx <= x + 1 && xx < w; xx++) {
                            double v = frame->data[(zz * h + yy) * w + xx];
                            if (isfinite(v))
                                s += v, n++;
                        }
                size_t i = (z * h + y) * w + x;
                pilot->data[i] = isfinite(frame->data[i]) && n ? s / n : NAN;
            }
    return pilot;
}

/* The sd of a measured PSF (a file: spec) from its half-maximum: the
 * pixels of the peak's slice at or above half the peak cover an area a,
 * which is 2 pi ln 2 sigma^2 for a Gaussian; along z, the slices of the
 * peak's column at or above half the peak span the FWHM, 2 sqrt(2 ln 2)
 * sigma_z. Rough (whole pixels), and 0 when there is no volume kernel. */
static pp_status file_sigma(const pp_psf_spec *spec, int volume, double *s, double *sz)
{
    pp_image *k = NULL;
    pp_status st;
    if (volume) {
        pp_shape sh;
        double *d = NULL;
        if ((st = pp_psf_make3(spec, 0, 0, &sh, &d)) != PP_OK)
            return st;
        size_t nz = sh.rank == 3 ? sh.n[0] : 1;
        st = pp_image_create3(nz, sh.n[sh.rank - 2], sh.n[sh.rank - 1], &k);
        if (st == PP_OK)
            memcpy(k->data, d, pp_image_count(k) * sizeof *d);
        free(d);
    } else
        st = pp_psf_make(spec, 0, &k);
    if (st != PP_OK)
        return st;
    size_t n = pp_image_count(k), peak = 0, plane = k->height * k->width, area = 0, span = 0;
    for (size_t i = 1; i < n; i++)
        if (k->data[i] > k->data[peak])
            peak = i;
    double half = 0.5 * k->data[peak];
    for (size_t i = 0; i < plane; i++)
        area += k->data[peak / plane * plane + i] >= half;
    for (size_t z = 0; z < k->depth; z++)
        span += k->data[z * plane + peak % plane] >= half;
    *s = sqrt((double)area / (2 * acos(-1.0) * log(2.0)));
    *sz = k->depth > 1 ? (double)span / (2 * sqrt(2 * log(2.0))) : 0.0;
    pp_image_free(k);
    return PP_OK;
}

/* The PSF's lateral sd in pixels and axial sd in slices (0: a 2-D PSF).
 * gaussian: its sigma (sigma=auto: the widest allowed, hi); airy: 0.21
 * lambda / NA (the Gaussian approximation of the in-focus Airy pattern,
 * common practice; Zhang, Zerubia and Olivo-Marin, Appl. Opt. 46 (2007)
 * 1819, from memory), na=auto: the smallest NA allowed; widefield: the
 * same laterally and 0.66 lambda n / NA^2 along z (their widefield
 * paraxial approximation, from memory); file: file_sigma. */
static pp_status psf_sigma(const pp_psf_spec *p, int volume, double *s, double *sz)
{
    *sz = 0;
    switch (p->kind) {
    case PP_PSF_GAUSSIAN:
        *s = p->width_auto ? p->width_hi : p->sigma;
        *sz = p->sigma_z;
        return PP_OK;
    case PP_PSF_AIRY:
        *s = 0.21 * p->wavelength / ((p->width_auto ? p->width_lo : p->na) * p->pixel);
        return PP_OK;
    case PP_PSF_WIDEFIELD:
        *s = 0.21 * p->wavelength / (p->na * p->pixel);
        *sz = 0.66 * p->wavelength * p->n / (p->na * p->na * p->step);
        return PP_OK;
    default:
        return file_sigma(p, volume, s, sz);
    }
}

static double clamp_radius(double x) { return x < 1 ? 1 : x > 50 ? 50 : x; }

int cli_spots_load(const cli_sample_opts *o, cli_frame_run *r, const pp_image *frame)
{
    r->spots = NULL;
    if (!o->spots_radius)
        return 0;
    double rad = o->spots_radius, rz = o->spots_radius_z;
    if (rad < 0) { /* auto */
        double s, sz;
        pp_status st = psf_sigma(r->psf ? r->psf : &o->psf, frame->depth > 1, &s, &sz);
        if (st != PP_OK) {
            snprintf(r->message, sizeof r->message, "--spots auto: %s", pp_error_message());
            return CLI_EXIT_USAGE;
        }
        rad = clamp_radius(SPOTS_AUTO_SIGMAS * s);
        rz = sz > 0 ? clamp_radius(SPOTS_AUTO_SIGMAS * sz) : 0;
    }
    if (frame->depth > 1 && !(rz > 0)) { /* a sphere in um, or in voxels when not known */
        const double *v = r->voxel_um;
        rz = clamp_radius(v && v[0] > 0 && v[2] > 0 ? rad * v[2] / v[0] : rad);
    }
    pp_image *pilot = pilot_of(frame);
    if (!pilot) {
        snprintf(r->message, sizeof r->message, "--spots: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    pp_status st = pp_spots_plan(pilot, rad, rz, &r->spots);
    pp_image_free(pilot);
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "--spots: %s", pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}

int cli_spots_write(cli_frame_run *r)
{
    if (!r->spots)
        return 0;
    size_t cap, stride;
    const double *v = pp_sampler_region_draws(r->sampler, &cap, &stride);
    const pp_trace *tr = pp_sampler_trace(r->sampler);
    size_t offset = stride - pp_spots_count(r->spots); /* after regions and profiles */
    char path[4096];
    snprintf(path, sizeof path, "%s/spots.csv", r->outdir);
    pp_status st = pp_spots_write_csv(path, r->spots, pp_sampler_mean(r->sampler), v,
                                      tr->chains, tr->kept, cap, stride, offset,
                                      pp_sampler_config_used(r->sampler)->level);
    if (st != PP_OK) {
        snprintf(r->message, sizeof r->message, "%s: spots.csv: %s", r->outdir,
                 pp_error_message());
        return CLI_EXIT_USAGE;
    }
    return 0;
}
