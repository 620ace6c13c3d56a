/* pixpost — what a running sampler offers the code it runs (the kernels in
 * src/sampler_<kind>.c, the diagnostics in src/sampler_diag.c) and the
 * top of src/sampler.c: recording a kept draw, warnings and notes, the
 * progress tick, the inner solver's statistics. Kept apart from sampler.c
 * so that calls point one way: sampler.c -> kernels, diagnostics -> this
 * file. Cost: O(frame) per kept draw (the moments), O(1) otherwise. */
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "sampler_internal.h"
#include "stats.h"
#include "pixpost/profiles.h"
#include "pixpost/regions.h"
#include "pixpost/spots.h"
#include "pixpost/regions_extra.h"
#include "pixpost/sampler_extra.h"

void pp_chain_freeze_mean(pp_chain *c)
{
    for (size_t i = 0; i < c->mom.len; i++)
        c->mean1[i] = (float)c->mom.mean[i];
}

void pp_chain_add_draw(const pp_sampler *s, pp_chain *c, const double *grid)
{
    pp_moments_add_box(&c->mom, grid, s->depth, s->height, s->width, s->gw, s->gh * s->gw);
    if (s->draw_stats && !s->records_mean)
        pp_chain_draw_stats(s, c, grid, 1.0);
    if (c->mom.count == s->freeze_at)
        pp_chain_freeze_mean(c);
}

void pp_chain_draw_stats(const pp_sampler *s, pp_chain *c, const double *f, double scale)
{
    if (s->nreg)
        pp_regions_sum(s->cfg.regions, f, s->gw, s->gh * s->gw, scale,
                       c->regs + c->kept * s->nfun);
    if (s->cfg.profiles)
        pp_profiles_eval(s->cfg.profiles, f, s->gw, s->gh * s->gw, scale,
                         c->regs + c->kept * s->nfun + s->nreg);
    if (s->cfg.spots)
        pp_spots_eval(s->cfg.spots, f, s->gw, s->gh * s->gw, scale,
                      c->regs + c->kept * s->nfun + s->nreg + s->nprof);
    const size_t plane = s->height * s->width;
    for (size_t t = 0; t < s->nabove; t++) {
        double *n = c->above_n + t * s->npix, thr = s->above_t[t];
        for (size_t z = 0; z < s->depth; z++)
            for (size_t r = 0; r < s->height; r++) {
                const double *fr = f + (z * s->gh + r) * s->gw;
                double *nr = n + z * plane + r * s->width;
                for (size_t x = 0; x < s->width; x++)
                    nr[x] += scale * fr[x] > thr;
            }
    }
}

void pp_chain_draw_stats_hat(const pp_sampler *s, pp_chain *c, const pp_complex *xhat,
                             pp_complex *tmp, double *out)
{
    memcpy(tmp, xhat, s->gm * sizeof *tmp);
    pp_fft_inverse(s->fft, tmp, out);
    pp_chain_draw_stats(s, c, out, 1.0 / (double)s->gn);
}

/* Appends a formatted sentence to a list of at most max (dropped when
 * full). Out of memory sets *lost: the sampler then fails with
 * PP_ERR_NOMEM at the end of pp_sampler_create or pp_sampler_run, as a
 * result must never come without a warning that qualifies it. */
static void add_sentence(char **list, size_t *n, size_t max, int *lost, const char *fmt,
                         va_list ap)
{
    if (*n == max)
        return;
    char buf[512];
    vsnprintf(buf, sizeof buf, fmt, ap);
    list[*n] = strdup(buf);
    if (list[*n])
        ++*n;
    else
        *lost = 1;
}

void pp_sampler_warn(pp_sampler *s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    if (s->nwarnings < PP_MAX_WARNINGS)
        s->warning_part[s->nwarnings] = PP_WARN_OTHER;
    add_sentence(s->warnings, &s->nwarnings, PP_MAX_WARNINGS, &s->lost_sentence, fmt, ap);
    va_end(ap);
}

void pp_sampler_warn_part(pp_sampler *s, pp_warning_part part, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    if (s->nwarnings < PP_MAX_WARNINGS)
        s->warning_part[s->nwarnings] = part;
    add_sentence(s->warnings, &s->nwarnings, PP_MAX_WARNINGS, &s->lost_sentence, fmt, ap);
    va_end(ap);
}

void pp_sampler_add_note(pp_sampler *s, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    add_sentence(s->notes, &s->nnotes, PP_MAX_NOTES, &s->lost_sentence, fmt, ap);
    va_end(ap);
}

int pp_sampler_tick(pp_sampler *s)
{
    unsigned long long done;
#pragma omp atomic capture
    done = ++s->progress_done;
    if (s->cfg.progress) {
        unsigned long long total = s->progress_total;
        unsigned long long step = total / 200 + 1;
        if (done % step == 0 || done == total) {
#pragma omp critical(pp_progress)
            s->cfg.progress(s->cfg.progress_ctx, done, total);
        }
    }
    return s->cfg.stop && *s->cfg.stop;
}

void pp_sampler_solver_stats(const pp_sampler *s, pp_solver_stats *out)
{
    *out = (pp_solver_stats){0, 0, 0, 0, 0, 0};
    for (unsigned k = 0; s->chain && k < s->cfg.chains; k++) {
        const pp_chain *c = &s->chain[k];
        out->draws += c->solver_draws;
        out->iterations += c->solver_iters;
        out->capped += c->solver_capped;
        out->accepted += c->solver_accepted;
        out->fallback += c->solver_fallback;
        out->most = c->solver_max > out->most ? c->solver_max : out->most;
    }
}
