/*
 * selinv.c — selected inverse Z = N^-1 on the pattern of the supernodal
 * Cholesky factor, by the Takahashi recurrences applied supernode by
 * supernode.
 *
 * Sources:
 *   K. Takahashi, J. Fagan, M.-S. Chin (1973), "Formation of a sparse bus
 *     impedance matrix and its application to short circuit study",
 *     Proc. 8th PICA Conference (1973): the recurrence Z = L^-T L^-1
 *     evaluated backwards, touching only entries in the pattern of L.
 *   A. M. Erisman, W. F. Tinney (1975), "On computing certain elements of
 *     the inverse of a sparse matrix", CACM 18(3), pp. 177-179: proof that
 *     the pattern of L (with its transpose) is closed under the recurrence,
 *     so no entry outside it is ever needed.
 *
 * Derivation of the block form used here.  With P N P' = L L' and
 * Z = (L L')^-1 we have Z L = L^-T, an upper triangular matrix.  Take one
 * supernode s: its columns J (nscol of them, contiguous) and the rows R of
 * its off-diagonal block (sorted, all > J).  Write L11 = L(J,J) (lower
 * triangular) and L21 = L(R,J).  Restricting Z L = L^-T to columns J and
 * using that column j of L is zero outside J and R:
 *
 *   rows R:  Z(R,J) L11 + Z(R,R) L21 = L^-T(R,J) = 0        (R below J)
 *   rows J:  Z(J,J) L11 + Z(J,R) L21 = L^-T(J,J) = L11^-T
 *
 * so, with Lhat21 = L21 L11^-1,
 *
 *   Z21 = Z(R,J) = -Z(R,R) Lhat21                                   (1)
 *   Z11 = Z(J,J) = (L11 L11')^-1 - Lhat21' Z21                      (2)
 *
 * (1) needs Z(R,R), i.e. Z(r2,r1) for every pair of rows of s.  Every such
 * pair lies in the pattern of a later supernode (Erisman & Tinney's closure
 * argument, in supernodal form: the rows of s beyond its parent's columns are
 * rows of its parent, and so on up the supernodal elimination tree, hence for
 * r1 < r2 in R, r2 is a row of the supernode holding column r1).  Processing
 * the supernodes in reverse order therefore always finds Z(R,R) computed.
 *
 * Dense kernels per supernode: dpotri (wide blocks) or dtrtri + dtrmm
 * (narrow ones) for (L11 L11')^-1, dtrsm for Lhat21, dgemm for (1) on the
 * gathered Z(R,R) (both triangles; see gather_zrr for why not dsymm) and
 * dgemm for (2).  The flop count is about twice the factorisation's update
 * work ((1) does m^2 nscol multiply-adds where the factorisation's dsyrk
 * does m^2 nscol / 2); the gather of Z(R,R) is one read per lower entry.
 *
 * Z is stored in exactly the layout of L (super/pi/px/s), so reading
 * Z(r2,r1) is: supernode of column r1, column offset, position of r2 in that
 * supernode's row list.  Positions of the rows of s in an ancestor's row list
 * are found once per (s, ancestor) pair by a galloping search over the
 * ancestor's sorted rows, so the lookup cost is O(m log) per pair, not the
 * length of the ancestor's pattern.
 */
#include "cairn/selinv.h"

#include <cblas.h>
#include <lapacke.h>
#include <limits.h>
#include <stddef.h>
#include <string.h>

struct cairn_selinv {
    int n;          /* order of N */
    int nsuper;     /* number of (super)nodes; n for the simplicial form */
    int *super;     /* nsuper+1: first permuted column of each supernode */
    int *pi;        /* nsuper+1: start of each supernode's rows in s */
    size_t *px;     /* nsuper+1: start of each supernode's values in x */
    int *s;         /* row lists, sorted, first nscol rows = the columns */
    double *x;      /* values of Z, column-major block per supernode,
                       leading dimension = that supernode's row count */
    int *colsuper;  /* n: supernode holding each permuted column */
    int *pinv;      /* n: permuted position of each original unknown */
    int x_borrowed; /* 1: x and s are the factor's arrays (in-place form) */
};

/* ---------------------------------------------------------------- memory */

/* SuiteSparse_malloc/_calloc go through SuiteSparse_config's allocator
 * (so an allocation test hook sees them), enforce count >= 1 and return NULL
 * on failure or on count * size overflow. */
static void *xmalloc(size_t count, size_t size)
{
    return SuiteSparse_malloc(count, size);
}

static void *xcalloc(size_t count, size_t size)
{
    return SuiteSparse_calloc(count, size);
}

void cairn_selinv_free(cairn_selinv **pZ)
{
    cairn_selinv *Z;
    if (pZ == NULL || *pZ == NULL) return;
    Z = *pZ;
    SuiteSparse_free(Z->super);
    SuiteSparse_free(Z->pi);
    SuiteSparse_free(Z->px);
    if (!Z->x_borrowed) SuiteSparse_free(Z->s);
    if (!Z->x_borrowed) SuiteSparse_free(Z->x);
    SuiteSparse_free(Z->colsuper);
    SuiteSparse_free(Z->pinv);
    SuiteSparse_free(Z);
    *pZ = NULL;
}

/* Allocates a handle with every array sized; fills colsuper and pinv from
 * super and perm (perm NULL means the identity).  The caller fills super,
 * pi, px and s before calling finish_index(). */
static int alloc_handle(int n, int nsuper, size_t ssize, size_t xsize,
                        double *borrow_x, int *borrow_s, cairn_selinv **pZ)
{
    cairn_selinv *Z = xcalloc(1, sizeof *Z);
    if (Z == NULL) return CAIRN_SELINV_ENOMEM;
    Z->n = n;
    Z->nsuper = nsuper;
    Z->super = xmalloc((size_t)nsuper + 1, sizeof *Z->super);
    Z->pi = xmalloc((size_t)nsuper + 1, sizeof *Z->pi);
    Z->px = xmalloc((size_t)nsuper + 1, sizeof *Z->px);
    Z->x_borrowed = borrow_x != NULL;
    Z->s = borrow_x ? borrow_s : xmalloc(ssize, sizeof *Z->s);
    Z->x = borrow_x ? borrow_x : xcalloc(xsize, sizeof *Z->x);
    Z->colsuper = xmalloc((size_t)n, sizeof *Z->colsuper);
    Z->pinv = xmalloc((size_t)n, sizeof *Z->pinv);
    if (!Z->super || !Z->pi || !Z->px || !Z->s || !Z->x || !Z->colsuper
        || !Z->pinv) {
        cairn_selinv_free(&Z);
        return CAIRN_SELINV_ENOMEM;
    }
    *pZ = Z;
    return CAIRN_SELINV_OK;
}

/* Fills colsuper from super and pinv from perm; checks perm is a
 * permutation (a corrupt factor must not make get() read out of bounds). */
static int finish_index(cairn_selinv *Z, const int *perm)
{
    int n = Z->n, k, t;
    for (t = 0; t < Z->nsuper; t++)
        for (k = Z->super[t]; k < Z->super[t + 1]; k++) Z->colsuper[k] = t;
    for (k = 0; k < n; k++) Z->pinv[k] = -1;
    for (k = 0; k < n; k++) {
        int orig = perm ? perm[k] : k;
        if (orig < 0 || orig >= n || Z->pinv[orig] != -1)
            return CAIRN_SELINV_EINVAL;
        Z->pinv[orig] = k;
    }
    return CAIRN_SELINV_OK;
}

int cairn_selinv_columns_int(int n, const int *perm, const int *colp,
                             const int *rowi, cairn_selinv **pZ,
                             double **pzx)
{
    cairn_selinv *Z = NULL;
    int j, st;
    if (pZ) *pZ = NULL;
    if (pzx) *pzx = NULL;
    if (n < 0 || colp == NULL || rowi == NULL || pZ == NULL || pzx == NULL)
        return CAIRN_SELINV_EINVAL;
    for (j = 0; j < n; j++)
        if (colp[j + 1] <= colp[j] || rowi[colp[j]] != j)
            return CAIRN_SELINV_EINVAL;
    st = alloc_handle(n, n, (size_t)colp[n], (size_t)colp[n], NULL, NULL, &Z);
    if (st != 0) return st;
    for (j = 0; j <= n; j++) {
        Z->super[j] = j;
        Z->pi[j] = colp[j];
        Z->px[j] = (size_t)colp[j];
    }
    memcpy(Z->s, rowi, (size_t)colp[n] * sizeof *Z->s);
    st = finish_index(Z, perm);
    if (st != 0) {
        cairn_selinv_free(&Z);
        return st;
    }
    *pZ = Z;
    *pzx = Z->x;
    return CAIRN_SELINV_OK;
}

/* ---------------------------------------------------------------- lookup */

/* Index of target in rows[lo..hi) (sorted ascending), or -1.  Galloping
 * from lo: successive look-ups of increasing targets start where the last
 * one ended, so a run of m look-ups in a list of length len costs
 * O(m log(len/m)) rather than O(len). */
static ptrdiff_t gallop(const int *rows, ptrdiff_t lo, ptrdiff_t hi,
                        int target)
{
    ptrdiff_t step = 1, a = lo, b;
    if (lo >= hi || rows[hi - 1] < target) return -1;
    /* find b with rows[b] >= target by doubling steps */
    b = lo;
    while (rows[b] < target) {
        a = b + 1;
        b += step;
        step *= 2;
        if (b >= hi) b = hi - 1;
    }
    /* now rows[a-1] < target <= rows[b] (or a == lo); bisect [a, b] */
    while (a < b) {
        ptrdiff_t mid = a + (b - a) / 2;
        if (rows[mid] < target) a = mid + 1; else b = mid;
    }
    return rows[a] == target ? a : -1;
}

int cairn_selinv_n(const cairn_selinv *Z)
{
    return Z ? Z->n : 0;
}

int cairn_selinv_get(const cairn_selinv *Z, int i, int j, double *px)
{
    int pi_, pj, c, r, t, k1, k2;
    const int *rows;
    ptrdiff_t nsrow, pos;
    if (Z == NULL || px == NULL || i < 0 || j < 0 || i >= Z->n || j >= Z->n)
        return CAIRN_SELINV_EINVAL;
    pi_ = Z->pinv[i];
    pj = Z->pinv[j];
    c = pi_ < pj ? pi_ : pj;        /* Z symmetric: read the lower part */
    r = pi_ < pj ? pj : pi_;
    t = Z->colsuper[c];
    k1 = Z->super[t];
    k2 = Z->super[t + 1];
    rows = Z->s + Z->pi[t];
    nsrow = Z->pi[t + 1] - Z->pi[t];
    if (r < k2) {
        pos = r - k1;               /* inside the dense diagonal block */
    } else {
        pos = gallop(rows, k2 - k1, nsrow, r);
        if (pos < 0) return CAIRN_SELINV_ENOTSTORED;
    }
    *px = Z->x[Z->px[t] + (size_t)(c - k1) * (size_t)nsrow + (size_t)pos];
    return CAIRN_SELINV_OK;
}

/* ----------------------------------------------------------- computation */

/* Diagonal blocks at least this wide use LAPACK's dpotri for
 * (L11 L11')^-1; narrower ones use dtrtri + dtrmm.  Measured with OpenBLAS
 * 0.3.21 on 2 threads: dpotri (its threaded dlauum) costs 24 us at width 20
 * against 3 us for dtrtri + dtrmm, and the many narrow supernodes of a
 * survey network made it 30 % of the whole pass; from width ~500 up dpotri's
 * 2/3 c^3 flops beat the c^3 of dtrtri + dtrmm (0.10 s against 0.19 s at
 * width 1947).  Only speed depends on this constant, never the result. */
#define POTRI_MIN_WIDTH 512

/* Workspace for one pass; sized for the largest supernode. */
typedef struct {
    double *w11;   /* nscol x nscol: (L11 L11')^-1, then Z11 */
    double *t11;   /* nscol x nscol: L11^-1 (narrow blocks only) */
    double *lhat;  /* m x nscol: Lhat21 = L21 L11^-1 */
    double *zrr;   /* m x m: gathered Z(R,R), both triangles */
    ptrdiff_t *rel;/* m: position of each row of R in the current ancestor */
} work;

/* Copies the strict lower triangle of the m x m matrix a onto its upper
 * triangle, in square tiles so both the reads and the strided writes stay
 * in cache. */
static void mirror_lower(double *a, ptrdiff_t m)
{
    enum { TILE = 32 };
    ptrdiff_t jb, ib, i, j;
    for (jb = 0; jb < m; jb += TILE)
        for (ib = jb; ib < m; ib += TILE) {
            ptrdiff_t jend = jb + TILE < m ? jb + TILE : m;
            ptrdiff_t iend = ib + TILE < m ? ib + TILE : m;
            for (j = jb; j < jend; j++)
                for (i = (ib > j + 1 ? ib : j + 1); i < iend; i++)
                    a[j + i * m] = a[i + j * m];
        }
}

/* Gathers Z(R,R) into zrr (m x m, column-major, both triangles) for the
 * rows R = rows[0..m) of one supernode, from the already finished
 * supernodes of Z.  Returns 0, or EINTERNAL if an entry is missing from the
 * pattern (impossible for a factor from CHOLMOD; see the closure argument
 * at the top of this file). */
static int gather_zrr(const cairn_selinv *Z, const int *R, ptrdiff_t m,
                      double *zrr, ptrdiff_t *rel)
{
    ptrdiff_t a = 0;
    while (a < m) {
        int t = Z->colsuper[R[a]];
        int k1 = Z->super[t], k2 = Z->super[t + 1];
        const int *trows = Z->s + Z->pi[t];
        ptrdiff_t tnrow = Z->pi[t + 1] - Z->pi[t];
        ptrdiff_t tncol = k2 - k1;
        const double *tx = Z->x + Z->px[t];
        ptrdiff_t b, q, c, from = tncol;
        /* rows R[a..b) are columns of t; rows R[b..m) lie beyond t and must
         * be off-diagonal rows of t */
        for (b = a; b < m && R[b] < k2; b++) rel[b] = R[b] - k1;
        for (q = b; q < m; q++) {
            ptrdiff_t p = gallop(trows, from, tnrow, R[q]);
            if (p < 0) return CAIRN_SELINV_EINTERNAL;
            rel[q] = p;
            from = p + 1;
        }
        for (c = a; c < b; c++) {
            const double *tcol = tx + (size_t)(R[c] - k1) * (size_t)tnrow;
            double *zcol = zrr + (size_t)c * (size_t)m;
            for (q = c; q < m; q++) zcol[q] = tcol[rel[q]];
        }
        a = b;
    }
    /* dgemm on the full matrix is faster than dsymm on its lower half
     * (OpenBLAS 0.3.21: 7 us against 13 us for m = 100, width 20) */
    mirror_lower(zrr, m);
    return CAIRN_SELINV_OK;
}

/* w11 (lower triangle) = (L11 L11')^-1 for the nscol x nscol lower
 * triangular block at lx (leading dimension nsrow). */
static int diag_inverse(const double *lx, ptrdiff_t nscol, ptrdiff_t nsrow,
                        work *w)
{
    ptrdiff_t i, j;
    lapack_int info;
    double *a = nscol >= POTRI_MIN_WIDTH ? w->w11 : w->t11;
    for (j = 0; j < nscol; j++) {
        for (i = 0; i < j; i++) a[i + j * nscol] = 0.0;
        for (i = j; i < nscol; i++) a[i + j * nscol] = lx[i + j * nsrow];
    }
    if (nscol >= POTRI_MIN_WIDTH) {
        info = LAPACKE_dpotri_work(LAPACK_COL_MAJOR, 'L', (lapack_int)nscol,
                                   a, (lapack_int)nscol);
    } else {
        /* t11 = L11^-1 (lower, upper stays zero); w11 = t11' t11 */
        info = LAPACKE_dtrtri_work(LAPACK_COL_MAJOR, 'L', 'N',
                                   (lapack_int)nscol, a, (lapack_int)nscol);
        if (info == 0) {
            memcpy(w->w11, a, (size_t)(nscol * nscol) * sizeof(double));
            cblas_dtrmm(CblasColMajor, CblasLeft, CblasLower, CblasTrans,
                        CblasNonUnit, (blasint)nscol, (blasint)nscol, 1.0, a,
                        (blasint)nscol, w->w11, (blasint)nscol);
        }
    }
    if (info > 0) return CAIRN_SELINV_ENOTPOSDEF;   /* zero pivot */
    if (info < 0) return CAIRN_SELINV_EINTERNAL;
    return CAIRN_SELINV_OK;
}

/* One supernode: equations (1) and (2) of the header comment.  lx is L's
 * block for the supernode (nsrow x nscol, column-major, ld nsrow); the
 * result goes to Z's block at the same offset. */
static int supernode_step(cairn_selinv *Z, int sn, const double *lx,
                          work *w)
{
    int k1 = Z->super[sn], k2 = Z->super[sn + 1];
    ptrdiff_t nscol = k2 - k1;
    ptrdiff_t nsrow = Z->pi[sn + 1] - Z->pi[sn];
    ptrdiff_t m = nsrow - nscol;
    double *zx = Z->x + Z->px[sn];
    ptrdiff_t i, j;
    int st;

    st = diag_inverse(lx, nscol, nsrow, w);
    if (st != 0) return st;

    if (m > 0) {
        /* Lhat21 = L21 L11^-1 */
        for (j = 0; j < nscol; j++)
            memcpy(w->lhat + j * m, lx + j * nsrow + nscol,
                   (size_t)m * sizeof(double));
        cblas_dtrsm(CblasColMajor, CblasRight, CblasLower, CblasNoTrans,
                    CblasNonUnit, (blasint)m, (blasint)nscol, 1.0, lx,
                    (blasint)nsrow, w->lhat, (blasint)m);
        st = gather_zrr(Z, Z->s + Z->pi[sn] + nscol, m, w->zrr, w->rel);
        if (st != 0) return st;
        /* (1) Z21 = -Z(R,R) Lhat21, written straight into Z's block */
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, (blasint)m,
                    (blasint)nscol, (blasint)m, -1.0, w->zrr, (blasint)m,
                    w->lhat, (blasint)m, 0.0, zx + nscol, (blasint)nsrow);
        /* (2) Z11 = (L11 L11')^-1 - Lhat21' Z21; only the lower triangle of
         * the product is used (it is symmetric: -Lhat' Z(R,R) Lhat) */
        cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, (blasint)nscol,
                    (blasint)nscol, (blasint)m, -1.0, w->lhat, (blasint)m,
                    zx + nscol, (blasint)nsrow, 1.0, w->w11,
                    (blasint)nscol);
    }
    /* store Z11 full (both triangles, from the lower one) so the block is a
     * plain symmetric matrix for any later dense use */
    for (j = 0; j < nscol; j++)
        for (i = j; i < nscol; i++) {
            double v = w->w11[i + j * nscol];
            zx[i + j * nsrow] = v;
            zx[j + i * nsrow] = v;
        }
    return CAIRN_SELINV_OK;
}

/* inplace: Z's values overwrite L's (see cairn_selinv_compute_inplace). */
static int compute(const cholmod_factor *L, cholmod_common *cc, int inplace,
                   cairn_selinv **pZ)
{
    cairn_selinv *Z = NULL;
    const int *Ls, *Lpi, *Lpx, *Lsuper;
    work w = {NULL, NULL, NULL, NULL, NULL};
    size_t maxcol = 0, maxm = 0, maxlhat = 0, n;
    int nsuper, sn, st;

    if (pZ) *pZ = NULL;
    if (L == NULL || cc == NULL || pZ == NULL) return CAIRN_SELINV_EINVAL;
    if (cc->itype != CHOLMOD_INT || L->itype != CHOLMOD_INT
        || L->xtype != CHOLMOD_REAL || L->dtype != CHOLMOD_DOUBLE
        || !L->is_super || !L->is_ll || L->x == NULL || L->n > INT_MAX)
        return CAIRN_SELINV_EINVAL;
    n = L->n;
    if (L->minor < n) return CAIRN_SELINV_ENOTPOSDEF;
    nsuper = (int)L->nsuper;
    Lsuper = L->super;
    Lpi = L->pi;
    Lpx = L->px;
    Ls = L->s;

    st = alloc_handle((int)n, nsuper, L->ssize, L->xsize,
                      inplace ? (double *)L->x : NULL, inplace ? (int *)L->s : NULL,
                      &Z);
    if (st != 0) return st;
    for (sn = 0; sn <= nsuper; sn++) {
        Z->super[sn] = Lsuper[sn];
        Z->pi[sn] = Lpi[sn];
        Z->px[sn] = (size_t)Lpx[sn];
    }
    if (!inplace)
        memcpy(Z->s, Ls, L->ssize * sizeof *Z->s);
    st = finish_index(Z, L->Perm);
    if (st != 0) goto fail;

    for (sn = 0; sn < nsuper; sn++) {
        size_t nscol = (size_t)(Lsuper[sn + 1] - Lsuper[sn]);
        size_t nsrow = (size_t)(Lpi[sn + 1] - Lpi[sn]);
        size_t m = nsrow - nscol;
        if (nscol > maxcol) maxcol = nscol;
        if (m > maxm) maxm = m;
        if (m * nscol > maxlhat) maxlhat = m * nscol;
    }
    w.w11 = xmalloc(maxcol * maxcol, sizeof(double));
    w.t11 = xmalloc(maxcol < POTRI_MIN_WIDTH ? maxcol * maxcol
                                             : (size_t)POTRI_MIN_WIDTH
                                                   * POTRI_MIN_WIDTH,
                    sizeof(double));
    w.lhat = xmalloc(maxlhat, sizeof(double));
    w.zrr = xmalloc(maxm * maxm, sizeof(double));
    w.rel = xmalloc(maxm, sizeof(ptrdiff_t));
    if (!w.w11 || !w.t11 || !w.lhat || !w.zrr || !w.rel) {
        st = CAIRN_SELINV_ENOMEM;
        goto fail;
    }

    /* Reverse order: every supernode's ancestors (higher numbers) are done
     * before it, which is all that (1) needs. In place, supernode_step
     * reads L's block of sn only (L11 into w11/t11 and lhat, L21 into
     * lhat) before it writes Z's block over it, and reads Z's finished
     * ancestors, never L's: so one array serves both. */
    for (sn = nsuper - 1; sn >= 0; sn--) {
        st = supernode_step(Z, sn, (const double *)L->x + Lpx[sn], &w);
        if (st != 0) goto fail;
    }
    SuiteSparse_free(w.w11);
    SuiteSparse_free(w.t11);
    SuiteSparse_free(w.lhat);
    SuiteSparse_free(w.zrr);
    SuiteSparse_free(w.rel);
    *pZ = Z;
    return CAIRN_SELINV_OK;

fail:
    SuiteSparse_free(w.w11);
    SuiteSparse_free(w.t11);
    SuiteSparse_free(w.lhat);
    SuiteSparse_free(w.zrr);
    SuiteSparse_free(w.rel);
    cairn_selinv_free(&Z);
    return st;
}

int cairn_selinv_compute(const cholmod_factor *L, cholmod_common *cc,
                         cairn_selinv **pZ)
{
    return compute(L, cc, 0, pZ);
}

int cairn_selinv_compute_inplace(cholmod_factor *L, cholmod_common *cc,
                                 cairn_selinv **pZ)
{
    return compute(L, cc, 1, pZ);
}
