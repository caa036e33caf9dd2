/*
 * test_selinv.c — Check suite for the selected inverse (src/quality/selinv*.c).
 *
 * Outside source for every numeric check: the dense inverse of the same
 * matrix from LAPACK (LAPACKE_dpotrf + LAPACKE_dpotri), which shares no code
 * with the sparse recurrences.  The simplicial oracle is compared with the
 * supernodal pass as a second, independent route.
 *
 * Tolerance: an entry Z(i,j) of an SPD inverse satisfies
 * |Z(i,j)| <= sqrt(Z(i,i) Z(j,j)), so every entry is compared with
 * tolerance 1e-9 * sqrt(Z(i,i) Z(j,j)) (relative 1e-9 on the diagonal);
 * the test matrices have condition numbers below about 1e5, so both the
 * dense and the sparse results carry errors near 1e-11 relative at most.
 */
#include "cairn/selinv.h"

#include <check.h>
#include <lapacke.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define REL_TOL 1e-9

/* ------------------------------------------------------------ generator */

/* Small LCG (Knuth MMIX constants); state passed explicitly. */
static double rnd(unsigned long long *state)
{
    *state = *state * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(*state >> 11) / 9007199254740992.0;   /* [0,1) */
}

enum family { FAM_GRID, FAM_MARKS2, FAM_DENSE, FAM_FOREST, FAM_ARROW, NFAM };
static const char *const fam_name[NFAM] = {"grid", "marks2x2", "dense",
                                           "forest", "arrow"};

/* Dense symmetric n x n matrix a (column-major, both triangles). */
typedef struct {
    int n;
    double *a;
} dense;

static void add_sym(dense *d, int i, int j, double v)
{
    d->a[i + (size_t)j * (size_t)d->n] += v;
    if (i != j) d->a[j + (size_t)i * (size_t)d->n] += v;
}

/* Rank-one observation term w a a' on unknowns idx[0..k). */
static void add_obs(dense *d, const int *idx, const double *coef, int k,
                    double w)
{
    int p, q;
    for (p = 0; p < k; p++)
        for (q = 0; q <= p; q++)
            add_sym(d, idx[p], idx[q], w * coef[p] * coef[q]);
}

/* Builds an SPD test matrix of the given family and (approximate) order n.
 * The matrix is assembled densely (test sizes only) and handed to CHOLMOD
 * from its lower triangle. */
static dense make_matrix(enum family fam, int n, unsigned long long seed)
{
    dense d;
    unsigned long long st = seed;
    int i, j;
    d.n = n;
    d.a = calloc((size_t)n * (size_t)n, sizeof *d.a);
    ck_assert_ptr_nonnull(d.a);
    switch (fam) {
    case FAM_GRID: {
        /* 2-D grid Laplacian (nx columns) + diagonal + random couplings */
        int nx = 1;
        while ((nx + 1) * (nx + 1) <= n) nx++;
        for (i = 0; i < n; i++) {
            int x = i % nx;
            add_sym(&d, i, i, 0.1 + rnd(&st));
            if (x + 1 < nx && i + 1 < n) {
                double w = 0.5 + rnd(&st);
                add_sym(&d, i, i, w);
                add_sym(&d, i + 1, i + 1, w);
                add_sym(&d, i + 1, i, -w);
            }
            if (i + nx < n) {
                double w = 0.5 + rnd(&st);
                add_sym(&d, i, i, w);
                add_sym(&d, i + nx, i + nx, w);
                add_sym(&d, i + nx, i, -w);
            }
        }
        for (i = 0; i < n / 5; i++) {
            int a = (int)(rnd(&st) * n), b = (int)(rnd(&st) * n);
            double w = 0.2 * rnd(&st);
            if (a == b) continue;
            add_sym(&d, a, a, w);
            add_sym(&d, b, b, w);
            add_sym(&d, a > b ? a : b, a > b ? b : a, w * (rnd(&st) - 0.5));
        }
        break;
    }
    case FAM_MARKS2: {
        /* survey-like: marks with (e, n) adjacent, direction/distance-like
         * rank-one terms between random nearby marks, 2x2 blocks, plus weak
         * control on every mark so the datum is defined */
        int nm = n / 2;
        for (i = 0; i < nm; i++) {
            int idx[2] = {2 * i, 2 * i + 1};
            double c0[2] = {1.0, 0.0}, c1[2] = {0.0, 1.0};
            add_obs(&d, idx, c0, 2, 0.05);
            add_obs(&d, idx, c1, 2, 0.05);
        }
        for (i = 0; i < nm; i++) {
            int nb;
            for (nb = 1; nb <= 3; nb++) {
                int k = (i + nb * (1 + (int)(rnd(&st) * 4))) % (nm ? nm : 1);
                double th = 6.283185307179586 * rnd(&st);
                double ce = cos(th), cn = sin(th);
                int idx[4];
                double dist[4], dir[4];
                if (k == i) continue;
                idx[0] = 2 * i; idx[1] = 2 * i + 1;
                idx[2] = 2 * k; idx[3] = 2 * k + 1;
                dist[0] = -ce; dist[1] = -cn; dist[2] = ce; dist[3] = cn;
                dir[0] = cn; dir[1] = -ce; dir[2] = -cn; dir[3] = ce;
                add_obs(&d, idx, dist, 4, 1.0 + rnd(&st));
                add_obs(&d, idx, dir, 4, 0.5 + rnd(&st));
            }
        }
        if (n % 2) add_sym(&d, n - 1, n - 1, 1.0);
        break;
    }
    case FAM_DENSE:
        for (j = 0; j < n; j++)
            for (i = j; i < n; i++)
                add_sym(&d, i, j, i == j ? n + rnd(&st) : rnd(&st) - 0.5);
        break;
    case FAM_FOREST:
        /* disconnected tridiagonal blocks of 7: several elimination trees */
        for (i = 0; i < n; i++) {
            add_sym(&d, i, i, 2.5 + rnd(&st));
            if ((i + 1) % 7 != 0 && i + 1 < n)
                add_sym(&d, i + 1, i, -1.0 + 0.5 * rnd(&st));
        }
        break;
    case FAM_ARROW:
        /* tridiagonal plus a unknown coupled to all (an orientation-like
         * unknown shared by many observations) */
        for (i = 0; i < n; i++) {
            add_sym(&d, i, i, 3.0 + rnd(&st));
            if (i + 1 < n) add_sym(&d, i + 1, i, -1.0);
            if (i + 1 < n && n > 2) add_sym(&d, n - 1, i, 0.3 * rnd(&st));
        }
        add_sym(&d, n - 1, n - 1, 0.3 * n);
        break;
    default:
        break;
    }
    return d;
}

static cholmod_sparse *to_cholmod(const dense *d, cholmod_common *cc)
{
    int n = d->n, i, j, nz = 0;
    cholmod_triplet *T;
    cholmod_sparse *A;
    T = cholmod_allocate_triplet((size_t)n, (size_t)n,
                                 (size_t)n * (size_t)(n + 1) / 2, -1,
                                 CHOLMOD_REAL, cc);
    ck_assert_ptr_nonnull(T);
    for (j = 0; j < n; j++)
        for (i = j; i < n; i++) {
            double v = d->a[i + (size_t)j * (size_t)n];
            if (v == 0.0) continue;
            ((int *)T->i)[nz] = i;
            ((int *)T->j)[nz] = j;
            ((double *)T->x)[nz] = v;
            nz++;
        }
    T->nnz = (size_t)nz;
    A = cholmod_triplet_to_sparse(T, 0, cc);
    cholmod_free_triplet(&T, cc);
    ck_assert_ptr_nonnull(A);
    return A;
}

/* Dense inverse by LAPACK: the oracle.  Returns a full n x n array. */
static double *dense_inverse(const dense *d)
{
    int n = d->n, i, j;
    double *z = malloc((size_t)n * (size_t)n * sizeof *z);
    ck_assert_ptr_nonnull(z);
    memcpy(z, d->a, (size_t)n * (size_t)n * sizeof *z);
    ck_assert_int_eq(LAPACKE_dpotrf(LAPACK_COL_MAJOR, 'L', n, z, n), 0);
    ck_assert_int_eq(LAPACKE_dpotri(LAPACK_COL_MAJOR, 'L', n, z, n), 0);
    for (j = 0; j < n; j++)
        for (i = j + 1; i < n; i++) z[j + (size_t)i * n] = z[i + (size_t)j * n];
    return z;
}

static void setup_common(cholmod_common *cc, int ordering, int super)
{
    cholmod_start(cc);
    cc->print = 0;
    cc->supernodal = super ? CHOLMOD_SUPERNODAL : CHOLMOD_SIMPLICIAL;
    cc->final_ll = super ? 1 : 0;
    cc->nmethods = 1;
    cc->method[0].ordering = ordering;
    cc->postorder = 1;
}

/* |got - want| within REL_TOL * sqrt(Zii Zjj) (see the header comment). */
/* Check records every passing assertion through a pipe write, which for the
 * ~10^6 entry comparisons here costs more than the arithmetic; so the
 * assertion macros are reached only when a comparison fails (they then
 * report the values as usual). */
#define EXPECT_INT(a, b) \
    do { if ((a) != (b)) ck_assert_int_eq((a), (b)); } while (0)
#define EXPECT_NEAR(a, b, tol) \
    do { if (!(fabs((a) - (b)) < (tol))) \
            ck_assert_double_eq_tol((a), (b), (tol)); } while (0)

static void check_entry(const cairn_selinv *Z, const double *zd, int n, int i,
                        int j)
{
    double got = 0.0, want = zd[i + (size_t)j * n];
    double scale = sqrt(zd[i + (size_t)i * n] * zd[j + (size_t)j * n]);
    int st = cairn_selinv_get(Z, i, j, &got);
    if (st != 0) ck_abort_msg("entry (%d,%d) not stored: %d", i, j, st);
    EXPECT_NEAR(got, want, REL_TOL * scale);
    /* symmetry of the accessor */
    st = cairn_selinv_get(Z, j, i, &got);
    if (st != 0) ck_abort_msg("entry (%d,%d) not stored: %d", j, i, st);
    EXPECT_NEAR(got, want, REL_TOL * scale);
}

/* ---------------------------------------------------------------- cases */

static const int sizes[] = {1, 2, 10, 50, 300};
#define NSIZES ((int)(sizeof sizes / sizeof sizes[0]))
static const int orderings[] = {CHOLMOD_NATURAL, CHOLMOD_AMD, CHOLMOD_METIS};
static const char *const ord_name[] = {"natural", "amd", "metis"};
#define NORD 3
#define NCASES (NFAM * NSIZES * NORD)

/* Factors d supernodally with the given ordering, computes Z both ways and
 * compares with the dense LAPACK inverse: every entry of the supernodal
 * pattern, every entry where A is nonzero, and the two routes with each
 * other wherever both store an entry.  relax = 0 turns CHOLMOD's relaxed
 * amalgamation off (fundamental supernodes only).  Returns the widest
 * supernode. */
static int run_case(const dense *d, int ordering, int relax,
                    const char *label)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    cairn_selinv *Z = NULL, *Zs = NULL;
    int n = d->n;
    double *zd = dense_inverse(d);
    const int *Perm, *super, *pi, *s, *Ap, *Ai;
    int sn, i, j, p, checked = 0, widest = 0;

    setup_common(cc, ordering, 1);
    if (!relax) {
        for (i = 0; i < 3; i++) {
            cc->nrelax[i] = 0;
            cc->zrelax[i] = 0.0;
        }
    }
    A = to_cholmod(d, cc);
    L = cholmod_analyze(A, cc);
    ck_assert_ptr_nonnull(L);
    ck_assert(cholmod_factorize(A, L, cc));
    ck_assert_msg(cc->status == CHOLMOD_OK, "%s: status %d", label,
                  cc->status);
    ck_assert(L->is_super && L->is_ll);

    ck_assert_int_eq(cairn_selinv_compute(L, cc, &Z), 0);
    ck_assert_int_eq(cairn_selinv_simplicial(L, cc, &Zs), 0);
    ck_assert_int_eq(cairn_selinv_n(Z), n);

    /* every entry of the supernodal pattern, mapped to original numbering */
    Perm = L->Perm;
    super = L->super;
    pi = L->pi;
    s = L->s;
    for (sn = 0; sn < (int)L->nsuper; sn++) {
        if (super[sn + 1] - super[sn] > widest)
            widest = super[sn + 1] - super[sn];
        for (j = super[sn]; j < super[sn + 1]; j++)
            for (p = pi[sn] + (j - super[sn]); p < pi[sn + 1]; p++) {
                check_entry(Z, zd, n, Perm[s[p]], Perm[j]);
                checked++;
            }
    }
    ck_assert_int_ge(checked, n);

    /* every entry where A is nonzero: must be in both patterns */
    Ap = A->p;
    Ai = A->i;
    for (j = 0; j < n; j++)
        for (p = Ap[j]; p < Ap[j + 1]; p++) {
            i = Ai[p];
            check_entry(Z, zd, n, i, j);
            check_entry(Zs, zd, n, i, j);
        }

    /* oracle vs supernodal on the whole dense index range: where both store
     * an entry they agree; the oracle's pattern is inside the supernodal */
    for (j = 0; j < n; j++)
        for (i = 0; i < n; i++) {
            double za = 0.0, zb = 0.0;
            int ra = cairn_selinv_get(Z, i, j, &za);
            int rb = cairn_selinv_get(Zs, i, j, &zb);
            double scale = sqrt(zd[i + (size_t)i * n] * zd[j + (size_t)j * n]);
            if (ra != 0) EXPECT_INT(ra, CAIRN_SELINV_ENOTSTORED);
            if (rb != 0) EXPECT_INT(rb, CAIRN_SELINV_ENOTSTORED);
            if (rb == 0) EXPECT_INT(ra, 0);
            if (ra == 0 && rb == 0) EXPECT_NEAR(za, zb, REL_TOL * scale);
            if (rb == 0) check_entry(Zs, zd, n, i, j);
        }

    /* in place: the same arithmetic, so bit for bit the same values, now
     * written over the factor's own array */
    {
        cairn_selinv *Zi = NULL;
        ck_assert_int_eq(cairn_selinv_compute_inplace(L, cc, &Zi), 0);
        for (sn = 0; sn < (int)L->nsuper; sn++)
            for (j = super[sn]; j < super[sn + 1]; j++)
                for (p = pi[sn] + (j - super[sn]); p < pi[sn + 1]; p++) {
                    double za = 0.0, zi = 1.0;
                    EXPECT_INT(cairn_selinv_get(Z, Perm[s[p]], Perm[j], &za), 0);
                    EXPECT_INT(cairn_selinv_get(Zi, Perm[s[p]], Perm[j], &zi), 0);
                    ck_assert_msg(za == zi, "%s: in-place Z(%d,%d) = %.17g, copy %.17g",
                                  label, Perm[s[p]], Perm[j], zi, za);
                }
        cairn_selinv_free(&Zi);   /* before the factor, whose array it holds */
    }

    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    ck_assert_int_eq((int)cc->malloc_count, 0);

    /* the handles own their data: still readable after the factor is gone */
    {
        double z00 = 0.0;
        ck_assert_int_eq(cairn_selinv_get(Z, 0, 0, &z00), 0);
        ck_assert_double_eq_tol(z00, zd[0], REL_TOL * zd[0]);
    }
    cairn_selinv_free(&Z);
    cairn_selinv_free(&Zs);
    ck_assert_ptr_null(Z);
    ck_assert_ptr_null(Zs);
    free(zd);
    return widest;
}

/* Loop index -> (family, size, ordering). */
START_TEST(test_against_dense)
{
    int fam = _i / (NSIZES * NORD);
    int n = sizes[(_i / NORD) % NSIZES];
    int oi = _i % NORD;
    char label[64];
    dense d;
    if (fam == FAM_DENSE && n > 50) return;   /* keep the dense case small */
    d = make_matrix((enum family)fam, n, 12345u + (unsigned)_i);
    snprintf(label, sizeof label, "%s n=%d %s", fam_name[fam], n,
             ord_name[oi]);
    run_case(&d, orderings[oi], 1, label);
    free(d.a);
}
END_TEST

/* A supernode wider than selinv.c's POTRI_MIN_WIDTH (512), both alone
 * (m = 0) and with rows below it (m > 0): a dense block of 530 unknowns
 * all coupled to three unknowns of a 100-unknown chain, factored without
 * relaxed amalgamation (which would swallow the chain into the block). */
START_TEST(test_wide_supernode)
{
    int nb = 530, nc = 100, n = nb + nc, i, j, w;
    unsigned long long st = 31u;
    dense d;
    d.n = nb;
    d.a = calloc((size_t)nb * nb, sizeof *d.a);
    ck_assert_ptr_nonnull(d.a);
    for (j = 0; j < nb; j++)
        for (i = j; i < nb; i++)
            add_sym(&d, i, j, i == j ? nb + rnd(&st) : rnd(&st) - 0.5);
    w = run_case(&d, CHOLMOD_NATURAL, 1, "dense 530");
    ck_assert_int_ge(w, 512);
    free(d.a);

    d.n = n;
    d.a = calloc((size_t)n * n, sizeof *d.a);
    ck_assert_ptr_nonnull(d.a);
    for (j = 0; j < nb; j++) {
        for (i = j; i < nb; i++)
            add_sym(&d, i, j, i == j ? nb + rnd(&st) : rnd(&st) - 0.5);
        add_sym(&d, nb, j, rnd(&st) - 0.5);
        add_sym(&d, nb + 30, j, rnd(&st) - 0.5);
        add_sym(&d, nb + 60, j, rnd(&st) - 0.5);
    }
    for (i = nb; i < n; i++) {
        add_sym(&d, i, i, 3.0 + rnd(&st));
        if (i + 1 < n) add_sym(&d, i + 1, i, -1.0);
    }
    add_sym(&d, nb, nb, (double)nb);
    add_sym(&d, nb + 30, nb + 30, (double)nb);
    add_sym(&d, nb + 60, nb + 60, (double)nb);
    w = run_case(&d, CHOLMOD_NATURAL, 0, "dense 530 + chain");
    ck_assert_int_ge(w, 512);
    free(d.a);
}
END_TEST

/* The oracle also accepts a simplicial LDL' factor made directly. */
START_TEST(test_simplicial_factor_input)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    cairn_selinv *Z = NULL;
    dense d = make_matrix(FAM_MARKS2, 120, 777u);
    double *zd = dense_inverse(&d);
    int i, j, p;
    setup_common(cc, CHOLMOD_AMD, 0);
    A = to_cholmod(&d, cc);
    L = cholmod_analyze(A, cc);
    ck_assert(cholmod_factorize(A, L, cc));
    ck_assert(!L->is_super);
    /* the supernodal pass refuses it */
    ck_assert_int_eq(cairn_selinv_compute(L, cc, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_ptr_null(Z);
    ck_assert_int_eq(cairn_selinv_simplicial(L, cc, &Z), 0);
    for (j = 0; j < d.n; j++)
        for (p = ((int *)A->p)[j]; p < ((int *)A->p)[j + 1]; p++) {
            i = ((int *)A->i)[p];
            check_entry(Z, zd, d.n, i, j);
        }
    cairn_selinv_free(&Z);
    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    ck_assert_int_eq((int)cc->malloc_count, 0);
    free(zd);
    free(d.a);
}
END_TEST

START_TEST(test_bad_arguments)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    cairn_selinv *Z = NULL;
    dense d = make_matrix(FAM_FOREST, 21, 5u);
    double x = 42.0;
    setup_common(cc, CHOLMOD_NATURAL, 1);
    A = to_cholmod(&d, cc);
    L = cholmod_analyze(A, cc);
    ck_assert_ptr_nonnull(L);
    /* symbolic factor only: no values yet */
    ck_assert_int_eq(cairn_selinv_compute(L, cc, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_simplicial(L, cc, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_ptr_null(Z);
    ck_assert(cholmod_factorize(A, L, cc));
    ck_assert_int_eq(cairn_selinv_compute(NULL, cc, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_compute(L, NULL, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_compute(L, cc, NULL), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_simplicial(NULL, cc, &Z), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_compute(L, cc, &Z), 0);
    /* out of range / NULL */
    ck_assert_int_eq(cairn_selinv_get(Z, -1, 0, &x), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_get(Z, 0, 21, &x), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_get(Z, 0, 0, NULL), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_get(NULL, 0, 0, &x), CAIRN_SELINV_EINVAL);
    ck_assert_int_eq(cairn_selinv_n(NULL), 0);
    /* unknowns 0 and 20 are in different blocks (natural order, no fill):
     * outside the pattern, *px untouched */
    ck_assert_int_eq(cairn_selinv_get(Z, 0, 20, &x), CAIRN_SELINV_ENOTSTORED);
    ck_assert_int_eq(cairn_selinv_get(Z, 20, 0, &x), CAIRN_SELINV_ENOTSTORED);
    ck_assert_double_eq(x, 42.0);
    cairn_selinv_free(&Z);
    cairn_selinv_free(&Z);          /* *pZ == NULL is fine */
    cairn_selinv_free(NULL);
    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    ck_assert_int_eq((int)cc->malloc_count, 0);
    free(d.a);
}
END_TEST

/* A singular matrix (a datum defect: a free 1-D Laplacian) is refused. */
START_TEST(test_not_posdef)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    cairn_selinv *Z = NULL;
    dense d;
    int i, n = 12;
    d.n = n;
    d.a = calloc((size_t)n * n, sizeof *d.a);
    ck_assert_ptr_nonnull(d.a);
    for (i = 0; i + 1 < n; i++) {
        add_sym(&d, i, i, 1.0);
        add_sym(&d, i + 1, i + 1, 1.0);
        add_sym(&d, i + 1, i, -1.0);
    }
    add_sym(&d, 5, 5, -3.0);                 /* make it indefinite */
    setup_common(cc, CHOLMOD_NATURAL, 1);
    A = to_cholmod(&d, cc);
    L = cholmod_analyze(A, cc);
    ck_assert(cholmod_factorize(A, L, cc));
    ck_assert_int_eq(cc->status, CHOLMOD_NOT_POSDEF);
    ck_assert_int_eq(cairn_selinv_compute(L, cc, &Z), CAIRN_SELINV_ENOTPOSDEF);
    ck_assert_int_eq(cairn_selinv_simplicial(L, cc, &Z),
                     CAIRN_SELINV_ENOTPOSDEF);
    ck_assert_ptr_null(Z);
    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    ck_assert_int_eq((int)cc->malloc_count, 0);
    free(d.a);
}
END_TEST

/* ------------------------------------------------ allocation failures */

/* Test-only allocator hook (the library itself has no global state): fails
 * every allocation after the first `budget` ones.  Check forks each test, so
 * this static state never leaks between tests. */
static long alloc_budget = -1;
static void *(*real_malloc)(size_t);
static void *(*real_calloc)(size_t, size_t);
static void *failing_malloc(size_t size)
{
    if (alloc_budget == 0) return NULL;
    if (alloc_budget > 0) alloc_budget--;
    return real_malloc(size);
}
static void *failing_calloc(size_t count, size_t size)
{
    if (alloc_budget == 0) return NULL;
    if (alloc_budget > 0) alloc_budget--;
    return real_calloc(count, size);
}

START_TEST(test_out_of_memory)
{
    cholmod_common c, *cc = &c;
    cholmod_sparse *A;
    cholmod_factor *L;
    dense d = make_matrix(FAM_GRID, 60, 99u);
    long k;
    int which;
    setup_common(cc, CHOLMOD_AMD, 1);
    A = to_cholmod(&d, cc);
    L = cholmod_analyze(A, cc);
    ck_assert(cholmod_factorize(A, L, cc));
    real_malloc = SuiteSparse_config.malloc_func;
    real_calloc = SuiteSparse_config.calloc_func;
    SuiteSparse_config.malloc_func = failing_malloc;
    SuiteSparse_config.calloc_func = failing_calloc;
    for (which = 0; which < 2; which++) {
        int succeeded = 0;
        for (k = 0; k < 40 && !succeeded; k++) {
            cairn_selinv *Z = NULL;
            size_t before = cc->malloc_count;
            int st;
            alloc_budget = k;
            st = which == 0 ? cairn_selinv_compute(L, cc, &Z)
                            : cairn_selinv_simplicial(L, cc, &Z);
            alloc_budget = -1;
            if (st == 0) {
                succeeded = 1;
                ck_assert_ptr_nonnull(Z);
            } else {
                ck_assert_int_eq(st, CAIRN_SELINV_ENOMEM);
                ck_assert_ptr_null(Z);
            }
            ck_assert_int_eq((int)cc->malloc_count, (int)before);
            cairn_selinv_free(&Z);
        }
        ck_assert_msg(succeeded, "never succeeded within 40 allocations");
    }
    SuiteSparse_config.malloc_func = real_malloc;
    SuiteSparse_config.calloc_func = real_calloc;
    cholmod_free_factor(&L, cc);
    cholmod_free_sparse(&A, cc);
    cholmod_finish(cc);
    ck_assert_int_eq((int)cc->malloc_count, 0);
    free(d.a);
}
END_TEST

static Suite *selinv_suite(void)
{
    Suite *s = suite_create("selinv");
    TCase *tc = tcase_create("dense oracle");
    tcase_set_timeout(tc, 120);
    tcase_add_loop_test(tc, test_against_dense, 0, NCASES);
    tcase_add_test(tc, test_simplicial_factor_input);
    tcase_add_test(tc, test_wide_supernode);
    suite_add_tcase(s, tc);
    tc = tcase_create("errors");
    tcase_add_test(tc, test_bad_arguments);
    tcase_add_test(tc, test_not_posdef);
    tcase_add_test(tc, test_out_of_memory);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(selinv_suite());
    int failed;
    srunner_run_all(sr, CK_NORMAL);
    failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;
}
