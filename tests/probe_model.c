/* probe_model — exposes the PSF and forward-model functions for
 * tests/ref_model.py, in plain text (one number per line, %.17g):
 *
 *   probe_model j1 X...                 J1 at each X
 *   probe_model psf SPEC SIZE           side n, then the n*n kernel values
 *   probe_model blur pad|periodic       stdin: H W, H*W scene values, n,
 *                                       n*n PSF values; prints H*W values
 *   probe_model blur3 pad|periodic      stdin: D H W, D*H*W scene values,
 *                                       KD KH KW, KD*KH*KW PSF values (a
 *                                       volume, slowest axis first; D or KD
 *                                       1 makes a frame); prints D*H*W values
 *   probe_model noise SPEC MU N SEED    N noisy copies of the level MU
 *                                       (pp_model_add_noise, stream 0)
 */
#include "pixpost/model.h"
#include "pixpost/psf.h"
#include "pixpost/model_extra.h"
#include "pixpost/psf_extra.h"
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int fail(const char *what)
{
    fprintf(stderr, "probe_model: %s: %s\n", what, pp_error_message());
    return 1;
}

static void print_image(const pp_image *img)
{
    for (size_t i = 0; i < pp_image_count(img); i++)
        printf("%.17g\n", img->data[i]);
}

static int read_volume(size_t d, size_t h, size_t w, pp_image **out)
{
    if (pp_image_create3(d, h, w, out) != PP_OK)
        return 0;
    for (size_t i = 0; i < d * w * h; i++)
        if (scanf("%lf", &(*out)->data[i]) != 1)
            return 0;
    return 1;
}

static int read_image(size_t w, size_t h, pp_image **out)
{
    return read_volume(1, h, w, out);
}

static int do_psf(const char *spec, const char *size)
{
    pp_psf_spec s;
    pp_image *k = NULL;
    if (pp_psf_parse(spec, NULL, &s) != PP_OK ||
        pp_psf_make(&s, strtoul(size, NULL, 10), &k) != PP_OK)
        return fail(spec);
    printf("%zu\n", k->width);
    print_image(k);
    pp_image_free(k);
    return 0;
}

static int do_blur(const char *boundary)
{
    pp_boundary b;
    size_t h, w, n;
    pp_image *x = NULL, *k = NULL, *y = NULL;
    if (pp_boundary_parse(boundary, NULL, &b) != PP_OK)
        return fail("boundary");
    if (scanf("%zu %zu", &h, &w) != 2 || !read_image(w, h, &x) || scanf("%zu", &n) != 1 ||
        !read_image(n, n, &k)) {
        fprintf(stderr, "probe_model: malformed input on stdin\n");
        return 1;
    }
    int rc = pp_model_blur(x, k, b, NULL, &y) == PP_OK ? 0 : fail("blur");
    if (!rc)
        print_image(y);
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(y);
    return rc;
}

static int do_blur3(const char *boundary)
{
    pp_boundary b;
    size_t d, h, w, kd, kh, kw;
    pp_image *x = NULL, *k = NULL, *y = NULL;
    if (pp_boundary_parse(boundary, NULL, &b) != PP_OK)
        return fail("boundary");
    if (scanf("%zu %zu %zu", &d, &h, &w) != 3 || !read_volume(d, h, w, &x) ||
        scanf("%zu %zu %zu", &kd, &kh, &kw) != 3 || !read_volume(kd, kh, kw, &k)) {
        fprintf(stderr, "probe_model: malformed input on stdin\n");
        pp_image_free(x);
        pp_image_free(k);
        return 1;
    }
    int rc = pp_model_blur(x, k, b, NULL, &y) == PP_OK ? 0 : fail("blur3");
    if (!rc)
        print_image(y);
    pp_image_free(x);
    pp_image_free(k);
    pp_image_free(y);
    return rc;
}

static int do_noise(const char *spec, double mu, size_t n, unsigned long long seed)
{
    pp_noise_spec ns;
    pp_image *y = NULL;
    if (pp_noise_parse(spec, NULL, &ns) != PP_OK || pp_image_create(1, n, &y) != PP_OK)
        return fail(spec);
    for (size_t i = 0; i < n; i++)
        y->data[i] = mu;
    pp_rng rng;
    pp_rng_seed(&rng, seed, 0);
    int rc = pp_model_add_noise(y, &ns, NULL, &rng) == PP_OK ? 0 : fail("noise");
    if (!rc)
        print_image(y);
    pp_image_free(y);
    return rc;
}

int main(int argc, char **argv)
{
    if (argc >= 2 && strcmp(argv[1], "j1") == 0) {
        for (int i = 2; i < argc; i++)
            printf("%.17g\n", pp_bessel_j1(strtod(argv[i], NULL)));
        return 0;
    }
    if (argc == 4 && strcmp(argv[1], "psf") == 0)
        return do_psf(argv[2], argv[3]);
    if (argc == 3 && strcmp(argv[1], "blur") == 0)
        return do_blur(argv[2]);
    if (argc == 3 && strcmp(argv[1], "blur3") == 0)
        return do_blur3(argv[2]);
    if (argc == 6 && strcmp(argv[1], "noise") == 0)
        return do_noise(argv[2], strtod(argv[3], NULL), strtoul(argv[4], NULL, 10),
                        strtoull(argv[5], NULL, 10));
    fprintf(stderr, "usage: probe_model j1 X... | psf SPEC SIZE | blur pad|periodic < data |"
                    " blur3 pad|periodic < data | noise SPEC MU N SEED\n");
    return 2;
}
