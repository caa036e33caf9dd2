/*
 * start_fixture.h — the synthetic-network fixture of test_start.c (kept
 * apart only to keep files short; included by that one file).
 *
 * Observations are computed from invented truth coordinates by the
 * FORMAT.md "Models" formulas written out again here, sharing no code with
 * the library: plane distance d = √(Δe² + Δn²), azimuth t = atan2(Δe, Δn),
 * direction hz = t − ω (+ π face two), zenith atan2(d, Δz − (1 − k)d²/2R)
 * (face two 2π − z), slope √(d² + (Δz − d²/2R)²), rise h_to − h_from.
 */
#ifndef CAIRN_TEST_START_FIXTURE_H
#define CAIRN_TEST_START_FIXTURE_H

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/start.h"

#define SEC (CAIRN_PI / (180.0 * 3600.0))
#define TWO_PI (2.0 * CAIRN_PI)
#define EXACT 1e-6 /* m, noise-free data */
#define NOISY 0.03 /* m, 2 mm / 2" noise */
#define MAXM 1024
#define EN (CAIRN_E | CAIRN_N)
#define ENH (CAIRN_E | CAIRN_N | CAIRN_H)

/* Readings of one sight. */
enum { R_DIR = 1, R_ZEN = 2, R_SLOPE = 4, R_HORIZ = 8 };

typedef struct {
    cairn_net *net;
    int line;
    double te[MAXM], tn[MAXM], th[MAXM];
    double omega[MAXM]; /* true orientation per setup */
    int setup;
    unsigned long long rng;
    double nlen, nang; /* uniform noise half-width: m, rad */
    cairn_error err;
    cairn_start_report *rep;
} T;

/* Small LCG (Knuth MMIX constants), uniform in [-1, 1). */
static double rnd(T *t)
{
    t->rng = t->rng * 6364136223846793005ULL + 1442695040888963407ULL;
    return (double)(t->rng >> 11) / 4503599627370496.0 - 1.0;
}

static void t_init(T *t, int dim, double nlen, double nang)
{
    memset(t, 0, sizeof *t);
    t->net = cairn_net_new();
    ck_assert_ptr_nonnull(t->net);
    t->net->opt.dimension = dim;
    t->line = 1;
    t->rng = 12345;
    t->nlen = nlen;
    t->nang = nang;
    t->setup = -1;
    ck_assert_int_eq(cairn_error_init(&t->err), 0);
    const cairn_instrument ts = {
        .id = "TS1", .kind = CAIRN_INST_TOTAL_STATION,
        .set = CAIRN_INST_DIRECTION | CAIRN_INST_ZENITH | CAIRN_INST_DISTANCE |
               CAIRN_INST_CENTRING | CAIRN_INST_HEIGHT,
        .direction = 1.0 * SEC, .zenith = 1.5 * SEC, .dist_a = 0.001,
        .dist_b = 1.5, .centring = 0.0006, .height = 0.001};
    const cairn_instrument lv = {.id = "LV1", .kind = CAIRN_INST_LEVEL,
                                 .set = CAIRN_INST_PER_KM, .per_km = 0.0007};
    ck_assert_int_eq(cairn_net_add_inst(t->net, &ts), 0);
    ck_assert_int_eq(cairn_net_add_inst(t->net, &lv), 1);
}

static void t_done(T *t)
{
    cairn_start_report_free(&t->rep);
    ck_assert_ptr_null(t->rep);
    cairn_error_clear(&t->err);
    cairn_net_free(&t->net);
}

static cairn_src src(int line)
{
    return (cairn_src){"t.cfb", line, 1};
}

static int t_mark(T *t, const char *id, double e, double n, double h)
{
    int m = cairn_net_mark(t->net, id, src(t->line++));
    ck_assert_int_ge(m, 0);
    t->te[m] = e;
    t->tn[m] = n;
    t->th[m] = h;
    return m;
}

/* Give mark m its true components `bits`, holding `hold`. */
static void t_give(T *t, int m, unsigned bits, unsigned hold)
{
    cairn_mark *mk = &t->net->marks[m];
    mk->e = t->te[m];
    mk->n = t->tn[m];
    mk->h = t->th[m];
    mk->given = bits;
    mk->hold = hold;
    mk->def = src(t->line++);
}

static int t_setup(T *t, int at, double omega, double ih)
{
    cairn_setup s = {.at = at, .inst = 0, .ih = ih, .src = src(t->line++)};
    int k = cairn_net_add_setup(t->net, &s);
    ck_assert_int_ge(k, 0);
    t->omega[k] = omega;
    t->setup = k;
    return k;
}

static cairn_obs base_obs(T *t, cairn_obs_kind kind, int line)
{
    cairn_obs o;
    memset(&o, 0, sizeof o);
    o.kind = kind;
    o.at = o.from = o.to = o.setup = o.sight = -1;
    o.inst = 0;
    o.face = 1;
    o.src = src(line);
    (void)t;
    return o;
}

/* FORMAT.md "Models": plane distance, azimuth, Δz. */
static double t_d(const T *t, int a, int b)
{
    return hypot(t->te[b] - t->te[a], t->tn[b] - t->tn[a]);
}

static double t_az(const T *t, int a, int b)
{
    double x = atan2(t->te[b] - t->te[a], t->tn[b] - t->tn[a]);
    return x < 0 ? x + TWO_PI : x;
}

/* One sight from the current setup to `to`, its readings computed from
 * the truth (dimension-3 model for zenith and slope). Returns the index
 * of its first observation. */
static int t_sight(T *t, int to, unsigned readings, double th, int face)
{
    const cairn_setup *s = &t->net->setups[t->setup];
    int at = s->at, line = t->line++, first = -1;
    const double R = 6371000.0, k = t->net->opt.refraction;
    double d = t_d(t, at, to);
    double dz = (t->th[to] + th) - (t->th[at] + s->ih);
    int sight = t->net->nsights++;
    for (unsigned bit = R_DIR; bit <= R_HORIZ; bit <<= 1) {
        if (!(readings & bit))
            continue;
        cairn_obs o = base_obs(t, CAIRN_OBS_DIRECTION, line);
        o.at = at;
        o.to = to;
        o.setup = t->setup;
        o.sight = sight;
        o.ih = s->ih;
        o.th = th;
        o.face = face;
        if (bit == R_DIR) {
            double hz = t_az(t, at, to) - t->omega[t->setup] + (face == 2 ? CAIRN_PI : 0);
            hz = fmod(hz + 4 * TWO_PI, TWO_PI);
            o.value = hz + t->nang * rnd(t);
        } else if (bit == R_ZEN) {
            o.kind = CAIRN_OBS_ZENITH;
            double z = atan2(d, dz - (1 - k) * d * d / (2 * R));
            o.value = (face == 2 ? TWO_PI - z : z) + t->nang * rnd(t);
        } else if (bit == R_SLOPE) {
            o.kind = CAIRN_OBS_SLOPE;
            double v = dz - d * d / (2 * R);
            o.value = sqrt(d * d + v * v) + t->nlen * rnd(t);
        } else {
            o.kind = CAIRN_OBS_HORIZ;
            o.value = d + t->nlen * rnd(t);
        }
        int i = cairn_net_add_obs(t->net, &o);
        ck_assert_int_ge(i, 0);
        if (first < 0)
            first = i;
    }
    return first;
}

/* A dimension-1 sight: slope and zenith chosen so that FORMAT.md's
 * dimension-1 formula s·cos z + (1−k)(s·sin z)²/2R + ih − th gives the
 * true height difference exactly, with s·sin z = the plane distance. */
static void t_sight1(T *t, int to, double th)
{
    const cairn_setup *s = &t->net->setups[t->setup];
    int at = s->at, line = t->line++;
    const double R = 6371000.0, k = t->net->opt.refraction;
    double D = t_d(t, at, to);
    double V = t->th[to] - t->th[at] - s->ih + th - (1 - k) * D * D / (2 * R);
    int sight = t->net->nsights++;
    cairn_obs o = base_obs(t, CAIRN_OBS_ZENITH, line);
    o.at = at;
    o.to = to;
    o.setup = t->setup;
    o.sight = sight;
    o.ih = s->ih;
    o.th = th;
    o.value = atan2(D, V);
    ck_assert_int_ge(cairn_net_add_obs(t->net, &o), 0);
    o.kind = CAIRN_OBS_SLOPE;
    o.value = hypot(D, V);
    ck_assert_int_ge(cairn_net_add_obs(t->net, &o), 0);
}

static int t_rise(T *t, int from, int to, double blunder)
{
    cairn_obs o = base_obs(t, CAIRN_OBS_RISE, t->line++);
    o.from = from;
    o.to = to;
    o.inst = 1;
    o.km = 0.5;
    o.value = t->th[to] - t->th[from] + t->nlen * rnd(t) + blunder;
    return cairn_net_add_obs(t->net, &o);
}

static void t_azimuth(T *t, int from, int to)
{
    cairn_obs o = base_obs(t, CAIRN_OBS_AZIMUTH, t->line++);
    o.from = from;
    o.to = to;
    o.inst = -1;
    o.sd.angle = 3 * SEC;
    o.sd.has = CAIRN_SD_ANGLE;
    o.value = t_az(t, from, to) + t->nang * rnd(t);
    ck_assert_int_ge(cairn_net_add_obs(t->net, &o), 0);
}

static void t_angle(T *t, int at, int from, int to)
{
    cairn_obs o = base_obs(t, CAIRN_OBS_ANGLE, t->line++);
    o.at = at;
    o.from = from;
    o.to = to;
    double a = t_az(t, at, to) - t_az(t, at, from);
    o.value = fmod(a + 2 * TWO_PI, TWO_PI) + t->nang * rnd(t);
    ck_assert_int_ge(cairn_net_add_obs(t->net, &o), 0);
}

static int t_run(T *t, int dim)
{
    return cairn_start_compute(t->net, dim, &t->rep, &t->err);
}

/* Computed (or given) coordinates of m against the truth. */
static void t_check(const T *t, int m, unsigned comp, double tol)
{
    const cairn_mark *mk = &t->net->marks[m];
    ck_assert_uint_eq(mk->computed, comp & ~mk->given);
    if (comp & CAIRN_E)
        ck_assert_double_eq_tol(mk->e, t->te[m], tol);
    if (comp & CAIRN_N)
        ck_assert_double_eq_tol(mk->n, t->tn[m], tol);
    if (comp & CAIRN_H)
        ck_assert_double_eq_tol(mk->h, t->th[m], tol);
}

static const cairn_start_step *t_step(const T *t, int m, unsigned comp)
{
    for (size_t i = 0; i < cairn_start_report_count(t->rep); i++) {
        const cairn_start_step *s = cairn_start_report_step(t->rep, i);
        if (s->mark == m && (s->comp & comp))
            return s;
    }
    ck_abort_msg("no step for mark %d", m);
    return NULL;
}

static int t_has_msg(const T *t, cairn_severity sev, const char *text)
{
    for (int i = 0; i < t->err.ndiag; i++)
        if (t->err.diag[i].severity == sev && strstr(t->err.diag[i].message, text))
            return 1;
    return 0;
}

#endif
