/* Unit tests of the solve stage (and the CSV writer) on small networks
 * built in code. Numeric checks name their source beside them. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/cairn.h"
#include "cairn/solve.h"
#include "cairn/output.h"
#include "cairn/selinv.h"

static const double PI_ = 3.14159265358979323846;

static cairn_src src_at(cairn_net *net, int line)
{
    cairn_src s = {cairn_net_file(net, "test.cfb"), line, 1};
    return s;
}

static int mark(cairn_net *net, const char *id, double e, double n, double h,
                unsigned given, unsigned hold)
{
    int m = cairn_net_mark(net, id, src_at(net, 1));
    ck_assert_int_ge(m, 0);
    cairn_mark *mk = &net->marks[m];
    mk->e = e;
    mk->n = n;
    mk->h = h;
    mk->given = given;
    mk->hold = hold;
    mk->def = src_at(net, 1);
    return m;
}

static cairn_obs base_obs(cairn_net *net, cairn_obs_kind k, int line)
{
    cairn_obs o;
    memset(&o, 0, sizeof o);
    o.kind = k;
    o.at = o.from = o.to = -1;
    o.setup = o.sight = o.inst = -1;
    o.face = 1;
    o.src = src_at(net, line);
    return o;
}

static void rise(cairn_net *net, int from, int to, double value, double sd, int line)
{
    cairn_obs o = base_obs(net, CAIRN_OBS_RISE, line);
    o.from = from;
    o.to = to;
    o.value = value;
    o.sd.has = CAIRN_SD_LENGTH;
    o.sd.length = sd;
    ck_assert_int_ge(cairn_net_add_obs(net, &o), 0);
}

static void dist(cairn_net *net, int at, int to, double value, double sd, int line)
{
    cairn_obs o = base_obs(net, CAIRN_OBS_HORIZ, line);
    o.at = at;
    o.to = to;
    o.value = value;
    o.sd.has = CAIRN_SD_LENGTH;
    o.sd.length = sd;
    ck_assert_int_ge(cairn_net_add_obs(net, &o), 0);
}

static int setup(cairn_net *net, int at, int line)
{
    cairn_setup s;
    memset(&s, 0, sizeof s);
    s.at = at;
    s.inst = -1;
    s.src = src_at(net, line);
    int k = cairn_net_add_setup(net, &s);
    ck_assert_int_ge(k, 0);
    return k;
}

static void direction(cairn_net *net, int su, int to, double value_rad, double sd_rad,
                      int line)
{
    cairn_obs o = base_obs(net, CAIRN_OBS_DIRECTION, line);
    o.setup = su;
    o.at = net->setups[su].at;
    o.to = to;
    o.value = value_rad;
    o.sd.has = CAIRN_SD_ANGLE;
    o.sd.angle = sd_rad;
    ck_assert_int_ge(cairn_net_add_obs(net, &o), 0);
}

/* Adjust; returns the status, the adjustment in *padj (or NULL), and the
 * first error message in msg. */
static int run_opt(cairn_net *net, int datum_free, const cairn_adjust_options *opt,
                   cairn_problem **pprob, cairn_adjustment **padj, char *msg, size_t n)
{
    cairn_error err;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    ck_assert_int_eq(cairn_problem_build(net, datum_free, pprob, &err), 0);
    int rc = cairn_adjust(net, *pprob, opt, padj, &err);
    msg[0] = 0;
    size_t len = 0;
    for (int i = 0; i < err.ndiag && len < n; i++) {
        char line[CAIRN_PATH_MAX + CAIRN_MSG_MAX + 64];
        cairn_diag_format(&err.diag[i], line, sizeof line);
        len += (size_t)snprintf(msg + len, n - len, "%s\n", line);
    }
    cairn_error_clear(&err);
    return rc;
}

static int run(cairn_net *net, int datum_free, cairn_problem **pprob,
               cairn_adjustment **padj, char *msg, size_t n)
{
    return run_opt(net, datum_free, NULL, pprob, padj, msg, n);
}

static void done(cairn_net **pnet, cairn_problem **pprob, cairn_adjustment **padj)
{
    if (*padj)
        ck_assert_int_eq(cairn_adjustment_release_cholmod(*padj), 0); /* no CHOLMOD leak */
    cairn_adjustment_free(padj);
    cairn_problem_free(pprob);
    cairn_net_free(pnet);
}

/* The weighted mean: one bench mark X levelled from two held marks, with
 * different σ. x̂ = Σwᵢlᵢ / Σwᵢ, wᵢ = 1/σᵢ² (Ghilani & Wolf, "Adjustment
 * Computations", weighted mean, from memory; the arithmetic is by hand):
 * l = 101.500 (σ 2 mm, w 250000), 101.490 (σ 4 mm, w 62500) →
 * x̂ = 101.498, v = −0.002, +0.008, vᵀPv = 1 + 4 = 5, dof 1. */
START_TEST(weighted_mean)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 100.0, CAIRN_H, CAIRN_H);
    int b = mark(net, "B", 0, 0, 101.0, CAIRN_H, CAIRN_H);
    int x = mark(net, "X", 0, 0, 101.3, CAIRN_H, 0);
    rise(net, a, x, 1.500, 0.002, 2);
    rise(net, b, x, 0.490, 0.004, 3);
    cairn_problem *p = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &p, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->nunknowns, 1);
    ck_assert_int_eq(adj->dof, 1);
    ck_assert_int_eq(adj->datum_free, 0);
    ck_assert_double_eq_tol(adj->h[x], 101.498, 1e-9);
    ck_assert_double_eq_tol(adj->residual[0], -0.002, 1e-9);
    ck_assert_double_eq_tol(adj->residual[1], 0.008, 1e-9);
    ck_assert_double_eq_tol(adj->vtpv, 5.0, 1e-6);
    ck_assert_double_eq_tol(adj->sigma0_sq, 5.0, 1e-6);
    ck_assert_int_eq(adj->role[a], CAIRN_ROLE_HELD);
    ck_assert_int_eq(adj->role[x], CAIRN_ROLE_ADJUSTED);
    ck_assert_ptr_nonnull(cairn_adjustment_factor(adj));
    done(&net, &p, &adj);
}
END_TEST

/* A levelling loop A→B→C→A with one held height and equal σ: the
 * misclosure (+6 mm) is spread equally, −2 mm on each rise (by hand). */
START_TEST(level_loop)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 10.0, CAIRN_H, CAIRN_H);
    int b = mark(net, "B", 0, 0, 11.0, CAIRN_H, 0);
    int c = mark(net, "C", 0, 0, 13.0, CAIRN_H, 0);
    rise(net, a, b, 1.000, 0.001, 2);
    rise(net, b, c, 2.000, 0.001, 3);
    rise(net, c, a, -2.994, 0.001, 4);
    cairn_problem *p = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &p, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_double_eq_tol(adj->h[b], 10.998, 1e-9);
    ck_assert_double_eq_tol(adj->h[c], 12.996, 1e-9);
    for (int i = 0; i < 3; i++)
        ck_assert_double_eq_tol(adj->residual[i], -0.002, 1e-9);
    ck_assert_double_eq_tol(adj->vtpv, 12.0, 1e-6);
    ck_assert_int_eq(adj->dof, 1);
    done(&net, &p, &adj);
}
END_TEST

/* Trilateration of P from three held marks. Exact distances from P =
 * (40, 30): the solution must return P (geometry by hand). `off` shifts the
 * whole network to large grid values: the answer must not lose digits. */
static void trilateration(double oe, double on)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", oe + 0, on + 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", oe + 100, on + 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int c = mark(net, "C", oe + 0, on + 100, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int p = mark(net, "P", oe + 41.7, on + 28.2, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, p, 50.0, 0.001, 2);
    dist(net, b, p, sqrt(60.0 * 60.0 + 30.0 * 30.0), 0.001, 3);
    dist(net, c, p, sqrt(40.0 * 40.0 + 70.0 * 70.0), 0.001, 4);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->nunknowns, 2);
    ck_assert_double_eq_tol(adj->e[p] - oe, 40.0, 1e-8);
    ck_assert_double_eq_tol(adj->n[p] - on, 30.0, 1e-8);
    ck_assert_double_le(adj->vtpv, 1e-10);
    ck_assert_int_ge(adj->iterations, 2);
    ck_assert_double_eq(adj->e[a], oe); /* held: the given value exactly */
    done(&net, &pr, &adj);
}

START_TEST(trilateration_near_zero) { trilateration(0, 0); }
END_TEST
START_TEST(trilateration_large_grid) { trilateration(500000.0, 5000000.0); }
END_TEST

/* With inconsistent distances the solution must satisfy the normal
 * equations AᵀPv = 0 (the least-squares optimality condition). */
START_TEST(trilateration_optimal)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 100, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int c = mark(net, "C", 0, 100, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int p = mark(net, "P", 40, 30, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, p, 50.004, 0.002, 2);
    dist(net, b, p, 67.079, 0.001, 3);
    dist(net, c, p, 80.627, 0.003, 4);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    double g[2] = {0, 0};
    for (size_t i = 0; i < adj->nobs; i++) {
        int idx[CAIRN_ROW_MAX], k;
        double coef[CAIRN_ROW_MAX], sig;
        ck_assert_int_eq(cairn_adjustment_design_row(adj, i, idx, coef, &k, &sig), 0);
        ck_assert_int_eq(k, 2);
        for (int q = 0; q < k; q++)
            g[idx[q]] += coef[q] * adj->residual[i] / (sig * sig);
    }
    /* units: 1/m; a correction of 1e-6 m would leave about 1e6·1e-6 */
    ck_assert_double_le(fabs(g[0]), 1e-2);
    ck_assert_double_le(fabs(g[1]), 1e-2);
    /* the factor is what the quality stage expects: its selected inverse
     * equals the inverse of the 2×2 N = Σ aᵀa/σ² formed from the design
     * rows at the solution (closed-form 2×2 inverse) */
    double N[3] = {0, 0, 0};
    for (size_t i = 0; i < adj->nobs; i++) {
        int idx[CAIRN_ROW_MAX], k;
        double coef[CAIRN_ROW_MAX], sig, a2[2] = {0, 0};
        cairn_adjustment_design_row(adj, i, idx, coef, &k, &sig);
        for (int q = 0; q < k; q++)
            a2[idx[q]] = coef[q];
        N[0] += a2[0] * a2[0] / (sig * sig);
        N[1] += a2[0] * a2[1] / (sig * sig);
        N[2] += a2[1] * a2[1] / (sig * sig);
    }
    double det = N[0] * N[2] - N[1] * N[1];
    cairn_selinv *Z = NULL;
    ck_assert_int_eq(cairn_selinv_compute(cairn_adjustment_factor(adj),
                                          cairn_adjustment_common(adj), &Z), 0);
    double q00, q01, q11;
    ck_assert_int_eq(cairn_selinv_get(Z, 0, 0, &q00), 0);
    ck_assert_int_eq(cairn_selinv_get(Z, 0, 1, &q01), 0);
    ck_assert_int_eq(cairn_selinv_get(Z, 1, 1, &q11), 0);
    ck_assert_double_eq_tol(q00, N[2] / det, 1e-12 * fabs(N[2] / det));
    ck_assert_double_eq_tol(q01, -N[1] / det, 1e-9 * fabs(N[2] / det));
    ck_assert_double_eq_tol(q11, N[0] / det, 1e-12 * fabs(N[0] / det));
    cairn_selinv_free(&Z);
    ck_assert_int_eq(adj->dof, 1);
    (void)p;
    done(&net, &pr, &adj);
}
END_TEST

/* Held A (1000, 2000) and B (1100, 2000) observe P = (1050, 2080) by
 * directions, setup orientations 0.3 and 1.0 rad (exact, sd 1e-5 rad);
 * P starts at (e0, n0). */
static cairn_net *intersection_net(double e0, double n0, int *pp)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 1000, 2000, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 1100, 2000, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    *pp = mark(net, "P", e0, n0, 0, CAIRN_E | CAIRN_N, 0);
    int s1 = setup(net, a, 5);
    direction(net, s1, b, cairn_wrap_2pi(atan2(100.0, 0.0) - 0.3), 1e-5, 6);
    direction(net, s1, *pp, cairn_wrap_2pi(atan2(50.0, 80.0) - 0.3), 1e-5, 7);
    int s2 = setup(net, b, 8);
    direction(net, s2, a, cairn_wrap_2pi(atan2(-100.0, 0.0) - 1.0), 1e-5, 9);
    direction(net, s2, *pp, cairn_wrap_2pi(atan2(-50.0, 80.0) - 1.0), 1e-5, 10);
    return net;
}

/* A direction-and-distance network with two setups: orientation unknowns
 * are numbered after the marks, in setup order; exact observations from the
 * true coordinates give back the coordinates (by construction). */
START_TEST(directions_and_orientation)
{
    int p;
    cairn_net *net = intersection_net(1050.3, 2079.6, &p);
    int a = 0, s1 = 0, s2 = 1;
    double om = 0.3;
    dist(net, a, p, sqrt(50.0 * 50.0 + 80.0 * 80.0), 0.001, 11);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->nunknowns, 4);
    ck_assert_int_eq(adj->unk_mark[3 * p], 0);
    ck_assert_int_eq(adj->unk_mark[3 * p + 1], 1);
    ck_assert_int_eq(adj->unk_setup[s1], 2);
    ck_assert_int_eq(adj->unk_setup[s2], 3);
    ck_assert_double_eq_tol(adj->e[p], 1050.0, 1e-8);
    ck_assert_double_eq_tol(adj->n[p], 2080.0, 1e-8);
    ck_assert_double_eq_tol(adj->omega[s1], om, 1e-10);
    ck_assert_double_eq_tol(adj->omega[s2], 1.0, 1e-10);
    ck_assert_int_eq(adj->dof, 1);
    done(&net, &pr, &adj);
}
END_TEST

/* DEVELOPERS.md "Datum free": A and B the first two plane marks; with a
 * distance fix e_B when |Δn| ≥ |Δe| (else n_B); without, both. */
START_TEST(free_datum_rule)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 10, 100, 0, CAIRN_E | CAIRN_N, 0);
    int c = mark(net, "C", 80, 40, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, b, hypot(10, 100), 0.001, 2);
    dist(net, b, c, hypot(70, 60), 0.001, 3);
    dist(net, c, a, hypot(80, 40), 0.001, 4);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 1, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->datum_free, 1);
    ck_assert_uint_eq(adj->fixed[a], CAIRN_E | CAIRN_N);
    ck_assert_uint_eq(adj->fixed[b], CAIRN_E);
    ck_assert_uint_eq(adj->fixed[c], 0);
    ck_assert_int_eq(adj->nunknowns, 3);
    ck_assert_int_eq(adj->dof, 0);
    ck_assert_int_eq(adj->role[a], CAIRN_ROLE_ADJUSTED);
    done(&net, &pr, &adj);

    /* no control at all: free datum without asking; no distance: fix both */
    net = cairn_net_new();
    a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, 0);
    b = mark(net, "B", 100, 10, 0, CAIRN_E | CAIRN_N, 0);
    c = mark(net, "C", 50, 80, 0, CAIRN_E | CAIRN_N, 0);
    int s1 = setup(net, a, 5);
    direction(net, s1, b, atan2(100, 10), 1e-5, 6);
    direction(net, s1, c, atan2(50, 80), 1e-5, 7);
    int s2 = setup(net, b, 8);
    direction(net, s2, a, atan2(-100, -10) + 2 * CAIRN_PI, 1e-5, 9);
    direction(net, s2, c, atan2(-50, 70) + 2 * CAIRN_PI, 1e-5, 10);
    ck_assert_msg(run(net, 0, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->datum_free, 1);
    ck_assert_uint_eq(adj->fixed[a], CAIRN_E | CAIRN_N);
    ck_assert_uint_eq(adj->fixed[b], CAIRN_E | CAIRN_N);
    ck_assert_int_eq(adj->nunknowns, 4); /* C.e, C.n, two orientations */
    ck_assert_double_eq_tol(adj->e[c], 50.0, 1e-8);
    done(&net, &pr, &adj);
}
END_TEST

START_TEST(datum_defects)
{
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[4000];

    /* one held mark, directions only: no orientation, no scale */
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 100, 10, 0, CAIRN_E | CAIRN_N, 0);
    int c = mark(net, "C", 50, 80, 0, CAIRN_E | CAIRN_N, 0);
    int s1 = setup(net, a, 5);
    direction(net, s1, b, 1.0, 1e-5, 6);
    direction(net, s1, c, 0.5, 1e-5, 7);
    int s2 = setup(net, b, 8);
    direction(net, s2, a, 4.0, 1e-5, 9);
    direction(net, s2, c, 5.0, 1e-5, 10);
    ck_assert_int_eq(run(net, 0, &pr, &adj, msg, sizeof msg), CAIRN_SOLVE_EDATUM);
    ck_assert_ptr_null(adj);
    ck_assert_msg(strstr(msg, "error: datum defect: the plane network has no fixed "
                              "orientation (hold a second mark, or observe an azimuth)"),
                  "%s", msg);
    ck_assert_msg(strstr(msg, "the plane network has no scale"), "%s", msg);
    done(&net, &pr, &adj);

    /* a levelling part not connected to the held height */
    net = cairn_net_new();
    a = mark(net, "A", 0, 0, 1, CAIRN_H, CAIRN_H);
    b = mark(net, "B", 0, 0, 2, CAIRN_H, 0);
    c = mark(net, "C", 0, 0, 3, CAIRN_H, 0);
    int d = mark(net, "D", 0, 0, 4, CAIRN_H, 0);
    rise(net, a, b, 1, 0.001, 2);
    rise(net, a, b, 1.001, 0.001, 3);
    rise(net, c, d, 1, 0.001, 4);
    ck_assert_int_eq(run(net, 0, &pr, &adj, msg, sizeof msg), CAIRN_SOLVE_EDATUM);
    ck_assert_msg(strstr(msg, "the height part of 2 marks (C, D) is not connected by "
                              "height observations to any held or weighted mark"),
                  "%s", msg);
    done(&net, &pr, &adj);

    /* a mark touched by one distance only */
    net = cairn_net_new();
    a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    b = mark(net, "B", 100, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    c = mark(net, "C", 50, 50, 0, CAIRN_E | CAIRN_N, 0);
    d = mark(net, "N7", 50, -50, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, c, 70.71, 0.001, 2);
    dist(net, b, c, 70.71, 0.001, 3);
    dist(net, a, d, 70.71, 0.001, 4);
    ck_assert_int_eq(run(net, 0, &pr, &adj, msg, sizeof msg), CAIRN_SOLVE_EDATUM);
    ck_assert_msg(strstr(msg, "test.cfb:1:1: error: mark N7 is not determined: 1 "
                              "independent plane observation (horiz) for 2 unknown "
                              "coordinates"), "%s", msg);
    ck_assert_msg(!strstr(msg, "mark C "), "%s", msg);
    done(&net, &pr, &adj);

    /* no starting coordinates */
    net = cairn_net_new();
    a = mark(net, "A", 0, 0, 1, CAIRN_H, CAIRN_H);
    b = mark(net, "N7", 0, 0, 0, 0, 0);
    c = mark(net, "N8", 0, 0, 0, 0, 0);
    rise(net, a, b, 1, 0.001, 2);
    rise(net, b, c, 1, 0.001, 3);
    ck_assert_int_eq(run(net, 0, &pr, &adj, msg, sizeof msg), CAIRN_SOLVE_ESTART);
    ck_assert_msg(strstr(msg, "error: no starting coordinates for N7, N8 (give e, n "
                              "and h, or observations that reach them)"), "%s", msg);
    done(&net, &pr, &adj);
}
END_TEST

/* A geometric singularity the counting cannot see: P on the line through
 * the two held marks it is measured from; the zero pivot is mapped back to
 * P's n coordinate. */
START_TEST(zero_pivot_named)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 100, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int p = mark(net, "P", 50, 0, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, p, 50, 0.001, 2);
    dist(net, b, p, 50, 0.001, 3);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_int_eq(run(net, 0, &pr, &adj, msg, sizeof msg), CAIRN_SOLVE_ESINGULAR);
    ck_assert_msg(strstr(msg, "singular at the n coordinate of mark P"), "%s", msg);
    done(&net, &pr, &adj);
}
END_TEST

/* Weighted control: the pseudo-observations are compared in grid values
 * (the local origin is undone). Two weighted marks, one distance: the
 * distance misfit is shared by the weights (by hand: along the line, v
 * splits in proportion to the variances: σ 5 mm each end, 1 mm distance). */
START_TEST(weighted_control)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 500000, 5000000, 0, CAIRN_E | CAIRN_N, 0);
    int b = mark(net, "B", 500100, 5000000, 0, CAIRN_E | CAIRN_N, 0);
    int c = mark(net, "C", 500050, 5000080, 0, CAIRN_E | CAIRN_N, 0);
    net->marks[a].sd_en = 0.005;
    net->marks[b].sd_en = 0.005;
    dist(net, a, b, 100.010, 0.001, 2);
    dist(net, a, c, hypot(50, 80), 0.001, 3);
    dist(net, b, c, hypot(50, 80), 0.001, 4);
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->role[a], CAIRN_ROLE_WEIGHTED);
    ck_assert_int_eq(adj->datum_free, 0);
    /* 0.010 misfit, variances 25+25+1 (mm²) along the line: the distance
     * takes 1/51 of it, each end 25/51 (the C distances are unaffected to
     * first order by symmetry) */
    double ea = adj->e[a], eb = adj->e[b];
    ck_assert_double_eq_tol(eb - ea, 100.0 + 0.010 * 50.0 / 51.0, 2e-6);
    ck_assert_double_eq_tol(ea, 500000.0 - 0.010 * 25.0 / 51.0, 2e-6);
    done(&net, &pr, &adj);
}
END_TEST

START_TEST(csv_rows)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 100.0, CAIRN_H, CAIRN_H);
    int b = mark(net, "B", 0, 0, 101.0, CAIRN_H, CAIRN_H);
    int x = mark(net, "X", 0, 0, 101.3, CAIRN_H, 0);
    rise(net, a, x, 1.500, 0.002, 2);
    rise(net, b, x, 0.490, 0.004, 3);
    cairn_problem *p = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run(net, 0, &p, &adj, msg, sizeof msg) == 0, "%s", msg);
    char buf[4096];
    FILE *f = fmemopen(buf, sizeof buf, "w");
    ck_assert_int_eq(cairn_write_marks_csv(f, adj, NULL), 0);
    fclose(f);
    ck_assert_str_eq(buf, "id,role,e,n,h,sd_e,sd_n,sd_h,major,minor,major_azimuth\n"
                          "A,held,,,100.0000000,,,,,,\n"
                          "B,held,,,101.0000000,,,,,,\n"
                          "X,adjusted,,,101.4980000,,,,,,\n");
    f = fmemopen(buf, sizeof buf, "w");
    ck_assert_int_eq(cairn_write_observations_csv(f, adj, NULL), 0);
    fclose(f);
    ck_assert_str_eq(buf, "seq,kind,at,from,to,observed,adjusted,residual,sd,redundancy,"
                          "w,mdb,status,source\n"
                          "1,rise,,A,X,1.5000000,1.4980000,-0.0020000,0.0020000,,,,ok,test.cfb:2\n"
                          "2,rise,,B,X,0.4900000,0.4980000,0.0080000,0.0040000,,,,ok,test.cfb:3\n");
    done(&net, &p, &adj);
}
END_TEST

/* A start far from the solution (P 400 m off, beyond the held marks): the
 * safeguarded iteration must still reach P = (40, 30), with METIS ordering
 * and without the final refactorisation; the log records every step. */
START_TEST(far_start_metis)
{
    cairn_net *net = cairn_net_new();
    int a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int b = mark(net, "B", 100, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int c = mark(net, "C", 0, 100, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    int p = mark(net, "P", 400, -300, 0, CAIRN_E | CAIRN_N, 0);
    dist(net, a, p, 50.0, 0.001, 2);
    dist(net, b, p, sqrt(60.0 * 60.0 + 30.0 * 30.0), 0.001, 3);
    dist(net, c, p, sqrt(40.0 * 40.0 + 70.0 * 70.0), 0.001, 4);
    cairn_adjust_options opt;
    cairn_adjust_options_default(&opt);
    opt.ordering = CAIRN_ORDER_METIS;
    opt.refactor_final = 0;
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run_opt(net, 0, &opt, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_double_eq_tol(adj->e[p], 40.0, 1e-8);
    ck_assert_double_eq_tol(adj->n[p], 30.0, 1e-8);
    ck_assert_int_ge(adj->iterations, 3);
    for (int i = 1; i < adj->iterations; i++)
        ck_assert_double_le(adj->log[i].vtpv, adj->log[i].vtpv_start);
    ck_assert_int_eq(adj->log[0].max_length_mark, p);
    ck_assert_int_eq(cairn_adjustment_factor(adj)->ordering, CHOLMOD_METIS);
    done(&net, &pr, &adj);

    /* the iteration limit: one iteration is not enough from there */
    net = cairn_net_new();
    a = mark(net, "A", 0, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    b = mark(net, "B", 100, 0, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    p = mark(net, "P", 400, -300, 0, CAIRN_E | CAIRN_N, 0);
    c = mark(net, "C", 0, 100, 0, CAIRN_E | CAIRN_N, CAIRN_E | CAIRN_N);
    dist(net, a, p, 50.0, 0.001, 2);
    dist(net, b, p, sqrt(60.0 * 60.0 + 30.0 * 30.0), 0.001, 3);
    dist(net, c, p, sqrt(40.0 * 40.0 + 70.0 * 70.0), 0.001, 4);
    opt.max_iterations = 1;
    ck_assert_int_eq(run_opt(net, 0, &opt, &pr, &adj, msg, sizeof msg),
                     CAIRN_SOLVE_ENOCONV);
    ck_assert_msg(strstr(msg, "error: did not converge after 1 iteration (largest "
                              "correction "), "%s", msg);
    ck_assert_msg(strstr(msg, " m at mark P ("), "%s", msg);
    done(&net, &pr, &adj);
}
END_TEST

/* An intersection of P from held A and B by directions only (dof 0): the
 * exact solution is P = (1050, 2080) by construction. From starts on the
 * far side of the base line, (i) with the default backtracking, and
 * (ii) with no backtracking, so that Levenberg–Marquardt damping must take
 * over (iterate.c), the adjustment must reach it. (i) is also the
 * regression test of 2026-12-01: with no length observation the length
 * convergence limit was infinite and P "converged" 1.3 km away. */
/* What one adjustment of the intersection from (e0, n0) did, after
 * checking that it reached the exact P = (1050, 2080). */
typedef struct {
    int damped, chord, factorisations;
} intersection_run;

static intersection_run adjust_intersection(double e0, double n0, int halvings, int chord)
{
    int p;
    cairn_net *net = intersection_net(e0, n0, &p);
    cairn_adjust_options opt;
    cairn_adjust_options_default(&opt);
    opt.max_halvings = halvings;
    opt.chord = chord;
    opt.max_iterations = 100;
    cairn_problem *pr = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];
    ck_assert_msg(run_opt(net, 0, &opt, &pr, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_double_eq_tol(adj->e[p], 1050.0, 1e-7);
    ck_assert_double_eq_tol(adj->n[p], 2080.0, 1e-7);
    intersection_run r = {0, 0, 0};
    for (int i = 0; i < adj->iterations; i++) {
        r.damped += adj->log[i].mu > 0;
        r.chord += adj->log[i].chord;
    }
    cairn_solve_timing t;
    cairn_adjustment_timing(adj, &t);
    r.factorisations = t.nfactorise;
    done(&net, &pr, &adj);
    return r;
}

START_TEST(levenberg_marquardt)
{
    static const double starts[][2] = {{1050, 1900}, {1200, 1990}, {5000, -3000}};
    for (int halvings = 10; halvings >= 0; halvings -= 10) {
        int damped = 0;
        for (size_t k = 0; k < sizeof starts / sizeof starts[0]; k++)
            damped += adjust_intersection(starts[k][0], starts[k][1], halvings, 1).damped;
        if (halvings == 0)
            ck_assert_msg(damped > 0, "no damped step without backtracking");
    }
}
END_TEST

/* Chord steps (iterate.c, DEVELOPERS.md "Chord steps"): on the
 * intersection of levenberg_marquardt from starts tens to hundreds of
 * metres off, the adjustment with chord steps reaches the same exact
 * solution as the one that factorises every iteration, takes some steps
 * on an earlier factor, and factorises fewer times in all. */
START_TEST(chord_steps)
{
    static const double starts[][2] = {{1050, 1900}, {1080, 2050}, {1000, 2200}};
    int nfact[2] = {0, 0}, nchord[2] = {0, 0};
    for (int chord = 0; chord <= 1; chord++)
        for (size_t k = 0; k < sizeof starts / sizeof starts[0]; k++) {
            intersection_run r = adjust_intersection(starts[k][0], starts[k][1], 10, chord);
            nchord[chord] += r.chord;
            nfact[chord] += r.factorisations;
        }
    ck_assert_int_eq(nchord[0], 0);
    ck_assert_int_gt(nchord[1], 0);
    ck_assert_int_lt(nfact[1], nfact[0]);
}
END_TEST

/* The automatic ordering of a network counted large (metis_threshold
 * lowered to 4 unknowns here): a levelling loop, 1 to 3 entries per column
 * of N, is ordered with AMD; a trilateration braced between every pair of
 * its marks, N full, with METIS (normal.c, SPARSE_PATTERN_AMD). Both must
 * still give the exact answer: loop heights by hand (equal σ, misclosure
 * spread evenly), the braced marks at their true positions. */
START_TEST(auto_ordering_by_pattern)
{
    cairn_adjust_options opt;
    cairn_adjust_options_default(&opt);
    opt.metis_threshold = 4;
    cairn_problem *p = NULL;
    cairn_adjustment *adj = NULL;
    char msg[2000];

    /* loop of 12 marks, held M0, each rise +1 m booked, last one −11 m and
     * 12 mm short of closing: every rise takes −1 mm */
    cairn_net *net = cairn_net_new();
    int m[12];
    for (int k = 0; k < 12; k++) {
        char id[16];
        snprintf(id, sizeof id, "M%d", k);
        m[k] = mark(net, id, 0, 0, 10.0 + k, CAIRN_H, k == 0 ? CAIRN_H : 0);
    }
    for (int k = 0; k < 12; k++)
        rise(net, m[k], m[(k + 1) % 12], k < 11 ? 1.0 : -11.0 + 0.012, 0.001, k + 2);
    ck_assert_msg(run_opt(net, 0, &opt, &p, &adj, msg, sizeof msg) == 0, "%s", msg);
    ck_assert_int_eq(adj->nunknowns, 11);
    ck_assert_int_eq(cairn_adjustment_factor(adj)->ordering, CHOLMOD_AMD);
    for (int k = 1; k < 12; k++)
        ck_assert_double_eq_tol(adj->h[m[k]], 10.0 + k * 0.999, 1e-9);
    done(&net, &p, &adj);

    /* three held marks and five new ones on a circle, a distance between
     * every pair: N is full, 10 unknowns, 5.5 entries per column … */
    for (int braced = 5; braced <= 7; braced += 2) {
        net = cairn_net_new();
        int q[10];
        int nm = 3 + braced;
        for (int k = 0; k < nm; k++) {
            char id[16];
            snprintf(id, sizeof id, "Q%d", k);
            double t = 2 * PI_ * k / nm, e = 500 * cos(t), n = 500 * sin(t);
            q[k] = mark(net, id, e + (k < 3 ? 0 : 0.03), n - (k < 3 ? 0 : 0.02), 0,
                        CAIRN_E | CAIRN_N, k < 3 ? CAIRN_E | CAIRN_N : 0);
        }
        int line = 2;
        for (int a = 0; a < nm; a++)
            for (int b = a + 1; b < nm; b++) {
                double ta = 2 * PI_ * a / nm, tb = 2 * PI_ * b / nm;
                dist(net, q[a], q[b], hypot(500 * (cos(tb) - cos(ta)), 500 * (sin(tb) - sin(ta))),
                     0.001, line++);
            }
        ck_assert_msg(run_opt(net, 0, &opt, &p, &adj, msg, sizeof msg) == 0, "%s", msg);
        /* … so 5 braced marks stay under the bound (AMD), 7 (7.5 per column)
         * go over it (METIS) */
        ck_assert_int_eq(cairn_adjustment_factor(adj)->ordering,
                         braced == 5 ? CHOLMOD_AMD : CHOLMOD_METIS);
        for (int k = 3; k < nm; k++) {
            double t = 2 * PI_ * k / nm;
            ck_assert_double_eq_tol(adj->e[q[k]], 500 * cos(t), 1e-7);
            ck_assert_double_eq_tol(adj->n[q[k]], 500 * sin(t), 1e-7);
        }
        done(&net, &p, &adj);
    }
}
END_TEST

static Suite *solve_suite(void)
{
    Suite *s = suite_create("solve");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, weighted_mean);
    tcase_add_test(tc, level_loop);
    tcase_add_test(tc, trilateration_near_zero);
    tcase_add_test(tc, trilateration_large_grid);
    tcase_add_test(tc, trilateration_optimal);
    tcase_add_test(tc, directions_and_orientation);
    tcase_add_test(tc, free_datum_rule);
    tcase_add_test(tc, datum_defects);
    tcase_add_test(tc, zero_pivot_named);
    tcase_add_test(tc, weighted_control);
    tcase_add_test(tc, csv_rows);
    tcase_add_test(tc, far_start_metis);
    tcase_add_test(tc, levenberg_marquardt);
    tcase_add_test(tc, chord_steps);
    tcase_add_test(tc, auto_ordering_by_pattern);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(solve_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
