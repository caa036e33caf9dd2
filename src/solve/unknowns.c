/* Unknowns: which components are in the adjustment, the effective datum,
 * the free-datum minimal constraints and the numbering of DEVELOPERS.md
 * "Modelling decisions" (mark by mark e, n, h adjacent, then one
 * orientation per setup with directions, in setup order). */
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "solve_int.h"

#define CAIRN_ENH (CAIRN_E | CAIRN_N | CAIRN_H)

/* Components of each mark that carry weighted control in the problem:
 * recorded from the control pseudo-observations themselves, so the solve
 * stage agrees with whatever the problem builder decided. */
static unsigned control_comp(cairn_obs_kind k)
{
    switch (k) {
    case CAIRN_OBS_CONTROL_E: return CAIRN_E;
    case CAIRN_OBS_CONTROL_N: return CAIRN_N;
    case CAIRN_OBS_CONTROL_H: return CAIRN_H;
    default: return 0;
    }
}

int *cairn_solve_directions_per_setup(const cairn_adjustment *adj)
{
    const cairn_net *net = adj->net;
    int *nd = calloc(net->nsetups ? net->nsetups : 1, sizeof *nd);
    if (!nd)
        return NULL;
    for (size_t i = 0; i < adj->prob->nobs; i++) {
        const cairn_obs *o = &adj->prob->obs[i];
        if (o->kind == CAIRN_OBS_DIRECTION && o->setup >= 0 &&
            (size_t)o->setup < net->nsetups)
            nd[o->setup]++;
    }
    return nd;
}

int cairn_solve_prepare(cairn_adjustment *adj, cairn_error *err)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    /* Nothing observed: an "adjustment" of no observations would report
     * success (0 unknowns, 0 dof, no test) and write result files that
     * only echo the input, which reads as a passed adjustment. Stop here,
     * before anything of the size of the marks is allocated (issue #9: a
     * file of 10^6 mark records and nothing else). */
    if (p->nobs == 0) {
        if (net->nobs == 0)
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "nothing to adjust: the input has %zu mark%s and no "
                            "observations", net->nmarks, net->nmarks == 1 ? "" : "s");
        else
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "nothing to adjust: none of the %zu booked observations "
                            "is used in dimension %d", net->nobs, p->dimension);
        return CAIRN_SOLVE_EDATUM;
    }
    unsigned *weighted = calloc(net->nmarks ? net->nmarks : 1, sizeof *weighted);
    if (!weighted) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    for (size_t i = 0; i < p->nobs; i++) {
        unsigned c = control_comp(p->obs[i].kind);
        int m = p->obs[i].at;
        if (c && m >= 0 && (size_t)m < net->nmarks)
            weighted[m] |= c;
    }
    int control = 0;
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned t = p->touch[m] & CAIRN_ENH;
        /* e and n always come together in a plane observation */
        if (t & (CAIRN_E | CAIRN_N))
            t |= CAIRN_E | CAIRN_N;
        adj->in_adj[m] = t;
        if (!p->datum_free && ((net->marks[m].hold & t) || (weighted[m] & t)))
            control = 1;
    }
    /* DEVELOPERS.md: "Datum free (or no held or weighted control at all)". */
    adj->datum_free = p->datum_free || !control;
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned t = adj->in_adj[m];
        if (!t)
            adj->role[m] = CAIRN_ROLE_NONE;
        else if (adj->datum_free)
            adj->role[m] = CAIRN_ROLE_ADJUSTED;
        else if (weighted[m] & t)
            adj->role[m] = CAIRN_ROLE_WEIGHTED;
        else if ((net->marks[m].hold & t) == t)
            adj->role[m] = CAIRN_ROLE_HELD;
        else
            adj->role[m] = CAIRN_ROLE_ADJUSTED;
    }
    free(weighted);
    return 0;
}

/* DEVELOPERS.md "Datum free": A = first plane mark, B = the next; fix e_A,
 * n_A (translation). Azimuth observations fix the rotation and distances
 * the scale; of B fix only what the observations leave free: the component
 * that a rotation about A moves most (e_B when |dn| >= |de|) when there is
 * no azimuth, the other one (moved by a change of scale) when there is no
 * distance. Fixing more would constrain the shape and change residuals.
 * Fix h of the first height mark. Fixed at the starting values. */
static void free_datum(cairn_adjustment *adj)
{
    const cairn_net *net = adj->net;
    const cairn_problem *p = adj->prob;
    int a = -1, b = -1, hm = -1;
    for (size_t m = 0; m < net->nmarks; m++) {
        if (adj->in_adj[m] & CAIRN_E) {
            if (a < 0)
                a = (int)m;
            else if (b < 0)
                b = (int)m;
        }
        if ((adj->in_adj[m] & CAIRN_H) && hm < 0)
            hm = (int)m;
    }
    int dist = 0, azi = 0;
    for (size_t i = 0; i < p->nobs; i++) {
        cairn_obs_kind k = p->obs[i].kind;
        dist |= k == CAIRN_OBS_HORIZ || k == CAIRN_OBS_SLOPE;
        azi |= k == CAIRN_OBS_AZIMUTH;
    }
    if (a >= 0)
        adj->fixed[a] |= CAIRN_E | CAIRN_N;
    if (b >= 0) {
        double de = net->marks[b].e - net->marks[a].e;
        double dn = net->marks[b].n - net->marks[a].n;
        unsigned across = fabs(dn) >= fabs(de) ? CAIRN_E : CAIRN_N;
        unsigned along = across == CAIRN_E ? CAIRN_N : CAIRN_E;
        if (!azi)
            adj->fixed[b] |= across;
        if (!dist)
            adj->fixed[b] |= along;
    }
    if (hm >= 0)
        adj->fixed[hm] |= CAIRN_H;
}

int cairn_solve_number(cairn_adjustment *adj, cairn_error *err)
{
    const cairn_net *net = adj->net;
    if (adj->datum_free)
        free_datum(adj);
    int *nd = cairn_solve_directions_per_setup(adj);
    size_t cap = 3 * net->nmarks + net->nsetups;
    adj->unknowns = malloc((cap ? cap : 1) * sizeof *adj->unknowns);
    if (!nd || !adj->unknowns) {
        free(nd);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    static const unsigned comps[3] = {CAIRN_E, CAIRN_N, CAIRN_H};
    int n = 0;
    for (size_t m = 0; m < net->nmarks; m++) {
        unsigned held = adj->datum_free ? adj->fixed[m] : net->marks[m].hold;
        for (int c = 0; c < 3; c++) {
            int *slot = &adj->unk_mark[3 * m + (size_t)c];
            *slot = -1;
            if ((adj->in_adj[m] & comps[c]) && !(held & comps[c])) {
                adj->unknowns[n] = (cairn_unknown){(int)m, -1, comps[c]};
                *slot = n++;
            }
        }
    }
    for (size_t s = 0; s < net->nsetups; s++) {
        adj->unk_setup[s] = -1;
        if (nd[s] > 0) {
            adj->unknowns[n] = (cairn_unknown){-1, (int)s, 0};
            adj->unk_setup[s] = n++;
        }
    }
    free(nd);
    adj->nunknowns = n;
    return 0;
}
