/* The re-adjustment engine of iterative data snooping (Baarda 1968, "A
 * Testing Procedure for Use in Geodetic Networks", Netherlands Geodetic
 * Commission, New Series 2(5)): remove observations and move the solution
 * to the least-squares solution of the others.
 *
 * How a round is re-adjusted, and why.
 *
 * At the solution x0 of the network with the observations K the normal
 * matrix is N = Σ pⱼ aⱼᵀaⱼ. Without K it is N' = N − Σ_K pᵢ aᵢᵀaᵢ, and the
 * Gauss–Newton step from x0 is Δ = N'⁻¹ b' with b' = −Σ_{j∉K} aⱼᵀ pⱼ vⱼ.
 * The factor of N is no longer at hand: the selected inverse that found K
 * was computed in place over it (cairn_selinv_compute_inplace, one copy of
 * L less: 300 MB at 10^5 marks). So the round refills N' on N's pattern (a
 * rejected row keeps its place with weight 0, so the symbolic analysis of
 * the solve stage still holds) and factorises it once, at x0. The steps
 * after the first are chord steps on that factor, refined to the
 * Gauss–Newton step (cairn_qa_engine_reject_many). Neither a rank-k
 * update of the old factor (cholmod_updown works on a simplicial LDLᵀ copy
 * only, and the selected inverse needs the supernodal LLᵀ form) nor the
 * Woodbury form (k solves; at 10^5 marks a round rejects hundreds) would
 * be cheaper than that one factorisation.
 *
 * The round ends with the factor of N' at x0, not at the new solution x1
 * (a few σ away): cairn_analyse computes the next selected inverse on it
 * to choose the next rejections, and factorises once more at the solution
 * before the tests it reports. A round costs one factorisation and one
 * selected inverse; snooping as a whole one more of each.
 *
 * Every factorisation here refills the adjustment's own N on its pattern
 * and refactorises into the adjustment's own factor, in place: no
 * triplets, no second copy of L. */
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analysis_int.h"

/* Refinement sweeps of a chord step (cairn_qa_engine_reject_many):
 * each multiplies the step's error by the relative difference between
 * the operator solved with and N' (1e-5 or less), so two leave it at
 * rounding level. */
#define CHORD_REFINE 2

/* Rejections in a round up to which it is taken to be the last one (see
 * the end of cairn_qa_engine_reject_many); only the cost depends on it. */
#define LAST_ROUND_MAX 10

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

/* 1/σ² of observation i at the last linearisation (adj->sigma), 0 when
 * rejected: computed where needed, not stored (8 bytes per observation). */
static double weight(const cairn_qa_engine *eg, size_t i)
{
    double sig = eg->adj->sigma[i];
    return eg->out[i] ? 0.0 : 1.0 / (sig * sig);
}

/* What can go wrong linearising one observation. */
enum { LIN_OK = 0, LIN_GEOM = 1, LIN_PATTERN = 2 };

/* Linearise observation i at the engine's state: the coefficients of its
 * row, its σ, computed value and residual into adj; *psig gets σ.
 * Returns LIN_OK or what went wrong (reported by lin_error; no message
 * here, so that parts of the network can be linearised at once). */
static int linearise_one(cairn_qa_engine *eg, size_t i, double *psig)
{
    cairn_adjustment *adj = eg->adj;
    cairn_obs tmp;
    const cairn_obs *o = local_obs(adj, i, &tmp);
    cairn_lin lin;
    memset(&lin, 0, sizeof lin);
    double sig = cairn_obs_sigma(adj->prob, o, &eg->st);
    if (!(sig > 0) || !isfinite(sig) || cairn_obs_linearise(adj->prob, o, &eg->st, &lin) ||
        !isfinite(lin.value))
        return LIN_GEOM;
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
            return LIN_PATTERN;
        eg->rc[k] += lin.d[par];
    }
    adj->computed[i] = lin.value;
    adj->residual[i] = cairn_obs_residual(o, lin.value);
    adj->sigma[i] = sig;
    *psig = sig;
    return LIN_OK;
}

static int lin_error(const cairn_qa_engine *eg, size_t i, int what, cairn_error *err)
{
    if (what == LIN_PATTERN)
        return internal(err, "a partial derivative outside the design-row pattern");
    const cairn_obs *o = &eg->adj->prob->obs[i];
    cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                    "this %s cannot be computed while re-adjusting after a "
                    "rejection (coincident marks?)", cairn_obs_kind_name(o->kind));
    return CAIRN_SOLVE_EGEOM;
}

typedef struct {
    cairn_qa_engine *eg;
    double f[CAIRN_PARALLEL_MAX], minlen[CAIRN_PARALLEL_MAX], minang[CAIRN_PARALLEL_MAX];
    size_t bad[CAIRN_PARALLEL_MAX];   /* first failing observation, or SIZE_MAX */
    int what[CAIRN_PARALLEL_MAX];
} lin_ctx;

static void linearise_part(void *vc, int part, size_t lo, size_t hi)
{
    lin_ctx *c = vc;
    cairn_qa_engine *eg = c->eg;
    const cairn_adjustment *adj = eg->adj;
    double f = 0, minlen = INFINITY, minang = INFINITY;
    c->bad[part] = SIZE_MAX;
    for (size_t i = lo; i < hi; i++) {
        double sig;
        int what = linearise_one(eg, i, &sig);
        if (what != LIN_OK) {
            c->bad[part] = i;
            c->what[part] = what;
            break;
        }
        if (eg->out[i])
            continue;
        double v = adj->residual[i];
        f += v * v / (sig * sig);
        if (cairn_obs_kind_angular(adj->prob->obs[i].kind)) {
            if (sig < minang)
                minang = sig;
        } else if (sig < minlen) {
            minlen = sig;
        }
    }
    c->f[part] = f;
    c->minlen[part] = minlen;
    c->minang[part] = minang;
}

/* Linearise every observation at the engine's state (linearise_one; on
 * several cores for a large network, the sums combined in part order),
 * and give vᵀPv of the observations used and their smallest length and
 * angular σ. */
static int linearise(cairn_qa_engine *eg, double *pvtpv, double *pminlen, double *pminang,
                     cairn_error *err)
{
    lin_ctx c;
    memset(&c, 0, sizeof c);
    c.eg = eg;
    int parts = cairn_parallel_parts(eg->nobs, CAIRN_PARALLEL_MIN_OBS);
    cairn_parallel_for(eg->nobs, parts, linearise_part, &c);
    double f = 0, minlen = INFINITY, minang = INFINITY;
    for (int p = 0; p < parts; p++) {
        if (c.bad[p] != SIZE_MAX)
            return lin_error(eg, c.bad[p], c.what[p], err);
        f += c.f[p];
        minlen = c.minlen[p] < minlen ? c.minlen[p] : minlen;
        minang = c.minang[p] < minang ? c.minang[p] : minang;
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
    size_t ns = net->nsetups ? net->nsetups : 1;
    if (cairn_adjustment_rows_rw(adj, &eg->rp, &eg->ri, &eg->rc)) {
        /* no unknowns: every row is empty */
        if (!(eg->own_rp = calloc(no + 1, sizeof *eg->own_rp)))
            return oom(err);
        eg->rp = eg->own_rp;
        eg->ri = NULL;
        eg->rc = NULL;
    }
    eg->out = calloc(no, 1);
    eg->e = calloc(nm, sizeof *eg->e);
    eg->nn = calloc(nm, sizeof *eg->nn);
    eg->h = calloc(nm, sizeof *eg->h);
    eg->omega = calloc(ns, sizeof *eg->omega);
    if (!eg->out || !eg->e || !eg->nn || !eg->h || !eg->omega)
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
    eg->factor_at_solution = 1;   /* the solve stage's refactor_final */
    /* Our own linearisation must reproduce the solve stage's rows (its
     * coefficients at the solution) and σ; anything else would be a bug
     * here. Row by row, so that no copy of the rows is needed. */
    for (size_t i = 0; i < eg->nobs; i++) {
        double keep[CAIRN_ROW_MAX], sig;
        size_t k0 = eg->rp[i], cnt = eg->rp[i + 1] - k0;
        if (cnt > CAIRN_ROW_MAX)
            return internal(err, "a design row longer than CAIRN_ROW_MAX");
        for (size_t q = 0; q < cnt; q++)
            keep[q] = eg->rc[k0 + q];
        double sig0 = adj->sigma[i];
        int what = linearise_one(eg, i, &sig);
        if (what != LIN_OK)
            return lin_error(eg, i, what, err);
        for (size_t q = 0; q < cnt; q++)
            if (fabs(keep[q] - eg->rc[k0 + q]) > 1e-9 * fmax(1.0, fabs(keep[q])))
                return internal(err, "the analysis linearises differently from the solve "
                                     "stage");
        if (fabs(sig - sig0) > 1e-9 * sig0)
            return internal(err, "the analysis evaluates a σ differently from the solve stage");
    }
    return 0;
}

void cairn_qa_engine_clear(cairn_qa_engine *eg)
{
    free(eg->own_rp);
    free(eg->out);
    free(eg->e);
    free(eg->nn);
    free(eg->h);
    free(eg->omega);
    memset(eg, 0, sizeof *eg);
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
        double wi = weight(eg, i);
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
    eg->factor_consumed = 0;
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
    int rc = eg->n > 0 ? factorise(eg, err) : 0;
    if (rc == 0)
        eg->factor_at_solution = 1;
    return rc;
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
        double pv = weight(eg, i) * eg->adj->residual[i];
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
        double wi = weight(eg, i);
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

int cairn_qa_engine_reject_many(cairn_qa_engine *eg, const size_t *idx, size_t k,
                                const size_t *back, size_t m, cairn_error *err)
{
    cairn_adjustment *adj = eg->adj;
    double vtpv = 0, minlen = INFINITY, minang = INFINITY, ml = INFINITY, ma = INFINITY;
    int rc = 0;
    size_t nv = eg->n > 0 ? (size_t)eg->n : 1;
    for (size_t j = 0; j < k; j++) {
        if (idx[j] >= eg->nobs || eg->out[idx[j]])
            return internal(err, "rejecting an observation twice");
        eg->out[idx[j]] = 1;
    }
    for (size_t j = 0; j < m; j++) {
        if (back[j] >= eg->nobs || !eg->out[back[j]])
            return internal(err, "restoring an observation that is not rejected");
        eg->out[back[j]] = 0;
    }
    double *y = calloc(3 * nv, sizeof *y);
    if (!y)
        return oom(err);
    double *b = y + nv, *d = y + 2 * nv;
    int maxit = adj->net->opt.max_iterations > 0 ? adj->net->opt.max_iterations : 25;
    /* The first step is solved on a fresh factorisation of N' at the
     * round's starting point (the selected inverse has used up the factor
     * at hand, cairn_selinv_compute_inplace). Every later step is a chord
     * step on that factor: N' at the new point differs from it by the
     * change of the coefficients over one small step, a relative 1e-5 or
     * less, and CHORD_REFINE sweeps of iterative refinement against N' at
     * the current point make it the Gauss–Newton step to rounding. A step
     * that fails to shrink tenfold gets a fresh factorisation instead. */
    double prev_ml = INFINITY, prev_ma = INFINITY;
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
        int fresh = it == 0 || !(ml <= 0.1 * prev_ml && ma <= 0.1 * prev_ma);
        if (fresh && (rc = factorise(eg, err)))
            goto done;
        prev_ml = ml;
        prev_ma = ma;
        rhs(eg, y);
        if (!fresh)
            memcpy(b, y, (size_t)eg->n * sizeof *b);
        if ((rc = solve(eg, eg->L, y, 1, err)))
            goto done;
        for (int sweep = 0; !fresh && sweep < CHORD_REFINE; sweep++) {
            /* d = F⁻¹(b − N'Δ), N'Δ = Σ aⱼᵀ pⱼ (aⱼΔ) at this point */
            residual_nx(eg, y, b, d);
            if ((rc = solve(eg, eg->L, d, 1, err)))
                goto done;
            for (int j = 0; j < eg->n; j++)
                y[j] += d[j];
        }
        step(eg, y, &ml, &ma);
        eg->iterations++;
    }
    /* The factor at hand belongs to the round's starting point, not to the
     * solution: good enough to choose the next rejections, not for the
     * reported quality (cairn_analyse refactorises before its last tests).
     * A round of a few rejections is most likely the last one (rounds
     * shrink about tenfold: 1083, 275, 35, 2 at 10^5 marks): then the
     * factor is remade at the solution at once, so that the tests that
     * follow are the final ones and no second selected inverse is needed
     * when nothing more fails. */
    eg->factor_at_solution = eg->n == 0;
    if (k + m <= LAST_ROUND_MAX && (rc = cairn_qa_engine_refactor(eg, err)))
        goto done;
    write_back(eg, vtpv);
done:
    free(y);
    return rc;
}
