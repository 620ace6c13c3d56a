/* Unit tests of the run report (src/report.c, report_svg.c, report_png.c):
 * a synthetic input (random images, a fake trace of 4 chains) gives a page
 * that starts with the doctype, has every section and element id, names no
 * network address, carries the cautions text and escapes user strings;
 * refusals (missing folder -> PP_ERR_IO, mismatched sizes and a bad level
 * -> PP_ERR_ARG) leave no file; fixed hyperparameters and a missing table
 * give notes; long traces are decimated to <= 1000 points per chain with a
 * spike kept; a large image is shown as block means (PNG size read back from
 * the embedded data URI); and the helpers (ticks, autocorrelation,
 * percentiles, colour ramp, escaping) on cases worked out by hand. */
#include "pixpost/report.h"
#include "pixpost/rng.h"
#include "pixpost/setting.h"
#include "report_internal.h"
#include "testutil.h"
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

enum { NCOL = 4, CHAINS = 4 };
static const char *const names[NCOL] = {"lambda", "delta", "loglik", "p_3_5"};

typedef struct synth {
    pp_image *im[5]; /* frame mean sd lo hi */
    double *v;
    pp_trace t;
    pp_report_input in;
} synth;

static void synth_make(synth *s, size_t w, size_t h, size_t kept, uint64_t seed)
{
    memset(s, 0, sizeof *s);
    pp_rng rng;
    pp_rng_seed(&rng, seed, 0);
    for (int i = 0; i < 5; i++)
        pp_image_create(h, w, &s->im[i]);
    for (size_t i = 0; i < w * h; i++) {
        s->im[0]->data[i] = 100 + 10 * pp_rng_normal(&rng);
        s->im[1]->data[i] = 100 + 5 * pp_rng_normal(&rng);
        s->im[2]->data[i] = 1 + pp_rng_uniform(&rng);
        s->im[3]->data[i] = s->im[1]->data[i] - 2 * s->im[2]->data[i];
        s->im[4]->data[i] = s->im[1]->data[i] + 2 * s->im[2]->data[i];
    }
    s->v = malloc(CHAINS * kept * NCOL * sizeof *s->v);
    for (size_t i = 0; i < CHAINS * kept * NCOL; i++)
        s->v[i] = 1 + 0.1 * pp_rng_normal(&rng);
    s->t = (pp_trace){CHAINS, kept, NCOL, names, s->v};
    pp_report_input_init(&s->in);
    s->in.frame = s->im[0], s->in.mean = s->im[1], s->in.sd = s->im[2];
    s->in.lo = s->im[3], s->in.hi = s->im[4];
    s->in.trace = &s->t;
    s->in.units = "ADU";
}

static void synth_free(synth *s)
{
    for (int i = 0; i < 5; i++)
        pp_image_free(s->im[i]);
    free(s->v);
}

static int count_entries(const char *dir)
{
    DIR *d = opendir(dir);
    int n = 0;
    struct dirent *e;
    while (d && (e = readdir(d)))
        n += e->d_name[0] != '.' || (strcmp(e->d_name, ".") && strcmp(e->d_name, ".."));
    if (d)
        closedir(d);
    return n;
}

static int has(const char *html, const char *s)
{
    return html && strstr(html, s) != NULL;
}

static const char *const ids[] = {
    "id=\"frame-image\"", "id=\"mean-image\"",      "id=\"sd-image\"",      "id=\"sd-colourbar\"",
    "id=\"width-image\"", "id=\"width-colourbar\"", "id=\"trace-lambda\"",  "id=\"acf-lambda\"",
    "id=\"trace-delta\"", "id=\"trace-p_3_5\"",     "id=\"hist-lambda\"",   "id=\"hist-delta\"",
    "id=\"diag-table\"",  "id=\"settings-table\"",  "id=\"warnings-list\"", "id=\"cautions\"",
    "id=\"images\"",      "id=\"traces\"",          "id=\"histograms\"",    "id=\"diagnostics\""};

static void test_full_page(const char *dir)
{
    synth s;
    synth_make(&s, 40, 30, 300, 7);
    pp_report_scalar sc[2] = {{"lambda", 1, 0.1, 1.05, 800, 900, 0.01},
                              {"delta", 1, 0.1, 1.001, 399, 900, 0.01}};
    const char *keys[2] = {"input", "note"}, *vals[2] = {"x.tif", "a&b"};
    const char *warn[1] = {"chains <disagree>"};
    s.in.title = "evil<script>alert(1)</script>.tif";
    s.in.scalars = sc, s.in.nscalars = 2;
    s.in.settings_keys = keys, s.in.settings_values = vals, s.in.nsettings = 2;
    s.in.warnings = warn, s.in.nwarnings = 1;
    char path[4200];
    snprintf(path, sizeof path, "%s/report.html", dir);
    pp_status st = pp_report_write(path, &s.in);
    CHECK(st == PP_OK, "report write failed: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    CHECK(html != NULL, "report.html missing");
    CHECK(html && strncmp(html, "<!DOCTYPE html>\n", 16) == 0, "no doctype at the start");
    CHECK(has(html, "</html>\n"), "page not closed");
    for (size_t i = 0; i < sizeof ids / sizeof ids[0]; i++)
        CHECK(has(html, ids[i]), "missing %s", ids[i]);
    CHECK(!has(html, "http://") && !has(html, "https://"), "page names a network address");
    CHECK(!has(html, "<script"), "a <script> reached the page unescaped");
    CHECK(has(html, "evil&lt;script&gt;alert(1)&lt;/script&gt;.tif"), "title not escaped");
    CHECK(has(html, "a&amp;b") && has(html, "chains &lt;disagree&gt;"), "setting/warning");
    CHECK(has(html, "A reconstruction is a model-based estimate. Its error bars hold only under "
                    "the stated model \xe2\x80\x94 the PSF, the noise model and the prior. pixpost "
                    "is not a diagnostic device; for clinical or forensic use, follow local rules "
                    "and practice."),
          "cautions text missing");
    /* thresholds stated, and the flagged cells (R-hat 1.05; ESS 399 < 400) */
    CHECK(has(html, "R&#770; &gt; 1.01") && has(html, "ESS &lt; 100 per chain"), "thresholds");
    CHECK(has(html, "1.05 <span class=\"flag\">high</span>"), "R-hat 1.05 not flagged");
    CHECK(has(html, "399 <span class=\"flag\">low</span>"), "ESS 399 of 4 chains not flagged");
    CHECK(!has(html, "1.001 <span"), "R-hat 1.001 flagged");
    CHECK(has(html, "2 of 2 quantities flagged"), "flag count");
    CHECK(has(html, "src=\"data:image/png;base64,iVBORw0KGgo"), "no embedded PNG");
    CHECK(count_entries(dir) == 1, "extra files beside report.html: %d", count_entries(dir));
    free(html);
    synth_free(&s);
}

/* Photon models: the frame is in ADU, the estimates in photons per pixel,
 * and each caption and colour bar says its own. */
static void test_units(const char *dir)
{
    synth s;
    synth_make(&s, 20, 16, 50, 3);
    s.in.units = "photons per pixel";
    s.in.frame_units = "ADU";
    char path[4200];
    snprintf(path, sizeof path, "%s/units.html", dir);
    CHECK(pp_report_write(path, &s.in) == PP_OK, "report write failed: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    CHECK(has(html, "frame in ADU, estimates in photons per pixel"), "header units");
    const char *fr = html ? strstr(html, "id=\"frame-image\"") : NULL;
    const char *mn = html ? strstr(html, "id=\"mean-image\"") : NULL;
    const char *sd = html ? strstr(html, "id=\"sd-image\"") : NULL;
    int frame_adu = 0, mean_ph = 0;
    if (fr && mn && sd && fr < mn && mn < sd) {
        const char *a = strstr(fr, " ADU (the"), *b = strstr(mn, " photons per pixel (the");
        frame_adu = a && a < mn;
        mean_ph = b && b < sd;
    }
    CHECK(frame_adu, "the frame's caption is in ADU");
    CHECK(mean_ph, "the mean's caption is in photons per pixel");
    free(html);
    synth_free(&s);
}

static void test_refusals(const char *dir)
{
    synth s;
    synth_make(&s, 8, 6, 20, 8);
    char path[4200], missing[2048];
    snprintf(missing, sizeof missing, "%.1500s/no_such_folder", dir);
    snprintf(path, sizeof path, "%s/report.html", missing);
    CHECK(pp_report_write(path, &s.in) == PP_ERR_IO, "missing folder not PP_ERR_IO");
    CHECK(strstr(pp_error_message(), "no_such_folder") != NULL, "message lacks the path: %s",
          pp_error_message());
    struct stat sb;
    CHECK(stat(missing, &sb) != 0, "the missing folder was created");
    snprintf(path, sizeof path, "%s/bad.html", dir);
    pp_image *other;
    pp_image_create(6, 9, &other);
    s.in.sd = other;
    CHECK(pp_report_write(path, &s.in) == PP_ERR_ARG, "size mismatch accepted");
    s.in.sd = s.im[2];
    s.in.level = 1.0;
    CHECK(pp_report_write(path, &s.in) == PP_ERR_ARG, "level 1 accepted");
    CHECK(count_entries(dir) == 0, "a refusal left %d files", count_entries(dir));
    pp_image_free(other);
    synth_free(&s);
}

static void test_fixed_and_empty(const char *dir)
{
    synth s;
    synth_make(&s, 8, 6, 50, 9);
    for (size_t i = 0; i < CHAINS * 50; i++)
        s.v[i * NCOL + 1] = 3.5; /* delta held at 3.5 */
    s.in.delta_fixed = 1;
    s.in.frame = s.in.lo = NULL; /* no frame, no width map */
    char path[4200];
    snprintf(path, sizeof path, "%s/fixed.html", dir);
    CHECK(pp_report_write(path, &s.in) == PP_OK, "write: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    CHECK(has(html, "id=\"hist-delta-note\"") && !has(html, "id=\"hist-delta\""), "hist note");
    CHECK(has(html, "fixed at 3.5 (not sampled)"), "fixed value not stated");
    CHECK(!has(html, "id=\"trace-delta\"") && has(html, "id=\"trace-lambda\""), "traces");
    CHECK(has(html, "id=\"diag-none\"") && !has(html, "id=\"diag-table\""), "empty table");
    CHECK(has(html, "id=\"warnings-none\""), "no-warnings note");
    CHECK(!has(html, "frame-image") && !has(html, "width-image") && has(html, "mean-image"),
          "omitted images");
    free(html);
    synth_free(&s);
}

/* Points of the polyline of chain k inside the element with this id, and
 * its smallest SVG y (the highest value). */
static size_t polyline_points(const char *html, const char *id, int k, double *ymin)
{
    const char *p = strstr(html, id);
    char tag[40];
    snprintf(tag, sizeof tag, "data-chain=\"%d\"", k);
    p = p ? strstr(p, tag) : NULL;
    p = p ? strstr(p, "points=\"") : NULL;
    size_t n = 0;
    *ymin = INFINITY;
    if (!p)
        return 0;
    p += 8;
    double x, y;
    int used;
    while (*p != '"' && sscanf(p, "%lf,%lf %n", &x, &y, &used) == 2) {
        n++;
        *ymin = fmin(*ymin, y);
        p += used;
    }
    return n;
}

static void test_decimation(const char *dir)
{
    synth s;
    size_t kept = 5000;
    synth_make(&s, 8, 6, kept, 10);
    s.v[(1234) * NCOL + 0] = 9.0; /* a spike in chain 1's lambda */
    char path[4200];
    snprintf(path, sizeof path, "%s/long.html", dir);
    CHECK(pp_report_write(path, &s.in) == PP_OK, "write: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    double y1 = 0, y2 = 0; /* stay 0 when the page is missing (n1 = n2 = 0 fails) */
    size_t n1 = html ? polyline_points(html, "id=\"trace-lambda\"", 1, &y1) : 0;
    size_t n2 = html ? polyline_points(html, "id=\"trace-lambda\"", 2, &y2) : 0;
    CHECK(n1 > 500 && n1 <= 1000 && n2 > 500 && n2 <= 1000, "points per chain %zu %zu", n1, n2);
    /* the spike (9, vs ~1 +- 0.1 elsewhere) is the top point of the plot */
    CHECK(y1 < y2 - 50, "spike lost in decimation (y %g vs %g)", y1, y2);
    CHECK(has(html, "minimum and maximum of each block"), "decimation not stated");
    free(html);
    synth_free(&s);
}

static int b64(char c)
{
    const char *a = "ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/";
    const char *p = c ? strchr(a, c) : NULL;
    return p ? (int)(p - a) : -1;
}

/* PNG width and height from the first 32 base64 characters of a data URI
 * (signature 8 bytes, IHDR length and type 8, then width and height). */
static int png_size(const char *uri, unsigned *w, unsigned *h)
{
    unsigned char b[24];
    for (int i = 0; i < 8; i++) {
        int q[4];
        for (int j = 0; j < 4; j++)
            if ((q[j] = b64(uri[4 * i + j])) < 0)
                return 0;
        unsigned v = (unsigned)(q[0] << 18 | q[1] << 12 | q[2] << 6 | q[3]);
        b[3 * i] = (unsigned char)(v >> 16), b[3 * i + 1] = (unsigned char)(v >> 8);
        b[3 * i + 2] = (unsigned char)v;
    }
    if (memcmp(b, "\x89PNG\r\n\x1a\n", 8) != 0 || memcmp(b + 12, "IHDR", 4) != 0)
        return 0;
    *w = (unsigned)b[16] << 24 | (unsigned)b[17] << 16 | (unsigned)b[18] << 8 | b[19];
    *h = (unsigned)b[20] << 24 | (unsigned)b[21] << 16 | (unsigned)b[22] << 8 | b[23];
    return 1;
}

static void test_large_image(const char *dir)
{
    synth s;
    synth_make(&s, 1100, 300, 10, 11); /* longest side 1100 > 1024: blocks of 2 */
    char path[4200];
    snprintf(path, sizeof path, "%s/large.html", dir);
    CHECK(pp_report_write(path, &s.in) == PP_OK, "write: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    const char *p = html ? strstr(html, "id=\"mean-image\"") : NULL;
    p = p ? strstr(p, "base64,") : NULL;
    unsigned w = 0, h = 0;
    CHECK(p && png_size(p + 7, &w, &h), "embedded PNG header unreadable");
    CHECK(w == 550 && h == 150, "block-mean PNG is %ux%u, expected 550x150", w, h);
    CHECK(has(html, "means of 2&times;2 pixel blocks"), "block means not stated");
    free(html);
    synth_free(&s);
}

static void test_ticks(void)
{
    pp_rng rng;
    pp_rng_seed(&rng, 12, 0);
    int bad = 0;
    for (int k = 0; k < 2000; k++) {
        double lo = (pp_rng_uniform(&rng) - 0.5) * pow(10, 12 * pp_rng_uniform(&rng) - 6);
        double hi = lo + pow(10, 12 * pp_rng_uniform(&rng) - 6);
        pp_ticks t;
        pp_report_ticks(lo, hi, 5, &t);
        double m = t.step / pow(10, floor(log10(t.step) + 1e-9));
        int nice = fabs(m - 1) < 1e-9 || fabs(m - 2) < 1e-9 || fabs(m - 5) < 1e-9;
        int covers = t.amin <= lo + 1e-9 * t.step && t.amax >= hi - 1e-9 * t.step;
        bad += !nice || !covers || t.count < 3 || t.count > 12;
    }
    CHECK(bad == 0, "%d of 2000 random ranges gave ticks that are not round or do not cover", bad);
    pp_ticks t;
    char b[48];
    pp_report_ticks(0.034, 0.0502, 5, &t);
    CHECK(fabs(t.step - 0.005) < 1e-15 && fabs(t.amin - 0.030) < 1e-15, "step %g min %g", t.step,
          t.amin);
    pp_report_tick_label(&t, 0.045, b, sizeof b);
    CHECK(strcmp(b, "0.045") == 0, "label %s", b);
    pp_report_ticks(-1, 1, 5, &t);
    pp_report_tick_label(&t, t.amin + 2 * t.step, b, sizeof b);
    CHECK(strcmp(b, "0.0") == 0 || strcmp(b, "0") == 0, "origin label %s", b);
    pp_report_ticks(0, 4e-4, 5, &t);
    pp_report_tick_label(&t, 3e-4, b, sizeof b);
    CHECK(strcmp(b, "3e-4") == 0, "scientific label %s", b);
    pp_report_ticks(40000, 46000, 4, &t);
    pp_report_tick_label(&t, 42000, b, sizeof b);
    CHECK(strcmp(b, "42000") == 0, "large label %s", b);
    pp_report_ticks(2.5, 2.5, 5, &t);
    CHECK(t.amin < 2.5 && t.amax > 2.5 && t.count >= 3, "constant range");
}

static void test_helpers(void)
{
    /* y = 1,2,3,4: deviations -1.5,-.5,.5,1.5, sum of squares 5; lag 1
     * products 1.25, lag 2 -1.5 (by hand) */
    double y[4] = {1, 2, 3, 4}, r[3];
    CHECK(pp_report_acf(y, 4, 1, 2, r) == 1, "acf refused");
    CHECK(fabs(r[0] - 1) < 1e-15 && fabs(r[1] - 0.25) < 1e-15 && fabs(r[2] + 0.3) < 1e-15,
          "acf %g %g %g", r[0], r[1], r[2]);
    double c[5] = {0.1, 0.1, 0.1, 0.1, 0.1};
    CHECK(pp_report_acf(c, 5, 1, 2, r) == 0, "constant series gave an autocorrelation");
    /* 0..99: numpy.percentile(range(100), [0.5, 99.5]) = 0.495, 98.505 */
    pp_image *im;
    pp_image_create(10, 10, &im);
    for (int i = 0; i < 100; i++)
        im->data[i] = 99 - i;
    im->data[5] = NAN; /* value 94 dropped: 0..93, 95..99 remain */
    double lo, hi;
    CHECK(pp_display_percentiles(im, 0.5, 99.5, &lo, &hi) == PP_OK, "percentiles");
    /* 99 finite values; h = 98 * 0.995 = 97.51 -> 98 + 0.51 * (99 - 98) */
    CHECK(fabs(lo - 0.49) < 1e-12 && fabs(hi - 98.51) < 1e-12, "percentiles %g %g", lo, hi);
    pp_image_free(im);
    /* the ramp: ends at its first and last stop, luminance rises throughout */
    unsigned char a[3], z[3], s0[3], s3[3];
    double pos;
    pp_report_ramp(0, a);
    pp_report_ramp(1, z);
    pp_report_ramp_stop(0, &pos, s0);
    pp_report_ramp_stop(PP_REPORT_RAMP_STOPS - 1, &pos, s3);
    CHECK(memcmp(a, s0, 3) == 0 && memcmp(z, s3, 3) == 0, "ramp ends");
    double prev = -1;
    int mono = 1;
    for (int i = 0; i <= 100; i++) {
        unsigned char c3[3];
        pp_report_ramp(i / 100.0, c3);
        double l = 0.2126 * c3[0] + 0.7152 * c3[1] + 0.0722 * c3[2]; /* Rec. 709 weights */
        mono &= l >= prev;
        prev = l;
    }
    CHECK(mono, "ramp luminance not monotone");
}

/* The page's own sentences name settings by the caller's names (issue 18):
 * in the library's words without a table, by the table's names (escaped)
 * with one; the strict exit status only when the caller names it. */
static void test_setting_names(const char *dir)
{
    synth s;
    synth_make(&s, 40, 30, 300, 9);
    s.in.residual = s.in.sd;
    s.in.checks_summary = "a summary";
    char path[4200];
    snprintf(path, sizeof path, "%s/names.html", dir);
    static const char *const flags[PP_SET_COUNT] = {
        [PP_SET_BOUNDARY] = "--boundary", [PP_SET_STRICT] = "--strict"};
    static const char *const odd[PP_SET_COUNT] = {[PP_SET_BOUNDARY] = "<b>"};
    for (int k = 0; k < 3; k++) {
        s.in.setting_names = k == 0 ? NULL : k == 1 ? flags : odd;
        CHECK(pp_report_write(path, &s.in) == PP_OK, "write: %s", pp_error_message());
        char *html = pp_test_slurp(path);
        if (k == 0)
            CHECK(has(html, "the frame's edges with boundary pad, unobserved pixels") &&
                      has(html, "they do not change the verdict above.</p>") &&
                      !has(html, "--boundary") && !has(html, "--strict"),
                  "no names: the library's words");
        else if (k == 1)
            CHECK(has(html, "the frame's edges with --boundary pad, unobserved pixels") &&
                      has(html, "the verdict above or the exit status under --strict.</p>"),
                  "the command line's names");
        else
            CHECK(has(html, "edges with &lt;b&gt; pad") && !has(html, "<b> pad") &&
                      has(html, "the verdict above.</p>"),
                  "a caller's name escaped; no strict name, no exit status");
        free(html);
    }
    remove(path);
    synth_free(&s);
}

static void test_escape(const char *dir)
{
    char cut[8];
    pp_report_escape_str(cut, sizeof cut, "a<b");
    CHECK(strcmp(cut, "a&lt;b") == 0, "escape into a buffer: \"%s\"", cut);
    pp_report_escape_str(cut, 4, "a<b");
    CHECK(strcmp(cut, "a&l") == 0, "cut to the buffer: \"%s\"", cut);
    char path[4200];
    snprintf(path, sizeof path, "%s/esc.txt", dir);
    FILE *f = fopen(path, "wb");
    pp_report_escape(f, "a\x01\xff\xc3\xa9<'\xe2\x82");
    fclose(f);
    char *s = pp_test_slurp(path);
    /* control char and the bad byte -> U+FFFD; e-acute kept; a cut-off
     * 3-byte sequence -> U+FFFD per byte */
    CHECK(s && strcmp(s, "a\xef\xbf\xbd\xef\xbf\xbd\xc3\xa9&lt;&#39;\xef\xbf\xbd\xef\xbf\xbd") == 0,
          "escape gave \"%s\"", s ? s : "(null)");
    free(s);
    remove(path);
}

/* Issue #19 item 4: a sentence in plain words under each map; the probe
 * pixel p_3_5 circled at its pixel's centre (column 5 + 0.5, row 3 + 0.5 in
 * the image's own coordinates) on every image; a scale bar only when the
 * pixel size is known, of the round length pp_report_bar_um picks. */
static void test_marks(const char *dir)
{
    synth s;
    synth_make(&s, 40, 30, 50, 11);
    char path[4200];
    snprintf(path, sizeof path, "%s/marks.html", dir);
    CHECK(pp_report_write(path, &s.in) == PP_OK, "report write failed: %s", pp_error_message());
    char *html = pp_test_slurp(path);
    static const char *const keys[4] = {"frame", "mean", "sd", "width"};
    for (int k = 0; k < 4; k++) {
        char id[64];
        snprintf(id, sizeof id, "<span class=\"plain\" id=\"%s-plain\">", keys[k]);
        CHECK(has(html, id), "no plain sentence for %s", keys[k]);
        snprintf(id, sizeof id, "<svg class=\"marks\" id=\"%s-marks\" viewBox=\"0 0 40 30\"",
                 keys[k]);
        CHECK(has(html, id), "no marks over %s", keys[k]);
    }
    CHECK(has(html, "How far the sharp image may plausibly be from the mean at each pixel, "
                    "under the model"),
          "the sd's plain sentence");
    CHECK(has(html, "with 95% probability at each pixel"), "the width's sentence gives the level");
    CHECK(has(html, "<g class=\"probe\" data-row=\"3\" data-col=\"5\"><circle cx=\"5.50\" "
                    "cy=\"3.50\""),
          "probe p_3_5 circled at its pixel");
    CHECK(has(html, ">p_3_5</text>"), "probe named as in the traces");
    CHECK(!has(html, "class=\"scalebar\""), "a scale bar without a pixel size");
    free(html);
    /* 40 pixels of 0.1 um: a fifth is 0.8 um, the bar 0.5 um = 5 pixels */
    double vox[3] = {0, 0, 0.1};
    s.in.voxel = vox;
    CHECK(pp_report_write(path, &s.in) == PP_OK, "report write failed: %s", pp_error_message());
    html = pp_test_slurp(path);
    CHECK(has(html,
              "<g class=\"scalebar\" id=\"mean-marks-bar\" data-um=\"0.5\" data-pixels=\"5\">") &&
              has(html, ">500 nm</text>"),
          "scale bar of 0.5 um = 5 pixels on the mean");
    free(html);
    /* no probe inside the image and no pixel size: no overlay at all */
    static const char *const far[NCOL] = {"lambda", "delta", "loglik", "p_300_5"};
    s.t.names = far;
    s.in.voxel = NULL;
    CHECK(pp_report_write(path, &s.in) == PP_OK, "report write failed: %s", pp_error_message());
    html = pp_test_slurp(path);
    CHECK(html && !has(html, "class=\"marks\""), "an overlay with nothing on it");
    free(html);
    synth_free(&s);
    /* round lengths: the largest 1, 2 or 5 x 10^k um not above a fifth of the width */
    static const struct {
        size_t w;
        double px, want;
    } bars[] = {{192, 0.065, 2},  {100, 1, 20}, {64, 0.065, 0.5}, {512, 0.1, 10},
                {1000, 0.05, 10}, {50, 0.1, 1}, {10, 0, 0},       {10, -1, 0}};
    for (size_t i = 0; i < sizeof bars / sizeof *bars; i++) {
        double got = pp_report_bar_um(bars[i].w, bars[i].px);
        CHECK(fabs(got - bars[i].want) <= 1e-12 * bars[i].want, "bar of %zu x %g um: %g, want %g",
              bars[i].w, bars[i].px, got, bars[i].want);
    }
}

int main(void)
{
    const char *base = pp_test_tmpdir();
    char d[5][1100];
    const char *sub[5] = {"full", "refuse", "fixed", "long", "large"};
    for (int i = 0; i < 5; i++) {
        snprintf(d[i], sizeof d[i], "%.1000s/%s", base, sub[i]);
        mkdir(d[i], 0777);
    }
    test_full_page(d[0]);
    test_refusals(d[1]);
    test_fixed_and_empty(d[2]);
    test_decimation(d[3]);
    test_large_image(d[4]);
    test_ticks();
    test_helpers();
    test_escape(d[0]);
    test_setting_names(d[0]);
    test_units(d[2]);
    test_marks(d[2]);
    return pp_test_done();
}
