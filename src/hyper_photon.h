/* pixpost — spatially non-centred moves of the pCN family's global
 * hyperparameters (delta and the level m) for the photon models; see
 * src/hyper_photon.c for the method, its invariance argument and its cost.
 * Used by src/sampler_pcn.c only. */
#ifndef PIXPOST_HYPER_PHOTON_H
#define PIXPOST_HYPER_PHOTON_H

#include "pixpost/fft.h"
#include "pixpost/sampler.h"
#include "pixpost/status.h"
#include <stddef.h>

struct pp_chain; /* internal.h (which has no include guard of its own) */

/* The chain's state as the moves see it. The moves write proposals into the
 * scratch buffers (up, zp, xp, axp) and, on acceptance, swap them with the
 * current ones through these pointers and update *m, *phi, *delta. */
typedef struct pp_hphot_view {
    pp_complex **u, **up; /* half spectra: u = DFT(z - m) (DC 0 when the level is free) */
    double **z, **zp, **x, **xp, **ax, **axp; /* grids: z, x = exp(z), A x */
    double *m, *phi, *delta;
    /* Phi (negative log-likelihood over the observed pixels) of the mean
     * image ax; INFINITY where it is not defined. */
    double (*phi_of)(const void *ctx, const double *ax);
    /* The stationary prior's form u'Qu (Parseval; the free DC left out). */
    double (*quad_of)(const void *ctx, const pp_complex *u);
    const void *ctx;
} pp_hphot_view;

/* Per-chain state: the frozen references of the moves and their steps.
 * Memory: 4 grids and 1.5 half spectra (about 44 bytes per grid pixel). */
typedef struct pp_hphot {
    double *c;           /* grid: centre of the spatial scaling (a mean field of burn-in) */
    double *om;          /* grid: omega, the prior's local share in [0, 1] */
    double *rw;          /* grid: sqrt(1 - omega) */
    double *h;           /* grid: the level move's direction, omega / mean omega */
    pp_complex *hh;      /* DFT(h - 1) (DC 0) */
    double *fw;          /* half spectrum: the frequency weights om(k) of delta_move */
    double sum_om;       /* sum of omega over the grid */
    double jac_f;        /* tr S, S = R Fw R (see hyper_photon.c) */
    double dstep, lstep; /* random-walk steps (log delta; level), adapted in burn-in */
    unsigned long nmean; /* draws in the running mean c */
    int level_on;        /* the level move is used (the level is free and omega not ~0) */
} pp_hphot;

/* Allocates the state for a gh x gw grid (gm = gh (gw/2 + 1) entries).
 * Returns PP_OK or PP_ERR_NOMEM (then *out is NULL). Free with
 * pp_hphot_free (NULL is accepted). */
pp_status pp_hphot_create(size_t gn, size_t gm, pp_hphot **out);
void pp_hphot_free(pp_hphot *hp);
/* The memory that holds hp's state between rounds of a run (the pp_kernel
 * state contract, src/internal.h): writes its regions to out (at most 12)
 * and returns their count. */
struct pp_region;
size_t pp_hphot_state(pp_hphot *hp, size_t gn, size_t gm, struct pp_region *out);

/* Sets the references from the field cz (grid; a mean field): omega from
 * the local Fisher information of the data at x = exp(cz), smoothed; the
 * level direction h; the frequency weights fw(k) = dref q / (dref q + fi
 * |A|^2). shift: b + R^2 added to A x. Uses c->cbuf, cbuf2, rbuf and the view's
 * scratch grids (xp, axp). 7 transforms. Call only in burn-in (or before). */
void pp_hphot_reference(const pp_sampler *s, struct pp_chain *c, pp_hphot *hp,
                        const pp_hphot_view *v, const double *cz, double shift, double dref,
                        double fi, int free_dc);

/* Burn-in: adds z to the running mean that becomes the centre (hp->c is
 * overwritten from the first call after pp_hphot_reference). */
void pp_hphot_add_mean(const pp_sampler *s, pp_hphot *hp, const double *z);

/* delta and the field together: log delta' = log delta + eps, eps ~ N(0,
 * dstep^2) clamped to +-1, the field mapped by c + E exp(ls S) E (z - c)
 * (src/hyper_photon.c). Returns the acceptance probability. hyper: the
 * Gamma (shape, rate) of delta; rank of Q; m_fixed: the level when it is not
 * free (ignored when free_dc). 3 + 2 per Taylor term transforms. */
double pp_hphot_delta_move(const pp_sampler *s, struct pp_chain *c, const pp_hphot *hp,
                           const pp_hphot_view *v, const double hyper[2], double rank, int free_dc,
                           double m_fixed);

/* The level and the field together: z' = z + dm h, dm ~ N(0, lstep^2), so
 * m' = m + dm. Returns
 * the acceptance probability (1 when the move is off). 2 transforms. */
double pp_hphot_level_move(const pp_sampler *s, struct pp_chain *c, const pp_hphot *hp,
                           const pp_hphot_view *v);

#endif
