/* Private declarations of src/solve/: shared between unknowns.c, datum.c,
 * rows.c, normal.c, iterate.c and adjust.c. Not API. */
#ifndef CAIRN_SOLVE_INT_H
#define CAIRN_SOLVE_INT_H

#include <stdint.h>

#include "cairn/solve.h"

/* ---- rows.c: which unknowns an observation touches -------------------- */

/* Bit mask (1u << CAIRN_PAR_*) of the local parameters an observation of
 * kind k depends on in the given dimension. Fixed by kind, not by the
 * values of the partials, so that the sparsity pattern of N never changes
 * when a partial happens to be exactly zero at some iterate. */
unsigned cairn_solve_kind_pars(cairn_obs_kind k, int dimension);

/* Mark index a local parameter refers to (at/from/to), or -1; *pcomp gets
 * CAIRN_E/N/H (0 for the orientation). */
int cairn_solve_par_mark(const cairn_obs *o, int par, unsigned *pcomp);

/* The design rows in compressed form: row i has entries ptr[i] .. ptr[i+1]-1,
 * each a distinct unknown unk[k] whose coefficient is the sum of the
 * partials of the local parameters in the bit mask par[k] (a mark named in
 * two roles of one observation gives one entry). */
typedef struct {
    size_t *ptr;       /* nobs + 1 */
    int *unk;
    uint16_t *par;     /* bit mask of the CAIRN_NPAR local parameters */
    double *coef;      /* filled by cairn_solve_fill_row */
    size_t nent;
} cairn_rows;
_Static_assert(CAIRN_NPAR <= 16, "cairn_rows.par holds one bit per local parameter");

int cairn_rows_build(const cairn_adjustment *adj, cairn_rows *rows);
void cairn_rows_clear(cairn_rows *rows);

/* ---- unknowns.c -------------------------------------------------------- */

/* In-adjustment components, weighted control, effective datum. */
int cairn_solve_prepare(cairn_adjustment *adj, cairn_error *err);
/* Free-datum constraints, numbering of unknowns, roles. Needs given
 * starting coordinates (checked before). */
int cairn_solve_number(cairn_adjustment *adj, cairn_error *err);
/* Number of direction observations of each setup in the problem (array of
 * net->nsetups, caller frees). NULL when out of memory. */
int *cairn_solve_directions_per_setup(const cairn_adjustment *adj);

/* ---- datum.c ----------------------------------------------------------- */

int cairn_solve_check_starts(const cairn_adjustment *adj, cairn_error *err);
int cairn_solve_check_datum(const cairn_adjustment *adj, cairn_error *err);

/* Local state: coordinates minus the origin (e, n), h as given, ω. */
typedef struct {
    double *e, *n, *h, *omega;
    cairn_state st;
} cairn_xstate;

/* ---- normal.c: the CHOLMOD side ---------------------------------------- */

struct cairn_solver {
    cholmod_common cc;
    int started;
    cholmod_sparse *N;     /* lower triangle, sorted, diagonal first in each column */
    cholmod_factor *L;
    cholmod_dense *b;      /* right-hand side AᵀP(observed − computed) */
    double *ndiag;         /* undamped diagonal of N */
    int n;
    int order_by_density;  /* AUTO chose METIS by size: the pattern may still say AMD */
    cairn_rows rows;       /* design-row pattern (adjust.c) */
    cairn_xstate x;        /* final local state, for re-linearising */
    cairn_solve_timing t;  /* seconds per phase (make bench) */
};

/* Seconds of a monotonic clock. */
double cairn_solve_now(void);

int cairn_solver_start(cairn_solver *s, int n, int ordering, int metis_threshold);
/* Pattern of N from the rows; symbolic analysis (once). */
int cairn_solver_analyse(cairn_solver *s, const cairn_rows *rows, size_t nobs,
                         cairn_error *err);
/* N and b from the filled rows, weights w[i] = 1/σᵢ² and residuals v. */
void cairn_solver_assemble(cairn_solver *s, const cairn_rows *rows, size_t nobs,
                           const double *w, const double *v);
/* Factorise N + μ·diag(N). Returns 0, CAIRN_SOLVE_ESINGULAR (message names
 * the unknown), or another status. */
int cairn_solver_factorise(cairn_solver *s, double mu, const cairn_adjustment *adj,
                           cairn_error *err);
/* Solve the last factorisation for the current b into dx (n values). */
int cairn_solver_solve(cairn_solver *s, double *dx, cairn_error *err);
/* A chord step: solve N dx = b for the current N and b (assembled since
 * the last factorisation) on the factor at hand, then `sweeps` sweeps of
 * iterative refinement dx += F⁻¹(b − N dx). *pcontract gets the size of
 * the first refinement correction relative to the step (max norms), an
 * estimate of ‖I − F⁻¹N‖; the error left after the sweeps is about its
 * power sweeps + 1. Returns 0 or a status. */
int cairn_solver_chord(cairn_solver *s, int sweeps, double *dx, double *pcontract,
                       cairn_error *err);
void cairn_solver_finish(cairn_solver *s);

/* ---- iterate.c --------------------------------------------------------- */

int cairn_xstate_init(cairn_xstate *x, size_t nmarks, size_t nsetups);
void cairn_xstate_copy(cairn_xstate *dst, const cairn_xstate *src, size_t nmarks,
                       size_t nsetups);
void cairn_xstate_clear(cairn_xstate *x);

/* Evaluate observation i at x: computed value, residual v, and (when prows
 * rows and coef are not NULL) the coefficients of row i of rows into
 * coef[0 .. ptr[i+1]-ptr[i]-1]. Control observations of e and n are
 * compared with their given value reduced to the origin. Returns 0 or -1. */
int cairn_solve_eval(const cairn_adjustment *adj, size_t i, const cairn_xstate *x,
                     const cairn_rows *rows, double *coef, double *pcomputed,
                     double *pv);

int cairn_solve_iterate(cairn_adjustment *adj, const cairn_adjust_options *opt,
                        cairn_rows *rows, cairn_xstate *x, cairn_error *err);

#endif
