/*
 * test_equations.c — Check suite for the model stage's problem builder,
 * observation equations and stochastic model (src/model/problem.c,
 * equations.c, sigma.c).
 *
 * Outside sources of the numeric checks, named beside each:
 *   - partial derivatives: central finite differences of the computed value
 *     (no source needed: the definition of the derivative);
 *   - curvature and refraction: REFERENCES.md §5, (1 − k)D²/2R = 0.068278 m
 *     at D = 1 km for R = 6 371 000 m, k = 0.13 (Ghilani & Wolf,
 *     "Elementary Surveying", 13th ed., via REFERENCES.md) [C];
 *   - reductions and a priori standard deviations: the FORMAT.md "Models"
 *     formulas evaluated by hand with python3 (plain arithmetic, no cairn
 *     code), numbers quoted below; some also re-evaluated inline.
 * Nets are built in code (cairn_net_*), independent of the parsers. */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/model.h"

#define SEC (CAIRN_PI / (180.0 * 3600.0))
#define DEG (CAIRN_PI / 180.0)
#define TWO_PI (2.0 * CAIRN_PI)
#define NO_VAL NAN
#define MAXM 16
#define MAXS 8
#define BIT(k) (1u << (k))
#define EQ(x, y, tol) ck_assert_double_eq_tol(x, y, tol)
/* computed value / σ of problem observation i at state s, into l */
#define LIN(i) cairn_obs_linearise(p, &p->obs[i], &s.x, &l)
#define SIG(i) cairn_obs_sigma(p, &p->obs[i], &s.x)

/* ------------------------------------------------------------ fixtures */

static cairn_src at_line(int line)
{
    return (cairn_src){"t.cfb", line, 1};
}

/* A total station and a level (FORMAT.md's example precisions). */
static cairn_net *new_net(int dim)
{
    cairn_net *net = cairn_net_new();
    ck_assert_ptr_nonnull(net);
    net->opt.dimension = dim;
    const cairn_instrument ts = {
        .id = "TS1", .kind = CAIRN_INST_TOTAL_STATION,
        .set = CAIRN_INST_DIRECTION | CAIRN_INST_ZENITH | CAIRN_INST_DISTANCE |
               CAIRN_INST_CENTRING | CAIRN_INST_HEIGHT,
        .direction = 1.0 * SEC, .zenith = 1.5 * SEC, .dist_a = 0.001,
        .dist_b = 1.5, .centring = 0.0006, .height = 0.001};
    const cairn_instrument lv = {
        .id = "LV1", .kind = CAIRN_INST_LEVEL,
        .set = CAIRN_INST_PER_KM | CAIRN_INST_PER_SETUP,
        .per_km = 0.0007, .per_setup = 0.0003};
    ck_assert_int_eq(cairn_net_add_inst(net, &ts), 0);
    ck_assert_int_eq(cairn_net_add_inst(net, &lv), 1);
    return net;
}

static int mark(cairn_net *net, const char *id, double e, double n, double h,
                int line)
{
    int m = cairn_net_mark(net, id, at_line(line));
    ck_assert_int_ge(m, 0);
    cairn_mark *mk = &net->marks[m];
    mk->e = e;
    mk->n = n;
    mk->h = h;
    mk->given = CAIRN_E | CAIRN_N | CAIRN_H;
    mk->def = at_line(line);
    return m;
}

static int setup(cairn_net *net, int at, double ih, double ppm, int line)
{
    const cairn_setup s = {.at = at, .inst = 0, .ih = ih, .ppm = ppm, .src = at_line(line)};
    int k = cairn_net_add_setup(net, &s);
    ck_assert_int_ge(k, 0);
    return k;
}

static cairn_obs blank(cairn_obs_kind kind, int line)
{
    return (cairn_obs){.kind = kind, .at = -1, .from = -1, .to = -1, .setup = -1,
                       .sight = -1, .inst = -1, .face = 1, .src = at_line(line)};
}

/* One sight's readings in the input stage's order (direction, zenith,
 * slope, horiz); NO_VAL for a reading not booked. */
static void sight(cairn_net *net, int st, int to, double hz, double zen,
                  double slope, double horiz, double th, double ppm, int line)
{
    const cairn_setup *s = &net->setups[st];
    int num = net->nsights++;
    const double v[4] = {hz, zen, slope, horiz};
    const cairn_obs_kind k[4] = {CAIRN_OBS_DIRECTION, CAIRN_OBS_ZENITH,
                                 CAIRN_OBS_SLOPE, CAIRN_OBS_HORIZ};
    for (int i = 0; i < 4; i++) {
        if (isnan(v[i]))
            continue;
        cairn_obs o = {.kind = k[i], .at = s->at, .from = -1, .to = to, .setup = st,
                       .sight = num, .inst = s->inst, .value = v[i], .ih = s->ih,
                       .th = th, .ppm = s->ppm + ppm,
                       .face = (!isnan(zen) && zen > CAIRN_PI) ? 2 : 1,
                       .src = {"t.cfb", line, 1 + i}};
        ck_assert_int_ge(cairn_net_add_obs(net, &o), 0);
    }
}

/* An angle (at, from, to), azimuth (from → to, own sd if sd > 0) or rise
 * (from → to, km or setups, level LV1). */
static cairn_obs *other(cairn_net *net, cairn_obs_kind kind, int at, int from,
                        int to, double v, int line)
{
    cairn_obs o = {.kind = kind, .at = at, .from = from, .to = to, .setup = -1,
                   .sight = -1, .inst = -1, .value = v, .face = 1, .src = at_line(line)};
    int i = cairn_net_add_obs(net, &o);
    ck_assert_int_ge(i, 0);
    return &net->obs[i];
}

static void angle(cairn_net *net, int at, int from, int to, double v, int line)
{
    other(net, CAIRN_OBS_ANGLE, at, from, to, v, line);
}

static void azimuth(cairn_net *net, int from, int to, double v, double sd, int line)
{
    cairn_obs *o = other(net, CAIRN_OBS_AZIMUTH, -1, from, to, v, line);
    o->sd.angle = sd;
    o->sd.has = sd > 0 ? CAIRN_SD_ANGLE : 0;
}

static void rise(cairn_net *net, int from, int to, double v, double km,
                 int setups, int line)
{
    cairn_obs *o = other(net, CAIRN_OBS_RISE, -1, from, to, v, line);
    o->km = km;
    o->setups = setups;
    o->inst = 1;
}

/* Marks A = 0 at (0, 0, ha) and B = 1 at (eb, nb, hb), setup 0 at A. */
static cairn_net *pair_net(int dim, double eb, double nb, double ha, double hb,
                           double ih, double ppm)
{
    cairn_net *net = new_net(dim);
    mark(net, "A", 0, 0, ha, 1);
    mark(net, "B", eb, nb, hb, 2);
    setup(net, 0, ih, ppm, 3);
    return net;
}
enum { A_ = 0, B_ = 1 };

/* Mutable parameters and the cairn_state that views them. */
typedef struct {
    double e[MAXM], n[MAXM], h[MAXM], om[MAXS];
    cairn_state x;
} tstate;

static void state_from_net(const cairn_net *net, tstate *s)
{
    memset(s, 0, sizeof *s);
    for (size_t i = 0; i < net->nmarks; i++) {
        s->e[i] = net->marks[i].e;
        s->n[i] = net->marks[i].n;
        s->h[i] = net->marks[i].h;
    }
    for (size_t j = 0; j < MAXS; j++)
        s->om[j] = 0.3 + 0.1 * (double)j;
    s->x = (cairn_state){s->e, s->n, s->h, s->om};
}

static cairn_problem *build(const cairn_net *net, int datum_free)
{
    cairn_error err;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    cairn_problem *p = NULL;
    if (cairn_problem_build(net, datum_free, &p, &err))
        ck_abort_msg("problem_build failed: %s",
                     err.ndiag ? err.diag[0].message : "(no message)");
    ck_assert_int_eq(err.nerrors, 0);
    cairn_error_clear(&err);
    return p;
}

/* ---------------------------------------------------- finite differences */

/* The variable behind a local parameter slot, or NULL when the slot names
 * no mark (e.g. FROM of a direction). */
static double *slot_var(tstate *s, const cairn_obs *o, int slot)
{
    if (slot == CAIRN_PAR_OMEGA)
        return o->setup >= 0 ? &s->om[o->setup] : NULL;
    int m = slot < CAIRN_PAR_E_FROM ? o->at : slot < CAIRN_PAR_E_TO ? o->from : o->to;
    double *coord[3] = {s->e, s->n, s->h};
    return m < 0 ? NULL : &coord[slot % 3][m];
}

/* Every partial against a central difference (step 1e-4 m, 1e-7 rad),
 * relative tolerance 1e-6 of the partial (plus 1e-9 of the row's largest
 * entry, so that zero partials are compared absolutely). Slots that name no
 * variable must have zero partials. */
static void check_partials(const cairn_problem *p, tstate *s)
{
    for (size_t i = 0; i < p->nobs; i++) {
        const cairn_obs *o = &p->obs[i];
        cairn_lin l0, lp, lm;
        ck_assert_msg(cairn_obs_linearise(p, o, &s->x, &l0) == 0,
                      "obs %zu (%s) not linearisable", i, cairn_obs_kind_name(o->kind));
        double rowmax = 0;
        for (int k = 0; k < CAIRN_NPAR; k++)
            rowmax = fmax(rowmax, fabs(l0.d[k]));
        ck_assert_msg(rowmax > 0, "obs %zu has an all-zero row", i);
        for (int k = 0; k < CAIRN_NPAR; k++) {
            double *v = slot_var(s, o, k);
            if (!v) {
                ck_assert_msg(l0.d[k] == 0.0, "obs %zu slot %d: partial %g for no variable",
                              i, k, l0.d[k]);
                continue;
            }
            double h = k == CAIRN_PAR_OMEGA ? 1e-7 : 1e-4;
            double v0 = *v;
            *v = v0 + h;
            double vp = *v;
            ck_assert_int_eq(cairn_obs_linearise(p, o, &s->x, &lp), 0);
            *v = v0 - h;
            double vm = *v;
            ck_assert_int_eq(cairn_obs_linearise(p, o, &s->x, &lm), 0);
            *v = v0;
            double dv = lp.value - lm.value;
            if (cairn_obs_kind_angular(o->kind))
                dv = cairn_wrap_pi(dv);
            double fd = dv / (vp - vm);
            double tol = 1e-6 * fabs(l0.d[k]) + 1e-9 * rowmax;
            ck_assert_msg(fabs(fd - l0.d[k]) <= tol,
                          "obs %zu (%s) slot %d: analytic %.12g, difference %.12g",
                          i, cairn_obs_kind_name(o->kind), k, l0.d[k], fd);
        }
    }
}

/* A network with every booked kind, all four azimuth quadrants, both faces,
 * instrument and target heights, setup and sight ppm. The booked values
 * only roughly fit the coordinates: derivatives do not care. */
static cairn_net *rich_net(int dim)
{
    cairn_net *net = new_net(dim);
    net->opt.refraction = 0.13;
    net->opt.scale = 0.9996;
    int A = mark(net, "A", 1000.0, 2000.0, 50.0, 1);
    int B = mark(net, "B", 1600.0, 2900.0, 80.0, 2);   /* NE of A */
    int C = mark(net, "C", 300.0, 2500.0, 40.0, 3);    /* NW */
    int D = mark(net, "D", 1400.0, 1100.0, 30.0, 4);   /* SE */
    int E = mark(net, "E", 200.0, 1200.0, 60.0, 5);    /* SW */
    int s0 = setup(net, A, 1.552, 3.0, 6);
    sight(net, s0, B, 0.1, 88.0 * DEG, 1083.0, 1082.0, 1.600, 2.0, 7);
    sight(net, s0, C, 4.9, 360.0 * DEG - 91.0 * DEG, 860.0, NO_VAL, 1.300, 0.0, 8);
    sight(net, s0, D, 2.3, 90.5 * DEG, 985.0, NO_VAL, 0.0, 0.0, 9);
    sight(net, s0, E, 3.7, NO_VAL, NO_VAL, 1131.0, 1.2, 0.0, 10);
    int s1 = setup(net, C, 1.400, 0.0, 11);
    sight(net, s1, D, 0.5, 91.0 * DEG, 1740.0, NO_VAL, 1.6, -4.0, 12);
    angle(net, A, B, C, 1.3, 13);
    angle(net, A, D, E, 1.1, 14);
    azimuth(net, A, B, 0.58, 3 * SEC, 15);
    azimuth(net, A, C, 5.3, 3 * SEC, 16);
    azimuth(net, A, D, 2.7, 3 * SEC, 17);
    azimuth(net, A, E, 3.9, 3 * SEC, 18);
    rise(net, B, C, -40.0, 1.3, 0, 19);
    net->marks[A].hold = CAIRN_E | CAIRN_N | CAIRN_H;
    net->marks[B].sd_en = 0.005; /* control-e, -n, -h of B */
    net->marks[B].sd_h = 0.01;
    return net;
}

START_TEST(test_partials_by_dimension)
{
    /* _i = 1, 2, 3: every observation kind the dimension produces. */
    cairn_net *net = rich_net(_i);
    cairn_problem *p = build(net, 0);
    ck_assert_int_eq(p->dimension, _i);
    tstate s;
    state_from_net(net, &s);
    check_partials(p, &s);
    /* The kinds present, per FORMAT.md "Models". */
    unsigned seen = 0;
    for (size_t i = 0; i < p->nobs; i++)
        seen |= 1u << p->obs[i].kind;
    const unsigned plane = BIT(CAIRN_OBS_DIRECTION) | BIT(CAIRN_OBS_HORIZ) |
                           BIT(CAIRN_OBS_ANGLE) | BIT(CAIRN_OBS_AZIMUTH) |
                           BIT(CAIRN_OBS_CONTROL_E) | BIT(CAIRN_OBS_CONTROL_N);
    const unsigned height = BIT(CAIRN_OBS_RISE) | BIT(CAIRN_OBS_CONTROL_H);
    unsigned want = _i == 1 ? height | BIT(CAIRN_OBS_TRIG_RISE)
                  : _i == 2 ? plane
                  : plane | height | BIT(CAIRN_OBS_ZENITH) | BIT(CAIRN_OBS_SLOPE);
    ck_assert_uint_eq(seen, want);
    /* Dimension 2: plane kinds carry no height partials. */
    if (_i == 2)
        for (size_t i = 0; i < p->nobs; i++) {
            cairn_lin l;
            ck_assert_int_eq(LIN(i), 0);
            ck_assert(l.d[CAIRN_PAR_H_AT] == 0 && l.d[CAIRN_PAR_H_FROM] == 0 &&
                      l.d[CAIRN_PAR_H_TO] == 0);
        }
    /* The same again from a second, perturbed state (and scale 1, k 0.2). */
    net->opt.scale = 1.0;
    net->opt.refraction = 0.2;
    for (int m = 0; m < 5; m++) {
        s.e[m] += 3.1 * m;
        s.n[m] -= 1.7 * m;
        s.h[m] += 0.4 * m;
    }
    check_partials(p, &s);
    cairn_problem_free(&p);
    ck_assert_ptr_null(p);
    cairn_net_free(&net);
}
END_TEST

/* ------------------------------------------------ values by hand */

START_TEST(test_azimuth_quadrants)
{
    /* t = atan2(Δe, Δn) in [0, 2π): the eight principal directions and the
     * four quadrant bisectors, expected values by definition. */
    static const struct { double de, dn, deg; } tab[] = {
        {0, 100, 0},     {100, 100, 45},  {100, 0, 90},   {100, -100, 135},
        {0, -100, 180},  {-100, -100, 225}, {-100, 0, 270}, {-100, 100, 315},
        {30, 40, 36.86989764584402}, {-30, 40, 323.13010235415598}};
    cairn_net *net = new_net(2);
    int A = mark(net, "A", 1000, 1000, 0, 1);
    int B = mark(net, "B", 0, 0, 0, 2);
    azimuth(net, A, B, 0.0, 1 * SEC, 3);
    cairn_problem *p = build(net, 1);
    tstate s;
    state_from_net(net, &s);
    for (size_t i = 0; i < sizeof tab / sizeof tab[0]; i++) {
        s.e[B] = 1000 + tab[i].de;
        s.n[B] = 1000 + tab[i].dn;
        cairn_lin l;
        ck_assert_int_eq(LIN(0), 0);
        ck_assert_msg(l.value >= 0 && l.value < TWO_PI, "not in [0, 2π)");
        EQ(l.value / DEG, tab[i].deg, 1e-10);
    }
    /* Coincident marks have no azimuth. */
    s.e[B] = 1000;
    s.n[B] = 1000;
    cairn_lin l;
    ck_assert_int_eq(LIN(0), -1);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_wrap_at_zero)
{
    /* A direction booked 359°59'59" whose computed value is 0°00'01": the
     * residual is +2", not −359°59'58" (FORMAT.md: residuals wrap into
     * (−π, π]). And the other way round: −2". */
    cairn_net *net = pair_net(2, 1000 * sin(1 * SEC), 1000 * cos(1 * SEC), 0, 0, 0, 0);
    const int B = B_;
    sight(net, 0, B, TWO_PI - 1 * SEC, NO_VAL, NO_VAL, NO_VAL, 0, 0, 4);
    cairn_problem *p = build(net, 1);
    tstate s;
    state_from_net(net, &s);
    s.om[0] = 0.0;
    cairn_lin l;
    ck_assert_int_eq(LIN(0), 0);
    EQ(l.value / SEC, 1.0, 1e-6);
    EQ(cairn_obs_residual(&p->obs[0], l.value) / SEC, 2.0, 1e-6);
    cairn_obs o = p->obs[0];
    o.value = 1 * SEC;
    s.e[B] = -1000 * sin(1 * SEC);
    ck_assert_int_eq(cairn_obs_linearise(p, &o, &s.x, &l), 0);
    EQ(l.value / SEC, 1296000.0 - 1.0, 1e-6);
    EQ(cairn_obs_residual(&o, l.value) / SEC, -2.0, 1e-6);
    /* Orientation: hz = t − ω, so ω = 10" makes the computed value 359°59'51". */
    s.e[B] = 1000 * sin(1 * SEC);
    s.om[0] = 10 * SEC;
    ck_assert_int_eq(LIN(0), 0);
    EQ(l.value / SEC, 1296000.0 - 9.0, 1e-6);
    /* A distance residual is not wrapped. */
    cairn_obs d = blank(CAIRN_OBS_HORIZ, 1);
    d.value = 10.0;
    EQ(cairn_obs_residual(&d, 10.0 + 7.0), 7.0, 1e-12);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_face_two)
{
    /* DEVELOPERS.md "Face two": direction t − ω + π, zenith 2π − z. */
    cairn_net *net = pair_net(3, 600, 800, 100, 100, 0, 0); /* d = 1000 */
    sight(net, 0, B_, 3.5, 270.0 * DEG, NO_VAL, NO_VAL, 0, 0, 4);
    cairn_problem *p = build(net, 1);
    ck_assert_uint_eq(p->nobs, 2);
    ck_assert_int_eq(p->obs[0].face, 2);
    tstate s;
    state_from_net(net, &s);
    s.om[0] = 0.25;
    cairn_lin l;
    ck_assert_int_eq(LIN(0), 0);
    EQ(l.value, atan2(600.0, 800.0) - 0.25 + CAIRN_PI, 1e-12);
    ck_assert_int_eq(LIN(1), 0);
    /* Level sight, ih = th = 0: w = −(1 − k)d²/2R, face one z = atan2(d, w). */
    double w = -(1 - 0.13) * 1e6 / (2 * 6371000.0);
    EQ(l.value, TWO_PI - atan2(1000.0, w), 1e-12);
    cairn_problem_free(&p);
    cairn_net_free(&net);

    /* Slope sqrt((d/scale)² + (Δz − d²/2R)²) and horiz d/scale (dim 3). */
    net = pair_net(3, 300, 400, 10, 25, 1.5, 0);
    net->opt.scale = 0.9996;
    sight(net, 0, B_, 0.6, 88.0 * DEG, 500.3, 500.2, 1.7, 0, 4);
    p = build(net, 1);
    state_from_net(net, &s);
    ck_assert_int_eq(LIN(2), 0);
    double u = (25 + 1.7) - (10 + 1.5) - 500.0 * 500.0 / (2 * 6371000.0);
    EQ(l.value, sqrt(pow(500 / 0.9996, 2) + u * u), 1e-10);
    ck_assert_int_eq(LIN(3), 0);
    EQ(l.value, 500 / 0.9996, 1e-10);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_curvature_refraction)
{
    /* REFERENCES.md §5 [C]: h_cr = (1 − k)D²/2R = 0.068278 m at D = 1 km,
     * R = 6 371 000 m, k = 0.13 (Ghilani & Wolf, Elementary Surveying,
     * 13th ed., via REFERENCES.md). Checked two ways. */
    cairn_net *net = pair_net(3, 0, 1000, 0, 0, 0, 0);
    const int B = B_;
    sight(net, 0, B, 0.0, 90.0 * DEG, 1000.0, NO_VAL, 0, 0, 4);
    cairn_problem *p = build(net, 1);
    tstate s;
    state_from_net(net, &s);
    cairn_lin l;
    /* (1) zenith: over level ground the far mark drops by h_cr below the
     * horizon, so z − 90° = atan(h_cr / D) ≈ h_cr / D. */
    ck_assert_int_eq(p->obs[1].kind, CAIRN_OBS_ZENITH);
    ck_assert_int_eq(LIN(1), 0);
    EQ(tan(l.value - CAIRN_PI / 2) * 1000.0, 0.068278, 5e-7);
    /* ... and raising B by h_cr puts it on the horizon. */
    s.h[B] = (1 - 0.13) * 1000.0 * 1000.0 / (2 * 6371000.0);
    ck_assert_int_eq(LIN(1), 0);
    EQ(l.value, CAIRN_PI / 2, 1e-15);
    cairn_problem_free(&p);
    /* (2) trig-rise in dimension 1: s = 1000, z = 90° gives Δh = h_cr. */
    net->opt.dimension = 1;
    p = build(net, 1);
    ck_assert_uint_eq(p->nobs, 1);
    ck_assert_int_eq(p->obs[0].kind, CAIRN_OBS_TRIG_RISE);
    EQ(p->obs[0].value, 0.068278, 5e-7);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_reductions)
{
    /* Dimension 2: FORMAT.md s·sin z with s = 250.0014·(1 + 5e-6) (setup
     * 3 ppm + sight 2 ppm), z = 90°01'12"; python3 by hand: 250.002634775968.
     * The face-two reading 269°58'48" reduces with its face-one value. */
    double z1 = (90.0 + 1.0 / 60 + 12.0 / 3600) * DEG;
    for (int face = 1; face <= 2; face++) {
        cairn_net *net = pair_net(2, 0, 250, 0, 0, 1.55, 3.0);
        sight(net, 0, B_, 0.0, face == 1 ? z1 : TWO_PI - z1, 250.0014, NO_VAL, 1.6, 2, 4);
        cairn_problem *p = build(net, 1);
        ck_assert_uint_eq(p->nobs, 2); /* direction, reduced horiz */
        const cairn_obs *o = &p->obs[1];
        ck_assert_int_eq(o->kind, CAIRN_OBS_HORIZ);
        EQ(o->value, 250.002634775968, 1e-9);
        EQ(o->value, 250.0014 * (1 + 5e-6) * sin(z1), 1e-9);
        EQ(o->aux_s, 250.0014 * (1 + 5e-6), 1e-12);
        EQ(o->aux_z, z1, 1e-14);
        ck_assert_int_eq(p->booked[1], 2);
        cairn_problem_free(&p);
        cairn_net_free(&net);
    }
    /* Dimension 1 worked case: s = 1204.0, z = 88°00'00", ih 1.55, th 1.6,
     * k 0.13, R 6 371 000: Δh = s cos z + (1−k)(s sin z)²/2R + ih − th;
     * python3 by hand: 42.067850555600; with 5 ppm 42.068061639138. */
    for (int ppm = 0; ppm <= 5; ppm += 5) {
        for (int face = 1; face <= 2; face++) {
            cairn_net *net = pair_net(1, 0, 1204, 0, 42, 1.55, 0);
            sight(net, 0, B_, 0.0, (face == 1 ? 88.0 : 272.0) * DEG, 1204.0, 1203.0, 1.6,
                  ppm, 4);
            cairn_problem *p = build(net, 1);
            ck_assert_uint_eq(p->nobs, 1); /* the horiz adds nothing in dim 1 */
            const cairn_obs *o = &p->obs[0];
            ck_assert_int_eq(o->kind, CAIRN_OBS_TRIG_RISE);
            ck_assert(o->at == A_ && o->to == B_);
            double s = 1204.0 * (1 + ppm * 1e-6), z = 88.0 * DEG;
            double byhand = s * cos(z) + (1 - 0.13) * (s * sin(z)) * (s * sin(z)) /
                                             (2 * 6371000.0) + 1.55 - 1.6;
            EQ(o->value, byhand, 1e-9);
            EQ(o->value, ppm ? 42.068061639138 : 42.067850555600, 1e-9);
            EQ(o->aux_z, z, 1e-14);
            cairn_problem_free(&p);
            cairn_net_free(&net);
        }
    }
}
END_TEST

/* ------------------------------------------------------------ sigma */

/* σ of problem observation i with its own sd replaced. */
static double own_sd(const cairn_problem *p, size_t i, const cairn_state *x, double len,
                     double ang, double ppm, unsigned has)
{
    cairn_obs o = p->obs[i];
    o.sd.length = len;
    o.sd.angle = ang;
    o.sd.ppm = ppm;
    o.sd.has = has;
    return cairn_obs_sigma(p, &o, x);
}

START_TEST(test_sigma_formulas)
{
    /* Hand-evaluated with python3 from FORMAT.md "Models", instrument
     * σ_dir 1", σ_zen 1.5", 1 mm + 1.5 ppm, centring 0.6 mm, height 1 mm. */
    cairn_net *net = new_net(3);
    int A = mark(net, "A", 0, 0, 10, 1);
    int B = mark(net, "B", 0, 500, 12, 2);
    int C = mark(net, "C", 600, 300, 11, 3);
    int s0 = setup(net, A, 1.5, 0, 4);
    sight(net, s0, B, 0.0, 89.0 * DEG, 500.1, NO_VAL, 1.5, 0, 5);
    angle(net, A, B, C, 0.9, 6);
    azimuth(net, A, B, 0.0, 3 * SEC, 7);
    azimuth(net, A, C, 0.9, 0, 8);
    rise(net, A, B, 2.0, 0.23, 0, 9);
    rise(net, A, C, 1.0, 0, 9, 10);
    cairn_problem *p = build(net, 1);
    ck_assert_uint_eq(p->nobs, 8);
    tstate s;
    state_from_net(net, &s);
    /* direction √(σ_dir² + 2c²/d²), d = 500: 5.136577706907381e-06 */
    EQ(SIG(0), 5.136577706907381e-06, 1e-17);
    /* zenith √(σ_zen² + 2σ_h²/d²): 7.80288207734618e-06 */
    EQ(SIG(1), 7.80288207734618e-06, 1e-17);
    /* slope √(a² + (b·1e-6·s)² + 2c²), s = 500.1: 0.001510868962716489 */
    EQ(SIG(2), 0.001510868962716489, 1e-15);
    /* angle, d1 = 500, d2 = √450000, d3 = √400000: 7.108365570100892e-06 */
    EQ(SIG(3), 7.108365570100892e-06, 1e-17);
    /* azimuth: its own sd, or nothing */
    EQ(SIG(4), 3 * SEC, 1e-17);
    ck_assert_double_eq(SIG(5), -1.0);
    /* rise 0.7 mm·√0.23 = 0.00033570820663189036; 0.3 mm·√9 = 0.9 mm */
    EQ(SIG(6), 0.00033570820663189036, 1e-16);
    EQ(SIG(7), 0.0009, 1e-16);
    /* d from the CURRENT coordinates (DEVELOPERS.md): B at 250 m gives
     * 5.918144180323582e-06 for the direction. */
    s.n[B] = 250;
    EQ(SIG(0), 5.918144180323582e-06, 1e-17);
    s.n[B] = 500;
    /* Own sd replaces all: hz-sd, zen-sd, dist-sd 2 mm + 2 ppm
     * (√(0.002² + (2e-6·500.1)²) = 0.002236157427374021), rise sd. */
    const unsigned L = CAIRN_SD_LENGTH, AN = CAIRN_SD_ANGLE, PP = CAIRN_SD_PPM;
    EQ(own_sd(p, 0, &s.x, 0, 2 * SEC, 0, AN), 2 * SEC, 1e-18);
    EQ(own_sd(p, 1, &s.x, 0, 4 * SEC, 0, AN), 4 * SEC, 1e-18);
    EQ(own_sd(p, 2, &s.x, 0.002, 0, 2, L | PP), 0.002236157427374021, 1e-15);
    EQ(own_sd(p, 2, &s.x, 0.002, 0, 2, L), 0.002, 1e-18);
    EQ(own_sd(p, 6, &s.x, 0.0015, 0, 0, L), 0.0015, 1e-18);
    cairn_problem_free(&p);

    /* ppm enters s: 500.1·(1 + 10e-6) gives 0.0015108726872429467. */
    net->obs[2].ppm = 10;
    p = build(net, 1);
    EQ(SIG(2), 0.0015108726872429467, 1e-15);
    cairn_problem_free(&p);
    net->obs[2].ppm = 0;

    /* Dimension 2: the reduced horiz uses the distance formula with the
     * booked s = 500.1 (not s·sin z): 0.001510868962716489. */
    net->opt.dimension = 2;
    p = build(net, 1);
    ck_assert_int_eq(p->obs[1].kind, CAIRN_OBS_HORIZ);
    EQ(SIG(1), 0.001510868962716489, 1e-15);
    cairn_problem_free(&p);

    /* Dimension 1: σ² = (cos z·σ_s)² + (s sin z·σ_z)² + 2σ_h², s = 500.1,
     * z = 89°: 0.003901691667526606; with dist-sd 3 mm and zen-sd 2":
     * 0.005050684362931193. */
    net->opt.dimension = 1;
    p = build(net, 1);
    ck_assert_int_eq(p->obs[0].kind, CAIRN_OBS_TRIG_RISE);
    EQ(SIG(0), 0.003901691667526606, 1e-15);
    cairn_problem_free(&p);
    net->obs[1].sd.angle = 2 * SEC;    /* the sight's zen-sd */
    net->obs[1].sd.has = CAIRN_SD_ANGLE;
    net->obs[2].sd.length = 0.003;     /* the sight's dist-sd */
    net->obs[2].sd.has = CAIRN_SD_LENGTH;
    p = build(net, 1);
    EQ(SIG(0), 0.005050684362931193, 1e-15);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_sigma_instrument_default)
{
    /* obs->inst == -1: the only instrument of the kind is used; with two
     * total stations and none named there is no precision (-1). */
    cairn_net *net = new_net(2);
    int A = mark(net, "A", 0, 0, 0, 1);
    int B = mark(net, "B", 0, 500, 0, 2);
    int C = mark(net, "C", 600, 300, 0, 3);
    angle(net, A, B, C, 0.9, 4);
    net->obs[0].inst = -1;
    rise(net, A, B, 0.5, 0.23, 0, 5);
    net->obs[1].inst = -1;
    net->opt.dimension = 0;
    cairn_problem *p = build(net, 1);
    tstate s;
    state_from_net(net, &s);
    EQ(SIG(0), 7.108365570100892e-06, 1e-17);
    EQ(SIG(1), 0.00033570820663189036, 1e-16);
    cairn_instrument ts2 = net->insts[0];
    strcpy(ts2.id, "TS2");
    ck_assert_int_eq(cairn_net_add_inst(net, &ts2), 2);
    ck_assert_double_eq(SIG(0), -1.0);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

/* ------------------------------------------------------------ builder */

START_TEST(test_build_order_and_dimension)
{
    cairn_net *net = new_net(0);
    int P = mark(net, "P", 0, 0, 0, 1);
    int Q = mark(net, "Q", 100, 0, 0, 2);
    /* R is named first (by the setup) and defined later: its control
     * comes after Q's (definition order, FORMAT.md observations.csv). */
    int R = cairn_net_mark(net, "R", at_line(3));
    int S = mark(net, "S", 0, 100, 0, 4);
    int s0 = setup(net, R, 1.5, 0, 5);
    sight(net, s0, P, 0.1, 90.0 * DEG, 200.0, 199.9, 1.5, 0, 6);
    sight(net, s0, Q, 0.2, NO_VAL, NO_VAL, 150.0, 0, 0, 7);
    rise(net, P, S, 0.3, 0.5, 0, 8);
    net->marks[R].e = 50;
    net->marks[R].n = 50;
    net->marks[R].h = 1;
    net->marks[R].given = CAIRN_E | CAIRN_N | CAIRN_H;
    net->marks[R].def = at_line(20);
    net->marks[R].sd_en = 0.01;
    net->marks[Q].sd_en = 0.02;
    net->marks[Q].sd_h = 0.03;          /* Q has no height obs: no control-h */
    net->marks[S].sd_h = 0.04;
    net->marks[P].hold = CAIRN_E | CAIRN_N;
    net->marks[P].sd_en = 0.05;         /* held: no control */

    /* auto → 3 (a zenith exists) */
    cairn_problem *p = build(net, 0);
    ck_assert_int_eq(p->dimension, 3);
    static const cairn_obs_kind want3[] = {
        CAIRN_OBS_DIRECTION, CAIRN_OBS_ZENITH, CAIRN_OBS_SLOPE, CAIRN_OBS_HORIZ,
        CAIRN_OBS_DIRECTION, CAIRN_OBS_HORIZ, CAIRN_OBS_RISE,
        CAIRN_OBS_CONTROL_E, CAIRN_OBS_CONTROL_N,   /* Q (line 2) */
        CAIRN_OBS_CONTROL_H,                        /* S (line 4) */
        CAIRN_OBS_CONTROL_E, CAIRN_OBS_CONTROL_N};  /* R (line 20) */
    static const int booked3[] = {0, 1, 2, 3, 4, 5, 6, -1, -1, -1, -1, -1};
    static const int at3[] = {-1, -1, -1, -1, -1, -1, -1, 1, 1, 3, 2, 2};
    ck_assert_uint_eq(p->nobs, sizeof want3 / sizeof want3[0]);
    for (size_t i = 0; i < p->nobs; i++) {
        ck_assert_int_eq(p->obs[i].kind, want3[i]);
        ck_assert_int_eq(p->booked[i], booked3[i]);
        if (at3[i] >= 0)
            ck_assert_int_eq(p->obs[i].at, at3[i]);
    }
    ck_assert_double_eq(p->obs[7].value, 100);
    ck_assert_double_eq(p->obs[7].sd.length, 0.02);
    ck_assert_double_eq(p->obs[9].value, 0);
    ck_assert_double_eq(p->obs[9].sd.length, 0.04);
    ck_assert_double_eq(p->obs[10].value, 50);
    {   /* control σ = the mark's sd-en / sd-h */
        tstate st;
        state_from_net(net, &st);
        ck_assert_double_eq(cairn_obs_sigma(p, &p->obs[8], &st.x), 0.02);
        ck_assert_double_eq(cairn_obs_sigma(p, &p->obs[9], &st.x), 0.04);
        ck_assert_double_eq(cairn_obs_sigma(p, &p->obs[11], &st.x), 0.01);
    }
    ck_assert_int_eq(p->obs[10].src.line, 20);
    ck_assert_uint_eq(p->touch[P], CAIRN_E | CAIRN_N | CAIRN_H);
    ck_assert_uint_eq(p->touch[Q], CAIRN_E | CAIRN_N);
    ck_assert_uint_eq(p->touch[R], CAIRN_E | CAIRN_N | CAIRN_H);
    ck_assert_uint_eq(p->touch[S], CAIRN_H);
    ck_assert(p->plane && p->heights && !p->datum_free);
    /* slope value carries ppm (none here) and is used as booked */
    ck_assert_double_eq(p->obs[2].value, 200.0);
    cairn_problem_free(&p);

    /* datum free: no control observations at all */
    p = build(net, 1);
    ck_assert_uint_eq(p->nobs, 7);
    ck_assert(p->datum_free);
    cairn_problem_free(&p);

    /* Without the zenith, auto → 2, rises kept as the height part;
     * the slope then has no zenith: error at its source (below). Drop both
     * by turning them into horizontal readings of their own. */
    net->obs[1].kind = CAIRN_OBS_HORIZ; /* zenith line rebooked as a distance */
    net->obs[1].value = 199.8;
    net->obs[2].kind = CAIRN_OBS_HORIZ;
    p = build(net, 1);
    ck_assert_int_eq(p->dimension, 2);
    ck_assert_uint_eq(p->nobs, 7);
    ck_assert_int_eq(p->obs[6].kind, CAIRN_OBS_RISE);
    ck_assert_uint_eq(p->touch[S], CAIRN_H);
    ck_assert(p->plane && p->heights);
    cairn_problem_free(&p);

    /* Explicit 2: "plane positions only" (FORMAT.md `dimension`; as the
     * reference solver): the rise is dropped. */
    net->opt.dimension = 2;
    p = build(net, 1);
    ck_assert_uint_eq(p->nobs, 6);
    ck_assert_uint_eq(p->touch[S], 0);
    ck_assert(p->plane && !p->heights);
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_slope_without_zenith)
{
    cairn_net *net = pair_net(2, 0, 100, 0, 0, 0, 0);
    int C = mark(net, "C", 100, 0, 0, 3);
    sight(net, 0, B_, 0.0, NO_VAL, 100.0, NO_VAL, 0, 0, 5);
    sight(net, 0, C, 1.5, 90 * DEG, 100.0, NO_VAL, 0, 0, 6);
    sight(net, 0, C, 1.5, NO_VAL, 100.0, NO_VAL, 0, 0, 7);
    cairn_error err;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    cairn_problem dummy, *p = &dummy; /* must be set to NULL */
    ck_assert_int_eq(cairn_problem_build(net, 0, &p, &err), -1);
    ck_assert_ptr_null(p);
    ck_assert_int_eq(err.nerrors, 2);
    ck_assert_str_eq(err.diag[0].message, "slope distance needs a zenith angle in dimension 2");
    ck_assert_str_eq(err.diag[0].file, "t.cfb");
    ck_assert(err.diag[0].line == 5 && err.diag[0].col == 3); /* the slope reading */
    ck_assert_int_eq(err.diag[1].line, 7);
    /* In dimension 3 and 1 the same net is fine (dim 1: no trig-rise from
     * those sights). */
    cairn_error_reset(&err);
    net->opt.dimension = 3;
    ck_assert_int_eq(cairn_problem_build(net, 0, &p, &err), 0);
    cairn_problem_free(&p);
    net->opt.dimension = 1;
    ck_assert_int_eq(cairn_problem_build(net, 0, &p, &err), 0);
    ck_assert_uint_eq(p->nobs, 1);
    ck_assert_int_eq(p->obs[0].kind, CAIRN_OBS_TRIG_RISE);
    cairn_problem_free(&p);
    cairn_error_clear(&err);
    cairn_problem_free(&p); /* NULL is fine */
    cairn_net_free(&net);
}
END_TEST

START_TEST(test_coincident)
{
    cairn_net *net = pair_net(3, 0, 0, 0, 10, 0, 0);
    sight(net, 0, B_, 0.0, 1 * DEG, 10.0, 1.0, 0, 0, 4);
    cairn_problem *p = build(net, 1);
    tstate s;
    state_from_net(net, &s);
    cairn_lin l;
    ck_assert_int_eq(LIN(0), -1); /* direction */
    ck_assert_int_eq(LIN(1), -1); /* zenith */
    /* A plumb slope distance is still defined: |Δz| = 10. */
    ck_assert_int_eq(LIN(2), 0);
    EQ(l.value, 10.0, 1e-12);
    EQ(l.d[CAIRN_PAR_H_TO], 1.0, 1e-12);
    ck_assert_int_eq(LIN(3), -1); /* horiz */
    cairn_problem_free(&p);
    cairn_net_free(&net);
}
END_TEST

static Suite *equations_suite(void)
{
    Suite *s = suite_create("equations");
    TCase *tc = tcase_create("partials");
    tcase_add_loop_test(tc, test_partials_by_dimension, 1, 4);
    suite_add_tcase(s, tc);
    tc = tcase_create("values");
    tcase_add_test(tc, test_azimuth_quadrants);
    tcase_add_test(tc, test_wrap_at_zero);
    tcase_add_test(tc, test_face_two);
    tcase_add_test(tc, test_curvature_refraction);
    tcase_add_test(tc, test_reductions);
    tcase_add_test(tc, test_coincident);
    suite_add_tcase(s, tc);
    tc = tcase_create("sigma");
    tcase_add_test(tc, test_sigma_formulas);
    tcase_add_test(tc, test_sigma_instrument_default);
    suite_add_tcase(s, tc);
    tc = tcase_create("builder");
    tcase_add_test(tc, test_build_order_and_dimension);
    tcase_add_test(tc, test_slope_without_zenith);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(equations_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
