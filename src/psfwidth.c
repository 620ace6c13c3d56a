/* pixpost — sampling an uncertain PSF width (gaussian sigma or airy NA)
 * inside the Gibbs and marginal-then-conditional samplers, in the manner
 * of Orieux, Giovannelli & Rodet (JOSA A 27, 2010): the width has a
 * uniform prior on [lo, hi] and is moved by a random-walk Metropolis step
 * on a density the kernel supplies (gibbs: the likelihood given the draw
 * x; mtc: the marginal p(lambda, delta, width | y)).
 *
 * Cost per proposal inside the range: one kernel rebuild (gaussian: one exp
 * per kernel pixel; airy: s*s J1 per kernel pixel, see psf.c), one r2c of
 * the kernel placed on the grid and one pass for |otf|^2; then the
 * kernel's density (one pass). A proposal outside [lo, hi] is rejected
 * without a transform. Memory per chain: two half spectra and two |otf|^2
 * arrays (48 bytes per half-spectrum entry), one real grid, one kernel.
 */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "internal.h"
#include "grid.h"
#include "psfwidth.h"
#include "sampler_internal.h"
#include "pixpost/psf.h"
#include "pixpost/psf_extra.h"

struct pp_width {
    pp_psf_spec spec;   /* the model; its sigma/na is set to each width built */
    pp_image *kernel;   /* s->psf_size square */
    double *grid;       /* gn: the kernel placed on the grid, centre at (0, 0) */
    pp_complex *otf[2]; /* current and proposal */
    double *otf2[2];
    int cur;
    double step;                  /* proposal sd, width units */
    unsigned long tried, accepted; /* after burn-in */
};

pp_status pp_width_create(const pp_sampler *s, pp_width **out)
{
    pp_width *w = calloc(1, sizeof *w);
    *out = w;
    if (!w)
        return pp_fail(PP_ERR_NOMEM, "out of memory for the PSF width state");
    w->spec = s->cfg.psf;
    w->grid = pp_fft_alloc_real(s->gn);
    for (int i = 0; i < 2; i++) {
        w->otf[i] = pp_fft_alloc_complex(s->gm);
        w->otf2[i] = malloc(s->gm * sizeof(double));
    }
    pp_status st = pp_image_create(s->psf_size, s->psf_size, &w->kernel);
    if (st != PP_OK)
        return st;
    if (!w->grid || !w->otf[0] || !w->otf[1] || !w->otf2[0] || !w->otf2[1])
        return pp_fail(PP_ERR_NOMEM, "out of memory for the PSF width state");
    w->step = 0.05 * (w->spec.width_hi - w->spec.width_lo);
    return PP_OK;
}

void pp_width_free(pp_width *w)
{
    if (!w)
        return;
    pp_image_free(w->kernel);
    pp_fft_free_buffer(w->grid);
    for (int i = 0; i < 2; i++) {
        pp_fft_free_buffer(w->otf[i]);
        free(w->otf2[i]);
    }
    free(w);
}

/* Builds the transfer function of width `value` into slot i. */
static void build(const pp_sampler *s, pp_width *w, double value, int i)
{
    if (w->spec.kind == PP_PSF_GAUSSIAN)
        w->spec.sigma = value;
    else
        w->spec.na = value;
    /* The range was checked when parsing, so the fill cannot fail. */
    (void)pp_psf_fill(&w->spec, w->kernel);
    pp_shape gs = pp_shape_2d(s->gh, s->gw),
             ks = pp_shape_2d(w->kernel->height, w->kernel->width);
    pp_grid_place_kernel(w->grid, &gs, w->kernel->data, &ks); /* centre to (0, 0) */
    pp_fft_forward(s->fft, w->grid, w->otf[i]);
    for (size_t k = 0; k < s->gm; k++) {
        pp_complex o = w->otf[i][k];
        w->otf2[i][k] = creal(o) * creal(o) + cimag(o) * cimag(o);
    }
}

static void use_slot(pp_chain *c, int i, double value)
{
    pp_width *w = c->wstate;
    w->cur = i;
    c->otf = w->otf[i];
    c->otf2 = w->otf2[i];
    c->width = value;
}

void pp_width_start(const pp_sampler *s, pp_chain *c, double value)
{
    pp_width *w = c->wstate;
    w->step = 0.05 * (w->spec.width_hi - w->spec.width_lo);
    w->tried = w->accepted = 0;
    build(s, w, value, 0);
    use_slot(c, 0, value);
}

int pp_width_step(const pp_sampler *s, pp_chain *c, pp_width_logp f, void *ctx, double *logp,
                  unsigned long adapt_n)
{
    pp_width *w = c->wstate;
    double prop = c->width + w->step * pp_rng_normal(&c->rng);
    double u = pp_rng_uniform(&c->rng);
    int acc = 0;
    if (prop >= w->spec.width_lo && prop <= w->spec.width_hi) {
        int j = 1 - w->cur;
        build(s, w, prop, j);
        double lp = f(s, c, w->otf[j], w->otf2[j], ctx);
        if (isfinite(lp) && log(u) < lp - *logp) {
            use_slot(c, j, prop);
            *logp = lp;
            acc = 1;
        }
    }
    if (adapt_n > 0) {
        /* Robbins-Monro on log(step) towards 0.44, the usual 1-D random-walk
         * target (Roberts & Rosenthal 2001; common practice). */
        w->step *= exp((acc - 0.44) * pow((double)adapt_n, -0.6));
        double span = w->spec.width_hi - w->spec.width_lo;
        if (w->step > span)
            w->step = span;
        if (w->step < 1e-9 * span)
            w->step = 1e-9 * span;
    } else {
        w->tried++;
        w->accepted += (unsigned long)acc;
    }
    return acc;
}

double pp_width_acceptance(const pp_width *w)
{
    return w && w->tried ? (double)w->accepted / (double)w->tried : 0.0;
}
