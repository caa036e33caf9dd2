/* The re-adjustment engine of iterative data snooping (Baarda 1968, "A
 * Testing Procedure for Use in Geodetic Networks", Netherlands Geodetic
 * Commission, New Series 2(5)): remove one observation and move the
 * solution to the least-squares solution of the others.
 *
 * How a rejection is re-adjusted, and why.
 *
 * At the solution x0 of the network with observation i the normal matrix
 * is N = Σ pⱼ aⱼᵀaⱼ and its factor is at hand (the adjustment's, or ours
 * from the previous round). Without i it is N' = N − pᵢ aᵢᵀaᵢ, and the
 * Gauss–Newton step from x0 is Δ = N'⁻¹ b' with b' = −Σ_{j≠i} aⱼᵀ pⱼ vⱼ.
 * By the Sherman–Morrison formula (Golub & Van Loan, "Matrix
 * Computations", 4th ed., §2.1.4),
 *     N'⁻¹ = N⁻¹ + pᵢ u uᵀ / (1 − pᵢ aᵢ u),   u = N⁻¹ aᵢᵀ,
 * so Δ = y + pᵢ u (aᵢ y) / (1 − pᵢ aᵢ u) with y = N⁻¹ b': one solve with
 * two right-hand sides on the factor we already have. The denominator is
 * the redundancy number rᵢ, which snooping only removes when r ≥ 0.01.
 *
 * This is exactly the step a rank-one downdate of the factor would give
 * (cholmod_updown with C = √pᵢ aᵢᵀ), but cheaper: cholmod_updown works
 * only on a simplicial LDLᵀ factor, so the supernodal factor would first
 * have to be copied and converted (cholmod_change_factor, a pass over all
 * of L that allocates a second factor), and afterwards the selected
 * inverse (cairn/selinv.h) still needs a supernodal LLᵀ factor, which a
 * simplicial one cannot be turned back into. The step needs neither.
 *
 * After the step the σ are re-evaluated and the network re-linearised at
 * x1 = x0 + Δ; when Δ was above the convergence threshold of the solve
 * stage (DEVELOPERS.md "Convergence": 0.01 × the smallest σ), ordinary
 * Gauss–Newton steps follow, each with a fresh numeric factorisation on
 * the symbolic analysis made once by the solve stage (the pattern of N
 * never changes: a rejected row enters with weight 0). A final
 * factorisation at the solution gives the factor of the selected inverse
 * and of the next round's step, as the solve stage's refactor_final does.
 * Near a solution Gauss–Newton needs no line search; a step that fails
 * to converge within the net's max-iterations is an error.
 *
 * Several rejections in one round (cairn_qa_engine_reject_many) take the
 * same path with k rows: the Woodbury form of the current factor when k
 * is small enough for k solves to be cheaper than a factorisation, else
 * one fresh factorisation; the later steps of the round are chord steps
 * on that operator, refined to the Gauss–Newton step (see there). So a
 * round costs one or two factorisations and one selected inverse.
 *
 * Every factorisation here refills the adjustment's own N on its pattern
 * and refactorises into the adjustment's own factor, in place: no
 * triplets, no second copy of L (at 10^5 marks L is 300 MB). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analysis_int.h"

/* Refinement sweeps of a chord or Woodbury step (cairn_qa_engine_reject_many):
 * each multiplies the step's error by the relative difference between
 * the operator solved with and N' (1e-5 or less), so two leave it at
 * rounding level. */
#define CHORD_REFINE 2

double cairn_qa_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int cairn_qa_qxx_get(void *ctx, int i, int j, double *pq)
{
    return cairn_selinv_get(ctx, i, j, pq);
}

static int oom(cairn_error *err)
{
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory in the analysis");
    return CAIRN_SOLVE_ENOMEM;
}

static int internal(cairn_error *err, const char *what)
{
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "internal error: %s", what);
    return CAIRN_SOLVE_EINTERNAL;
}

/* Unknown of local parameter par of o (cairn_lin.d index), or -1: the
 * roles at/from/to are par / 3, the component par % 3 (model.h). */
static int par_unknown(const cairn_adjustment *adj, const cairn_obs *o, int par)
{
    if (par == CAIRN_PAR_OMEGA)
        return o->setup >= 0 && (size_t)o->setup < adj->net->nsetups
                   ? adj->unk_setup[o->setup] : -1;
    int m = par / 3 == 0 ? o->at : par / 3 == 1 ? o->from : o->to;
    if (m < 0 || (size_t)m >= adj->net->nmarks)
        return -1;
    return adj->unk_mark[3 * (size_t)m + (size_t)(par % 3)];
}

/* Observation i as evaluated in the local origin (control e, n compare
 * with the given value minus the origin, as src/solve/iterate.c). */
static const cairn_obs *local_obs(const cairn_adjustment *adj, size_t i, cairn_obs *tmp)
{
    const cairn_obs *o = &adj->prob->obs[i];
    if (o->kind != CAIRN_OBS_CONTROL_E && o->kind != CAIRN_OBS_CONTROL_N)
        return o;
    *tmp = *o;
    tmp->value -= o->kind == CAIRN_OBS_CONTROL_E ? adj->origin_e : adj->origin_n;
    return tmp;
}

/* Linearise every observation at the engine's state: coefficients, σ,
 * weights (0 when rejected), computed values and residuals into adj, vᵀPv
 * of the observations used, and the smallest length and angular σ. */
static int linearise(cairn_qa_engine *eg, double *pvtpv, double *pminlen, double *pminang,
                     cairn_error *err)
{
    cairn_adjustment *adj = eg->adj;
    double f = 0, minlen = INFINITY, minang = INFINITY;
    for (size_t i = 0; i < eg->nobs; i++) {
        cairn_obs tmp;
        const cairn_obs *o = local_obs(adj, i, &tmp);
        cairn_lin lin;
        memset(&lin, 0, sizeof lin);
        double sig = cairn_obs_sigma(adj->prob, o, &eg->st);
        if (!(sig > 0) || !isfinite(sig) || cairn_obs_linearise(adj->prob, o, &eg->st, &lin) ||
            !isfinite(lin.value)) {
            cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                            "this %s cannot be computed while re-adjusting after a "
                            "rejection (coincident marks?)", cairn_obs_kind_name(o->kind));
            return CAIRN_SOLVE_EGEOM;
        }
        for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++)
            eg->rc[k] = 0;
        for (int par = 0; par < CAIRN_NPAR; par++) {
            if (lin.d[par] == 0)
                continue;
            int u = par_unknown(adj, o, par);
            if (u < 0)
                continue;
            size_t k = eg->rp[i];
            while (k < eg->rp[i + 1] && eg->ri[k] != u)
                k++;
            if (k == eg->rp[i + 1])
                return internal(err, "a partial derivative outside the design-row pattern");
            eg->rc[k] += lin.d[par];
        }
        double v = cairn_obs_residual(o, lin.value);
        adj->computed[i] = lin.value;
        adj->residual[i] = v;
        adj->sigma[i] = sig;
        eg->wt[i] = eg->out[i] ? 0.0 : 1.0 / (sig * sig);
        if (eg->out[i])
            continue;
        f += eg->wt[i] * v * v;
        if (cairn_obs_kind_angular(o->kind)) {
            if (sig < minang)
                minang = sig;
        } else if (sig < minlen) {
            minlen = sig;
        }
    }
    *pvtpv = f;
    if (pminlen)
        *pminlen = minlen;
    if (pminang)
        *pminang = minang;
    return 0;
}

int cairn_qa_engine_init(cairn_qa_engine *eg, cairn_adjustment *adj, cairn_error *err)
{
    const cairn_net *net = adj->net;
    memset(eg, 0, sizeof *eg);
    eg->adj = adj;
    eg->cc = cairn_adjustment_common(adj);
    eg->L = cairn_adjustment_factor_rw(adj);
    eg->N = cairn_adjustment_normal_rw(adj);
    eg->n = adj->nunknowns;
    eg->nobs = adj->nobs;
    size_t no = eg->nobs ? eg->nobs : 1, nm = net->nmarks ? net->nmarks : 1;
    size_t ns = net->nsetups ? net->nsetups : 1, cap = 4 * no;
    eg->rp = malloc((no + 1) * sizeof *eg->rp);
    eg->ri = malloc(cap * sizeof *eg->ri);
    eg->rc = malloc(cap * sizeof *eg->rc);
    eg->wt = calloc(no, sizeof *eg->wt);
    eg->out = calloc(no, 1);
    eg->e = calloc(nm, sizeof *eg->e);
    eg->nn = calloc(nm, sizeof *eg->nn);
    eg->h = calloc(nm, sizeof *eg->h);
    eg->omega = calloc(ns, sizeof *eg->omega);
    if (!eg->rp || !eg->ri || !eg->rc || !eg->wt || !eg->out || !eg->e || !eg->nn ||
        !eg->h || !eg->omega)
        return oom(err);
    eg->st.e = eg->e;
    eg->st.n = eg->nn;
    eg->st.h = eg->h;
    eg->st.omega = eg->omega;
    for (size_t m = 0; m < net->nmarks; m++) {
        eg->e[m] = isfinite(adj->e[m]) ? adj->e[m] - adj->origin_e : 0.0;
        eg->nn[m] = isfinite(adj->n[m]) ? adj->n[m] - adj->origin_n : 0.0;
        eg->h[m] = isfinite(adj->h[m]) ? adj->h[m] : 0.0;
    }
    for (size_t s = 0; s < net->nsetups; s++)
        eg->omega[s] = isfinite(adj->omega[s]) ? adj->omega[s] : 0.0;
    /* the design-row pattern and coefficients of the solve stage */
    size_t k = 0;
    for (size_t i = 0; i < eg->nobs; i++) {
        int idx[CAIRN_ROW_MAX], cnt;
        double coef[CAIRN_ROW_MAX], sig;
        eg->rp[i] = k;
        if (cairn_adjustment_design_row(adj, i, idx, coef, &cnt, &sig))
            return internal(err, "no design row for an observation");
        if (k + (size_t)cnt > cap) {
            size_t ncap = 2 * cap + (size_t)cnt;
            int *ni = realloc(eg->ri, ncap * sizeof *ni);
            if (!ni)
                return oom(err);
            eg->ri = ni;
            double *nc = realloc(eg->rc, ncap * sizeof *nc);
            if (!nc)
                return oom(err);
            eg->rc = nc;
            cap = ncap;
        }
        for (int q = 0; q < cnt; q++, k++) {
            eg->ri[k] = idx[q];
            eg->rc[k] = coef[q];
        }
    }
    eg->rp[eg->nobs] = k;
    /* Our own linearisation must reproduce the solve stage's rows and
     * residuals at its solution; anything else would be a bug here. */
    double *keep = malloc((k ? k : 1) * sizeof *keep);
    if (!keep)
        return oom(err);
    memcpy(keep, eg->rc, k * sizeof *keep);
    double vtpv;
    int rc = linearise(eg, &vtpv, NULL, NULL, err);
    for (size_t q = 0; rc == 0 && q < k; q++)
        if (fabs(keep[q] - eg->rc[q]) > 1e-9 * fmax(1.0, fabs(keep[q])))
            rc = internal(err, "the analysis linearises differently from the solve stage");
    free(keep);
    return rc;
}

void cairn_qa_engine_clear(cairn_qa_engine *eg)
{
    free(eg->rp);
    free(eg->ri);
    free(eg->rc);
    free(eg->wt);
    free(eg->out);
    free(eg->e);
    free(eg->nn);
    free(eg->h);
    free(eg->omega);
    memset(eg, 0, sizeof *eg);
}

const cholmod_factor *cairn_qa_engine_factor(const cairn_qa_engine *eg)
{
    return eg->L;
}

/* Position of row r in lower column c (r ≥ c) of N's sorted pattern. */
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

/* N = Σ pⱼ aⱼᵀaⱼ (lower triangle) at the current coefficients and weights,
 * filled straight into the adjustment's N (its pattern holds every pair of
 * unknowns of a design row, and a rejected row keeps its place with weight
 * 0) and factorised in place into the adjustment's factor on the symbolic
 * analysis made once by the solve stage: no triplet list, no conversion
 * or transpose, no second factor. Products and sums are formed in the
 * order of src/solve/normal.c. */
static int factorise(cairn_qa_engine *eg, cairn_error *err)
{
    cholmod_common *cc = eg->cc;
    cholmod_sparse *N = eg->N;
    if (!eg->L || !N || !cc)
        return internal(err, "the adjustment's factor was released before the analysis");
    double ta = cairn_qa_now();
    const int *Np = N->p, *Ni = N->i;
    double *Nx = N->x;
    memset(Nx, 0, (size_t)Np[eg->n] * sizeof *Nx);
    for (size_t i = 0; i < eg->nobs; i++) {
        double wi = eg->wt[i];
        if (wi == 0)
            continue;
        size_t p0 = eg->rp[i], p1 = eg->rp[i + 1];
        for (size_t a = p0; a < p1; a++) {
            int ua = eg->ri[a];
            double wa = wi * eg->rc[a];
            for (size_t b = p0; b < p1; b++) {
                int ub = eg->ri[b];
                if (ub < ua)
                    continue;
                Nx[ub == ua ? (size_t)Np[ua] : find_entry(Np, Ni, ua, ub)] += wa * eg->rc[b];
            }
        }
    }
    double t0 = cairn_qa_now();
    int ok = cholmod_factorize(N, eg->L, cc);
    eg->factor_seconds = cairn_qa_now() - t0;
    eg->t_factorise += cairn_qa_now() - ta;
    eg->factorisations++;
    if (cc->status == CHOLMOD_OUT_OF_MEMORY)
        return oom(err);
    if (!ok || cc->status < 0)
        return internal(err, "CHOLMOD factorisation failed in the analysis");
    if (cc->status == CHOLMOD_NOT_POSDEF || eg->L->minor < eg->L->n) {
        char name[256];
        int j = ((const int *)eg->L->Perm)[eg->L->minor];
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                        "after rejecting observations, %s is no longer determined",
                        cairn_unknown_name(eg->adj, j, name, sizeof name));
        return CAIRN_SOLVE_ESINGULAR;
    }
    return 0;
}

int cairn_qa_engine_refactor(cairn_qa_engine *eg, cairn_error *err)
{
    return eg->n > 0 ? factorise(eg, err) : 0;
}

/* Solve F X = B for ncol right-hand sides (column-major, n each). */
static int solve(cairn_qa_engine *eg, const cholmod_factor *F, double *b, int ncol,
                 cairn_error *err)
{
    cholmod_common *cc = eg->cc;
    size_t n = (size_t)eg->n;
    cholmod_dense *B = cholmod_zeros(n, (size_t)ncol, CHOLMOD_REAL, cc);
    if (!B)
        return oom(err);
    memcpy(B->x, b, n * (size_t)ncol * sizeof *b);
    cholmod_dense *X = cholmod_solve(CHOLMOD_A, (cholmod_factor *)F, B, cc);
    cholmod_free_dense(&B, cc);
    if (!X)
        return cc->status == CHOLMOD_OUT_OF_MEMORY ? oom(err)
                                                   : internal(err, "CHOLMOD solve failed");
    memcpy(b, X->x, n * (size_t)ncol * sizeof *b);
    cholmod_free_dense(&X, cc);
    return 0;
}

/* b = −Σ aⱼᵀ pⱼ vⱼ over the observations used (the adjustment's sign). */
static void rhs(const cairn_qa_engine *eg, double *b)
{
    memset(b, 0, (size_t)eg->n * sizeof *b);
    for (size_t i = 0; i < eg->nobs; i++) {
        double pv = eg->wt[i] * eg->adj->residual[i];
        if (pv == 0)
            continue;
        for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++)
            b[eg->ri[k]] -= eg->rc[k] * pv;
    }
}

/* d = b − N x with N = Σ aⱼᵀ pⱼ aⱼ at the current rows and weights. */
static void residual_nx(const cairn_qa_engine *eg, const double *x, const double *b,
                        double *d)
{
    memcpy(d, b, (size_t)eg->n * sizeof *d);
    for (size_t i = 0; i < eg->nobs; i++) {
        double wi = eg->wt[i];
        if (wi == 0)
            continue;
        double ax = 0;
        for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++)
            ax += eg->rc[k] * x[eg->ri[k]];
        ax *= wi;
        for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++)
            d[eg->ri[k]] -= eg->rc[k] * ax;
    }
}

/* x += dx; largest length and angle corrections. */
static void step(cairn_qa_engine *eg, const double *dx, double *pmaxlen, double *pmaxang)
{
    const cairn_adjustment *adj = eg->adj;
    double ml = 0, ma = 0;
    for (int j = 0; j < eg->n; j++) {
        const cairn_unknown *u = &adj->unknowns[j];
        double a = fabs(dx[j]);
        if (u->mark < 0) {
            eg->omega[u->setup] += dx[j];
            ma = a > ma ? a : ma;
            continue;
        }
        ml = a > ml ? a : ml;
        if (u->comp == CAIRN_E)
            eg->e[u->mark] += dx[j];
        else if (u->comp == CAIRN_N)
            eg->nn[u->mark] += dx[j];
        else
            eg->h[u->mark] += dx[j];
    }
    *pmaxlen = ml;
    *pmaxang = ma;
}

/* The engine's solution into the adjustment (grid values). */
static void write_back(cairn_qa_engine *eg, double vtpv)
{
    cairn_adjustment *adj = eg->adj;
    size_t used = 0;
    for (int j = 0; j < eg->n; j++) {
        const cairn_unknown *u = &adj->unknowns[j];
        if (u->mark < 0)
            adj->omega[u->setup] = cairn_wrap_2pi(eg->omega[u->setup]);
        else if (u->comp == CAIRN_E)
            adj->e[u->mark] = eg->e[u->mark] + adj->origin_e;
        else if (u->comp == CAIRN_N)
            adj->n[u->mark] = eg->nn[u->mark] + adj->origin_n;
        else
            adj->h[u->mark] = eg->h[u->mark];
    }
    for (size_t i = 0; i < eg->nobs; i++)
        used += !eg->out[i];
    adj->vtpv = vtpv;
    adj->dof = (int)used - adj->nunknowns;
    adj->sigma0_sq = adj->dof > 0 ? vtpv / adj->dof : NAN;
}

/* The Woodbury form of the factor without k rejected rows: with F the
 * factor of N (rows included, weights p) and A the k rejected rows,
 *     (N − Aᵀ P A)⁻¹ r = y + U C⁻¹ (A y),  y = F⁻¹ r,  U = F⁻¹ Aᵀ,
 *     C = P⁻¹ − A U
 * (Golub & Van Loan, "Matrix Computations", 4th ed., §2.1.4), the
 * k-row generalisation of the Sherman–Morrison step at the top of the
 * file. C (k × k, symmetric positive definite while N − AᵀPA is) is kept
 * as its Cholesky factor. */
typedef struct {
    size_t k;
    const size_t *idx;
    double *U;      /* n × k, column-major */
    double *C;      /* k × k, lower Cholesky factor of C */
    double *t;      /* k */
} woodbury;

/* Whether the k solves for U and the refinement of the first step (about
 * k + 4 solves with one right-hand side) cost well under one
 * factorisation. A solve takes about 4·nnz(L) flops, memory-bound; the
 * factorisation cc->fl at BLAS 3 speed: measured here, one factorisation
 * costs as much as about 30 solves at 10^4 to 10^5 marks, where
 * cc->fl / (4·nnz(L)) is about 45, hence the factor 1.5 for speed, and 2
 * to leave a clear gain. U must also stay small beside L. */
static int woodbury_pays(const cairn_qa_engine *eg, size_t k)
{
    const cholmod_common *cc = eg->cc;
    return cc && cc->lnz > 0 && cc->fl > 0 &&
           2.0 * 1.5 * 4.0 * cc->lnz * (double)(k + 4) < cc->fl &&
           4.0 * (double)eg->n * (double)k <= cc->lnz;   /* U: a quarter of L at most */
}

/* U and C from the factor F (made with the rejected rows at weights p).
 * Returns 0, 1 when C is not positive definite (the caller factorises
 * afresh, which reports what became undetermined), or a status. */
static int woodbury_setup(cairn_qa_engine *eg, const size_t *idx, size_t k, const double *p,
                          woodbury *W, cairn_error *err)
{
    size_t n = (size_t)eg->n;
    W->k = k;
    W->idx = idx;
    W->U = calloc(n * k, sizeof *W->U);
    W->C = calloc(k * k + k, sizeof *W->C);
    if (!W->U || !W->C)
        return oom(err);
    W->t = W->C + k * k;
    for (size_t j = 0; j < k; j++)
        for (size_t q = eg->rp[idx[j]]; q < eg->rp[idx[j] + 1]; q++)
            W->U[j * n + (size_t)eg->ri[q]] += eg->rc[q];
    int rc = solve(eg, eg->L, W->U, (int)k, err);
    if (rc)
        return rc;
    double *C = W->C;
    for (size_t j = 0; j < k; j++)
        for (size_t l = 0; l <= j; l++) {
            double au = 0;
            for (size_t q = eg->rp[idx[j]]; q < eg->rp[idx[j] + 1]; q++)
                au += eg->rc[q] * W->U[l * n + (size_t)eg->ri[q]];
            C[j + l * k] = (j == l ? 1.0 / p[j] : 0.0) - au;
        }
    /* Cholesky, lower, in place; a pivot below 1e-9 of 1/p is a rejected
     * row without redundancy left (r = p·C(j,j) for k = 1) */
    for (size_t j = 0; j < k; j++) {
        double d = C[j + j * k];
        for (size_t l = 0; l < j; l++)
            d -= C[j + l * k] * C[j + l * k];
        if (!(d > 1e-9 / p[j]))
            return 1;
        d = sqrt(d);
        C[j + j * k] = d;
        for (size_t i = j + 1; i < k; i++) {
            double v = C[i + j * k];
            for (size_t l = 0; l < j; l++)
                v -= C[i + l * k] * C[j + l * k];
            C[i + j * k] = v / d;
        }
    }
    return 0;
}

/* r := (N − AᵀPA)⁻¹ r with the Woodbury form. */
static int woodbury_solve(cairn_qa_engine *eg, const woodbury *W, double *r, cairn_error *err)
{
    size_t n = (size_t)eg->n, k = W->k;
    int rc = solve(eg, eg->L, r, 1, err);
    if (rc)
        return rc;
    const double *C = W->C;
    double *t = W->t;
    for (size_t j = 0; j < k; j++) {
        double ay = 0;
        for (size_t q = eg->rp[W->idx[j]]; q < eg->rp[W->idx[j] + 1]; q++)
            ay += eg->rc[q] * r[eg->ri[q]];
        t[j] = ay;
    }
    for (size_t j = 0; j < k; j++) {          /* C = LLᵀ: forward, then back */
        double v = t[j];
        for (size_t l = 0; l < j; l++)
            v -= C[j + l * k] * t[l];
        t[j] = v / C[j + j * k];
    }
    for (size_t j = k; j-- > 0;) {
        double v = t[j];
        for (size_t l = j + 1; l < k; l++)
            v -= C[l + j * k] * t[l];
        t[j] = v / C[j + j * k];
    }
    for (size_t j = 0; j < k; j++) {
        const double *u = W->U + j * n;
        double s = t[j];
        if (s != 0)
            for (size_t i = 0; i < n; i++)
                r[i] += u[i] * s;
    }
    return 0;
}

int cairn_qa_engine_reject_many(cairn_qa_engine *eg, const size_t *idx, size_t k,
                                cairn_error *err)
{
    if (k == 1)
        return cairn_qa_engine_reject(eg, idx[0], err);
    cairn_adjustment *adj = eg->adj;
    double vtpv, minlen, minang, ml = INFINITY, ma = INFINITY;
    int rc;
    size_t nv = eg->n > 0 ? (size_t)eg->n : 1;
    double *y = calloc(3 * nv + k, sizeof *y);
    if (!y)
        return oom(err);
    double *b = y + nv, *d = y + 2 * nv, *p = y + 3 * nv;
    for (size_t j = 0; j < k; j++) {
        if (idx[j] >= eg->nobs || eg->out[idx[j]]) {
            free(y);
            return internal(err, "rejecting an observation twice");
        }
        p[j] = eg->wt[idx[j]];
        eg->out[idx[j]] = 1;
        eg->wt[idx[j]] = 0;
    }
    woodbury W;
    memset(&W, 0, sizeof W);
    int maxit = adj->net->opt.max_iterations > 0 ? adj->net->opt.max_iterations : 25;
    /* The steps of this round use one operator for N': for a few
     * rejections the Woodbury form on the factor at hand (made at this
     * state with the rows still in, so no factorisation at all until the
     * final one), else one fresh factorisation without them. Every step
     * after the first is a chord step on that operator: the normal matrix
     * N' at the new point differs from it by the change of the
     * coefficients over one small step, a relative 1e-5 or less. Each
     * step (the first too, for the Woodbury form's rounding) gets
     * CHORD_REFINE sweeps of iterative refinement against N' itself at
     * the current point, which make it the Gauss–Newton step to rounding,
     * for a few solves and products with the design rows instead of a
     * factorisation. A step that fails to shrink tenfold gets a fresh
     * factorisation instead. */
    double prev_ml = INFINITY, prev_ma = INFINITY;
    int have_op = 0, use_w = 0, fresh = 0;
    for (int it = 0;; it++) {
        if ((rc = linearise(eg, &vtpv, &minlen, &minang, err)))
            goto done;
        if (eg->n == 0)
            break;
        double thr_len, thr_ang;
        cairn_convergence_thresholds(minlen, minang, &thr_len, &thr_ang);
        if (ml < thr_len && ma < thr_ang)
            break;
        if (it >= maxit) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "the re-adjustment after rejecting observations did not "
                            "converge in %d iterations", maxit);
            rc = CAIRN_SOLVE_ENOCONV;
            goto done;
        }
        int chord = have_op && ml <= 0.1 * prev_ml && ma <= 0.1 * prev_ma;
        if (!have_op && woodbury_pays(eg, k)) {
            rc = woodbury_setup(eg, idx, k, p, &W, err);
            if (rc < 0 || rc > 1)
                goto done;
            use_w = rc == 0;
            have_op = use_w;
        }
        if (!have_op || (!chord && it > 0)) {
            if ((rc = factorise(eg, err)))
                goto done;
            have_op = 1;
            use_w = 0;
            fresh = 1;
        } else {
            fresh = 0;
        }
        prev_ml = ml;
        prev_ma = ma;
        rhs(eg, y);
        int refine = !fresh;
        if (refine)
            memcpy(b, y, (size_t)eg->n * sizeof *b);
        if ((rc = use_w ? woodbury_solve(eg, &W, y, err) : solve(eg, eg->L, y, 1, err)))
            goto done;
        for (int sweep = 0; refine && sweep < CHORD_REFINE; sweep++) {
            /* d = op⁻¹(b − N'Δ), N'Δ = Σ aⱼᵀ pⱼ (aⱼΔ) at this point */
            residual_nx(eg, y, b, d);
            if ((rc = use_w ? woodbury_solve(eg, &W, d, err) : solve(eg, eg->L, d, 1, err)))
                goto done;
            for (int j = 0; j < eg->n; j++)
                y[j] += d[j];
        }
        step(eg, y, &ml, &ma);
        eg->iterations++;
    }
    if (eg->n > 0 && (rc = factorise(eg, err)))
        goto done;
    write_back(eg, vtpv);
done:
    free(W.U);
    free(W.C);
    free(y);
    return rc;
}

int cairn_qa_engine_reject(cairn_qa_engine *eg, size_t i, cairn_error *err)
{
    cairn_adjustment *adj = eg->adj;
    size_t n = (size_t)eg->n;
    double vtpv, minlen, minang, ml, ma;
    int rc;
    if (i >= eg->nobs || eg->out[i])
        return internal(err, "rejecting an observation twice");
    /* weight and row of i at the current linearisation, then without it */
    double p = eg->wt[i];
    eg->out[i] = 1;
    if (n == 0) {
        if ((rc = linearise(eg, &vtpv, NULL, NULL, err)))
            return rc;
        write_back(eg, vtpv);
        return 0;
    }
    double *buf = calloc(2 * n, sizeof *buf);
    if (!buf)
        return oom(err);
    double *u = buf, *y = buf + n;
    for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++)
        u[eg->ri[k]] += eg->rc[k];
    eg->wt[i] = 0;
    rhs(eg, y);
    /* Sherman–Morrison step on the current factor (see the top of the file) */
    const cholmod_factor *F = cairn_qa_engine_factor(eg);
    if ((rc = solve(eg, F, buf, 2, err)))
        goto done;
    double au = 0, ay = 0;
    for (size_t k = eg->rp[i]; k < eg->rp[i + 1]; k++) {
        au += eg->rc[k] * u[eg->ri[k]];
        ay += eg->rc[k] * y[eg->ri[k]];
    }
    double r = 1.0 - p * au;
    if (!(r > 1e-9)) {
        rc = internal(err, "rejecting an observation without redundancy");
        goto done;
    }
    for (size_t j = 0; j < n; j++)
        y[j] += p * u[j] * ay / r;
    step(eg, y, &ml, &ma);
    eg->iterations++;
    int maxit = adj->net->opt.max_iterations > 0 ? adj->net->opt.max_iterations : 25;
    for (int it = 0;; it++) {
        if ((rc = linearise(eg, &vtpv, &minlen, &minang, err)))
            goto done;
        double thr_len, thr_ang;
        cairn_convergence_thresholds(minlen, minang, &thr_len, &thr_ang);
        if (ml < thr_len && ma < thr_ang)
            break;
        if (it >= maxit) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "the re-adjustment after rejecting an observation did not "
                            "converge in %d iterations", maxit);
            rc = CAIRN_SOLVE_ENOCONV;
            goto done;
        }
        if ((rc = factorise(eg, err)))
            goto done;
        rhs(eg, y);
        if ((rc = solve(eg, eg->L, y, 1, err)))
            goto done;
        step(eg, y, &ml, &ma);
        eg->iterations++;
    }
    /* the factor at the solution, for the selected inverse and the next
     * round (refactor_final of the solve stage) */
    if ((rc = factorise(eg, err)))
        goto done;
    write_back(eg, vtpv);
done:
    free(buf);
    return rc;
}
