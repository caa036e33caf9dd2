/* cairn — solve: unknowns, datum, sparse normal equations (CHOLMOD),
 * Gauss–Newton / Levenberg–Marquardt iteration.
 *
 * cairn_adjust() takes a built cairn_problem (model.h) and returns a
 * cairn_adjustment: the adjusted coordinates and orientations, the residual
 * and a priori σ of every observation, vᵀPv, the degrees of freedom and the
 * iteration log, plus the CHOLMOD factor of the normal matrix at the
 * solution for the quality stage (selected inverse, redundancy numbers).
 *
 * Ownership: cairn_adjust creates the adjustment, cairn_adjustment_free
 * releases it (and its CHOLMOD workspace). The adjustment points at, but
 * does not own, the net and the problem: they must outlive it.
 *
 * Units: metres and radians, full grid coordinates (the local origin used
 * inside the iteration is undone in every public field).
 */
#ifndef CAIRN_SOLVE_H
#define CAIRN_SOLVE_H

#include <stddef.h>
#include <suitesparse/cholmod.h>

#include "cairn/core.h"
#include "cairn/model.h"

/** Status of cairn_adjust (0 success, negative failure). Every failure
 *  also adds a message to the error list. */
enum cairn_solve_status {
    CAIRN_SOLVE_OK = 0,
    CAIRN_SOLVE_ENOMEM = -1,     /**< out of memory */
    CAIRN_SOLVE_ESTART = -2,     /**< a mark in the adjustment lacks starting coordinates */
    CAIRN_SOLVE_EDATUM = -3,     /**< datum defect, floating part, undetermined mark */
    CAIRN_SOLVE_ESINGULAR = -4,  /**< the factorisation met a zero pivot */
    CAIRN_SOLVE_ENOCONV = -5,    /**< no convergence within the iteration limit */
    CAIRN_SOLVE_EGEOM = -6,      /**< an observation is undefined (coincident marks) */
    CAIRN_SOLVE_EINTERNAL = -7   /**< CHOLMOD or consistency failure (a bug) */
};

/** Fill-reducing ordering of the normal matrix. */
enum cairn_ordering {
    CAIRN_ORDER_AUTO = 0, /**< AMD up to metis_threshold unknowns, METIS above */
    CAIRN_ORDER_AMD = 1,
    CAIRN_ORDER_METIS = 2
};

/** One Gauss–Newton / Levenberg–Marquardt iteration, for the report. */
typedef struct {
    int iteration;        /**< 1-based */
    double vtpv_start;    /**< vᵀPv at the linearisation point */
    double vtpv;          /**< vᵀPv after the step (σ of the linearisation point) */
    double max_length;    /**< m: largest |correction| of a coordinate */
    int max_length_mark;  /**< mark of that correction, or -1 */
    unsigned max_length_comp; /**< CAIRN_E, CAIRN_N or CAIRN_H */
    double max_angle;     /**< rad: largest |correction| of an orientation */
    int max_angle_setup;  /**< setup of that correction, or -1 */
    double step;          /**< step length t applied (1 = full Gauss–Newton) */
    double mu;            /**< Marquardt damping used (0 = undamped) */
    int chord;            /**< 1: the step was solved on an earlier iteration's
                               factor and refined to the Gauss–Newton step
                               (no factorisation); 0: a fresh factorisation */
} cairn_iter_log;

/** The convergence test of DEVELOPERS.md: corrections of lengths below
 *  *plen = 0.01 × min_length_sigma (at least 1e-6 m; exactly 1e-6 m when
 *  no observation is a length, e.g. a network of directions only) and of
 *  orientations below *pang = 0.01 × min_angle_sigma (no limit when no
 *  observation is an angle). Sigmas in metres and radians; pass INFINITY
 *  for a kind that does not occur. */
void cairn_convergence_thresholds(double min_length_sigma, double min_angle_sigma,
                                  double *plen, double *pang);

/** Options of cairn_adjust; cairn_adjust_options_default sets the defaults
 *  given with each field. */
typedef struct {
    int max_iterations;   /**< 0 (default): the net's max-iterations option */
    int ordering;         /**< enum cairn_ordering; default CAIRN_ORDER_AUTO */
    int metis_threshold;  /**< unknowns above which AUTO uses METIS; default 20000 */
    int max_halvings;     /**< halvings of a Gauss–Newton step tried (Armijo
                               backtracking) before Levenberg–Marquardt damping;
                               default 10; 0: damping as soon as the full step fails */
    int refactor_final;   /**< 1 (default): re-linearise and factorise once more at
                               the converged coordinates, so that the factor, the σ
                               and the design rows all belong to the solution */
    int chord;            /**< 1 (default): after a full step, solve the next one on
                               the factor at hand with iterative refinement against
                               the new normal matrix, refactorising only when the
                               refinement does not contract (DEVELOPERS.md
                               "Chord steps"); 0: factorise every iteration */
    /** Called after each iteration when not NULL (progress display). */
    void (*progress)(const cairn_iter_log *it, void *ctx);
    void *progress_ctx;
} cairn_adjust_options;

void cairn_adjust_options_default(cairn_adjust_options *opt);

/** Role of a mark in marks.csv. */
typedef enum {
    CAIRN_ROLE_NONE = 0,   /**< not in the adjustment (no observation touches it) */
    CAIRN_ROLE_HELD,       /**< every component in the adjustment held */
    CAIRN_ROLE_WEIGHTED,   /**< weighted control (sd-en / sd-h) */
    CAIRN_ROLE_ADJUSTED
} cairn_role;

/** What an unknown is: a coordinate of a mark, or a setup's orientation. */
typedef struct {
    int mark;              /**< mark index, or -1 for an orientation */
    int setup;             /**< setup index for an orientation, else -1 */
    unsigned comp;         /**< CAIRN_E, CAIRN_N, CAIRN_H; 0 for an orientation */
} cairn_unknown;

typedef struct cairn_solver cairn_solver;   /* private: CHOLMOD state */

/** The result of an adjustment. Per-mark arrays have net->nmarks entries,
 *  per-setup arrays net->nsetups, per-observation arrays prob->nobs. */
typedef struct cairn_adjustment {
    const cairn_net *net;
    const cairn_problem *prob;
    int datum_free;        /**< 1 when minimal constraints were applied (asked for,
                                or no held or weighted control at all) */
    int dimension;         /**< prob->dimension */

    /* unknowns */
    int nunknowns;
    cairn_unknown *unknowns;   /**< nunknowns entries, in numbering order */
    int *unk_mark;         /**< 3·nmarks: unknown of (mark, e|n|h) or -1 */
    int *unk_setup;        /**< nsetups: orientation unknown or -1 */
    unsigned *in_adj;      /**< per mark: components in the adjustment (CAIRN_E|N|H) */
    unsigned *fixed;       /**< per mark: components fixed by the free datum */
    cairn_role *role;      /**< per mark */

    /* solution */
    double *e, *n, *h;     /**< per mark, metres: adjusted (unknown), else the given
                                value; NAN when not in the adjustment or not given */
    double *omega;         /**< per setup, rad in [0, 2π); NAN without directions */
    double *computed;      /**< per obs: value at the solution (m or rad) */
    double *residual;      /**< per obs: v = computed − observed (angles wrapped) */
    double *sigma;         /**< per obs: a priori σ at the solution (m or rad) */

    size_t nobs;
    int dof;               /**< nobs − nunknowns */
    double vtpv;           /**< Σ v²/σ² at the solution */
    double sigma0_sq;      /**< vtpv / dof; NAN when dof <= 0 */
    int iterations;
    cairn_iter_log *log;   /**< iterations entries */

    double origin_e, origin_n; /**< local origin used inside the iteration, m */
    cairn_solver *solver;
} cairn_adjustment;

/** Adjust the problem (built from net by cairn_problem_build; net must be
 *  prob->net). opt may be NULL for the defaults. Before factorising it
 *  checks starting coordinates, the datum, connectivity and that each mark
 *  has enough observations, and names the marks at fault. On success
 *  returns 0 and *padj; otherwise an enum cairn_solve_status < 0, *padj
 *  NULL and messages in err. */
int cairn_adjust(const cairn_net *net, const cairn_problem *prob,
                 const cairn_adjust_options *opt, cairn_adjustment **padj,
                 cairn_error *err);

void cairn_adjustment_free(cairn_adjustment **padj);

/** The CHOLMOD factor of the normal matrix N = AᵀPA at the solution
 *  (supernodal LLᵀ, int indices; its Perm maps permuted to original unknown
 *  numbers), or NULL after cairn_adjustment_release_cholmod, which
 *  cairn_analyse calls when it has finished (it computes the selected
 *  inverse in place over the factor). */
const cholmod_factor *cairn_adjustment_factor(const cairn_adjustment *adj);
/** The cholmod_common the factor was made with (cholmod_start, int). */
cholmod_common *cairn_adjustment_common(cairn_adjustment *adj);
/** The same factor and normal matrix, writable, for the quality stage's
 *  re-adjustments: cairn_analyse refills N on its pattern and refactorises
 *  it into this factor in place (one symbolic analysis, no second factor),
 *  and releases both when it has finished. NULL after
 *  cairn_adjustment_release_cholmod. */
cholmod_factor *cairn_adjustment_factor_rw(cairn_adjustment *adj);
cholmod_sparse *cairn_adjustment_normal_rw(cairn_adjustment *adj);

/** Wall-clock seconds spent in the sparse normal equations (make bench). */
typedef struct {
    double pattern;     /**< building the pattern of N (once) */
    double analyse;     /**< cholmod_analyze: ordering + symbolic (once) */
    double assemble;    /**< filling AᵀPA and AᵀPv, all iterations */
    double factorise;   /**< cholmod_factorize, all iterations */
    double solve;       /**< triangular solves, all iterations */
    int nassemble, nfactorise, nsolve;
} cairn_solve_timing;

/** Timing of the solve stage of this adjustment. */
void cairn_adjustment_timing(const cairn_adjustment *adj, cairn_solve_timing *pt);

/** The normal matrix N of the last assembly (lower triangle, CHOLMOD
 *  sparse, stype -1), or NULL after cairn_adjustment_release_cholmod. */
const cholmod_sparse *cairn_adjustment_normal(const cairn_adjustment *adj);

/** Free the factor and CHOLMOD's workspace (cholmod_finish) early, e.g.
 *  after the selected inverse. Returns CHOLMOD's count of blocks still
 *  allocated afterwards (0 unless something leaked). Idempotent. */
long cairn_adjustment_release_cholmod(cairn_adjustment *adj);

/** Largest number of unknowns one observation row can touch. */
#define CAIRN_ROW_MAX CAIRN_NPAR

/** The design row of observation i at the solution: unknown indices in
 *  pidx and ∂computed/∂unknown in pcoef (arrays of CAIRN_ROW_MAX), the
 *  count in *pcount (0 for an observation of held components only), and
 *  its σ in *psigma (may be NULL). Returns 0, or -1 when i is out of range
 *  or the observation is undefined at the solution. */
int cairn_adjustment_design_row(const cairn_adjustment *adj, size_t i,
                                int *pidx, double *pcoef, int *pcount,
                                double *psigma);

/** The design-row pattern of the solve stage, for the quality stage's
 *  re-adjustments, which share it instead of a copy (about 100 MB at
 *  10^5 marks): row i has the entries (*pptr)[i] .. (*pptr)[i+1]-1, with
 *  unknowns (*punk)[k] and coefficients (*pcoef)[k], the latter at the
 *  solve stage's last linearisation; cairn_analyse overwrites them with
 *  its own. cairn_adjustment_design_row does not read them. Returns 0, or
 *  -1 when the adjustment has no rows (no unknowns). */
int cairn_adjustment_rows_rw(cairn_adjustment *adj, const size_t **pptr, const int **punk,
                             double **pcoef);

/** Printable name of an unknown into buf, e.g. "N7.e" or "orientation of
 *  the setup at Q1 (FILE:LINE)". Returns buf. */
const char *cairn_unknown_name(const cairn_adjustment *adj, int j, char *buf,
                               size_t n);

#endif
