/* pixpost — the run's verdict in one plain sentence (pp_convergence_verdict),
 * from the headline figures of pp_sampler_convergence: converged or not,
 * which part failed (the global columns, "hyperparameters", or the pixel
 * estimates), what that means for the pixel bounds, and the --iters to ask
 * for. `sample` prints it, summary.json and report.html carry it. Reads only
 * the plain struct, so every writer words a verdict the same way.
 * Cost: a few snprintf calls. */
#include "pixpost/sampler.h"
#include "pixpost/sampler_extra.h"
#include <stdio.h>
#include <string.h>

/* Warnings about neither part (acceptance, set-up, hyperprior, solver). */
static size_t others(const pp_convergence *cv)
{
    size_t parts = cv->hyper_warnings + cv->pixel_warnings;
    return cv->warnings > parts ? cv->warnings - parts : 0;
}

void pp_convergence_verdict(const pp_convergence *cv, char *buf, size_t len)
{
    const char *names = cv->hyper_failing[0] ? cv->hyper_failing : "a global column";
    int several = strchr(cv->hyper_failing, ',') != NULL;
    size_t n_other = others(cv);
    char iters[128] = "";
    if (cv->iters_suggested && cv->iters_name) /* the setting to change, by the caller's name */
        snprintf(iters, sizeof iters, "; run about %lu iterations: %.40s %lu",
                 cv->iters_suggested, cv->iters_name, cv->iters_suggested);
    else if (cv->iters_suggested)
        snprintf(iters, sizeof iters, "; run about %lu iterations", cv->iters_suggested);
    char tail[64] = "";
    if (n_other && (!cv->hyper_converged || !cv->pixels_converged))
        snprintf(tail, sizeof tail, "; %zu other warning%s too", n_other,
                 n_other == 1 ? " applies" : "s apply");
    if (cv->converged)
        snprintf(buf, len,
                 "converged: the hyperparameters and the pixel estimates pass every "
                 "convergence check (R-hat at most 1.01, bulk- and tail-ESS at least "
                 "100 per chain, the pixel R-hat map)");
    else if (!cv->hyper_converged && cv->pixels_converged)
        snprintf(buf, len,
                 "not converged: the hyperparameters have not converged (%s); the pixel "
                 "estimates pass every check, so the pixel bounds are sound as far as the "
                 "diagnostics can tell while %s %s still moving (%s own summaries are not yet "
                 "reliable)%s%s",
                 names, names, several ? "are" : "is", several ? "their" : "its", iters, tail);
    else if (cv->hyper_converged && !cv->pixels_converged)
        snprintf(buf, len,
                 "not converged: the pixel estimates have not converged (%zu warning%s); the "
                 "hyperparameters pass every check%s%s",
                 cv->pixel_warnings, cv->pixel_warnings == 1 ? "" : "s", iters, tail);
    else if (!cv->hyper_converged)
        snprintf(buf, len,
                 "not converged: neither the hyperparameters (%s) nor the pixel estimates have "
                 "converged%s%s",
                 names, iters, tail);
    else
        snprintf(buf, len,
                 "not converged: the hyperparameters and the pixel estimates pass every "
                 "convergence check, but %zu other warning%s (see the warnings)",
                 n_other, n_other == 1 ? " applies" : "s apply");
}

const char *pp_convergence_failed(const pp_convergence *cv)
{
    if (cv->converged)
        return "";
    if (!cv->hyper_converged)
        return cv->pixels_converged ? "hyperparameters" : "hyperparameters and pixels";
    return cv->pixels_converged ? "other" : "pixels";
}
