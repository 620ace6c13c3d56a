/* pixpost — a finished sampler's result as the plain struct the output
 * writers read (include/pixpost/result.h). Cost: one pass over the trace
 * columns and the R-hat map (pp_sampler_convergence) and one small
 * allocation (chains entries). */
#include <stdlib.h>
#include "internal.h"
#include "sampler_internal.h"
#include "pixpost/result.h"
#include "pixpost/sampler_extra.h"

pp_status pp_sampler_result(const pp_sampler *s, pp_result *out)
{
    *out = (pp_result){0};
    if (!s->ran)
        return pp_fail(PP_ERR_ARG, "pp_sampler_result: the sampler has not run");
    pp_chain_moves *moves = calloc(s->cfg.chains, sizeof *moves);
    if (!moves)
        return pp_fail(PP_ERR_NOMEM, "out of memory");
    for (unsigned k = 0; k < s->cfg.chains; k++)
        moves[k] = (pp_chain_moves){s->chain[k].acceptance, s->chain[k].step};
    pp_result r = {0};
    r.config = s->cfg;
    r.frame = s->fshape;
    r.grid = s->gshape;
    r.mean = s->mean;
    r.sd = s->sd;
    r.lo = s->lo;
    r.hi = s->hi;
    r.rhat_map = s->rhat_map;
    r.mcse_map = s->mcse_map;
    r.trace = s->trace;
    r.diag = s->diag;
    r.col_width = s->col_width;
    r.col_kappa = s->col_kappa;
    r.col_level = s->col_level;
    r.chain = moves;
    r.length = s->length;
    pp_sampler_convergence(s, &r.convergence);
    pp_sampler_solver_stats(s, &r.solver);
    r.observed = s->nobs;
    r.unobserved = s->nmissing;
    r.fft_plans = pp_sampler_fft_plans(s);
    r.seconds = s->seconds;
    r.bound_method = s->bound_method;
    r.likelihood = s->likelihood;
    r.pad_scheme = s->pad_scheme;
    r.warnings = (const char *const *)s->warnings;
    r.warning_part = s->warning_part;
    r.nwarnings = s->nwarnings;
    r.notes = (const char *const *)s->notes;
    r.nnotes = s->nnotes;
    *out = r;
    return PP_OK;
}

void pp_result_free(pp_result *r)
{
    if (!r)
        return;
    free((void *)r->chain);
    r->chain = NULL;
}
