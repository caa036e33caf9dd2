/* The iteration: Gauss–Newton with Armijo backtracking on vᵀPv, falling
 * back to Levenberg–Marquardt damping when no backtracked step decreases
 * vᵀPv (DESIGN.md "Iteration"; Nocedal & Wright, "Numerical Optimization",
 * 2nd ed., §3.1 for the sufficient-decrease condition with c₁ = 1e-4 and
 * §10.3 for Levenberg–Marquardt with Marquardt's diagonal scaling).
 * The a priori σ are re-evaluated at each linearisation point and held
 * fixed within its line search (DEVELOPERS.md). */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "solve_int.h"

#define ARMIJO_C1 1e-4
#define LM_MU0 1e-3
#define LM_TRIES 10
/* Chord steps: two refinement sweeps, taken when the first sweep's
 * correction is at most 1 % of the step (so the step is exact to about
 * 1e-6 of itself; the next iteration removes even that). */
#define CHORD_SWEEPS 2
#define CHORD_MAX_CONTRACTION 0.01
#define CONV_FRACTION 0.01   /* DEVELOPERS.md: 0.01 × the smallest σ */
#define CONV_LENGTH_FLOOR 1e-6 /* m */

void cairn_convergence_thresholds(double min_length_sigma, double min_angle_sigma,
                                  double *plen, double *pang)
{
    /* Without any length observation the length limit must not become
     * infinite: coordinates of a direction-only network would then count
     * as converged whenever the orientations stop moving (regression,
     * 2026-12-01: an intersection from a start below its base line
     * "converged" 1.3 km from the solution). */
    double len = CONV_FRACTION * min_length_sigma;
    if (!(len > CONV_LENGTH_FLOOR) || !isfinite(len))
        len = CONV_LENGTH_FLOOR;
    *plen = len;
    *pang = isfinite(min_angle_sigma) ? CONV_FRACTION * min_angle_sigma : INFINITY;
}

int cairn_xstate_init(cairn_xstate *x, size_t nmarks, size_t nsetups)
{
    memset(x, 0, sizeof *x);
    size_t nm = nmarks ? nmarks : 1, ns = nsetups ? nsetups : 1;
    x->e = calloc(nm, sizeof *x->e);
    x->n = calloc(nm, sizeof *x->n);
    x->h = calloc(nm, sizeof *x->h);
    x->omega = calloc(ns, sizeof *x->omega);
    x->st.e = x->e;
    x->st.n = x->n;
    x->st.h = x->h;
    x->st.omega = x->omega;
    if (!x->e || !x->n || !x->h || !x->omega) {
        cairn_xstate_clear(x);
        return -1;
    }
    return 0;
}

void cairn_xstate_copy(cairn_xstate *dst, const cairn_xstate *src, size_t nmarks,
                       size_t nsetups)
{
    memcpy(dst->e, src->e, nmarks * sizeof *dst->e);
    memcpy(dst->n, src->n, nmarks * sizeof *dst->n);
    memcpy(dst->h, src->h, nmarks * sizeof *dst->h);
    memcpy(dst->omega, src->omega, nsetups * sizeof *dst->omega);
}

void cairn_xstate_clear(cairn_xstate *x)
{
    free(x->e);
    free(x->n);
    free(x->h);
    free(x->omega);
    memset(x, 0, sizeof *x);
}

/* The observation as evaluated at the local origin: control observations
 * of e and n compare with the given value minus the origin. */
static const cairn_obs *local_obs(const cairn_adjustment *adj, size_t i,
                                  cairn_obs *tmp)
{
    const cairn_obs *o = &adj->prob->obs[i];
    if (o->kind != CAIRN_OBS_CONTROL_E && o->kind != CAIRN_OBS_CONTROL_N)
        return o;
    *tmp = *o;
    tmp->value -= o->kind == CAIRN_OBS_CONTROL_E ? adj->origin_e : adj->origin_n;
    return tmp;
}

int cairn_solve_eval(const cairn_adjustment *adj, size_t i, const cairn_xstate *x,
                     const cairn_rows *rows, double *coef, double *pcomputed,
                     double *pv)
{
    cairn_obs tmp;
    const cairn_obs *o = local_obs(adj, i, &tmp);
    cairn_lin lin;
    memset(&lin, 0, sizeof lin);
    if (cairn_obs_linearise(adj->prob, o, &x->st, &lin))
        return -1;
    if (!isfinite(lin.value))
        return -1;
    *pcomputed = lin.value;
    *pv = cairn_obs_residual(o, lin.value);
    if (rows && coef) {
        for (size_t k = rows->ptr[i]; k < rows->ptr[i + 1]; k++) {
            double c = 0;
            for (int par = 0; par < CAIRN_NPAR; par++)
                if (rows->par[k] & (1u << par))
                    c += lin.d[par];
            coef[k - rows->ptr[i]] = c;
        }
    }
    return 0;
}

/* An observation that cannot be evaluated at x. The only geometric cause
 * the equations have is two of its marks at the same plane position (a
 * zero-length leg has no azimuth and no distance gradient), so name that
 * pair and say whether the position is the starting one (given twice, or
 * computed onto another mark) or one the iteration reached. */
static int geom_error(const cairn_adjustment *adj, size_t i, const cairn_xstate *x,
                      int iteration, cairn_error *err)
{
    const cairn_obs *o = &adj->prob->obs[i];
    const cairn_net *net = adj->net;
    const char *kind = cairn_obs_kind_name(o->kind);
    int legs[2][2] = {{o->kind == CAIRN_OBS_AZIMUTH ? o->from : o->at, o->to},
                      {o->kind == CAIRN_OBS_ANGLE ? o->at : -1, o->from}};
    for (int k = 0; k < 2; k++) {
        int a = legs[k][0], b = legs[k][1];
        if (a < 0 || b < 0 || (size_t)a >= net->nmarks || (size_t)b >= net->nmarks)
            continue;
        if (x->e[a] != x->e[b] || x->n[a] != x->n[b])
            continue;
        const char *ia = net->marks[a].id, *ib = net->marks[b].id;
        if (iteration) {
            cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                            "this %s cannot be computed: marks %s and %s coincide in "
                            "plan at the coordinates reached in iteration %d (the "
                            "observations do not hold them apart)", kind, ia, ib,
                            iteration);
        } else {
            double lf = cairn_length_factor(net->length_unit);
            cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                            "this %s cannot be computed: marks %s and %s have the "
                            "same starting plane position (e %.4f, n %.4f %s): "
                            "coincident marks, or one mark booked under two names?",
                            kind, ia, ib, (x->e[a] + adj->origin_e) / lf,
                            (x->n[a] + adj->origin_n) / lf,
                            cairn_length_unit_name(net->length_unit));
        }
        return CAIRN_SOLVE_EGEOM;
    }
    cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line, o->src.col,
                    "this %s cannot be computed from the %s coordinates", kind,
                    iteration ? "current" : "starting");
    return CAIRN_SOLVE_EGEOM;
}

/* DEVELOPERS.md "Starting orientation": circular mean of (t − hz), face
 * corrected, over the setup's directions at the starting coordinates.
 * Evaluating a direction with ω = 0 gives t (+π in face two). */
static int start_orientations(const cairn_adjustment *adj, cairn_xstate *x,
                              cairn_error *err)
{
    size_t ns = adj->net->nsetups;
    double *sx = calloc(ns ? ns : 1, sizeof *sx), *sy = calloc(ns ? ns : 1, sizeof *sy);
    if (!sx || !sy) {
        free(sx);
        free(sy);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    for (size_t s = 0; s < ns; s++)
        x->omega[s] = 0;
    for (size_t i = 0; i < adj->prob->nobs; i++) {
        const cairn_obs *o = &adj->prob->obs[i];
        if (o->kind != CAIRN_OBS_DIRECTION || o->setup < 0)
            continue;
        double c, v;
        if (cairn_solve_eval(adj, i, x, NULL, NULL, &c, &v)) {
            free(sx);
            free(sy);
            return geom_error(adj, i, x, 0, err);
        }
        double a = c - o->value;
        sx[o->setup] += cos(a);
        sy[o->setup] += sin(a);
    }
    for (size_t s = 0; s < ns; s++)
        if (sx[s] != 0 || sy[s] != 0)
            x->omega[s] = cairn_wrap_2pi(atan2(sy[s], sx[s]));
    free(sx);
    free(sy);
    return 0;
}

static void apply_step(const cairn_adjustment *adj, const cairn_xstate *x,
                       const double *dx, double t, cairn_xstate *out)
{
    cairn_xstate_copy(out, x, adj->net->nmarks, adj->net->nsetups);
    for (int j = 0; j < adj->nunknowns; j++) {
        const cairn_unknown *u = &adj->unknowns[j];
        double d = t * dx[j];
        if (u->mark < 0)
            out->omega[u->setup] += d;
        else if (u->comp == CAIRN_E)
            out->e[u->mark] += d;
        else if (u->comp == CAIRN_N)
            out->n[u->mark] += d;
        else
            out->h[u->mark] += d;
    }
}

typedef struct {
    const cairn_adjustment *adj;
    const cairn_xstate *x;
    const double *w;
    double f[CAIRN_PARALLEL_MAX];
} vtpv_ctx;

static void vtpv_part(void *vc, int part, size_t lo, size_t hi)
{
    vtpv_ctx *c = vc;
    double f = 0;
    for (size_t i = lo; i < hi; i++) {
        double comp, v;
        if (cairn_solve_eval(c->adj, i, c->x, NULL, NULL, &comp, &v)) {
            f = INFINITY;
            break;
        }
        f += c->w[i] * v * v;
    }
    c->f[part] = f;
}

/* vᵀPv at x with the weights w of the linearisation point; +∞ when an
 * observation is undefined there (so the line search rejects the step). */
static double vtpv_at(const cairn_adjustment *adj, const cairn_xstate *x,
                      const double *w)
{
    vtpv_ctx c = {adj, x, w, {0}};
    int parts = cairn_parallel_parts(adj->prob->nobs, CAIRN_PARALLEL_MIN_OBS);
    cairn_parallel_for(adj->prob->nobs, parts, vtpv_part, &c);
    double f = 0;
    for (int p = 0; p < parts; p++)
        f += c.f[p];
    return isfinite(f) ? f : INFINITY;
}

/* Directional derivative of vᵀPv along dx at the linearisation point:
 * g = 2AᵀPv = −2b. */
static double slope_along(const cairn_solver *s, const double *dx, int n)
{
    const double *b = s->b->x;
    double gtd = 0;
    for (int j = 0; j < n; j++)
        gtd -= 2.0 * b[j] * dx[j];
    return gtd;
}

/* Largest corrections of t·dx, lengths and angles, and where. */
static void measure(const cairn_adjustment *adj, const double *dx, double t,
                    cairn_iter_log *lg)
{
    lg->max_length = 0;
    lg->max_angle = 0;
    lg->max_length_mark = -1;
    lg->max_length_comp = 0;
    lg->max_angle_setup = -1;
    for (int j = 0; j < adj->nunknowns; j++) {
        const cairn_unknown *u = &adj->unknowns[j];
        double a = fabs(t * dx[j]);
        if (u->mark >= 0 && !(a <= lg->max_length)) {
            lg->max_length = a;
            lg->max_length_mark = u->mark;
            lg->max_length_comp = u->comp;
        } else if (u->mark < 0 && !(a <= lg->max_angle)) {
            lg->max_angle = a;
            lg->max_angle_setup = u->setup;
        }
    }
}

typedef struct {
    cairn_adjustment *adj;
    const cairn_xstate *x;
    cairn_rows *rows;
    double *w, *v;
    double f[CAIRN_PARALLEL_MAX], minlen[CAIRN_PARALLEL_MAX], minang[CAIRN_PARALLEL_MAX];
    size_t bad[CAIRN_PARALLEL_MAX];      /* first failing observation, or SIZE_MAX */
    int bad_sigma[CAIRN_PARALLEL_MAX];   /* 1: its σ, 0: its evaluation failed */
} lin_ctx;

static void linearise_part(void *vc, int part, size_t lo, size_t hi)
{
    lin_ctx *c = vc;
    cairn_adjustment *adj = c->adj;
    const cairn_problem *p = adj->prob;
    double f = 0, minlen = INFINITY, minang = INFINITY;
    c->bad[part] = SIZE_MAX;
    for (size_t i = lo; i < hi; i++) {
        cairn_obs tmp;
        const cairn_obs *o = local_obs(adj, i, &tmp);
        double sig = cairn_obs_sigma(p, o, &c->x->st);
        if (!(sig > 0) || !isfinite(sig)) {
            c->bad[part] = i;
            c->bad_sigma[part] = 1;
            break;
        }
        adj->sigma[i] = sig;
        c->w[i] = 1.0 / (sig * sig);
        if (cairn_solve_eval(adj, i, c->x, c->rows,
                             c->rows ? c->rows->coef + c->rows->ptr[i] : NULL,
                             &adj->computed[i], &c->v[i])) {
            c->bad[part] = i;
            c->bad_sigma[part] = 0;
            break;
        }
        adj->residual[i] = c->v[i];
        f += c->w[i] * c->v[i] * c->v[i];
        if (cairn_obs_kind_angular(o->kind)) {
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

/* σ re-evaluated at x, weights, computed values, residuals and (rows not
 * NULL) the design coefficients of every observation, on several cores for a large network
 * (the sums combined in part order); vᵀPv and the smallest length and
 * angular σ. The first observation that fails is reported, as one pass
 * in order would. */
static int linearise_all(cairn_adjustment *adj, const cairn_xstate *x,
                         int iteration, cairn_rows *rows, double *w, double *v,
                         double *pf, double *pminlen, double *pminang,
                         cairn_error *err)
{
    lin_ctx c;
    memset(&c, 0, sizeof c);
    c.adj = adj;
    c.x = x;
    c.rows = rows;
    c.w = w;
    c.v = v;
    int parts = cairn_parallel_parts(adj->prob->nobs, CAIRN_PARALLEL_MIN_OBS);
    cairn_parallel_for(adj->prob->nobs, parts, linearise_part, &c);
    double f = 0, minlen = INFINITY, minang = INFINITY;
    for (int p = 0; p < parts; p++) {
        if (c.bad[p] != SIZE_MAX) {
            size_t i = c.bad[p];
            if (!c.bad_sigma[p])
                return geom_error(adj, i, x, iteration, err);
            const cairn_obs *o = &adj->prob->obs[i];
            cairn_error_add(err, CAIRN_SEV_ERROR, o->src.file, o->src.line,
                            o->src.col, "this %s has no usable a priori standard "
                            "deviation", cairn_obs_kind_name(o->kind));
            return CAIRN_SOLVE_EGEOM;
        }
        f += c.f[p];
        minlen = c.minlen[p] < minlen ? c.minlen[p] : minlen;
        minang = c.minang[p] < minang ? c.minang[p] : minang;
    }
    *pf = f;
    *pminlen = minlen;
    *pminang = minang;
    return 0;
}

static int no_convergence(const cairn_adjustment *adj, int iterations, int maxit,
                          const cairn_iter_log *lg, const char *why, cairn_error *err)
{
    const cairn_net *net = adj->net;
    double lf = cairn_length_factor(net->length_unit);
    char where[CAIRN_ID_MAX + 64] = "nowhere";
    if (lg && lg->max_length_mark >= 0)
        snprintf(where, sizeof where, "mark %s (%s)", net->marks[lg->max_length_mark].id,
                 lg->max_length_comp == CAIRN_E ? "e" :
                 lg->max_length_comp == CAIRN_N ? "n" : "h");
    /* Say what the user can do: the usual cause is a starting position far
     * from the truth (or a blunder the starts were computed from), and the
     * limit is theirs to raise when the corrections are still shrinking. */
    char limit[80] = "";
    if (!why[0]) /* a stalled line search is not helped by more iterations */
        snprintf(limit, sizeof limit, ", or raise max-iterations (now %d)", maxit);
    const char *mark = lg && lg->max_length_mark >= 0 ? net->marks[lg->max_length_mark].id
                                                      : NULL;
    cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0,
                    "did not converge after %d iteration%s%s (largest correction "
                    "%.6g %s at %s); check the starting coordinates%s%s and the "
                    "observations that reach %s%s", iterations,
                    iterations == 1 ? "" : "s", why, lg ? lg->max_length / lf : 0.0,
                    cairn_length_unit_name(net->length_unit), where,
                    mark ? " of " : "", mark ? mark : "", mark ? "it" : "them", limit);
    return CAIRN_SOLVE_ENOCONV;
}

int cairn_solve_iterate(cairn_adjustment *adj, const cairn_adjust_options *opt,
                        cairn_rows *rows, cairn_xstate *x, cairn_error *err)
{
    const cairn_net *net = adj->net;
    size_t nobs = adj->prob->nobs;
    int n = adj->nunknowns;
    cairn_solver *s = adj->solver;
    int maxit = opt->max_iterations > 0 ? opt->max_iterations : net->opt.max_iterations;
    if (maxit < 1)
        maxit = 1;
    double *w = malloc((nobs ? nobs : 1) * sizeof *w);
    double *v = malloc((nobs ? nobs : 1) * sizeof *v);
    double *dx = malloc(((size_t)n ? (size_t)n : 1) * sizeof *dx);
    adj->log = calloc((size_t)maxit, sizeof *adj->log);
    cairn_xstate xt;
    int rc = 0;
    if (!w || !v || !dx || !adj->log || cairn_xstate_init(&xt, net->nmarks, net->nsetups)) {
        free(w); free(v); free(dx);
        cairn_error_add(err, CAIRN_SEV_ERROR, NULL, 0, 0, "out of memory");
        return CAIRN_SOLVE_ENOMEM;
    }
    if ((rc = start_orientations(adj, x, err)) != 0)
        goto done;
    if ((rc = cairn_solver_analyse(s, rows, nobs, err)) != 0)
        goto done;
    double mu = LM_MU0;
    int converged = 0;
    int have_factor = 0;   /* a factor of an earlier iteration is at hand */
    int prev_full = 0;     /* the last step was a full, undamped one */
    for (int it = 1; it <= maxit && !converged; it++) {
        cairn_iter_log *lg = &adj->log[it - 1];
        double f0, minlen, minang;
        lg->iteration = it;
        if ((rc = linearise_all(adj, x, it - 1, rows, w, v, &f0, &minlen, &minang, err)))
            goto done;
        lg->vtpv_start = f0;
        cairn_solver_assemble(s, rows, nobs, w, v);
        /* Chord step (DEVELOPERS.md "Chord steps"): after a full step the
         * factor at hand belongs to a point one small step away; solved on
         * it and refined against the new N, the step is the Gauss–Newton
         * step to rounding, without a factorisation. */
        int chord = 0;
        if (opt->chord && have_factor && prev_full) {
            double contract;
            if ((rc = cairn_solver_chord(s, CHORD_SWEEPS, dx, &contract, err)))
                goto done;
            chord = contract <= CHORD_MAX_CONTRACTION;
        }
        if (!chord) {
            if ((rc = cairn_solver_factorise(s, 0.0, adj, err)) ||
                (rc = cairn_solver_solve(s, dx, err)))
                goto done;
            have_factor = 1;
        }
        lg->chord = chord;
        measure(adj, dx, 1.0, lg);
        double thr_len, thr_ang;
        cairn_convergence_thresholds(minlen, minang, &thr_len, &thr_ang);
        adj->iterations = it;
        if (lg->max_length < thr_len && lg->max_angle < thr_ang) {
            /* converged: the full Gauss–Newton step is applied and no
             * further solve is needed (DEVELOPERS.md "Convergence") */
            apply_step(adj, x, dx, 1.0, &xt);
            lg->step = 1.0;
            lg->mu = 0.0;
            lg->vtpv = vtpv_at(adj, &xt, w);
            cairn_xstate_copy(x, &xt, net->nmarks, net->nsetups);
            converged = 1;
            if (opt->progress)
                opt->progress(lg, opt->progress_ctx);
            break;
        }
        double gtd = slope_along(s, dx, n);
        double t = 1.0, ft = INFINITY;
        int accepted = 0;
        if (chord) {
            /* a chord step is only ever taken whole; if it does not
             * decrease vᵀPv enough, factorise here after all */
            apply_step(adj, x, dx, 1.0, &xt);
            ft = vtpv_at(adj, &xt, w);
            accepted = ft <= f0 + ARMIJO_C1 * gtd;
            if (!accepted) {
                if ((rc = cairn_solver_factorise(s, 0.0, adj, err)) ||
                    (rc = cairn_solver_solve(s, dx, err)))
                    goto done;
                lg->chord = chord = 0;
                measure(adj, dx, 1.0, lg);
                gtd = slope_along(s, dx, n);
            }
        }
        for (int k = 0; !accepted && k <= opt->max_halvings; k++, t *= 0.5) {
            apply_step(adj, x, dx, t, &xt);
            ft = vtpv_at(adj, &xt, w);
            if (ft <= f0 + ARMIJO_C1 * t * gtd) {
                accepted = 1;
                break;
            }
        }
        lg->mu = 0.0;
        if (!accepted) {
            /* Levenberg–Marquardt: (N + μ·diag N)Δ = b with μ adapted,
             * ×10 on failure, ÷10 on success (kept across iterations) */
            t = 1.0;
            for (int k = 0; k < LM_TRIES && !accepted; k++) {
                if ((rc = cairn_solver_factorise(s, mu, adj, err)) ||
                    (rc = cairn_solver_solve(s, dx, err)))
                    goto done;
                apply_step(adj, x, dx, 1.0, &xt);
                ft = vtpv_at(adj, &xt, w);
                if (ft < f0) {
                    accepted = 1;
                    lg->mu = mu;
                    mu = mu / 10 > 1e-12 ? mu / 10 : 1e-12;
                } else {
                    mu *= 10;
                }
            }
            if (!accepted) {
                rc = no_convergence(adj, it, maxit, lg, ": no step decreases vTPv", err);
                goto done;
            }
        }
        lg->step = t;
        lg->vtpv = ft;
        prev_full = t == 1.0 && lg->mu == 0.0;
        measure(adj, dx, t, lg);
        cairn_xstate_copy(x, &xt, net->nmarks, net->nsetups);
        if (opt->progress)
            opt->progress(lg, opt->progress_ctx);
    }
    if (!converged)
        rc = no_convergence(adj, adj->iterations, maxit,
                            adj->iterations ? &adj->log[adj->iterations - 1] : NULL,
                            "", err);
    else if (opt->refactor_final) {
        /* factor, σ and design rows at the converged coordinates, for the
         * quality stage; the residuals are then those of the solution */
        double f, minlen, minang;
        if ((rc = linearise_all(adj, x, adj->iterations, rows, w, v, &f, &minlen, &minang, err)))
            goto done;
        adj->vtpv = f;
        cairn_solver_assemble(s, rows, nobs, w, v);
        rc = cairn_solver_factorise(s, 0.0, adj, err);
    } else {
        double f, minlen, minang;
        /* σ and residuals at the solution; the factor stays that of the
         * last linearisation point */
        rc = linearise_all(adj, x, adj->iterations, NULL, w, v, &f, &minlen, &minang, err);
        adj->vtpv = f;
    }
done:
    free(w);
    free(v);
    free(dx);
    cairn_xstate_clear(&xt);
    return rc;
}
