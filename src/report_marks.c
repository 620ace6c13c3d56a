/* pixpost — what report.html draws over a frame's images: the probe pixels
 * (the pixels whose traces the page plots, named as in the traces and the
 * warnings) and a scale bar when the pixel size is known. One SVG laid over
 * each image in the image's own pixel coordinates (viewBox 0 0 w h), so the
 * marks stay on their pixels at any displayed size; sizes of circles and
 * text are fractions of the width, which the page shows at a fixed width.
 * Issue #19 item 4. Cost: a few lines per probe. */
#include "pixpost/sampler.h"
#include "report_internal.h"
#include <math.h>
#include <stdio.h>

/* CSS pixels a frame's image is about shown across (a column of the
 * images' two-column grid on a page up to 1220 px wide). */
#define FRAME_CSS 600.0

double pp_report_bar_um(size_t w, double pixel_um)
{
    double target = (double)w * pixel_um / 5.0;
    if (!(target > 0) || !isfinite(target))
        return 0.0;
    double p = pow(10.0, floor(log10(target)));
    static const double steps[] = {5.0, 2.0, 1.0};
    for (int i = 0; i < 3; i++)
        if (steps[i] * p <= target * (1 + 1e-12))
            return steps[i] * p;
    return p; /* not reached: 1 x 10^floor(log10 t) <= t */
}

/* A length in um for the bar's label: "2 µm", "500 nm" below 1 um. */
static void length_label(double um, char *buf, size_t n)
{
    if (um < 1.0)
        snprintf(buf, n, "%g nm", um * 1000.0);
    else
        snprintf(buf, n, "%g \xc2\xb5m", um);
}

static void probes(FILE *f, size_t w, size_t h, const pp_trace *t, double u)
{
    if (!t || !t->names)
        return;
    for (size_t col = 0; col < t->ncols; col++) {
        unsigned r, c;
        char tail;
        if (!t->names[col] || sscanf(t->names[col], "p_%u_%u%c", &r, &c, &tail) != 2)
            continue; /* not a frame's probe (a volume's is p_z_r_c) */
        if (r >= h || c >= w)
            continue;
        double x = c + 0.5, y = r + 0.5;
        int left = x > (double)w - 16 * u; /* the name to the left near the right edge */
        double ty = y < 4 * u ? y + 3.6 * u : y - 1.2 * u;
        fprintf(f,
                "<g class=\"probe\" data-row=\"%u\" data-col=\"%u\"><circle cx=\"%.2f\" "
                "cy=\"%.2f\" r=\"%.2f\"/><text x=\"%.2f\" y=\"%.2f\" text-anchor=\"%s\">",
                r, c, x, y, 1.6 * u, left ? x - 2.0 * u : x + 2.0 * u, ty, left ? "end" : "start");
        pp_report_escape(f, t->names[col]);
        fputs("</text></g>\n", f);
    }
}

static void bar(FILE *f, const char *id, size_t w, size_t h, double pixel_um, double u)
{
    double um = pp_report_bar_um(w, pixel_um);
    if (!(um > 0))
        return;
    double len = um / pixel_um, x1 = (double)w - 3 * u, x0 = x1 - len, y = (double)h - 3 * u;
    char label[32];
    length_label(um, label, sizeof label);
    fprintf(f,
            "<g class=\"scalebar\" id=\"%s-bar\" data-um=\"%.17g\" data-pixels=\"%.17g\">"
            "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>"
            "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"middle\">%s</text></g>\n",
            id, um, len, x0, y - 1.2 * u, len, 1.2 * u, 0.5 * (x0 + x1), y - 2.0 * u, label);
}

void pp_report_marks(FILE *f, const char *id, size_t w, size_t h, const pp_trace *trace,
                     double pixel_um, double css_width)
{
    int any = 0;
    unsigned r, c;
    char tail;
    for (size_t col = 0; trace && trace->names && col < trace->ncols && !any; col++)
        any = trace->names[col] && sscanf(trace->names[col], "p_%u_%u%c", &r, &c, &tail) == 2 &&
              r < h && c < w;
    int scale = pixel_um > 0 && isfinite(pixel_um);
    if (!any && !scale)
        return;
    /* u: one hundredth of the width of an image shown FRAME_CSS wide, so
     * the marks keep their size on screen whatever the image's */
    double u = (double)w / 100.0 * (css_width > 0 ? FRAME_CSS / css_width : 1.0);
    fprintf(f,
            "<svg class=\"marks\" id=\"%s\" viewBox=\"0 0 %zu %zu\" preserveAspectRatio=\"none\" "
            "style=\"font-size:%.2fpx;stroke-width:%.2fpx\" aria-hidden=\"true\">\n",
            id, w, h, 2.4 * u, 0.6 * u);
    probes(f, w, h, trace, u);
    if (scale)
        bar(f, id, w, h, pixel_um, u);
    fputs("</svg>", f);
}
