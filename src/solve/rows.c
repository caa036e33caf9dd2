/* Design rows: which unknowns each observation touches, in a compressed
 * row layout built once per adjustment (the pattern of A, hence of AᵀPA). */
#include <stdlib.h>
#include <string.h>

#include "solve_int.h"

#define PB(x) (1u << CAIRN_PAR_##x)
#define EN_AT (PB(E_AT) | PB(N_AT))
#define EN_FROM (PB(E_FROM) | PB(N_FROM))
#define EN_TO (PB(E_TO) | PB(N_TO))

unsigned cairn_solve_kind_pars(cairn_obs_kind k, int dimension)
{
    /* FORMAT.md "Models": a plane distance, azimuth or direction depends on
     * e and n only; slope distances and zenith angles (dimension 3) also on
     * the heights through Δz; rises and trig-rises on heights only. */
    switch (k) {
    case CAIRN_OBS_DIRECTION: return EN_AT | EN_TO | PB(OMEGA);
    case CAIRN_OBS_ANGLE: return EN_AT | EN_FROM | EN_TO;
    case CAIRN_OBS_AZIMUTH: return EN_FROM | EN_TO;
    case CAIRN_OBS_HORIZ: return EN_AT | EN_TO;
    case CAIRN_OBS_SLOPE:
        return EN_AT | EN_TO | (dimension == 3 ? PB(H_AT) | PB(H_TO) : 0u);
    case CAIRN_OBS_ZENITH: return EN_AT | EN_TO | PB(H_AT) | PB(H_TO);
    case CAIRN_OBS_RISE: return PB(H_FROM) | PB(H_TO);
    case CAIRN_OBS_TRIG_RISE: return PB(H_AT) | PB(H_TO);
    case CAIRN_OBS_CONTROL_E: return PB(E_AT);
    case CAIRN_OBS_CONTROL_N: return PB(N_AT);
    case CAIRN_OBS_CONTROL_H: return PB(H_AT);
    default: return 0;
    }
}

int cairn_solve_par_mark(const cairn_obs *o, int par, unsigned *pcomp)
{
    static const unsigned comps[3] = {CAIRN_E, CAIRN_N, CAIRN_H};
    if (par < 0 || par >= CAIRN_PAR_OMEGA) {
        *pcomp = 0;
        return -1;
    }
    *pcomp = comps[par % 3];
    switch (par / 3) {
    case 0: return o->at;
    case 1: return o->from;
    default: return o->to;
    }
}

/* Unknown of a local parameter of o, or -1 (held, fixed or absent). */
static int par_unknown(const cairn_adjustment *adj, const cairn_obs *o, int par)
{
    if (par == CAIRN_PAR_OMEGA)
        return (o->setup >= 0 && (size_t)o->setup < adj->net->nsetups)
                   ? adj->unk_setup[o->setup] : -1;
    unsigned comp;
    int m = cairn_solve_par_mark(o, par, &comp);
    if (m < 0 || (size_t)m >= adj->net->nmarks)
        return -1;
    int c = comp == CAIRN_E ? 0 : comp == CAIRN_N ? 1 : 2;
    return adj->unk_mark[3 * (size_t)m + (size_t)c];
}

int cairn_rows_build(const cairn_adjustment *adj, cairn_rows *rows)
{
    const cairn_problem *p = adj->prob;
    memset(rows, 0, sizeof *rows);
    rows->ptr = malloc((p->nobs + 1) * sizeof *rows->ptr);
    size_t cap = p->nobs * 4 + 16;
    rows->unk = malloc(cap * sizeof *rows->unk);
    rows->par = malloc(cap * sizeof *rows->par);
    if (!rows->ptr || !rows->unk || !rows->par)
        goto oom;
    size_t k = 0;
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        unsigned mask = cairn_solve_kind_pars(o->kind, p->dimension);
        rows->ptr[i] = k;
        if (k + CAIRN_NPAR > cap) {
            size_t ncap = cap * 2;
            int *nu = realloc(rows->unk, ncap * sizeof *nu);
            if (!nu)
                goto oom;
            rows->unk = nu;
            uint16_t *np = realloc(rows->par, ncap * sizeof *np);
            if (!np)
                goto oom;
            rows->par = np;
            cap = ncap;
        }
        for (int par = 0; par < CAIRN_NPAR; par++) {
            if (!(mask & (1u << par)))
                continue;
            int u = par_unknown(adj, o, par);
            if (u < 0)
                continue;
            size_t q = rows->ptr[i];
            while (q < k && rows->unk[q] != u)
                q++;
            if (q == k) {
                rows->unk[k] = u;
                rows->par[k] = 0;
                k++;
            }
            rows->par[q] = (uint16_t)(rows->par[q] | 1u << par);
        }
    }
    rows->ptr[p->nobs] = k;
    rows->nent = k;
    rows->coef = calloc(k ? k : 1, sizeof *rows->coef);
    if (!rows->coef)
        goto oom;
    return 0;
oom:
    cairn_rows_clear(rows);
    return -1;
}

void cairn_rows_clear(cairn_rows *rows)
{
    free(rows->ptr);
    free(rows->unk);
    free(rows->par);
    free(rows->coef);
    memset(rows, 0, sizeof *rows);
}
