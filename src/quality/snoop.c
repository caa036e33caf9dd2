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
 * to converge within the net's max-iterations is an error. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "analysis_int.h"

#define CONV_FRACTION 0.01     /* DEVELOPERS.md "Convergence" */
#define CONV_LENGTH_FLOOR 1e-6 /* m, as src/solve/iterate.c */

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
    if (eg->L && eg->cc)
        cholmod_free_factor(&eg->L, eg->cc);
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
    return eg->L ? eg->L : cairn_adjustment_factor(eg->adj);
}

/* N = Σ pⱼ aⱼᵀaⱼ (lower triangle) at the current coefficients and weights,
 * factorised on the adjustment's symbolic analysis. */
static int factorise(cairn_qa_engine *eg, cairn_error *err)
{
    cholmod_common *cc = eg->cc;
    if (!eg->L) {
        const cholmod_factor *L0 = cairn_adjustment_factor(eg->adj);
        if (!L0 || !cc)
            return internal(err, "the adjustment's factor was released before the analysis");
        eg->L = cholmod_copy_factor((cholmod_factor *)L0, cc);
        if (!eg->L)
            return oom(err);
    }
    size_t nt = 0;
    for (size_t i = 0; i < eg->nobs; i++) {
        size_t c = eg->rp[i + 1] - eg->rp[i];
        nt += c * (c + 1) / 2;
    }
    cholmod_triplet *T = cholmod_allocate_triplet((size_t)eg->n, (size_t)eg->n,
                                                  nt ? nt : 1, -1, CHOLMOD_REAL, cc);
    if (!T)
        return oom(err);
    int *Ti = T->i, *Tj = T->j;
    double *Tx = T->x;
    size_t t = 0;
    for (size_t i = 0; i < eg->nobs; i++)
        for (size_t a = eg->rp[i]; a < eg->rp[i + 1]; a++)
            for (size_t b = a; b < eg->rp[i + 1]; b++) {
                int ia = eg->ri[a], ib = eg->ri[b];
                Ti[t] = ia > ib ? ia : ib;   /* lower triangle */
                Tj[t] = ia > ib ? ib : ia;
                Tx[t] = eg->wt[i] * eg->rc[a] * eg->rc[b];
                t++;
            }
    T->nnz = t;
    cholmod_sparse *N = cholmod_triplet_to_sparse(T, t, cc);
    cholmod_free_triplet(&T, cc);
    if (!N)
        return oom(err);
    double t0 = cairn_qa_now();
    int ok = cholmod_factorize(N, eg->L, cc);
    eg->factor_seconds = cairn_qa_now() - t0;
    cholmod_free_sparse(&N, cc);
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
                                cairn_error *err)
{
    if (k == 1)
        return cairn_qa_engine_reject(eg, idx[0], err);
    cairn_adjustment *adj = eg->adj;
    double vtpv, minlen, minang, ml = INFINITY, ma = INFINITY;
    int rc;
    for (size_t j = 0; j < k; j++) {
        if (idx[j] >= eg->nobs || eg->out[idx[j]])
            return internal(err, "rejecting an observation twice");
        eg->out[idx[j]] = 1;
        eg->wt[idx[j]] = 0;
    }
    double *y = calloc(eg->n > 0 ? (size_t)eg->n : 1, sizeof *y);
    if (!y)
        return oom(err);
    int maxit = adj->net->opt.max_iterations > 0 ? adj->net->opt.max_iterations : 25;
    for (int it = 0;; it++) {
        if ((rc = linearise(eg, &vtpv, &minlen, &minang, err)))
            goto done;
        if (eg->n == 0)
            break;
        double thr_len = CONV_FRACTION * minlen;
        if (!(thr_len > CONV_LENGTH_FLOOR))
            thr_len = CONV_LENGTH_FLOOR;
        double thr_ang = isfinite(minang) ? CONV_FRACTION * minang : INFINITY;
        if (ml < thr_len && ma < thr_ang)
            break;
        if (it >= maxit) {
            cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                            "the re-adjustment after rejecting observations did not "
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
    if (eg->n > 0 && (rc = factorise(eg, err)))
        goto done;
    write_back(eg, vtpv);
done:
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
        double thr_len = CONV_FRACTION * minlen;
        if (!(thr_len > CONV_LENGTH_FLOOR))
            thr_len = CONV_LENGTH_FLOOR;
        double thr_ang = isfinite(minang) ? CONV_FRACTION * minang : INFINITY;
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
