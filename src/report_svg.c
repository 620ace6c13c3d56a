/* pixpost — the report's inline SVG: axes with round-number ticks, line
 * plots (one polyline per chain, long series decimated to block minima and
 * maxima), histograms, the colour bar, and the autocorrelation estimate.
 *
 * Cost: a line plot is two passes over each series (range, then points) and
 * writes at most ~PP_REPORT_MAX_POINTS points per series; the
 * autocorrelation is a direct sum, O(n x maxlag). SVG is written for HTML
 * (no xmlns attribute: inline SVG in HTML needs none, and the page must not
 * name any network address). */
#include "report_internal.h"
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* Margins of a plot: left (tick labels, y label), right, top (title),
 * bottom (tick labels, x label). */
enum { ML = 64, MR = 24, MT = 22, MB = 38 };

/* 1, 2 or 5 times a power of ten near x (>= x when up, else nearest). */
static double nice_number(double x, int up)
{
    double e = floor(log10(x)), f = x / pow(10.0, e), n;
    if (up)
        n = f <= 1.0 ? 1 : f <= 2.0 ? 2 : f <= 5.0 ? 5 : 10;
    else
        n = f < 1.5 ? 1 : f < 3.0 ? 2 : f < 7.0 ? 5 : 10;
    return n * pow(10.0, e);
}

void pp_report_ticks(double lo, double hi, int target, pp_ticks *t)
{
    if (!isfinite(lo) || !isfinite(hi)) {
        lo = 0;
        hi = 1;
    }
    if (hi < lo) {
        double s = lo;
        lo = hi;
        hi = s;
    }
    if (hi - lo <= 1e-12 * fmax(fabs(lo), fabs(hi)) || hi == lo) {
        double half = lo != 0 ? fabs(lo) * 0.01 : 0.5;
        lo -= half;
        hi += half;
    }
    if (target < 2)
        target = 2;
    double step = nice_number(nice_number(hi - lo, 0) / (target - 1), 1);
    /* the first try can give too few ticks (e.g. 0..1.05 -> steps of 1) */
    while ((hi - lo) / step < target - 2 && step > 0)
        step = nice_number(step / 2.01, 0);
    t->step = step;
    t->amin = floor(lo / step + 1e-9) * step;
    t->amax = ceil(hi / step - 1e-9) * step;
    t->count = (int)lround((t->amax - t->amin) / step) + 1;
    double big = fmax(fabs(t->amin), fabs(t->amax));
    int es = (int)floor(log10(step) + 1e-9);
    t->sci = big >= 1e5 || big < 1e-3;
    t->exponent = t->sci ? (int)floor(log10(big) + 1e-9) : 0;
    int d = (t->sci ? t->exponent : 0) - es;
    t->decimals = d > 0 ? d : 0;
}

void pp_report_tick_label(const pp_ticks *t, double v, char *buf, size_t n)
{
    if (fabs(v) < t->step * 1e-6)
        v = 0.0; /* no "-0" or "1e-17" at the origin */
    if (!t->sci || v == 0.0) {
        snprintf(buf, n, "%.*f", t->sci ? 0 : t->decimals, v);
        return;
    }
    snprintf(buf, n, "%.*fe%d", t->decimals, v / pow(10.0, t->exponent), t->exponent);
}

const char *pp_report_chain_colour(size_t k)
{
    /* our own set: eight hues far apart, all dark enough on white */
    static const char *const c[8] = {"#1b4f8a", "#c8641e", "#2e8540", "#a02c5a",
                                     "#6a4fb0", "#138a8a", "#8a6d12", "#4d4d4d"};
    return c[k % 8];
}

/* Plot area and axes of a line plot or histogram. */
typedef struct frame {
    double x0, y0, w, h; /* plot area in SVG units */
    pp_ticks tx, ty;
} frame;

static double px(const frame *fr, double x)
{
    return fr->x0 + (x - fr->tx.amin) / (fr->tx.amax - fr->tx.amin) * fr->w;
}

static double py(const frame *fr, double y)
{
    return fr->y0 + fr->h - (y - fr->ty.amin) / (fr->ty.amax - fr->ty.amin) * fr->h;
}

static void svg_text(FILE *f, double x, double y, const char *cls, const char *anchor,
                     const char *s)
{
    fprintf(f, "<text class=\"%s\" x=\"%.1f\" y=\"%.1f\" text-anchor=\"%s\">", cls, x, y, anchor);
    pp_report_escape(f, s);
    fputs("</text>\n", f);
}

/* Opens the <svg>, draws grid, ticks, labels and the title. */
static void svg_axes(FILE *f, const char *id, double W, double H, const frame *fr,
                     const char *title, const char *xlabel, const char *ylabel)
{
    char b[48];
    fputs("<svg class=\"plot\" id=\"", f);
    pp_report_escape(f, id);
    fprintf(f, "\" viewBox=\"0 0 %.0f %.0f\" width=\"%.0f\" height=\"%.0f\" role=\"img\">\n", W, H,
            W, H);
    fputs("<title>", f);
    pp_report_escape(f, title);
    fputs("</title>\n", f);
    fprintf(f, "<rect class=\"area\" x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" height=\"%.1f\"/>\n",
            fr->x0, fr->y0, fr->w, fr->h);
    for (int i = 0; i < fr->ty.count; i++) {
        double v = fr->ty.amin + i * fr->ty.step, y = py(fr, v);
        fprintf(f, "<line class=\"grid\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>\n",
                fr->x0, fr->x0 + fr->w, y, y);
        pp_report_tick_label(&fr->ty, v, b, sizeof b);
        svg_text(f, fr->x0 - 5, y + 3.5, "tick", "end", b);
    }
    for (int i = 0; i < fr->tx.count; i++) {
        double v = fr->tx.amin + i * fr->tx.step, x = px(fr, v);
        fprintf(f, "<line class=\"axis\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>\n", x, x,
                fr->y0 + fr->h, fr->y0 + fr->h + 4);
        pp_report_tick_label(&fr->tx, v, b, sizeof b);
        svg_text(f, x, fr->y0 + fr->h + 15, "tick", "middle", b);
    }
    svg_text(f, fr->x0, 14, "ptitle", "start", title);
    svg_text(f, fr->x0 + fr->w / 2, H - 6, "label", "middle", xlabel);
    if (ylabel && *ylabel) {
        fprintf(f,
                "<text class=\"label\" transform=\"translate(13 %.1f) rotate(-90)\" "
                "text-anchor=\"middle\">",
                fr->y0 + fr->h / 2);
        pp_report_escape(f, ylabel);
        fputs("</text>\n", f);
    }
}

/* Range of the finite values of all series (x and y). */
static int series_range(const pp_plot *p, double *xlo, double *xhi, double *ylo, double *yhi)
{
    int any = 0;
    *xlo = *ylo = INFINITY;
    *xhi = *yhi = -INFINITY;
    for (size_t s = 0; s < p->nseries; s++) {
        const pp_series *q = &p->series[s];
        for (size_t i = 0; i < q->n; i++) {
            double y = q->y[i * q->stride], x = q->x0 + (double)i * q->dx;
            if (!isfinite(y))
                continue;
            any = 1;
            *ylo = fmin(*ylo, y);
            *yhi = fmax(*yhi, y);
            *xlo = fmin(*xlo, x);
            *xhi = fmax(*xhi, x);
        }
    }
    return any;
}

static void point(FILE *f, const frame *fr, const pp_series *q, size_t i)
{
    fprintf(f, "%.1f,%.1f ", px(fr, q->x0 + (double)i * q->dx), py(fr, q->y[i * q->stride]));
}

/* The points of one series; blocks of `blk` draws give their minimum and
 * maximum in the order they occurred. */
static void series_points(FILE *f, const frame *fr, const pp_series *q)
{
    size_t blk = 1;
    if (q->n > PP_REPORT_MAX_POINTS)
        blk = (q->n + PP_REPORT_MAX_POINTS / 2 - 1) / (PP_REPORT_MAX_POINTS / 2);
    for (size_t b = 0; b < q->n; b += blk) {
        size_t imin = SIZE_MAX, imax = SIZE_MAX;
        for (size_t i = b; i < b + blk && i < q->n; i++) {
            double y = q->y[i * q->stride];
            if (!isfinite(y))
                continue;
            if (imin == SIZE_MAX || y < q->y[imin * q->stride])
                imin = i;
            if (imax == SIZE_MAX || y > q->y[imax * q->stride])
                imax = i;
        }
        if (imin == SIZE_MAX)
            continue;
        size_t first = imin < imax ? imin : imax, second = imin < imax ? imax : imin;
        point(f, fr, q, first);
        if (second != first)
            point(f, fr, q, second);
    }
}

static void plot_frame(double W, double H, frame *fr)
{
    fr->x0 = ML;
    fr->y0 = MT;
    fr->w = W - ML - MR;
    fr->h = H - MT - MB;
}

void pp_report_svg_lines(FILE *f, const pp_plot *p)
{
    double xlo, xhi, ylo, yhi;
    if (!series_range(p, &xlo, &xhi, &ylo, &yhi)) {
        xlo = ylo = 0;
        xhi = yhi = 1;
    }
    if (isfinite(p->y_floor))
        ylo = fmin(ylo, p->y_floor);
    if (isfinite(p->y_ceil))
        yhi = fmax(yhi, p->y_ceil);
    frame fr;
    plot_frame(p->width, p->height, &fr);
    pp_report_ticks(xlo, xhi, 6, &fr.tx);
    pp_report_ticks(ylo, yhi, 5, &fr.ty);
    svg_axes(f, p->id, p->width, p->height, &fr, p->title, p->xlabel, p->ylabel);
    if (p->zero_line && fr.ty.amin < 0 && fr.ty.amax > 0)
        fprintf(f, "<line class=\"zero\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>\n",
                fr.x0, fr.x0 + fr.w, py(&fr, 0), py(&fr, 0));
    for (size_t s = 0; s < p->nseries; s++) {
        fprintf(f, "<polyline class=\"series\" data-chain=\"%zu\" stroke=\"%s\"%s points=\"", s + 1,
                pp_report_chain_colour(s), s >= 8 ? " stroke-dasharray=\"4 2\"" : "");
        series_points(f, &fr, &p->series[s]);
        fputs("\"/>\n", f);
    }
    fputs("</svg>\n", f);
}

void pp_report_svg_band(FILE *f, const pp_plot *p, const double *lo, const double *hi)
{
    const pp_series *q = &p->series[0];
    double xlo, xhi, ylo, yhi;
    if (!series_range(p, &xlo, &xhi, &ylo, &yhi)) {
        xlo = ylo = 0;
        xhi = yhi = 1;
    }
    for (size_t i = 0; i < q->n; i++) {
        if (isfinite(lo[i]))
            ylo = fmin(ylo, lo[i]);
        if (isfinite(hi[i]))
            yhi = fmax(yhi, hi[i]);
    }
    frame fr;
    plot_frame(p->width, p->height, &fr);
    pp_report_ticks(xlo, xhi, 6, &fr.tx);
    pp_report_ticks(ylo, yhi, 5, &fr.ty);
    svg_axes(f, p->id, p->width, p->height, &fr, p->title, p->xlabel, p->ylabel);
    fputs("<polygon class=\"band\" points=\"", f);
    for (size_t i = 0; i < q->n; i++)
        if (isfinite(lo[i]))
            fprintf(f, "%.1f,%.1f ", px(&fr, q->x0 + (double)i * q->dx), py(&fr, lo[i]));
    for (size_t i = q->n; i-- > 0;)
        if (isfinite(hi[i]))
            fprintf(f, "%.1f,%.1f ", px(&fr, q->x0 + (double)i * q->dx), py(&fr, hi[i]));
    fputs("\"/>\n<polyline class=\"series mid\" stroke=\"#1f4e99\" points=\"", f);
    for (size_t i = 0; i < q->n; i++)
        if (isfinite(q->y[i * q->stride]))
            point(f, &fr, q, i);
    fputs("\"/>\n</svg>\n", f);
}

void pp_report_svg_hist(FILE *f, const char *id, const char *xlabel, const double *y, size_t n,
                        size_t stride)
{
    double lo = INFINITY, hi = -INFINITY;
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (isfinite(y[i * stride])) {
            lo = fmin(lo, y[i * stride]);
            hi = fmax(hi, y[i * stride]);
            m++;
        }
    size_t nb = (size_t)ceil(sqrt((double)m));
    nb = nb < 10 ? 10 : nb > 50 ? 50 : nb;
    size_t cnt[50] = {0}, top = 1;
    if (!(hi > lo))
        hi = lo + 1; /* a constant sample: every draw in the first bin */
    for (size_t i = 0; i < n; i++) {
        double v = y[i * stride];
        if (!isfinite(v))
            continue;
        size_t b = (size_t)((v - lo) / (hi - lo) * (double)nb);
        cnt[b < nb ? b : nb - 1]++;
    }
    for (size_t b = 0; b < nb; b++)
        top = cnt[b] > top ? cnt[b] : top;
    frame fr;
    plot_frame(480, 220, &fr);
    pp_report_ticks(lo, hi, 6, &fr.tx);
    pp_report_ticks(0, (double)top, 5, &fr.ty);
    fr.ty.amin = 0;
    char title[160];
    snprintf(title, sizeof title, "%s: %zu pooled draws, %zu bins", xlabel, m, nb);
    svg_axes(f, id, 480, 220, &fr, title, xlabel, "draws per bin");
    for (size_t b = 0; b < nb; b++) {
        double a = px(&fr, lo + (hi - lo) * (double)b / (double)nb);
        double z = px(&fr, lo + (hi - lo) * (double)(b + 1) / (double)nb);
        double top_y = py(&fr, (double)cnt[b]);
        fprintf(f, "<rect class=\"bar\" x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\"/>\n",
                a, top_y, z - a, fr.y0 + fr.h - top_y);
    }
    fputs("</svg>\n", f);
}

void pp_report_svg_colourbar(FILE *f, const char *id, double lo, double hi, const char *units)
{
    const double W = 400, x0 = 14, w = 372, y0 = 6, h = 16;
    fputs("<svg class=\"colourbar\" id=\"", f);
    pp_report_escape(f, id);
    fprintf(f, "\" viewBox=\"0 0 %.0f 58\" width=\"%.0f\" height=\"58\" role=\"img\">\n", W, W);
    fputs("<title>colour bar, ", f);
    pp_report_escape(f, units);
    fputs("</title>\n<defs><linearGradient id=\"", f);
    pp_report_escape(f, id);
    fputs("-ramp\" x1=\"0\" x2=\"1\" y1=\"0\" y2=\"0\">\n", f);
    for (int k = 0; k < PP_REPORT_RAMP_STOPS; k++) {
        double pos;
        unsigned char c[3];
        pp_report_ramp_stop(k, &pos, c);
        fprintf(f, "<stop offset=\"%.3f\" stop-color=\"rgb(%u,%u,%u)\"/>\n", pos, c[0], c[1], c[2]);
    }
    fprintf(f,
            "</linearGradient></defs>\n<rect x=\"%.1f\" y=\"%.1f\" width=\"%.1f\" "
            "height=\"%.1f\" fill=\"url(#",
            x0, y0, w, h);
    pp_report_escape(f, id);
    fputs("-ramp)\" stroke=\"#333\" stroke-width=\"0.5\"/>\n", f);
    pp_ticks t;
    pp_report_ticks(lo, hi, 6, &t);
    char b[48];
    for (int i = 0; i < t.count; i++) {
        double v = t.amin + i * t.step;
        if (v < lo - 1e-9 * t.step || v > hi + 1e-9 * t.step)
            continue; /* only ticks inside the bar */
        double x = x0 + (v - lo) / (hi - lo) * w;
        fprintf(f, "<line class=\"axis\" x1=\"%.1f\" x2=\"%.1f\" y1=\"%.1f\" y2=\"%.1f\"/>\n", x, x,
                y0 + h, y0 + h + 4);
        pp_report_tick_label(&t, v, b, sizeof b);
        svg_text(f, x, y0 + h + 15, "tick", "middle", b);
    }
    svg_text(f, x0 + w / 2, 54, "label", "middle", units);
    fputs("</svg>\n", f);
}

int pp_report_acf(const double *y, size_t n, size_t stride, size_t maxlag, double *out)
{
    if (n < 2 || maxlag >= n)
        return 0;
    double m = 0, lo = y[0], hi = y[0];
    for (size_t i = 0; i < n; i++) {
        m += y[i * stride];
        lo = fmin(lo, y[i * stride]);
        hi = fmax(hi, y[i * stride]);
    }
    if (!(hi > lo))
        return 0; /* constant (exactly: the mean's rounding would fake a variance) */
    m /= (double)n;
    double c0 = 0;
    for (size_t i = 0; i < n; i++)
        c0 += (y[i * stride] - m) * (y[i * stride] - m);
    if (!(c0 > 0) || !isfinite(c0))
        return 0;
    for (size_t k = 0; k <= maxlag; k++) {
        double c = 0;
        for (size_t i = 0; i + k < n; i++)
            c += (y[i * stride] - m) * (y[(i + k) * stride] - m);
        out[k] = c / c0;
    }
    return 1;
}
