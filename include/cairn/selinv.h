/*
 * cairn/selinv.h — selected inverse of a sparse SPD matrix (Qxx = N^-1 on
 * the pattern of its Cholesky factor).
 *
 * Given the CHOLMOD factorisation P N P' = L L', cairn_selinv_compute()
 * returns the entries Z(i,j) of Z = N^-1 for every (i,j) that lies in the
 * pattern of L (or L'), without ever forming the dense inverse.  That pattern
 * contains the pattern of N, so every diagonal entry (variances) and every
 * pair of unknowns coupled by an observation (covariances of a mark's
 * components, relative ellipses of observed pairs) is available.
 *
 * Ownership: a cairn_selinv owns all of its memory; it copies what it needs
 * from the factor, so the factor and the cholmod_common may be freed (or the
 * factor refactorised) afterwards.  cairn_selinv_free() releases it.  The
 * memory comes from SuiteSparse_malloc (SuiteSparse_config's allocator), so
 * a test hook on that allocator sees it.  A finished handle is read-only:
 * cairn_selinv_get() may be called on it from several threads at once.
 *
 * Index convention: i, j below are ORIGINAL (unpermuted) unknown numbers,
 * 0 <= i, j < n; the fill-reducing permutation of the factor is undone
 * internally.
 *
 * Status codes: 0 success, negative failure (CAIRN_SELINV_E*).
 */
#ifndef CAIRN_SELINV_H
#define CAIRN_SELINV_H

#include <suitesparse/cholmod.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Status codes (to be folded into core.h's cairn error enum). */
#define CAIRN_SELINV_OK 0
/* cairn_selinv_get: (i,j) is a valid pair but outside the computed pattern. */
#define CAIRN_SELINV_ENOTSTORED (-1)
/* A NULL argument, an index out of range, or a factor of the wrong kind
 * (symbolic only, complex, int64 indices, or for cairn_selinv_compute not
 * supernodal LL'). */
#define CAIRN_SELINV_EINVAL (-2)
/* Out of memory (SuiteSparse_malloc or a CHOLMOD call returned NULL). */
#define CAIRN_SELINV_ENOMEM (-3)
/* The factorisation did not complete: L->minor < n (matrix not positive
 * definite, e.g. a datum defect), or a diagonal pivot is not positive. */
#define CAIRN_SELINV_ENOTPOSDEF (-4)
/* A LAPACK/CHOLMOD call reported an error not covered above. */
#define CAIRN_SELINV_EINTERNAL (-5)

/* Z = N^-1 restricted to the pattern of the factor (permuted order inside). */
typedef struct cairn_selinv cairn_selinv;

/*
 * Selected inverse by the supernodal Takahashi recurrences.
 *
 * L:   numeric supernodal LL' factor (cholmod_analyze + cholmod_factorize with
 *      Common.supernodal = CHOLMOD_SUPERNODAL, or the default automatic choice
 *      when it picked supernodal), int indices (cholmod_start, not
 *      cholmod_l_start), real.  Not modified.
 * cc:  the Common L was made with; used only to validate its index type and
 *      is not modified.
 * pZ:  on success *pZ is a new handle; on failure *pZ is NULL.
 *
 * Time is of the order of one supernodal factorisation (dense BLAS-3 on each
 * supernode; 0.5-0.9x of cholmod_factorize measured on plane networks of
 * 10^4 and 10^5 marks, tests/bench/selinv_bench.c).  Memory: one double per
 * entry of the supernodal L (L->xsize), a copy of its integer pattern, two
 * n-vectors, and work arrays of m^2 + m*c + 2*c^2 doubles where c is the
 * widest supernode and m the longest off-diagonal row list.  Uses OpenBLAS's
 * threads; never forms anything n x n.
 * Returns 0, or CAIRN_SELINV_EINVAL / _ENOMEM / _ENOTPOSDEF / _EINTERNAL.
 */
int cairn_selinv_compute(const cholmod_factor *L, cholmod_common *cc,
                         cairn_selinv **pZ);

/*
 * The same computation in place: Z's values are written over the factor's
 * (L->x), which saves one double per entry of L (300 MB at 10^5 marks).
 * Afterwards L holds no factor: it must not be used for a solve, a
 * selected inverse or anything else numeric until it is refactorised
 * (cholmod_factorize into it overwrites Z: free Z first). Z borrows L->x
 * and the row lists L->s;
 * cairn_selinv_free(Z) leaves them to L, and Z must be freed before L is
 * freed or refactorised. A failure other than EINVAL leaves L's values
 * partly overwritten. Otherwise as cairn_selinv_compute.
 */
int cairn_selinv_compute_inplace(cholmod_factor *L, cholmod_common *cc,
                                 cairn_selinv **pZ);

/*
 * The same entries by a column-by-column (simplicial) Takahashi pass on an
 * LDL' copy of L.  L may be supernodal or simplicial, LL' or LDL'; it is not
 * modified.  Many times slower than cairn_selinv_compute(): meant as a test
 * oracle and for checking, not for production runs.  Its pattern is that of
 * the simplicial factor, which may be smaller than the supernodal one (no
 * amalgamation zeros); it always contains the diagonal and the pattern of N.
 * cc is used for the copy/conversion and must be the Common L was made with.
 */
int cairn_selinv_simplicial(const cholmod_factor *L, cholmod_common *cc,
                            cairn_selinv **pZ);

/*
 * Entry (i,j) of N^-1, i and j original unknown numbers in [0, n).
 * Returns 0 and sets *px when (i,j) lies in the computed pattern (always for
 * i == j and for every (i,j) with N(i,j) != 0); CAIRN_SELINV_ENOTSTORED (-1)
 * and leaves *px unchanged when it does not; CAIRN_SELINV_EINVAL for a NULL
 * argument or an index out of range.  Z(i,j) == Z(j,i).  O(log nrows) time.
 */
int cairn_selinv_get(const cairn_selinv *Z, int i, int j, double *px);

/* Number of unknowns n of the matrix Z was computed for (0 if Z is NULL). */
int cairn_selinv_n(const cairn_selinv *Z);

/* Releases Z; accepts NULL and *pZ == NULL; sets *pZ to NULL. */
void cairn_selinv_free(cairn_selinv **pZ);

/* ---- internal, not API: used by selinv_simplicial.c only --------------
 * (belongs in a private src/quality header; kept here until the lead folds
 * this header into quality.h).  Makes a handle whose pattern is n single
 * columns: column j (permuted) has rows rowi[colp[j] .. colp[j+1]-1], sorted,
 * first row j.  perm[k] is the original unknown of permuted column k (the
 * factor's Perm).  On success *pZ is the handle and *pzx its value array,
 * zero-filled, at the same positions as rowi, for the caller to fill. */
int cairn_selinv_columns_int(int n, const int *perm, const int *colp,
                             const int *rowi, cairn_selinv **pZ,
                             double **pzx);

#ifdef __cplusplus
}
#endif

#endif /* CAIRN_SELINV_H */
