/* cairn_adjust: the solve stage from a built problem to an adjustment —
 * checks, numbering, local origin, iteration, results in grid values. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "solve_int.h"

void cairn_adjust_options_default(cairn_adjust_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->max_iterations = 0;
    opt->ordering = CAIRN_ORDER_AUTO;
    opt->metis_threshold = 20000;
    opt->refactor_final = 1;
    opt->max_halvings = 10;
    opt->chord = 1;
}

static int alloc_arrays(cairn_adjustment *adj)
{
    size_t nm = adj->net->nmarks ? adj->net->nmarks : 1;
    size_t ns = adj->net->nsetups ? adj->net->nsetups : 1;
    size_t no = adj->prob->nobs ? adj->prob->nobs : 1;
    adj->unk_mark = malloc(3 * nm * sizeof *adj->unk_mark);
    adj->unk_setup = malloc(ns * sizeof *adj->unk_setup);
    adj->in_adj = calloc(nm, sizeof *adj->in_adj);
    adj->fixed = calloc(nm, sizeof *adj->fixed);
    adj->role = calloc(nm, sizeof *adj->role);
    adj->e = malloc(nm * sizeof *adj->e);
    adj->n = malloc(nm * sizeof *adj->n);
    adj->h = malloc(nm * sizeof *adj->h);
    adj->omega = malloc(ns * sizeof *adj->omega);
    adj->computed = calloc(no, sizeof *adj->computed);
    adj->residual = calloc(no, sizeof *adj->residual);
    adj->sigma = calloc(no, sizeof *adj->sigma);
    adj->solver = calloc(1, sizeof *adj->solver);
    return adj->unk_mark && adj->unk_setup && adj->in_adj && adj->fixed &&
                   adj->role && adj->e && adj->n && adj->h && adj->omega &&
                   adj->computed && adj->residual && adj->sigma && adj->solver
               ? 0 : -1;
}

/* Local origin: the mean of the given plane coordinates of the marks in
 * the adjustment, rounded to a whole metre so that reducing nearby grid
 * values is exact (Sterbenz: x − y is exact for y/2 ≤ x ≤ 2y) and large
 * grid values keep their digits in the equations. */
static void local_origin(cairn_adjustment *adj)
{
    const cairn_net *net = adj->net;
    double se = 0, sn = 0;
    size_t k = 0;
    for (size_t m = 0; m < net->nmarks; m++)
        if ((adj->in_adj[m] & CAIRN_E) &&
            ((net->marks[m].given | net->marks[m].computed) & (CAIRN_E | CAIRN_N)) == (CAIRN_E | CAIRN_N)) {
            se += net->marks[m].e;
            sn += net->marks[m].n;
            k++;
        }
    adj->origin_e = k ? round(se / (double)k) : 0.0;
    adj->origin_n = k ? round(sn / (double)k) : 0.0;
}

static void start_state(const cairn_adjustment *adj, cairn_xstate *x)
{
    const cairn_net *net = adj->net;
    for (size_t m = 0; m < net->nmarks; m++) {
        const cairn_mark *mk = &net->marks[m];
        x->e[m] = ((mk->given | mk->computed) & CAIRN_E) ? mk->e - adj->origin_e : 0.0;
        x->n[m] = ((mk->given | mk->computed) & CAIRN_N) ? mk->n - adj->origin_n : 0.0;
        x->h[m] = ((mk->given | mk->computed) & CAIRN_H) ? mk->h : 0.0;
    }
}

static void results(cairn_adjustment *adj, const cairn_xstate *x)
{
    const cairn_net *net = adj->net;
    for (size_t m = 0; m < net->nmarks; m++) {
        const cairn_mark *mk = &net->marks[m];
        const int *u = &adj->unk_mark[3 * m];
        unsigned t = adj->in_adj[m];
        /* components that are not unknowns keep their given value exactly */
        adj->e[m] = !(t & CAIRN_E) ? NAN : u[0] >= 0 ? x->e[m] + adj->origin_e
                  : ((mk->given | mk->computed) & CAIRN_E) ? mk->e : NAN;
        adj->n[m] = !(t & CAIRN_N) ? NAN : u[1] >= 0 ? x->n[m] + adj->origin_n
                  : ((mk->given | mk->computed) & CAIRN_N) ? mk->n : NAN;
        adj->h[m] = !(t & CAIRN_H) ? NAN : u[2] >= 0 ? x->h[m]
                  : ((mk->given | mk->computed) & CAIRN_H) ? mk->h : NAN;
    }
    for (size_t s = 0; s < net->nsetups; s++)
        adj->omega[s] = adj->unk_setup[s] >= 0 ? cairn_wrap_2pi(x->omega[s]) : NAN;
    adj->nobs = adj->prob->nobs;
    adj->dof = (int)adj->nobs - adj->nunknowns;
    adj->sigma0_sq = adj->dof > 0 ? adj->vtpv / adj->dof : NAN;
}

/* No unknowns (everything held): residuals at the given coordinates. */
static int evaluate_only(cairn_adjustment *adj, const cairn_xstate *x,
                         cairn_error *err)
{
    adj->vtpv = 0;
    for (size_t i = 0; i < adj->prob->nobs; i++) {
        const cairn_obs *o = &adj->prob->obs[i];
        double sig = cairn_obs_sigma(adj->prob, o, &x->st);
        if (!(sig > 0) ||
            cairn_solve_eval(adj, i, x, NULL, NULL, &adj->computed[i],
                             &adj->residual[i])) {
            cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line,
                            o->src.col, "this %s cannot be evaluated",
                            cairn_obs_kind_name(o->kind));
            return CAIRN_SOLVE_EGEOM;
        }
        adj->sigma[i] = sig;
        adj->vtpv += adj->residual[i] * adj->residual[i] / (sig * sig);
    }
    return 0;
}

int cairn_adjust(const cairn_net *net, const cairn_problem *prob,
                 const cairn_adjust_options *opt, cairn_adjustment **padj,
                 cairn_error *err)
{
    cairn_adjust_options defaults;
    *padj = NULL;
    if (!opt) {
        cairn_adjust_options_default(&defaults);
        opt = &defaults;
    }
    if (!net || !prob || prob->net != net) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: the problem was not built from this net");
        return CAIRN_SOLVE_EINTERNAL;
    }
    cairn_adjustment *adj = calloc(1, sizeof *adj);
    if (!adj) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    adj->net = net;
    adj->prob = prob;
    adj->dimension = prob->dimension;
    int rc;
    if (alloc_arrays(adj)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    cairn_solver *s = adj->solver;
    if ((rc = cairn_solve_prepare(adj, err)) || (rc = cairn_solve_check_starts(adj, err)) ||
        (rc = cairn_solve_number(adj, err)) || (rc = cairn_solve_check_datum(adj, err)))
        goto fail;
    local_origin(adj);
    if (cairn_xstate_init(&s->x, net->nmarks, net->nsetups)) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        rc = CAIRN_SOLVE_ENOMEM;
        goto fail;
    }
    start_state(adj, &s->x);
    if (adj->nunknowns == 0) {
        if ((rc = evaluate_only(adj, &s->x, err)))
            goto fail;
    } else {
        if (cairn_rows_build(adj, &s->rows) ||
            cairn_solver_start(s, adj->nunknowns, opt->ordering, opt->metis_threshold)) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
            rc = CAIRN_SOLVE_ENOMEM;
            goto fail;
        }
        if ((rc = cairn_solve_iterate(adj, opt, &s->rows, &s->x, err)))
            goto fail;
    }
    results(adj, &s->x);
    *padj = adj;
    return 0;
fail:
    cairn_adjustment_free(&adj);
    return rc;
}

long cairn_adjustment_release_cholmod(cairn_adjustment *adj)
{
    if (!adj || !adj->solver)
        return 0;
    cairn_solver *s = adj->solver;
    if (!s->started)
        return (long)s->cc.malloc_count;
    cairn_solver_finish(s);
    return (long)s->cc.malloc_count;
}

void cairn_adjustment_free(cairn_adjustment **padj)
{
    if (!padj || !*padj)
        return;
    cairn_adjustment *adj = *padj;
    if (adj->solver) {
        cairn_adjustment_release_cholmod(adj);
        cairn_rows_clear(&adj->solver->rows);
        cairn_xstate_clear(&adj->solver->x);
        free(adj->solver);
    }
    free(adj->unknowns);
    free(adj->unk_mark);
    free(adj->unk_setup);
    free(adj->in_adj);
    free(adj->fixed);
    free(adj->role);
    free(adj->e);
    free(adj->n);
    free(adj->h);
    free(adj->omega);
    free(adj->computed);
    free(adj->residual);
    free(adj->sigma);
    free(adj->log);
    free(adj);
    *padj = NULL;
}

const cholmod_factor *cairn_adjustment_factor(const cairn_adjustment *adj)
{
    return adj && adj->solver && adj->solver->started ? adj->solver->L : NULL;
}

void cairn_adjustment_timing(const cairn_adjustment *adj, cairn_solve_timing *pt)
{
    memset(pt, 0, sizeof *pt);
    if (adj && adj->solver)
        *pt = adj->solver->t;
}

const cholmod_sparse *cairn_adjustment_normal(const cairn_adjustment *adj)
{
    return adj && adj->solver && adj->solver->started ? adj->solver->N : NULL;
}

cholmod_factor *cairn_adjustment_factor_rw(cairn_adjustment *adj)
{
    return adj && adj->solver && adj->solver->started ? adj->solver->L : NULL;
}

cholmod_sparse *cairn_adjustment_normal_rw(cairn_adjustment *adj)
{
    return adj && adj->solver && adj->solver->started ? adj->solver->N : NULL;
}

cholmod_common *cairn_adjustment_common(cairn_adjustment *adj)
{
    return adj && adj->solver && adj->solver->started ? &adj->solver->cc : NULL;
}

int cairn_adjustment_rows_rw(cairn_adjustment *adj, const size_t **pptr, const int **punk,
                             double **pcoef)
{
    if (!adj || !adj->solver || adj->nunknowns == 0 || !adj->solver->rows.ptr)
        return -1;
    *pptr = adj->solver->rows.ptr;
    *punk = adj->solver->rows.unk;
    *pcoef = adj->solver->rows.coef;
    return 0;
}

int cairn_adjustment_design_row(const cairn_adjustment *adj, size_t i,
                                int *pidx, double *pcoef, int *pcount,
                                double *psigma)
{
    *pcount = 0;
    if (!adj || i >= adj->nobs)
        return -1;
    const cairn_solver *s = adj->solver;
    if (psigma)
        *psigma = adj->sigma[i];
    if (adj->nunknowns == 0 || !s->rows.ptr)
        return 0;
    double c, v;
    if (cairn_solve_eval(adj, i, &s->x, &s->rows, pcoef, &c, &v))
        return -1;
    int k = 0;
    for (size_t q = s->rows.ptr[i]; q < s->rows.ptr[i + 1]; q++)
        pidx[k++] = s->rows.unk[q];
    *pcount = k;
    return 0;
}

const char *cairn_unknown_name(const cairn_adjustment *adj, int j, char *buf,
                               size_t n)
{
    if (!adj || j < 0 || j >= adj->nunknowns) {
        snprintf(buf, n, "unknown %d", j);
        return buf;
    }
    const cairn_unknown *u = &adj->unknowns[j];
    if (u->mark >= 0) {
        snprintf(buf, n, "the %s coordinate of mark %s",
                 u->comp == CAIRN_E ? "e" : u->comp == CAIRN_N ? "n" : "h",
                 adj->net->marks[u->mark].id);
    } else {
        const cairn_setup *st = &adj->net->setups[u->setup];
        const char *at = st->at >= 0 ? adj->net->marks[st->at].id : "?";
        if (st->src.file && st->src.line > 0)
            snprintf(buf, n, "the orientation of the setup at %s (%s:%d)", at,
                     st->src.file, st->src.line);
        else
            snprintf(buf, n, "the orientation of the setup at %s", at);
    }
    return buf;
}
