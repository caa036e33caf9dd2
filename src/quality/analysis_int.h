/* Private declarations shared by analysis.c, analysis_mark.c, pairs.c and
 * snoop.c (src/quality/). Not API. */
#ifndef CAIRN_ANALYSIS_INT_H
#define CAIRN_ANALYSIS_INT_H

#include "cairn/quality.h"
#include "cairn/selinv.h"

/* The re-adjustment engine of snooping, and the design rows every part of
 * the analysis reads. It works only through public interfaces of the
 * model and solve stages (cairn_obs_linearise, cairn_obs_sigma, the
 * adjustment's unknown numbering and its factor), in the adjustment's
 * local origin, like src/solve/iterate.c. */
typedef struct {
    cairn_adjustment *adj;
    cholmod_common *cc;     /* the adjustment's Common */
    cholmod_factor *L;      /* the adjustment's factor, refactorised in place */
    cholmod_sparse *N;      /* the adjustment's N, refilled on its pattern */
    int n;                  /* unknowns */
    size_t nobs;
    /* the solve stage's design rows, shared (cairn_adjustment_rows_rw),
     * or owned empty rows when there are no unknowns */
    const size_t *rp;       /* nobs + 1: row i has entries rp[i] .. rp[i+1]-1 */
    const int *ri;          /* unknown of each entry */
    double *rc;             /* coefficient of each entry at the current state */
    size_t *own_rp;         /* the empty rows' rp, when owned */
    unsigned char *out;     /* 1: rejected */
    double *e, *nn, *h, *omega;  /* local state (e, n minus the origin) */
    cairn_state st;
    int iterations;         /* Gauss–Newton iterations made by the engine */
    int factorisations;
    double factor_seconds;  /* last factorisation, s */
    double t_factorise;     /* all assemblies + factorisations, s */
    int factor_at_solution; /* 1: L is the factor of N at the current state */
    int factor_consumed;    /* 1: L holds a selected inverse (in place) */
} cairn_qa_engine;

/* Build rows and state from the adjustment at its solution. */
int cairn_qa_engine_init(cairn_qa_engine *eg, cairn_adjustment *adj, cairn_error *err);
void cairn_qa_engine_clear(cairn_qa_engine *eg);
/* Remove the k observations idx[], put back the m rejected ones back[],
 * and re-adjust from the current solution by Gauss–Newton: the first
 * step on a fresh factorisation at the current point, chord steps
 * refined to the Gauss–Newton step after it.
 * Writes the new solution into adj; the factor is left at the round's
 * starting point (factor_at_solution = 0). Returns 0 or a CAIRN_SOLVE_*
 * status. */
int cairn_qa_engine_reject_many(cairn_qa_engine *eg, const size_t *idx, size_t k,
                                const size_t *back, size_t m, cairn_error *err);

/* snoop_batch.c: the flagged observations one snooping round rejects: the
 * largest |w| or |tau|, and further ones whose statistic, conditioned on
 * those taken near them (correlations from Z, NULL without unknowns),
 * still fails; none within two lines of the nwait observations wait[]
 * (rejected ones this round puts back). Writes at most `limit`
 * observation indices to pick and returns how many (at least 1 when
 * anything is flagged and nwait is 0). */
size_t cairn_qa_next_rejections(const cairn_analysis *an, const cairn_qa_engine *eg,
                                const cairn_selinv *Z, const size_t *wait, size_t nwait,
                                size_t limit, size_t *pick);

/* Refactorise N at the current state (the rows as last linearised). */
int cairn_qa_engine_refactor(cairn_qa_engine *eg, cairn_error *err);

/* Qxx getter for cairn_redundancy over a selected inverse. */
int cairn_qa_qxx_get(void *ctx, int i, int j, double *pq);

/* Seconds of a monotonic clock. */
double cairn_qa_now(void);

/* analysis_mark.c: per-mark precision from Z. */
void cairn_qa_marks(cairn_analysis *an, const cairn_selinv *Z);
/* pairs.c: relative precision of the observed pairs and the tolerance;
 * returns 0 or -1 when out of memory. */
int cairn_qa_pairs(cairn_analysis *an, const cairn_selinv *Z);

/* control.c: the test of every held mark's given coordinates against the
 * observations touching it (cairn_control_test), on eg's factor, which
 * must still be a factor (before the selected inverse takes it). Fills
 * *pout (malloc'd, *pn entries, held marks that observations touch, in
 * mark order). Returns 0, or -1 when out of memory. */
/* The distinct marks of observation o (at most 3: at, from, to) into m;
 * returns how many. */
static inline int cairn_qa_obs_marks(const cairn_obs *o, int m[3])
{
    int k = 0;
    if (o->at >= 0)
        m[k++] = o->at;
    if (o->from >= 0 && o->from != o->at)
        m[k++] = o->from;
    if (o->to >= 0 && o->to != o->at && o->to != o->from)
        m[k++] = o->to;
    return k;
}

/* control.c: fill t[k].wmax of the n tests (in mark order) from the
 * round's w-tests (an->w of the observations eg uses). */
void cairn_qa_control_wmax(const cairn_analysis *an, const cairn_qa_engine *eg,
                           cairn_control_test *t, size_t n);
/* control.c: at the end of the analysis, each held mark's rejected
 * observations (nrejected) and the suspect flag of an->control. */
void cairn_qa_control_final(cairn_analysis *an);
int cairn_qa_control_tests(const cairn_analysis *an, const cairn_qa_engine *eg,
                           cairn_control_test **pout, size_t *pn);

#endif
