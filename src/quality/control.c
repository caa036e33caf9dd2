/*
 * control.c — the test of each held mark's given coordinates against the
 * observations that touch it (cairn_control_test in cairn/quality.h).
 *
 * A held mark whose given coordinates are wrong pulls the network onto
 * itself; iterative snooping then rejects the observations around it one
 * by one and the global test may pass. The alternative hypothesis "the
 * held components of mark X are off by ∇" adds the q columns C =
 * ∂(observations)/∂(held components of X) to the model, and
 *
 *   M = Cᵀ P Q_v P C = Cᵀ P C − bᵀ N⁻¹ b,   b = Aᵀ P C,
 *   u = Cᵀ P v   (v = computed − observed = −ê),
 *   ∇̂ = −M⁻¹ u,  T = uᵀ M⁻¹ u ~ χ²(q) under H0
 *
 * (Teunissen, Testing Theory, Delft University Press 2000, ch. 3-4: the
 * q-dimensional test of an alternative hypothesis y = A x + C ∇ + e; from
 * memory). b is nonzero only at the unknowns of observations touching X,
 * and bᵀ N⁻¹ b = ‖L⁻¹ P̃ b‖² with P̃ N P̃ᵀ = L Lᵀ, so each mark needs only
 * a forward solve with a sparse right-hand side: the supernodes on the
 * paths from b's entries to the root of the supernodal elimination tree
 * (Gilbert's reach; Davis, Direct Methods for Sparse Linear Systems, SIAM
 * 2006, §3.2; from memory). Marks are solved in batches with BLAS-3 on
 * the shared top of the tree. Nothing dense of size unknowns × marks is
 * formed.
 *
 * Directions of ∇ the observations cannot see (M small against Cᵀ P C,
 * by the generalised eigenproblem M g = ρ Cᵀ P C g, ρ the redundancy of
 * that direction) are left out when ρ < CAIRN_R_MIN, as for unchecked
 * observations.
 */
#include <cblas.h>
#include <lapacke.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "analysis_int.h"
#include "cairn/core.h"

/* Columns of one batch of forward solves (BLAS-3 width). */
#define BATCH_COLS 48

/* Per-mark accumulation: C rows folded in as they are read. */
typedef struct {
    int mark;
    unsigned held;       /* components tested */
    int q;               /* number of held components (columns of C) */
    int comp[3];         /* 0 e, 1 n, 2 h for each column */
    double W[9], u[3], G[9];
    int nobs;
    size_t b0, b1;       /* its entries of the b list: [b0, b1) */
} mark_acc;

/* One entry of b = Aᵀ P C: unknown, column (0..q-1 within its mark), value. */
typedef struct {
    int unk;
    int col;
    double val;
} b_entry;

typedef struct {
    const cholmod_factor *L;
    int n, nsuper;
    int *colsuper;       /* n: supernode of each permuted column */
    int *iperm;          /* n: permuted position of each unknown */
    int *stamp;          /* nsuper: batch that visited it last, or -1 */
    int *soff;           /* nsuper: first compact row of a visited supernode */
    int *list;           /* nsuper: visited supernodes of the batch */
    double *tmp;         /* below-diagonal products: max rows × BATCH_COLS */
    size_t tmp_cap;
} fsolve;

static void fsolve_clear(fsolve *f)
{
    free(f->colsuper);
    free(f->iperm);
    free(f->stamp);
    free(f->soff);
    free(f->list);
    free(f->tmp);
    memset(f, 0, sizeof *f);
}

static int fsolve_init(fsolve *f, const cholmod_factor *L)
{
    memset(f, 0, sizeof *f);
    f->L = L;
    f->n = (int)L->n;
    f->nsuper = (int)L->nsuper;
    size_t n = L->n ? L->n : 1, ns = L->nsuper ? L->nsuper : 1;
    f->colsuper = malloc(n * sizeof *f->colsuper);
    f->iperm = malloc(n * sizeof *f->iperm);
    f->stamp = malloc(ns * sizeof *f->stamp);
    f->soff = malloc(ns * sizeof *f->soff);
    f->list = malloc(ns * sizeof *f->list);
    if (!f->colsuper || !f->iperm || !f->stamp || !f->soff || !f->list)
        return -1;
    const int *super = L->super, *perm = L->Perm;
    int maxrow = 1;
    for (int s = 0; s < f->nsuper; s++) {
        for (int k = super[s]; k < super[s + 1]; k++)
            f->colsuper[k] = s;
        int nr = ((const int *)L->pi)[s + 1] - ((const int *)L->pi)[s];
        maxrow = nr > maxrow ? nr : maxrow;
        f->stamp[s] = -1;
    }
    for (int k = 0; k < f->n; k++)
        f->iperm[perm ? perm[k] : k] = k;
    f->tmp_cap = (size_t)maxrow * BATCH_COLS;
    f->tmp = malloc(f->tmp_cap * sizeof *f->tmp);
    return f->tmp ? 0 : -1;
}

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* G of every mark of acc[0..nm) (the Gram matrix of its columns of
 * L⁻¹ P̃ b), in one batch of at most BATCH_COLS columns. */
static int solve_batch(fsolve *f, mark_acc *acc, int nm, const b_entry *be, int batch)
{
    const cholmod_factor *L = f->L;
    const int *super = L->super, *pi = L->pi, *Ls = L->s;
    const int *px = L->px;   /* Int (int) arrays in CHOLMOD's int interface */
    const double *Lx = L->x;
    int ncols = 0, nlist = 0;
    int c0[BATCH_COLS];
    for (int a = 0; a < nm; a++) {
        c0[a] = ncols;
        ncols += acc[a].q;
        for (size_t k = acc[a].b0; k < acc[a].b1; k++) {
            for (int s = f->colsuper[f->iperm[be[k].unk]]; s >= 0 && f->stamp[s] != batch;) {
                f->stamp[s] = batch;
                f->list[nlist++] = s;
                int nc = super[s + 1] - super[s], nr = pi[s + 1] - pi[s];
                s = nr > nc ? f->colsuper[Ls[pi[s] + nc]] : -1;
            }
        }
    }
    qsort(f->list, (size_t)nlist, sizeof *f->list, cmp_int);
    size_t nrow = 0;
    for (int t = 0; t < nlist; t++) {
        int s = f->list[t];
        f->soff[s] = (int)nrow;
        nrow += (size_t)(super[s + 1] - super[s]);
    }
    double *Y = calloc(nrow * (size_t)ncols + 1, sizeof *Y);
    if (!Y)
        return -1;
#define POS(k) ((size_t)f->soff[f->colsuper[k]] + (size_t)((k) - super[f->colsuper[k]]))
    for (int a = 0; a < nm; a++)
        for (size_t k = acc[a].b0; k < acc[a].b1; k++)
            Y[POS(f->iperm[be[k].unk]) + nrow * (size_t)(c0[a] + be[k].col)] += be[k].val;
    for (int t = 0; t < nlist; t++) {
        int s = f->list[t];
        int nc = super[s + 1] - super[s], nr = pi[s + 1] - pi[s], nb = nr - nc;
        const double *blk = Lx + px[s];
        double *X = Y + f->soff[s];
        cblas_dtrsm(CblasColMajor, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, nc,
                    ncols, 1.0, blk, nr, X, (int)nrow);
        if (nb == 0)
            continue;
        cblas_dgemm(CblasColMajor, CblasNoTrans, CblasNoTrans, nb, ncols, nc, 1.0, blk + nc,
                    nr, X, (int)nrow, 0.0, f->tmp, nb);
        const int *rows = Ls + pi[s] + nc;
        for (int j = 0; j < ncols; j++)
            for (int r = 0; r < nb; r++)
                Y[POS(rows[r]) + nrow * (size_t)j] -= f->tmp[r + (size_t)nb * (size_t)j];
    }
#undef POS
    for (int a = 0; a < nm; a++) {
        int q = acc[a].q;
        for (int i = 0; i < q; i++)
            for (int j = 0; j <= i; j++) {
                const double *yi = Y + nrow * (size_t)(c0[a] + i);
                const double *yj = Y + nrow * (size_t)(c0[a] + j);
                acc[a].G[3 * i + j] = acc[a].G[3 * j + i] = cblas_ddot((int)nrow, yi, 1, yj, 1);
            }
    }
    free(Y);
    return 0;
}

/* T, ∇̂ and q of one mark from W = CᵀPC, M = W − G and u (see the top). */
static void decide(const mark_acc *m, double alpha, cairn_control_test *out)
{
    int q = m->q;
    double W[9], lam[3], M[9];
    memset(out, 0, sizeof *out);
    out->mark = m->mark;
    out->held = m->held;
    out->nobs = m->nobs;
    out->statistic = out->critical = NAN;
    out->shift[0] = out->shift[1] = out->shift[2] = NAN;   /* until testable */
    out->pass = -1;
    memcpy(W, m->W, sizeof W);
    if (LAPACKE_dsyev(LAPACK_COL_MAJOR, 'V', 'L', q, W, 3, lam) != 0)
        return;
    /* S = Λ^-1/2 Vᵀ over the directions C sees at all */
    double S[9];
    int qs = 0;
    double lmax = lam[q - 1];
    for (int k = 0; k < q; k++) {
        if (!(lam[k] > 1e-12 * lmax) || !(lam[k] > 0))
            continue;
        for (int j = 0; j < q; j++)
            S[3 * qs + j] = W[j + 3 * k] / sqrt(lam[k]);   /* row qs of S */
        qs++;
    }
    if (qs == 0)
        return;
    for (int i = 0; i < q; i++)
        for (int j = 0; j < q; j++)
            M[3 * i + j] = m->W[3 * i + j] - m->G[3 * i + j];
    /* R = S M Sᵀ (qs × qs) */
    double R[9] = {0}, rho[3];
    for (int a = 0; a < qs; a++)
        for (int b = 0; b < qs; b++) {
            double sum = 0;
            for (int i = 0; i < q; i++)
                for (int j = 0; j < q; j++)
                    sum += S[3 * a + i] * M[3 * i + j] * S[3 * b + j];
            R[a + 3 * b] = sum;
        }
    if (LAPACKE_dsyev(LAPACK_COL_MAJOR, 'V', 'L', qs, R, 3, rho) != 0)
        return;
    double T = 0, shift[3] = {0, 0, 0};
    int kept = 0;
    for (int k = 0; k < qs; k++) {
        if (!(rho[k] >= CAIRN_R_MIN))
            continue;
        double g[3] = {0, 0, 0}, a = 0;
        for (int i = 0; i < q; i++) {
            for (int b = 0; b < qs; b++)
                g[i] += S[3 * b + i] * R[b + 3 * k];
            a += g[i] * m->u[i];
        }
        T += a * a / rho[k];
        for (int i = 0; i < q; i++)
            shift[i] -= g[i] * a / rho[k];
        kept++;
    }
    if (kept == 0)
        return;
    out->q = kept;
    out->statistic = T;
    out->critical = cairn_chi2_quantile(1.0 - alpha, (double)kept);
    out->pass = T <= out->critical;
    for (int k = 0; k < q; k++)
        out->shift[m->comp[k]] = shift[k];
}

/* Held components of mark m that its observations can test. */
static unsigned held_bits(const cairn_adjustment *adj, size_t m)
{
    if (adj->datum_free)
        return 0;
    unsigned bits = adj->net->marks[m].hold & adj->prob->touch[m], out = 0;
    static const unsigned comp[3] = {CAIRN_E, CAIRN_N, CAIRN_H};
    for (int c = 0; c < 3; c++)
        if ((bits & comp[c]) && adj->unk_mark[3 * m + (size_t)c] < 0)
            out |= comp[c];
    return out;
}

int cairn_qa_control_tests(const cairn_analysis *an, const cairn_qa_engine *eg,
                           cairn_control_test **pout, size_t *pn)
{
    const cairn_adjustment *adj = eg->adj;
    const cairn_problem *prob = adj->prob;
    size_t nmarks = adj->net->nmarks;
    *pout = NULL;
    *pn = 0;
    /* the supernodal LLᵀ the solve stage makes (normal.c); nothing to
     * test on anything else, or once the selected inverse has the factor */
    const cholmod_factor *L = eg->L;
    if (eg->n == 0 || !L || adj->datum_free || eg->factor_consumed || !L->is_super ||
        !L->is_ll || L->itype != CHOLMOD_INT || L->xtype != CHOLMOD_REAL || !L->x)
        return 0;
    int *slot = malloc((nmarks ? nmarks : 1) * sizeof *slot);
    if (!slot)
        return -1;
    size_t nheld = 0;
    for (size_t m = 0; m < nmarks; m++)
        slot[m] = held_bits(adj, m) ? (int)nheld++ : -1;
    if (nheld == 0) {
        free(slot);
        return 0;
    }
    mark_acc *acc = calloc(nheld, sizeof *acc);
    size_t *cnt = calloc(nheld + 1, sizeof *cnt), *olist = NULL;
    b_entry *be = NULL;
    size_t nbe = 0, be_cap = 0;
    cairn_control_test *out = NULL;
    fsolve fs;
    memset(&fs, 0, sizeof fs);
    int rc = -1;
    if (!acc || !cnt)
        goto done;
    for (size_t m = 0, k = 0; m < nmarks; m++) {
        if (slot[m] < 0)
            continue;
        mark_acc *a = &acc[k++];
        a->mark = (int)m;
        a->held = held_bits(adj, m);
        for (int c = 0; c < 3; c++)
            if (a->held & (1u << c))
                a->comp[a->q++] = c;
    }
    /* the observations touching each held mark (counting sort by mark) */
    for (int pass = 0; pass < 2; pass++) {
        for (size_t i = 0; i < eg->nobs; i++) {
            const cairn_obs *o = &prob->obs[i];
            if (eg->out[i] || o->kind == CAIRN_OBS_CONTROL_E || o->kind == CAIRN_OBS_CONTROL_N ||
                o->kind == CAIRN_OBS_CONTROL_H)
                continue;
            int ms[3], nms = cairn_qa_obs_marks(o, ms);
            for (int t = 0; t < nms; t++) {
                int m = ms[t];
                if ((size_t)m >= nmarks || slot[m] < 0)
                    continue;
                if (pass == 0)
                    cnt[slot[m] + 1]++;
                else
                    olist[cnt[slot[m]]++] = i;
            }
        }
        if (pass == 0) {
            for (size_t k = 0; k < nheld; k++)
                cnt[k + 1] += cnt[k];
            if (!(olist = malloc((cnt[nheld] ? cnt[nheld] : 1) * sizeof *olist)))
                goto done;
        }
    }
    /* cnt[k] is now the end of mark k's run; its start is cnt[k-1] */
    for (size_t k = 0; k < nheld; k++) {
        mark_acc *a = &acc[k];
        a->b0 = nbe;
        for (size_t t = k ? cnt[k - 1] : 0; t < cnt[k]; t++) {
            size_t i = olist[t];
            const cairn_obs *o = &prob->obs[i];
            cairn_lin lin;
            memset(&lin, 0, sizeof lin);
            if (cairn_obs_linearise(prob, o, &eg->st, &lin))
                continue;
            double c[3] = {0, 0, 0};
            int ms[3] = {o->at, o->from, o->to}, any = 0;
            for (int s = 0; s < 3; s++)
                if (ms[s] == a->mark)
                    for (int j = 0; j < a->q; j++)
                        c[j] += lin.d[3 * s + a->comp[j]];
            for (int j = 0; j < a->q; j++)
                any |= c[j] != 0;
            if (!any)
                continue;
            double sig = adj->sigma[i], p = 1.0 / (sig * sig), v = adj->residual[i];
            a->nobs++;
            for (int x = 0; x < a->q; x++) {
                a->u[x] += p * c[x] * v;
                for (int y = 0; y < a->q; y++)
                    a->W[3 * x + y] += p * c[x] * c[y];
            }
            size_t need = nbe + (eg->rp[i + 1] - eg->rp[i]) * (size_t)a->q;
            if (cairn_grow((void **)&be, &be_cap, need, sizeof *be))
                goto done;
            for (size_t r = eg->rp[i]; r < eg->rp[i + 1]; r++)
                for (int x = 0; x < a->q; x++)
                    if (c[x] != 0 && eg->rc[r] != 0)
                        be[nbe++] = (b_entry){eg->ri[r], x, eg->rc[r] * p * c[x]};
        }
        a->b1 = nbe;
    }
    if (fsolve_init(&fs, eg->L))
        goto done;
    for (size_t k = 0, batch = 0; k < nheld; batch++) {
        int nm = 0, cols = 0;
        while (k + (size_t)nm < nheld && cols + acc[k + (size_t)nm].q <= BATCH_COLS)
            cols += acc[k + (size_t)nm++].q;
        if (solve_batch(&fs, acc + k, nm, be, (int)batch))
            goto done;
        k += (size_t)nm;
    }
    size_t nout = 0;
    for (size_t k = 0; k < nheld; k++)
        nout += acc[k].nobs > 0;
    if (nout && !(out = calloc(nout, sizeof *out)))
        goto done;
    for (size_t k = 0, j = 0; k < nheld; k++)
        if (acc[k].nobs > 0)
            decide(&acc[k], an->alpha, &out[j++]);
    *pout = out;
    *pn = nout;
    out = NULL;
    rc = 0;
done:
    fsolve_clear(&fs);
    free(out);
    free(be);
    free(olist);
    free(cnt);
    free(acc);
    free(slot);
    return rc;
}

/* The test of mark m in t[0..n) (sorted by mark), or NULL. */
static cairn_control_test *find_test(cairn_control_test *t, size_t n, int m)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        if (t[mid].mark < m)
            lo = mid + 1;
        else
            hi = mid;
    }
    return lo < n && t[lo].mark == m ? &t[lo] : NULL;
}

void cairn_qa_control_wmax(const cairn_analysis *an, const cairn_qa_engine *eg,
                           cairn_control_test *t, size_t n)
{
    if (n == 0)
        return;
    const cairn_problem *prob = eg->adj->prob;
    double wnet = NAN;
    size_t wnet_obs = 0;
    for (size_t k = 0; k < n; k++)
        t[k].wmax = NAN;
    for (size_t i = 0; i < eg->nobs; i++) {
        double w = fabs(an->w[i]);
        if (eg->out[i] || !isfinite(w))
            continue;
        if (!(wnet >= w)) {
            wnet = w;
            wnet_obs = i;
        }
        int ms[3], nms = cairn_qa_obs_marks(&prob->obs[i], ms);
        for (int s = 0; s < nms; s++) {
            cairn_control_test *c = find_test(t, n, ms[s]);
            if (c && !(c->wmax >= w))
                c->wmax = w;
        }
    }
    for (size_t k = 0; k < n; k++) {
        t[k].wnet = wnet;
        t[k].wnet_obs = wnet_obs;
    }
}

int cairn_control_suspect(const cairn_control_test *t, const cairn_control_test *t0,
                          double wcrit)
{
    if (t->pass == 0 || t0->pass != 0 || t->nrejected <= 0)
        return 0;
    double wr = t0->wmax / wcrit;
    return !(isfinite(wr) && wr * wr >= t0->statistic / t0->critical);
}

typedef struct {
    double statistic;
    int q;
    size_t k;
} stat_key;

static int by_stat(const void *a, const void *b)
{
    const stat_key *x = a, *y = b;
    if (x->q != y->q)
        return x->q - y->q;
    return (x->statistic > y->statistic) - (x->statistic < y->statistic);
}

/* alike of each failing test of t[0..n): the neighbour in (q, statistic)
 * order with the same q and a statistic within 1e-9 relative. */
static void mark_alike(cairn_control_test *t, size_t n)
{
    for (size_t k = 0; k < n; k++)
        t[k].alike = -1;
    stat_key *key = malloc((n ? n : 1) * sizeof *key);
    size_t m = 0;
    if (!key)
        return;   /* the remark is left out, nothing else */
    for (size_t k = 0; k < n; k++)
        if (t[k].pass == 0)
            key[m++] = (stat_key){t[k].statistic, t[k].q, k};
    qsort(key, m, sizeof *key, by_stat);
    for (size_t j = 0; j + 1 < m; j++)
        if (key[j].q == key[j + 1].q &&
            fabs(key[j + 1].statistic - key[j].statistic) <= 1e-9 * key[j + 1].statistic) {
            cairn_control_test *a = &t[key[j].k], *b = &t[key[j + 1].k];
            if (a->alike < 0)
                a->alike = b->mark;
            if (b->alike < 0)
                b->alike = a->mark;
        }
    free(key);
}

void cairn_qa_control_final(cairn_analysis *an)
{
    const cairn_problem *prob = an->adj->prob;
    for (size_t j = 0; j < an->nrejections; j++) {
        int ms[3], nms = cairn_qa_obs_marks(&prob->obs[an->rejections[j].obs], ms);
        for (int s = 0; s < nms; s++) {
            cairn_control_test *c = find_test(an->control, an->ncontrol, ms[s]);
            if (c)
                c->nrejected++;
        }
    }
    mark_alike(an->control, an->ncontrol);
    mark_alike(an->control_first, an->ncontrol);
    for (size_t k = 0; k < an->ncontrol; k++)
        for (int f = 0; f < 2; f++) {
            cairn_control_test *t = f ? &an->control_first[k] : &an->control[k];
            double wr = t->wnet / an->wcrit;
            t->single = t->pass == 0 && isfinite(wr) && wr * wr >= t->statistic / t->critical;
        }
    for (size_t k = 0; k < an->ncontrol; k++) {
        an->control_first[k].nrejected = an->control[k].nrejected;
        an->control[k].suspect =
            cairn_control_suspect(&an->control[k], &an->control_first[k], an->wcrit);
    }
}
