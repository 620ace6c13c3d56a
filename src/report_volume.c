/* pixpost — the images section of a volume's report page: per image
 * (input, mean, sd, interval width, residual) the orthogonal views XY at
 * the chosen z, XZ at the chosen y and YZ at the chosen x, sliders over z,
 * y and x (a click on a view moves the cursor too), and the page's one
 * small inline script, which draws the views.
 *
 * What is embedded: per image one 8-bit grey PNG (data URI) that tiles its
 * XY slices in rows, mapped as a frame's images are (grey: black to white
 * over the 0.5th..99.5th percentiles of the whole volume (the sd and the
 * width from 0 to the 99.5th, src/display.h); the colour maps
 * store the same 8-bit level and the script looks the colour up in a
 * 256-entry table of pixpost's ramp). The script reads each tile set back
 * from a canvas once and draws any slice, row or column from it, so the
 * page holds each voxel once instead of three sets of slices. A volume
 * past PP_REPORT_VOL_MAX_SLICES slices is shown as means of blocks of
 * slices, and then one past PP_REPORT_VOL_MAX_VOXELS voxels as means of
 * square blocks in the plane (a 64 x 256 x 256 volume: 2 x 2 blocks), so
 * the page stays a few MB. The views keep the voxel's aspect (cubes when
 * the voxel size is not known).
 *
 * Cost: one sort per image (percentiles), one pass to average and map, one
 * PNG encode of at most PP_REPORT_VOL_MAX_VOXELS bytes per image. */
#include "internal.h"
#include "pixpost/report.h"
#include "report_internal.h"
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* CSS pixels for the larger of the views' two sums of extents. */
#define VIEW_BOX 540.0
/* The z views are drawn at least this share of the plane's larger side. */
#define MIN_Z_SHARE 0.15

typedef struct volplan {
    size_t n[3];   /* the volume: depth, height, width */
    size_t k[3];   /* block sides along z, y, x */
    size_t s[3];   /* the shown volume: ceil(n / k) */
    size_t cols;   /* tiles per row of the atlas */
    double vox[3]; /* voxel z, y, x in micrometres; 0: not known */
    double css[3]; /* CSS pixels of the shown volume's extent along z, y, x */
    int stretched; /* the z views are drawn wider than the voxel's aspect */
} volplan;

static size_t ceil_div(size_t a, size_t b)
{
    return (a + b - 1) / b;
}

static void plan(const pp_image *im, const double *voxel, volplan *p)
{
    p->n[0] = im->depth, p->n[1] = im->height, p->n[2] = im->width;
    p->k[0] = ceil_div(p->n[0], PP_REPORT_VOL_MAX_SLICES);
    p->s[0] = ceil_div(p->n[0], p->k[0]);
    size_t side = p->n[1] > p->n[2] ? p->n[1] : p->n[2], k = ceil_div(side, PP_REPORT_MAX_SIDE);
    while (ceil_div(p->n[1], k) * ceil_div(p->n[2], k) * p->s[0] > PP_REPORT_VOL_MAX_VOXELS)
        k++;
    p->k[1] = p->k[2] = k;
    p->s[1] = ceil_div(p->n[1], k), p->s[2] = ceil_div(p->n[2], k);
    double t = sqrt((double)p->s[0] * (double)p->s[1] / (double)p->s[2]);
    p->cols = (size_t)ceil(t);
    p->cols = p->cols < 1 ? 1 : p->cols > p->s[0] ? p->s[0] : p->cols;
    int known = voxel && voxel[0] > 0 && voxel[1] > 0 && voxel[2] > 0;
    double e[3];
    for (int a = 0; a < 3; a++) {
        p->vox[a] = voxel && voxel[a] > 0 ? voxel[a] : 0;
        e[a] = (double)p->s[a] * (double)p->k[a] * (known ? voxel[a] : 1.0);
    }
    double plane = e[1] > e[2] ? e[1] : e[2];
    p->stretched = e[0] < MIN_Z_SHARE * plane;
    if (p->stretched)
        e[0] = MIN_Z_SHARE * plane;
    double big = (e[1] > e[2] ? e[1] : e[2]) + e[0], scale = VIEW_BOX / big;
    for (int a = 0; a < 3; a++)
        p->css[a] = e[a] * scale;
}

/* The atlas of img: its shown slices (block means of the finite voxels,
 * NaN where none) mapped to grey levels over lo..hi, tiled p->cols to a
 * row; *w x *h bytes, unused tiles 0. NULL when out of memory. */
static unsigned char *atlas(const pp_image *img, const volplan *p, double lo, double hi, size_t *w,
                            size_t *h)
{
    size_t ns = p->s[0] * p->s[1] * p->s[2];
    double *sum = calloc(ns, sizeof *sum);
    unsigned *cnt = calloc(ns, sizeof *cnt);
    *w = p->cols * p->s[2], *h = ceil_div(p->s[0], p->cols) * p->s[1];
    unsigned char *px = sum && cnt ? calloc(*w * *h, 1) : NULL;
    if (!px) {
        free(sum), free(cnt);
        return NULL;
    }
    for (size_t z = 0; z < p->n[0]; z++)
        for (size_t y = 0; y < p->n[1]; y++)
            for (size_t x = 0; x < p->n[2]; x++) {
                double v = img->data[(z * p->n[1] + y) * p->n[2] + x];
                size_t j = ((z / p->k[0]) * p->s[1] + y / p->k[1]) * p->s[2] + x / p->k[2];
                if (isfinite(v))
                    sum[j] += v, cnt[j]++;
            }
    for (size_t z = 0; z < p->s[0]; z++)
        for (size_t y = 0; y < p->s[1]; y++)
            for (size_t x = 0; x < p->s[2]; x++) {
                size_t j = (z * p->s[1] + y) * p->s[2] + x;
                double v = cnt[j] ? sum[j] / cnt[j] : NAN;
                size_t row = (z / p->cols) * p->s[1] + y, col = (z % p->cols) * p->s[2] + x;
                px[row * *w + col] = pp_report_grey((v - lo) / (hi - lo));
            }
    free(sum), free(cnt);
    return px;
}

/* One view: a canvas of w x h shown pixels drawn cw x ch CSS pixels; its
 * horizontal and vertical axes (for the cursor lines and clicks); a scale
 * bar over it when pixel_um (of a shown pixel along its width) is > 0. */
static void view(FILE *f, const char *key, const char *name, char ah, char av, size_t w, size_t h,
                 double cw, double ch, double pixel_um)
{
    fprintf(f,
            "<div class=\"view\" data-h=\"%c\" data-v=\"%c\"><canvas id=\"%s-%s\" width=\"%zu\" "
            "height=\"%zu\" style=\"width:%.1fpx;height:%.1fpx\"></canvas><i class=\"ch\"></i>"
            "<i class=\"cv\"></i>",
            ah, av, key, name, w, h, cw, ch);
    char id[64];
    snprintf(id, sizeof id, "%s-%s-marks", key, name);
    pp_report_marks(f, id, w, h, NULL, pixel_um, cw);
    fputs("</div>\n", f);
}

typedef struct quantity {
    const char *key, *title, *explain, *units;
    const pp_image *img;
    int colour;
    double level; /* the credible level (the width's plain sentence) */
    int spread;   /* a spread map: mapped from 0 (src/display.h) */
} quantity;

static pp_status figure(FILE *f, const quantity *q, const volplan *p)
{
    double lo, hi;
    pp_status st = q->spread ? pp_display_spread_range(q->img, &lo, &hi)
                             : pp_display_range(q->img, &lo, &hi);
    if (st != PP_OK)
        return st;
    size_t aw, ah;
    unsigned char *px = atlas(q->img, p, lo, hi, &aw, &ah);
    if (!px)
        return pp_fail(PP_ERR_NOMEM, "report: out of memory for the volume views");
    fprintf(f,
            "<figure class=\"vol\" id=\"%s-volume\"><img class=\"atlas\" id=\"%s-atlas\" hidden "
            "alt=\"\" width=\"%zu\" height=\"%zu\" data-key=\"%s\" data-colour=\"%d\" "
            "data-cols=\"%zu\" data-%s=\"%.17g\" data-%s=\"%.17g\" src=\"",
            q->key, q->key, aw, ah, q->key, q->colour, p->cols, q->colour ? "low" : "black", lo,
            q->colour ? "high" : "white", hi);
    st = pp_report_png_uri_grey8(f, px, aw, ah);
    free(px);
    if (st != PP_OK)
        return st;
    fprintf(f, "\">\n<div class=\"ortho\" style=\"grid-template-columns:%.1fpx %.1fpx\">\n",
            p->css[2], p->css[0]);
    /* the scale bar on the XY view only: its pixels are square */
    view(f, q->key, "xy", 'x', 'y', p->s[2], p->s[1], p->css[2], p->css[1],
         p->vox[1] > 0 && p->vox[1] == p->vox[2] ? p->vox[2] * (double)p->k[2] : 0.0);
    view(f, q->key, "yz", 'z', 'y', p->s[0], p->s[1], p->css[0], p->css[1], 0.0);
    view(f, q->key, "xz", 'x', 'z', p->s[2], p->s[0], p->css[2], p->css[0], 0.0);
    fputs("</div>\n", f);
    if (q->colour) {
        char id[64];
        snprintf(id, sizeof id, "%s-colourbar", q->key);
        pp_report_svg_colourbar(f, id, lo, hi, q->units);
    }
    fputs("<figcaption>", f);
    pp_report_plain(f, q->key, q->level, 1);
    fprintf(f, "<b>%s</b>%s%s %s, linear from %.4g (%s) to %.4g (%s) ", q->title,
            q->explain ? ": " : ".", q->explain ? q->explain : "", q->colour ? "Colour" : "Grey",
            lo, q->colour ? "darkest" : "black", hi, q->colour ? "brightest" : "white");
    pp_report_escape(f, q->units);
    if (q->spread)
        fprintf(f,
                " (0 and the %.1fth percentile of this volume, so the shade is proportional to "
                "the value and a nearly constant map looks flat; values beyond are clipped)."
                "</figcaption></figure>\n",
                PP_DISPLAY_HI);
    else
        fprintf(f,
                " (the %.1fth and %.1fth percentiles of this volume; values beyond are clipped)."
                "</figcaption></figure>\n",
                PP_DISPLAY_LO, PP_DISPLAY_HI);
    return PP_OK;
}

static void intro(FILE *f, const volplan *p)
{
    fprintf(f,
            "<section id=\"images\"><h2>Images</h2>\n<p id=\"volume-note\">A volume of %zu "
            "slices of %zu&times;%zu pixels",
            p->n[0], p->n[2], p->n[1]);
    if (p->vox[0] > 0 && p->vox[1] > 0 && p->vox[2] > 0)
        fprintf(f, " (voxel z &times; y &times; x = %g &times; %g &times; %g &micro;m)", p->vox[0],
                p->vox[1], p->vox[2]);
    else
        fputs(" (voxel size not known: drawn as cubes)", f);
    fputs(". Each image shows three orthogonal views through one point: XY, the slice at z "
          "(top left); YZ, the column at x through every slice (right, z to the right); XZ, "
          "the row at y through every slice (below, z downwards). Move the sliders, or click a "
          "view, to move the point (the thin lines). Each image is mapped over its own 0.5th "
          "to 99.5th percentiles of the whole volume, the sd and the interval width from 0 "
          "to their 99.5th percentile.",
          f);
    if (p->k[0] > 1 || p->k[1] > 1)
        fprintf(f,
                " Shown as means of blocks of %zu slice%s and %zu&times;%zu pixels "
                "(%zu&times;%zu&times;%zu shown): the page keeps at most %zu slices and %zu "
                "voxels per image; the TIFFs hold every voxel.",
                p->k[0], p->k[0] > 1 ? "s" : "", p->k[1], p->k[2], p->s[2], p->s[1], p->s[0],
                (size_t)PP_REPORT_VOL_MAX_SLICES, (size_t)PP_REPORT_VOL_MAX_VOXELS);
    if (p->stretched)
        fprintf(f,
                " The z views are drawn stretched (to %.0f %% of the plane's larger side) "
                "so that they can be seen.",
                100 * MIN_Z_SHARE);
    fprintf(f,
            "</p>\n<div class=\"controls\" id=\"volume-controls\" data-n=\"%zu,%zu,%zu\" "
            "data-k=\"%zu,%zu,%zu\" data-voxel=\"%.17g,%.17g,%.17g\">\n",
            p->n[0], p->n[1], p->n[2], p->k[0], p->k[1], p->k[2], p->vox[0], p->vox[1], p->vox[2]);
    static const char axes[3] = {'z', 'y', 'x'};
    for (int a = 0; a < 3; a++)
        fprintf(f,
                "<label>%c <input type=\"range\" id=\"vol-%c\" min=\"0\" max=\"%zu\" "
                "value=\"%zu\"><output id=\"vol-%c-value\"></output></label>\n",
                axes[a], axes[a], p->s[a] - 1, p->s[a] / 2, axes[a]);
    fputs("</div>\n<noscript><p>The views are drawn by a small script in this page; allow "
          "scripts to see them.</p></noscript>\n<div class=\"images\">\n",
          f);
}

/* The script: reads each atlas back once, then draws the three views of
 * every image through the cursor (z, y, x) in shown voxels. */
static const char SCRIPT[] =
    "(function () {\n"
    "  'use strict';\n"
    "  var ctl = document.getElementById('volume-controls'), A = ['z', 'y', 'x'];\n"
    "  var n = ctl.dataset.n.split(',').map(Number), k = ctl.dataset.k.split(',').map(Number);\n"
    "  var um = ctl.dataset.voxel.split(',').map(Number), N = {}, S = {}, vols = [], ramp = [];\n"
    "  function el(id) { return document.getElementById(id); }\n"
    "  A.forEach(function (a) { N[a] = +el('vol-' + a).max + 1; S[a] = +el('vol-' + a).value; });\n"
    "  for (var i = 0; i < 256; i++)\n"
    "    ramp.push([0, 2, 4].map(function (o) { return parseInt(RAMP.substr(6 * i + o, 2), 16); "
    "}));\n"
    "  function paint(c, w, h, at, colour) {\n"
    "    var g = c.getContext('2d'), im = g.createImageData(w, h), p = im.data;\n"
    "    for (var j = 0; j < h; j++)\n"
    "      for (var i = 0; i < w; i++) {\n"
    "        var v = at(i, j), o = 4 * (j * w + i), q = colour ? ramp[v] : [v, v, v];\n"
    "        p[o] = q[0]; p[o + 1] = q[1]; p[o + 2] = q[2]; p[o + 3] = 255;\n"
    "      }\n"
    "    g.putImageData(im, 0, 0);\n"
    "  }\n"
    "  function draw() {\n"
    "    var W = N.x, H = N.y, D = N.z;\n"
    "    vols.forEach(function (q) {\n"
    "      var v = q.v;\n"
    "      paint(el(q.key + '-xy'), W, H, function (i, j) { return v[(S.z * H + j) * W + i]; }, "
    "q.colour);\n"
    "      paint(el(q.key + '-xz'), W, D, function (i, j) { return v[(j * H + S.y) * W + i]; }, "
    "q.colour);\n"
    "      paint(el(q.key + '-yz'), D, H, function (i, j) { return v[(i * H + j) * W + S.x]; }, "
    "q.colour);\n"
    "    });\n"
    "    document.querySelectorAll('.view').forEach(function (e) {\n"
    "      var h = e.dataset.h, v = e.dataset.v;\n"
    "      e.querySelector('.cv').style.left = (100 * (S[h] + 0.5) / N[h]) + '%';\n"
    "      e.querySelector('.ch').style.top = (100 * (S[v] + 0.5) / N[v]) + '%';\n"
    "    });\n"
    "    A.forEach(function (a, i) {\n"
    "      var first = S[a] * k[i], last = Math.min(n[i], first + k[i]) - 1;\n"
    "      el('vol-' + a).value = S[a];\n"
    "      el('vol-' + a + '-value').textContent = a + ' = ' + first +\n"
    "        (last > first ? '\\u2013' + last : '') + ' of 0\\u2013' + (n[i] - 1) +\n"
    "        (um[i] > 0 ? ' (' + (first * um[i]).toPrecision(4) + ' \\u00b5m)' : '');\n"
    "    });\n"
    "  }\n"
    "  function load() {\n"
    "    document.querySelectorAll('img.atlas').forEach(function (im) {\n"
    "      var c = document.createElement('canvas'), cols = +im.dataset.cols;\n"
    "      var W = N.x, H = N.y, D = N.z, v = new Uint8Array(D * H * W);\n"
    "      c.width = im.naturalWidth; c.height = im.naturalHeight;\n"
    "      var g = c.getContext('2d');\n"
    "      g.drawImage(im, 0, 0);\n"
    "      var p = g.getImageData(0, 0, c.width, c.height).data;\n"
    "      for (var z = 0; z < D; z++)\n"
    "        for (var y = 0; y < H; y++)\n"
    "          for (var x = 0; x < W; x++)\n"
    "            v[(z * H + y) * W + x] = p[4 * ((((z / cols) | 0) * H + y) * c.width + (z % cols) "
    "* W + x)];\n"
    "      vols.push({v: v, key: im.dataset.key, colour: im.dataset.colour === '1'});\n"
    "    });\n"
    "    draw();\n"
    "  }\n"
    "  A.forEach(function (a) {\n"
    "    el('vol-' + a).addEventListener('input', function () { S[a] = +this.value; draw(); });\n"
    "  });\n"
    "  document.querySelectorAll('.view canvas').forEach(function (c) {\n"
    "    c.addEventListener('click', function (ev) {\n"
    "      var r = c.getBoundingClientRect(), h = c.parentNode.dataset.h, v = "
    "c.parentNode.dataset.v;\n"
    "      S[h] = Math.max(0, Math.min(N[h] - 1, Math.floor((ev.clientX - r.left) / r.width * "
    "N[h])));\n"
    "      S[v] = Math.max(0, Math.min(N[v] - 1, Math.floor((ev.clientY - r.top) / r.height * "
    "N[v])));\n"
    "      draw();\n"
    "    });\n"
    "  });\n"
    "  window.addEventListener('load', load);\n"
    "})();\n";

static void script(FILE *f)
{
    fputs("<script>\nvar RAMP = '", f);
    for (int i = 0; i < 256; i++) {
        unsigned char rgb[3];
        pp_report_ramp(i / 255.0, rgb);
        fprintf(f, "%02x%02x%02x", rgb[0], rgb[1], rgb[2]);
    }
    fprintf(f, "';\n%s</script>\n", SCRIPT);
}

const char PP_REPORT_VOLUME_CSS[] =
    ".controls{display:flex;flex-wrap:wrap;gap:6px 14px;align-items:center;margin:8px 0 14px;"
    "position:sticky;top:0;background:#fff;padding:6px 0;z-index:2}\n"
    ".controls input{width:170px;vertical-align:middle}.controls output{min-width:150px;"
    "display:inline-block;font-variant-numeric:tabular-nums;margin-left:6px}\n"
    "figure img.atlas{display:none}\n"
    ".ortho{display:grid;gap:4px;align-items:start}.view{position:relative;line-height:0}\n"
    ".view canvas{image-rendering:pixelated;outline:1px solid #999;display:block;"
    "cursor:crosshair}\n"
    ".view i{position:absolute;background:#e0409a;opacity:.7;pointer-events:none}"
    ".view i.ch{left:0;right:0;height:1px}.view i.cv{top:0;bottom:0;width:1px}\n";

pp_status pp_report_volume_section(FILE *f, const pp_report_input *in, const char *units,
                                   const char *frame_units)
{
    const pp_image *first = in->frame ? in->frame : in->mean ? in->mean : in->sd ? in->sd : in->lo;
    volplan p;
    plan(first, in->voxel, &p);
    pp_image *width = NULL;
    pp_status st = PP_OK;
    if (in->lo && in->hi) {
        st = pp_image_create3(in->lo->depth, in->lo->height, in->lo->width, &width);
        for (size_t i = 0; st == PP_OK && i < pp_image_count(width); i++)
            width->data[i] = in->hi->data[i] - in->lo->data[i];
    }
    if (st != PP_OK)
        return st;
    char wexplain[160];
    snprintf(wexplain, sizeof wexplain,
             "hi &minus; lo, the width of the central %.4g%% credible interval of each voxel.",
             100.0 * in->level);
    const quantity qs[5] = {
        {"frame", "Input volume", NULL, frame_units, in->frame, 0, in->level, 0},
        {"mean", "Posterior mean", NULL, units, in->mean, 0, in->level, 0},
        {"sd", "Posterior standard deviation",
         in->sd_caption ? in->sd_caption : "the spread of the posterior of each voxel.", units,
         in->sd, 1, in->level, 1},
        {"width", "Credible-interval width", wexplain, units, width, 1, in->level, 1},
        {"residual", "Standardised residual",
         "(y &minus; E[y | mean]) / &radic;Var[y | mean], the predictive check's residual "
         "(section &ldquo;Checks&rdquo;); blank where left out.",
         "sd", in->residual, 1, in->level, 0},
    };
    intro(f, &p);
    for (int i = 0; i < 5 && st == PP_OK; i++)
        if (qs[i].img)
            st = figure(f, &qs[i], &p);
    pp_image_free(width);
    fputs("</div>\n", f);
    if (st == PP_OK)
        script(f);
    fputs("</section>\n", f);
    return st;
}
