/* The normal equations N = AᵀPA, n = AᵀP(observed − computed) in CHOLMOD
 * form: the sparsity pattern is built once from the design rows (column
 * counts, never a dense n×n array and never a triplet list with one entry
 * per product), analysed once, and refilled and refactorised for every
 * linearisation. STYLE.md "CHOLMOD API pointers" fixes how CHOLMOD is
 * used: its own Common in our context struct, no printing, status checked
 * after every call, zero pivots mapped back through L->Perm. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "solve_int.h"

/* A pivot this small relative to the diagonal of N is taken as zero: an
 * exactly singular matrix leaves rounding noise of order 1e-16·N(j,j) in
 * the pivot, while the weakest real network pivots seen are far above
 * 1e-12·N(j,j) (a pivot ratio r costs a factor 1/√r in that unknown's σ,
 * so 1e-12 means a σ a million times the local one: unusable anyway). */
#define CAIRN_PIVOT_RTOL 1e-12

double cairn_solve_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int cairn_solver_start(cairn_solver *s, int n, int ordering, int metis_threshold)
{
    /* only the CHOLMOD side: rows and x belong to adjust.c */
    s->N = NULL;
    s->L = NULL;
    s->b = NULL;
    s->ndiag = NULL;
    if (!cholmod_start(&s->cc))
        return -1;
    s->started = 1;
    s->n = n;
    s->cc.print = 0;            /* never let CHOLMOD write to stdout */
    s->cc.error_handler = NULL; /* status is checked after each call */
    s->cc.supernodal = CHOLMOD_SUPERNODAL; /* the selected inverse wants LLᵀ supernodal */
    s->cc.nmethods = 1;
    /* AMD is fastest to compute and good for small and medium networks;
     * nested dissection (METIS) gives less fill on large planar meshes.
     * Which one a large network gets is settled by its pattern in
     * cairn_solver_analyse. */
    int metis = ordering == CAIRN_ORDER_METIS ||
                (ordering == CAIRN_ORDER_AUTO && n > metis_threshold);
    s->order_by_density = ordering == CAIRN_ORDER_AUTO && metis;
    s->cc.method[0].ordering = metis ? CHOLMOD_METIS : CHOLMOD_AMD;
    s->cc.dbound = 0.0;         /* a non-zero bound would hide zero pivots */
    return 0;
}

/* Entries per column of N's lower triangle up to which a large network is
 * ordered with AMD (cairn_solver_analyse). */
#define SPARSE_PATTERN_AMD 6

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

int cairn_solver_analyse(cairn_solver *s, const cairn_rows *rows, size_t nobs,
                         cairn_error *err)
{
    int n = s->n;
    double t0 = cairn_solve_now();
    size_t *cnt = calloc((size_t)n + 1, sizeof *cnt);
    int *mark = malloc(((size_t)n ? (size_t)n : 1) * sizeof *mark);
    int *tmp = NULL;
    if (!cnt || !mark)
        goto oom;
    /* column counts with duplicates: every pair (r ≥ c) of a row, plus the
     * diagonal, so each unknown has its pivot even if no row reaches it */
    for (size_t i = 0; i < nobs; i++)
        for (size_t p = rows->ptr[i]; p < rows->ptr[i + 1]; p++)
            for (size_t q = rows->ptr[i]; q < rows->ptr[i + 1]; q++)
                if (rows->unk[q] > rows->unk[p])
                    cnt[rows->unk[p]]++;
    size_t total = 0;
    for (int j = 0; j < n; j++) {
        size_t c = cnt[j] + 1;
        cnt[j] = total;
        total += c;
    }
    cnt[n] = total;
    tmp = malloc((total ? total : 1) * sizeof *tmp);
    size_t *fill = malloc(((size_t)n + 1) * sizeof *fill);
    if (!tmp || !fill) {
        free(fill);
        goto oom;
    }
    for (int j = 0; j < n; j++) {
        tmp[cnt[j]] = j;
        fill[j] = cnt[j] + 1;
    }
    for (size_t i = 0; i < nobs; i++)
        for (size_t p = rows->ptr[i]; p < rows->ptr[i + 1]; p++)
            for (size_t q = rows->ptr[i]; q < rows->ptr[i + 1]; q++)
                if (rows->unk[q] > rows->unk[p])
                    tmp[fill[rows->unk[p]]++] = rows->unk[q];
    free(fill);
    /* unique rows per column, sorted (diagonal first) */
    size_t nnz = 0;
    for (int j = 0; j < n; j++)
        mark[j] = -1;
    for (int j = 0; j < n; j++) {
        size_t start = nnz;
        for (size_t k = cnt[j]; k < cnt[j + 1]; k++) {
            int r = tmp[k];
            if (mark[r] != j) {
                mark[r] = j;
                tmp[nnz++] = r;
            }
        }
        qsort(tmp + start, nnz - start, sizeof *tmp, cmp_int);
        cnt[j] = start;  /* safe: column j + 1 starts at or after nnz */
    }
    cnt[n] = nnz;
    s->N = cholmod_allocate_sparse((size_t)n, (size_t)n, nnz, 1, 1, -1,
                                   CHOLMOD_REAL, &s->cc);
    s->b = cholmod_zeros((size_t)n, 1, CHOLMOD_REAL, &s->cc);
    s->ndiag = calloc((size_t)n ? (size_t)n : 1, sizeof *s->ndiag);
    if (!s->N || !s->b || !s->ndiag)
        goto oom;
    int *Np = s->N->p, *Ni = s->N->i;
    for (int j = 0; j <= n; j++)
        Np[j] = (int)cnt[j];
    for (size_t k = 0; k < nnz; k++)
        Ni[k] = tmp[k];
    free(tmp);
    free(cnt);
    free(mark);
    tmp = NULL;
    cnt = NULL;
    mark = NULL;
    /* A large network whose unknowns are each coupled to only a couple of
     * others (a levelling net: chains and loops, about 3.2 entries per
     * column of the lower triangle against 11.7 for a plane and 14.3 for
     * a 3-D net of the bench generator) fills little under either
     * ordering, and METIS would cost more than the factorisations it
     * saves. Measured with make bench (2026-12-02): levelling nets of
     * 10^5 and 10^6 marks analyse in 0.44 s and 6.5 s with METIS, 0.10 s
     * and 1.9 s with AMD, and their two factorisations and selected
     * inverse take 0.45 s and 5.9 s with METIS, 0.43 s and 6.8 s with
     * AMD; a 3-D net of 10^4 marks is the other way round (AMD: analysis
     * 0.11 s, factorisations 0.96 s; METIS: 0.30 s and 0.58 s). The bound
     * 6 lies between the two kinds (measured, no source). */
    if (s->order_by_density && nnz <= SPARSE_PATTERN_AMD * (size_t)n)
        s->cc.method[0].ordering = CHOLMOD_AMD;
    double t1 = cairn_solve_now();
    s->t.pattern += t1 - t0;
    s->L = cholmod_analyze(s->N, &s->cc);
    s->t.analyse += cairn_solve_now() - t1;
    if (!s->L || s->cc.status < 0) {
        if (s->cc.status == CHOLMOD_OUT_OF_MEMORY)
            goto oom;
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: CHOLMOD analysis failed (status %d)",
                        s->cc.status);
        return CAIRN_SOLVE_EINTERNAL;
    }
    return 0;
oom:
    free(cnt);
    free(mark);
    free(tmp);
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "out of memory building the normal equations");
    return CAIRN_SOLVE_ENOMEM;
}

/* Position of row r in lower column c (r ≥ c) of the sorted pattern. */
static size_t find_entry(const int *Np, const int *Ni, int c, int r)
{
    size_t lo = (size_t)Np[c], hi = (size_t)Np[c + 1];
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (Ni[mid] < r)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo;
}

void cairn_solver_assemble(cairn_solver *s, const cairn_rows *rows, size_t nobs,
                           const double *w, const double *v)
{
    const int *Np = s->N->p, *Ni = s->N->i;
    double *Nx = s->N->x, *b = s->b->x;
    double t0 = cairn_solve_now();
    memset(Nx, 0, (size_t)Np[s->n] * sizeof *Nx);
    memset(b, 0, (size_t)s->n * sizeof *b);
    for (size_t i = 0; i < nobs; i++) {
        size_t p0 = rows->ptr[i], p1 = rows->ptr[i + 1];
        for (size_t p = p0; p < p1; p++) {
            int up = rows->unk[p];
            double wa = w[i] * rows->coef[p];
            b[up] -= wa * v[i];
            for (size_t q = p0; q < p1; q++) {
                int uq = rows->unk[q];
                if (uq < up)
                    continue;
                Nx[uq == up ? (size_t)Np[up] : find_entry(Np, Ni, up, uq)] +=
                    wa * rows->coef[q];
            }
        }
    }
    for (int j = 0; j < s->n; j++)
        s->ndiag[j] = Nx[Np[j]];
    s->t.assemble += cairn_solve_now() - t0;
    s->t.nassemble++;
}

static int singular(const cairn_adjustment *adj, int j, double pivot, double njj,
                    cairn_error *err)
{
    char name[CAIRN_ID_MAX + 200];
    cairn_unknown_name(adj, j, name, sizeof name);
    const cairn_src *src = NULL;
    const cairn_unknown *u = &adj->unknowns[j];
    if (u->mark >= 0) {
        const cairn_mark *m = &adj->net->marks[u->mark];
        src = m->def.line > 0 ? &m->def : &m->ref;
    } else if (u->setup >= 0) {
        src = &adj->net->setups[u->setup].src;
    }
    cairn_error_add(err, CAIRN_SEV_ERROR, src ? src->file : NULL,
                    src ? src->line : 0, src ? src->col : 0,
                    "the normal equations are singular at %s (pivot %.3g of "
                    "diagonal %.3g): it is not determined by the observations; "
                    "look for a datum defect or a weak geometry (collinear or "
                    "coincident sightings)", name, pivot, njj);
    return CAIRN_SOLVE_ESINGULAR;
}

/* Smallest relative pivot of a numeric factor against the diagonal that was
 * factorised (d = the diagonal of N + μ·diag N, in original numbering).
 * Supernodal LLᵀ keeps L(j,j) at row j − k1 of the supernode's column
 * j − k1 (column-major block of nsrow rows; cholmod_core.h, "supernodal"). */
static int check_pivots(const cairn_solver *s, const double *d, double mu,
                        const cairn_adjustment *adj, cairn_error *err)
{
    const cholmod_factor *L = s->L;
    const int *perm = L->Perm;
    const double *Lx = L->x;
    if (L->is_super) {
        const int *super = L->super, *pi = L->pi, *px = L->px;
        for (size_t sn = 0; sn < L->nsuper; sn++) {
            int k1 = super[sn], k2 = super[sn + 1];
            int nsrow = pi[sn + 1] - pi[sn];
            for (int j = k1; j < k2; j++) {
                int jj = j - k1;
                double ljj = Lx[px[sn] + jj + (size_t)jj * (size_t)nsrow];
                double piv = ljj * ljj, njj = d[perm[j]] * (1.0 + mu);
                if (!(piv > CAIRN_PIVOT_RTOL * njj))
                    return singular(adj, perm[j], piv, njj, err);
            }
        }
    } else {
        const int *Lp = L->p;
        for (int j = 0; j < s->n; j++) {
            double piv = Lx[Lp[j]];
            if (L->is_ll)
                piv *= piv;
            double njj = d[perm[j]] * (1.0 + mu);
            if (!(piv > CAIRN_PIVOT_RTOL * njj))
                return singular(adj, perm[j], piv, njj, err);
        }
    }
    return 0;
}

int cairn_solver_factorise(cairn_solver *s, double mu, const cairn_adjustment *adj,
                           cairn_error *err)
{
    double *Nx = s->N->x;
    const int *Np = s->N->p;
    if (mu > 0)
        for (int j = 0; j < s->n; j++)
            Nx[Np[j]] = s->ndiag[j] * (1.0 + mu);
    double t0 = cairn_solve_now();
    int ok = cholmod_factorize(s->N, s->L, &s->cc);
    s->t.factorise += cairn_solve_now() - t0;
    s->t.nfactorise++;
    if (mu > 0)
        for (int j = 0; j < s->n; j++)
            Nx[Np[j]] = s->ndiag[j];
    if (s->cc.status == CHOLMOD_OUT_OF_MEMORY) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "out of memory factorising the normal equations");
        return CAIRN_SOLVE_ENOMEM;
    }
    if (s->cc.status < 0 || !ok) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "internal error: CHOLMOD factorisation failed (status %d)",
                        s->cc.status);
        return CAIRN_SOLVE_EINTERNAL;
    }
    /* cholmod_factorize returns TRUE for a matrix that is not positive
     * definite: the failed column is L->minor, in the permuted order. */
    if (s->cc.status == CHOLMOD_NOT_POSDEF || s->L->minor < s->L->n) {
        int j = ((const int *)s->L->Perm)[s->L->minor];
        return singular(adj, j, 0.0, s->ndiag[j] * (1.0 + mu), err);
    }
    return check_pivots(s, s->ndiag, mu, adj, err);
}

/* X = F⁻¹ B on the factor at hand. */
static cholmod_dense *fsolve(cairn_solver *s, cholmod_dense *B, cairn_error *err)
{
    double t0 = cairn_solve_now();
    cholmod_dense *X = cholmod_solve(CHOLMOD_A, s->L, B, &s->cc);
    s->t.solve += cairn_solve_now() - t0;
    s->t.nsolve++;
    if (!X || s->cc.status < 0) {
        cholmod_free_dense(&X, &s->cc);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        s->cc.status == CHOLMOD_OUT_OF_MEMORY
                            ? "out of memory solving the normal equations"
                            : "internal error: CHOLMOD solve failed");
        return NULL;
    }
    return X;
}

int cairn_solver_solve(cairn_solver *s, double *dx, cairn_error *err)
{
    cholmod_dense *X = fsolve(s, s->b, err);
    if (!X)
        return s->cc.status == CHOLMOD_OUT_OF_MEMORY ? CAIRN_SOLVE_ENOMEM
                                                     : CAIRN_SOLVE_EINTERNAL;
    memcpy(dx, X->x, (size_t)s->n * sizeof *dx);
    cholmod_free_dense(&X, &s->cc);
    return 0;
}

static double maxabs(const double *a, int n)
{
    double m = 0;
    for (int j = 0; j < n; j++)
        m = fabs(a[j]) > m ? fabs(a[j]) : m;
    return m;
}

/* Iterative refinement on an old factor (Golub & Van Loan, "Matrix
 * Computations", 4th ed., §3.5.3): with F the factor of a nearby matrix,
 * each sweep multiplies the error by I − F⁻¹N. */
int cairn_solver_chord(cairn_solver *s, int sweeps, double *dx, double *pcontract,
                       cairn_error *err)
{
    size_t n = (size_t)s->n;
    *pcontract = INFINITY;
    cholmod_dense *X = fsolve(s, s->b, err);
    if (!X)
        return s->cc.status == CHOLMOD_OUT_OF_MEMORY ? CAIRN_SOLVE_ENOMEM
                                                     : CAIRN_SOLVE_EINTERNAL;
    memcpy(dx, X->x, n * sizeof *dx);
    cholmod_free_dense(&X, &s->cc);
    cholmod_dense *R = cholmod_allocate_dense(n, 1, n, CHOLMOD_REAL, &s->cc);
    if (!R) {
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "out of memory solving the normal equations");
        return CAIRN_SOLVE_ENOMEM;
    }
    cholmod_dense D = *R;   /* dx as a cholmod_dense, for sdmult */
    D.x = dx;
    double one[2] = {1, 0}, mone[2] = {-1, 0};
    double step = maxabs(dx, s->n);
    for (int k = 0; k < sweeps; k++) {
        memcpy(R->x, s->b->x, n * sizeof *dx);
        /* R = b − N dx (N symmetric, lower triangle stored) */
        cholmod_sdmult(s->N, 0, mone, one, &D, R, &s->cc);
        X = fsolve(s, R, err);
        if (!X) {
            cholmod_free_dense(&R, &s->cc);
            return s->cc.status == CHOLMOD_OUT_OF_MEMORY ? CAIRN_SOLVE_ENOMEM
                                                         : CAIRN_SOLVE_EINTERNAL;
        }
        const double *d = X->x;
        if (k == 0)
            *pcontract = step > 0 ? maxabs(d, s->n) / step : 0.0;
        for (size_t j = 0; j < n; j++)
            dx[j] += d[j];
        cholmod_free_dense(&X, &s->cc);
    }
    cholmod_free_dense(&R, &s->cc);
    return 0;
}

void cairn_solver_finish(cairn_solver *s)
{
    if (!s->started)
        return;
    cholmod_free_sparse(&s->N, &s->cc);
    cholmod_free_factor(&s->L, &s->cc);
    cholmod_free_dense(&s->b, &s->cc);
    free(s->ndiag);
    s->ndiag = NULL;
    cholmod_finish(&s->cc);
    s->started = 0;
}
