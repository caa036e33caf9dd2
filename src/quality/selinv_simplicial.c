/*
 * selinv_simplicial.c — the column-by-column form of the Takahashi
 * recurrences on a simplicial LDL' factor.  This is the test oracle for
 * selinv.c: it shares the storage and lookup code but none of the
 * arithmetic, uses no BLAS, and follows the textbook scalar recurrence.
 * It is many times slower than the supernodal pass (every entry of Z(:,j)
 * re-walks a whole column of Z), so production code must not call it.
 *
 * Recurrence (Takahashi, Fagan & Chin 1973; Erisman & Tinney 1975, CACM
 * 18(3)): with P N P' = L D L', L unit lower triangular, Z = N^-1 permuted
 * satisfies Z = D^-1 L^-1 + (I - L') Z, so for column j with off-diagonal
 * pattern S_j = { i > j : L(i,j) != 0 },
 *
 *   Z(i,j) = - sum_{k in S_j} Z(i,k) L(k,j)          for i in S_j
 *   Z(j,j) = 1/D(j,j) - sum_{k in S_j} L(k,j) Z(k,j)
 *
 * Every Z(i,k) with i, k in S_j lies in the pattern of column min(i,k)
 * (Erisman & Tinney), and column min(i,k) > j is already finished when
 * columns are taken in the order n-1, ..., 0.
 */
#include "cairn/selinv.h"

#include <limits.h>
#include <stddef.h>

/* Column j of the finished Z, walked in step with the rows of S_j: for
 * every position q >= b of rows[] (rows of column j, sorted), finds
 * Z(rows[q], rows[b]) in column k = rows[b] and adds the two symmetric
 * contributions to acc.  Returns 0, or -1 if an entry is missing. */
static int accumulate(const int *Zp, const int *Zi, const double *Zx,
                      const int *rows, const double *lval, int cnt, int b,
                      double *acc)
{
    int k = rows[b];
    int p = Zp[k], pend = Zp[k + 1];
    int q;
    for (q = b; q < cnt; q++) {
        double zqk;
        while (p < pend && Zi[p] < rows[q]) p++;
        if (p == pend || Zi[p] != rows[q]) return -1;
        zqk = Zx[p];                     /* Z(rows[q], k) */
        acc[q] += zqk * lval[b];         /* Z(i,k) L(k,j) with i = rows[q] */
        if (q > b) acc[b] += zqk * lval[q];  /* Z(k,i) L(i,j), symmetric */
    }
    return 0;
}

int cairn_selinv_simplicial(const cholmod_factor *L, cholmod_common *cc,
                            cairn_selinv **pZ)
{
    cholmod_factor *F = NULL;
    cairn_selinv *Z = NULL;
    double *zx = NULL, *acc = NULL;
    const int *Fp, *Fi;
    const double *Fx;
    int n, j, st = CAIRN_SELINV_OK;
    size_t maxcnt = 1;

    if (pZ) *pZ = NULL;
    if (L == NULL || cc == NULL || pZ == NULL) return CAIRN_SELINV_EINVAL;
    if (cc->itype != CHOLMOD_INT || L->itype != CHOLMOD_INT
        || L->xtype != CHOLMOD_REAL || L->dtype != CHOLMOD_DOUBLE
        || L->n > INT_MAX)
        return CAIRN_SELINV_EINVAL;
    if (L->minor < L->n) return CAIRN_SELINV_ENOTPOSDEF;

    /* A private LDL' simplicial, packed, monotonic copy: CHOLMOD converts a
     * supernodal LL' factor by scaling each column by its diagonal, so
     * D(j,j) = L_ll(j,j)^2 and L_ldl(:,j) = L_ll(:,j) / L_ll(j,j).
     * cholmod_copy_factor does not modify its input (the cast drops the
     * const its prototype lacks). */
    F = cholmod_copy_factor((cholmod_factor *)L, cc);
    if (F == NULL) return CAIRN_SELINV_ENOMEM;
    if (!cholmod_change_factor(CHOLMOD_REAL, /* to_ll */ 0,
                               /* to_super */ 0, /* to_packed */ 1,
                               /* to_monotonic */ 1, F, cc)
        || F->is_ll || F->is_super || !F->is_monotonic) {
        st = cc->status == CHOLMOD_OUT_OF_MEMORY ? CAIRN_SELINV_ENOMEM
                                                 : CAIRN_SELINV_EINTERNAL;
        goto done;
    }
    n = (int)F->n;
    Fp = F->p;
    Fi = F->i;
    Fx = F->x;
    /* packed: column j occupies Fp[j] .. Fp[j+1]-1 exactly */
    for (j = 0; j < n; j++) {
        if (((const int *)F->nz)[j] != Fp[j + 1] - Fp[j]) {
            st = CAIRN_SELINV_EINTERNAL;
            goto done;
        }
        if ((size_t)(Fp[j + 1] - Fp[j]) > maxcnt)
            maxcnt = (size_t)(Fp[j + 1] - Fp[j]);
    }
    st = cairn_selinv_columns_int(n, F->Perm, Fp, Fi, &Z, &zx);
    if (st != 0) goto done;
    acc = SuiteSparse_malloc(maxcnt, sizeof *acc);
    if (acc == NULL) {
        st = CAIRN_SELINV_ENOMEM;
        goto done;
    }

    for (j = n - 1; j >= 0; j--) {
        const int *rows = Fi + Fp[j] + 1;      /* S_j, sorted */
        const double *lval = Fx + Fp[j] + 1;   /* L(S_j, j) */
        int cnt = Fp[j + 1] - Fp[j] - 1, b, q;
        double d = Fx[Fp[j]], zjj;
        if (!(d > 0.0)) {
            st = CAIRN_SELINV_ENOTPOSDEF;
            goto done;
        }
        for (q = 0; q < cnt; q++) acc[q] = 0.0;
        for (b = 0; b < cnt; b++)
            if (accumulate(Fp, Fi, zx, rows, lval, cnt, b, acc) != 0) {
                st = CAIRN_SELINV_EINTERNAL;
                goto done;
            }
        zjj = 1.0 / d;
        for (q = 0; q < cnt; q++) {
            zx[Fp[j] + 1 + q] = -acc[q];        /* Z(rows[q], j) */
            zjj += lval[q] * acc[q];            /* - L(k,j) Z(k,j) */
        }
        zx[Fp[j]] = zjj;
    }

done:
    SuiteSparse_free(acc);
    cholmod_free_factor(&F, cc);
    if (st != 0) {
        cairn_selinv_free(&Z);
        return st;
    }
    *pZ = Z;
    return CAIRN_SELINV_OK;
}
