/* pixpost — what a reader of report.html sees first: the verdict banner
 * (converged or not, the count of warnings split by part, the sentence of
 * pp_convergence_verdict and the --iters to ask for; a run that converged
 * with no warning gets one quiet green line instead) and the warnings
 * section, grouped by part (hyperparameters, pixel estimates, other), then
 * the notes. src/report.c places them: the banner under the header, the
 * warnings right after it when there are any, else near the end.
 * Cost: a few lines of HTML per warning. */
#include "pixpost/report.h"
#include "report_internal.h"
#include <string.h>

static const char *plural(size_t n)
{
    return n == 1 ? "" : "s";
}

/* One part's line in the banner: its name, pass/fail and its warnings. */
static void part_chip(FILE *f, const char *id, const char *name, int ok, size_t n,
                      const char *failing)
{
    fprintf(f, "<li id=\"%s\" class=\"%s\" data-warnings=\"%zu\"><b>%s:</b> ", id,
            ok ? "pass" : "fail", n, name);
    if (ok)
        fputs("pass every check", f);
    else {
        fprintf(f, "not converged, %zu warning%s", n, plural(n));
        if (failing && failing[0]) {
            fputs(" (", f);
            pp_report_escape(f, failing);
            fputc(')', f);
        }
    }
    fputs("</li>\n", f);
}

void pp_report_verdict_banner(FILE *f, const pp_report_input *in)
{
    const pp_convergence *cv = in->convergence;
    if (!cv)
        return;
    if (cv->converged && cv->warnings == 0) { /* nothing to do: one quiet line */
        fputs("<p id=\"verdict\" class=\"verdict-quiet\" data-converged=\"true\" "
              "data-warnings=\"0\"><span id=\"verdict-word\">Converged</span>, <span "
              "id=\"verdict-count\">no warnings</span>: ",
              f);
        const char *v = in->verdict ? in->verdict : ""; /* without its own "converged: " */
        pp_report_escape(f, strncmp(v, "converged: ", 11) == 0 ? v + 11 : v);
        fputs("</p>\n", f);
        return;
    }
    size_t other = cv->warnings - cv->hyper_warnings - cv->pixel_warnings;
    fprintf(f,
            "<div id=\"verdict\" class=\"verdict %s\" data-converged=\"%s\" "
            "data-warnings=\"%zu\" data-hyper-warnings=\"%zu\" data-pixel-warnings=\"%zu\" "
            "data-iters-suggested=\"%lu\">\n<p class=\"verdict-head\"><span "
            "id=\"verdict-word\">%s</span> <span id=\"verdict-count\">",
            cv->converged ? "ok" : "bad", cv->converged ? "true" : "false", cv->warnings,
            cv->hyper_warnings, cv->pixel_warnings, cv->iters_suggested,
            cv->converged ? "Converged" : "Not converged");
    if (cv->warnings)
        fprintf(f, "%zu warning%s: %zu on hyperparameters, %zu on pixel estimates, %zu other",
                cv->warnings, plural(cv->warnings), cv->hyper_warnings, cv->pixel_warnings, other);
    else
        fputs("no warnings", f);
    fputs("</span></p>\n<ul class=\"parts\">\n", f);
    part_chip(f, "verdict-hyper", "Hyperparameters (global quantities)", cv->hyper_converged,
              cv->hyper_warnings, cv->hyper_failing);
    part_chip(f, "verdict-pixels", "Pixel estimates (probe pixels, R&#770; map)",
              cv->pixels_converged, cv->pixel_warnings, NULL);
    fputs("</ul>\n<p id=\"verdict-text\">", f);
    pp_report_escape(f, in->verdict);
    fputs("</p>\n", f);
    if (cv->iters_suggested) {
        fputs("<p id=\"verdict-iters\">To ask for: <code>", f);
        if (cv->iters_name) { /* the setting by the caller's name, e.g. "--iters 4700" */
            pp_report_escape(f, cv->iters_name);
            fprintf(f, " %lu", cv->iters_suggested);
        } else {
            fprintf(f, "%lu iterations", cv->iters_suggested);
        }
        fputs("</code> (an estimate from the measured ESS per draw; see <a "
              "href=\"#warnings\">the warnings</a>).</p>\n",
              f);
    }
    fputs("</div>\n", f);
}

static void sentence_list(FILE *f, const char *id, const char *const *list, size_t n,
                          const pp_warning_part *parts, int part)
{
    fprintf(f, "<ul id=\"%s\">\n", id);
    for (size_t i = 0; i < n; i++) {
        if (parts && (int)parts[i] != part)
            continue;
        fputs("<li>", f);
        pp_report_escape(f, list[i]);
        fputs("</li>\n", f);
    }
    fputs("</ul>\n", f);
}

/* The warnings (grouped by part when the parts are given), then the notes
 * (information, not warnings) when any. */
void pp_report_warnings_section(FILE *f, const pp_report_input *in)
{
    static const struct {
        pp_warning_part part;
        const char *id, *title;
    } groups[] = {
        {PP_WARN_HYPER, "warnings-hyper",
         "Hyperparameters &mdash; global quantities, one number for the whole frame"},
        {PP_WARN_PIXELS, "warnings-pixels",
         "Pixel estimates &mdash; the probe pixels and the R&#770; map"},
        {PP_WARN_OTHER, "warnings-other", "Other"},
    };
    fputs("<section id=\"warnings\"><h2>Warnings</h2>\n", f);
    if (in->nwarnings == 0) {
        fputs("<p id=\"warnings-none\">No warnings were raised.</p>\n", f);
    } else if (!in->warning_parts) {
        sentence_list(f, "warnings-list", in->warnings, in->nwarnings, NULL, 0);
    } else {
        fputs("<div id=\"warnings-list\">\n", f);
        for (size_t g = 0; g < sizeof groups / sizeof *groups; g++) {
            size_t n = 0;
            for (size_t i = 0; i < in->nwarnings; i++)
                n += in->warning_parts[i] == groups[g].part;
            if (!n)
                continue;
            fprintf(f, "<h3>%s: %zu warning%s</h3>\n", groups[g].title, n, plural(n));
            sentence_list(f, groups[g].id, in->warnings, in->nwarnings, in->warning_parts,
                          (int)groups[g].part);
        }
        fputs("</div>\n", f);
    }
    if (in->nnotes) {
        fputs("<h3>Notes</h3>\n<p>Information about the data and the model, not a sign "
              "that the run went wrong.</p>\n",
              f);
        sentence_list(f, "notes-list", in->notes, in->nnotes, NULL, 0);
    }
    fputs("</section>\n", f);
}
