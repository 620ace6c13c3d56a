/* Unit tests of a volume's report and outputs (src/report_volume.c,
 * src/output.c) on the cases tests/ref_output_volume.py does not reach:
 *  - the block plan: 300 slices of 6 x 5 are shown as means of 3 slices
 *    (100 <= PP_REPORT_VOL_MAX_SLICES), read back from the page's
 *    data-k attribute, and the atlas PNG's size (IHDR) is 10 tiles of 5
 *    by 10 tiles of 6 (cols = ceil(sqrt(100 * 6 / 5)) = 11 gives 10 rows:
 *    worked out by hand below);
 *  - 2 slices of 64 x 64 with cubic voxels: the z views are drawn
 *    stretched, and the page says so;
 *  - refusals leave no file: report images of different depths
 *    (PP_ERR_ARG), and pp_output_write of a volume result whose R-hat map
 *    is present but its MCSE map missing (PP_ERR_ARG, not a crash);
 *  - a frame's page has no script; a volume's has exactly one. */
#include "pixpost/output.h"
#include "pixpost/report.h"
#include "report_internal.h"
#include "testutil.h"
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static int count(const char *s, const char *sub)
{
    int n = 0;
    for (const char *p = s; (p = strstr(p, sub)) != NULL; p += strlen(sub))
        n++;
    return n;
}

static pp_image *ramp_volume(size_t d, size_t h, size_t w)
{
    pp_image *v = NULL;
    pp_image_create3(d, h, w, &v);
    for (size_t i = 0; v && i < pp_image_count(v); i++)
        v->data[i] = (double)(i % 97) + 0.25 * (double)(i / (h * w));
    return v;
}

/* The atlas's PNG width and height from its IHDR (base64 of the first 24
 * bytes: signature 8, length 4, "IHDR" 4, width 4, height 4). */
static int atlas_size(const char *page, unsigned *w, unsigned *h)
{
    const char *p = strstr(page, "id=\"mean-atlas\"");
    p = p ? strstr(p, "base64,") : NULL;
    if (!p)
        return 0;
    p += 7;
    static const char a[] = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    unsigned char b[24];
    for (int i = 0; i < 8; i++) {
        unsigned v = 0;
        for (int j = 0; j < 4; j++)
            v = v << 6 | (unsigned)(strchr(a, p[4 * i + j]) - a);
        b[3 * i] = (unsigned char)(v >> 16), b[3 * i + 1] = (unsigned char)(v >> 8);
        b[3 * i + 2] = (unsigned char)v;
    }
    *w = (unsigned)b[16] << 24 | (unsigned)b[17] << 16 | (unsigned)b[18] << 8 | b[19];
    *h = (unsigned)b[20] << 24 | (unsigned)b[21] << 16 | (unsigned)b[22] << 8 | b[23];
    return 1;
}

static int dir_empty(const char *dir)
{
    DIR *d = opendir(dir);
    struct dirent *e;
    int n = 0;
    while (d && (e = readdir(d)) != NULL)
        n += strcmp(e->d_name, ".") != 0 && strcmp(e->d_name, "..") != 0;
    if (d)
        closedir(d);
    return d && n == 0;
}

int main(void)
{
    const char *dir = pp_test_tmpdir();
    char path[512];
    snprintf(path, sizeof path, "%s/report.html", dir);

    /* many slices: blocks of 3 slices */
    pp_image *m = ramp_volume(300, 6, 5);
    pp_report_input in;
    pp_report_input_init(&in);
    in.mean = m;
    CHECK(pp_report_write(path, &in) == PP_OK, "300 slices: %s", pp_error_message());
    char *page = pp_test_slurp(path);
    unsigned aw = 0, ah = 0;
    CHECK(page && strstr(page, "data-k=\"3,1,1\"") && strstr(page, "max=\"99\""),
          "300 slices shown as 100 means of 3 (data-k 3,1,1, z slider 0..99)");
    /* 100 tiles of 5 wide x 6 high; cols = ceil(sqrt(100 * 6 / 5)) = ceil(10.95) = 11,
     * rows = ceil(100 / 11) = 10: 55 x 60 */
    CHECK(page && atlas_size(page, &aw, &ah) && aw == 55 && ah == 60,
          "atlas PNG 55 x 60 (11 x 10 tiles of 5 x 6), got %u x %u", aw, ah);
    CHECK(page && count(page, "<script>") == 1 && strstr(page, "voxel size not known"),
          "a volume's page: one script; the voxel size is said to be unknown");
    /* issue #19: the map's plain sentence; no frame overlay */
    CHECK(page && strstr(page, "<span class=\"plain\" id=\"mean-plain\">") &&
              strstr(page, "The reconstruction: the average of the sampled sharp images") &&
              !strstr(page, "class=\"marks\""),
          "a volume's mean has its plain sentence and, voxel size unknown, no scale bar");
    free(page);
    pp_image_free(m);

    /* two slices with cubic voxels: the z views are stretched to be seen */
    m = ramp_volume(2, 64, 64);
    in.mean = m;
    const double cubic[3] = {1, 1, 1};
    in.voxel = cubic;
    CHECK(pp_report_write(path, &in) == PP_OK, "2 slices: %s", pp_error_message());
    page = pp_test_slurp(path);
    CHECK(page && strstr(page, "drawn stretched") && strstr(page, "data-k=\"1,1,1\""),
          "2 slices of 64 x 64: the z views are drawn stretched, no blocks");
    /* 1 um voxels, 64 wide: a fifth is 12.8 um, the bar 10 um = 10 pixels,
     * on the XY view only */
    CHECK(page && strstr(page, "<svg class=\"marks\" id=\"mean-xy-marks\" viewBox=\"0 0 64 64\"") &&
              strstr(page, "<g class=\"scalebar\" id=\"mean-xy-marks-bar\" data-um=\"10\" "
                           "data-pixels=\"10\">") &&
              !strstr(page, "id=\"mean-xz-marks\"") && !strstr(page, "id=\"mean-yz-marks\""),
          "a 10 um scale bar over the XY view only");
    free(page);

    /* images of different depths: refused, no file */
    remove(path);
    pp_image *f = NULL;
    pp_image_create(64, 64, &f);
    in.frame = f;
    CHECK(pp_report_write(path, &in) == PP_ERR_ARG && strstr(pp_error_message(), "differ"),
          "a frame beside a volume is refused: %s", pp_error_message());
    CHECK(dir_empty(dir), "nothing written for the refused report");

    /* a frame's page has no script */
    in.mean = f, in.voxel = NULL;
    for (size_t i = 0; i < 64 * 64; i++)
        f->data[i] = (double)(i % 13);
    CHECK(pp_report_write(path, &in) == PP_OK, "frame: %s", pp_error_message());
    page = pp_test_slurp(path);
    CHECK(page && count(page, "<script") == 0 && !strstr(page, "type=\"range\""),
          "a frame's page has no script and no slider");
    free(page);
    remove(path);

    /* a volume result with an R-hat map but no MCSE map: refused, nothing written */
    pp_result r;
    memset(&r, 0, sizeof r);
    pp_sampler_defaults(&r.config);
    r.frame = pp_shape_3d(2, 64, 64);
    r.mean = r.sd = r.lo = r.hi = r.rhat_map = m;
    CHECK(pp_output_write(dir, &r, NULL, NULL) == PP_ERR_ARG && strstr(pp_error_message(), "mcse"),
          "a missing MCSE map is refused: %s", pp_error_message());
    CHECK(dir_empty(dir), "nothing written for the refused result");
    pp_image_free(f);
    pp_image_free(m);
    return pp_test_done();
}
