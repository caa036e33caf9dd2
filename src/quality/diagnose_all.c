/* The diagnoses of an analysis: cairn_diagnose (diagnose.c) for every
 * flagged or rejected observation, with the estimated blunders of all
 * observations as its evidence.
 *
 * Why the misfit for a rejected observation: after snooping removed it,
 * its residual against the final solution is the predicted residual of an
 * observation left out, which equals its ∇̂ = −v/r at the moment it was
 * rejected to first order, and whose sd is σ/√r with the r of that moment
 * (σ² + a Q'xx aᵀ = σ²/r for the solution without it). Using the final
 * misfit rather than the ∇̂ of the rejection round keeps the evidence
 * consistent with the coordinates the diagnosis tests against. */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/quality.h"
#include "diagnose_int.h"

void cairn_diagnoses_clear(cairn_diagnoses *dg)
{
    if (!dg)
        return;
    free(dg->d);
    free(dg->made);
    memset(dg, 0, sizeof *dg);
}

int cairn_diagnoses_make(const cairn_adjustment *adj, const cairn_analysis *an,
                         cairn_diagnoses *pdg, cairn_error *err)
{
    memset(pdg, 0, sizeof *pdg);
    size_t n = adj->prob->nobs;
    if (n == 0)
        return 0;
    double *nab = malloc(n * sizeof *nab), *sd = malloc(n * sizeof *sd);
    double *rrej = malloc(n * sizeof *rrej);
    pdg->d = calloc(n, sizeof *pdg->d);
    pdg->made = calloc(n, 1);
    if (!nab || !sd || !rrej || !pdg->d || !pdg->made) {
        free(nab);
        free(sd);
        free(rrej);
        cairn_diagnoses_clear(pdg);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return -1;
    }
    pdg->n = n;
    for (size_t i = 0; i < n; i++)
        rrej[i] = NAN;
    for (size_t k = 0; k < an->nrejections; k++)
        if (an->rejections[k].obs < n)
            rrej[an->rejections[k].obs] = an->rejections[k].r;
    for (size_t i = 0; i < n; i++) {
        double sig = adj->sigma[i];
        if (an->status[i] == CAIRN_OBS_REJECTED) {
            nab[i] = -adj->residual[i];
            sd[i] = rrej[i] >= CAIRN_R_MIN ? sig / sqrt(rrej[i]) : NAN;
        } else if (an->status[i] == CAIRN_OBS_UNCHECKED || !(an->r[i] >= CAIRN_R_MIN)) {
            nab[i] = sd[i] = NAN;
        } else {
            nab[i] = an->nabla[i];
            sd[i] = sig / sqrt(an->r[i]);
        }
    }
    cairn_state x = {adj->e, adj->n, adj->h, adj->omega};
    /* one grid of the marks for every wrong-mark search (out of memory:
     * each search scans all marks, with the same outcome) */
    cairn_mark_grid grid;
    (void)cairn_mark_grid_build(&x, adj->net->nmarks, &grid);
    /* the input files in memory, read once for all the booked texts */
    cairn_text_cache text;
    memset(&text, 0, sizeof text);
    for (size_t i = 0; i < n; i++) {
        /* Only flagged and rejected observations get a diagnosis; the
         * others' entries stay as calloc made them (kind NONE, empty
         * texts) and are never touched, so that they cost no resident
         * memory: 336 bytes an observation, 470 MB at 10^5 marks. */
        if (an->status[i] != CAIRN_OBS_FLAGGED && an->status[i] != CAIRN_OBS_REJECTED)
            continue;
        cairn_diagnosis *d = &pdg->d[i];
        d->kind = CAIRN_DIAG_NONE;
        d->corrected = d->fit_sigma = d->next_sigma = NAN;
        d->mark = -1;
        /* -1 only for an observation without a usable estimate: it says so
         * in its note, which is what the reports show */
        (void)cairn_diagnose_grid(adj->prob, &x, nab, sd, i, &grid, &text, d);
        pdg->made[i] = 1;
        pdg->nmade++;
    }
    cairn_mark_grid_clear(&grid);
    cairn_text_cache_clear(&text);
    free(nab);
    free(sd);
    free(rrej);
    return 0;
}
