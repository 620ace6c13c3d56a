/* pixpost — report.html's section on the checks of the data before
 * sampling and of the fit after it (src/pixpost/datacheck.h,
 * ppcheck.h): one sentence of the predictive check's figures and the
 * checks' warnings. The residual map itself is a panel among the images
 * (src/report.c). Cost: a few lines of text. */
#include "pixpost/report.h"
#include "pixpost/setting.h"
#include "report_internal.h"

void pp_report_checks_section(FILE *f, const pp_report_input *in)
{
    if (!in->residual && !in->checks_summary && !in->nchecks)
        return;
    fputs("<section id=\"checks\"><h2>Checks of the data and the fit</h2>\n", f);
    if (in->checks_summary) {
        fputs("<p id=\"checks-summary\">", f);
        pp_report_escape(f, in->checks_summary);
        fputs("</p>\n", f);
    }
    if (!in->nchecks) {
        fputs("<p id=\"checks-none\">No check fired: the data look as the model says and "
              "the fitted model explains them (README, &ldquo;Checks of the data and the "
              "fit&rdquo;).</p>\n",
              f);
    } else {
        fputs("<ul id=\"checks-list\">\n", f);
        for (size_t i = 0; i < in->nchecks; i++) {
            fputs("<li class=\"warn\">", f);
            pp_report_escape(f, in->checks[i]);
            fputs("</li>\n", f);
        }
        fputs("</ul>\n", f);
    }
    /* the caller's exit status on an unconverged run, when it names one */
    const char *strict = in->setting_names ? in->setting_names[PP_SET_STRICT] : NULL;
    fputs("<p>These are checks of the model, not of convergence: they do not change the "
          "verdict above",
          f);
    if (strict) {
        fputs(" or the exit status under ", f);
        pp_report_escape(f, strict);
    }
    fputs(".</p>\n</section>\n", f);
}
