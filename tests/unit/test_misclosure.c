/* Field-book misclosures (cairn check): levelling loops, lines and
 * allowances, traverses, face pairs, direction sets, repeated distances,
 * and the misclosures.csv writer. Run from the repository root: the field
 * books are in tests/integration/misclosure/.
 *
 * Sources of the expected values:
 *   - "hand-computed from the booked values": plain arithmetic in this
 *     file on the numbers booked in the field book, independent of the
 *     library (traverses are carried step by step here);
 *   - FGCC 1984 levelling loop allowances m·√K (REFERENCES.md §4.3, the
 *     table is [M]; its [C] examples: 16 km third order 12 mm·√K → 48 mm,
 *     9 km first-order class I 4 mm·√K → 12 mm);
 *   - the fail rule, three expected standard deviations: common practice,
 *     no source. */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cairn/cairn.h"
#include "cairn/misclosure.h"

#define SEC (CAIRN_PI / 648000.0)
#define MM 1e-3
#define TOL_LEN 1e-9      /* m: sums of booked values, exact to rounding */
#define TOL_SEC 1e-6      /* arc-seconds */

static const char *DIR_ = "tests/integration/misclosure/";

static double dms(double d, double m, double s)
{
    return (d + m / 60.0 + s / 3600.0) * CAIRN_PI / 180.0;
}

static cairn_net *load(const char *name)
{
    char path[512];
    snprintf(path, sizeof path, "%s%s", DIR_, name);
    cairn_error err;
    cairn_net *net = NULL;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    int rc = cairn_load_project(path, &net, &err);
    ck_assert_msg(rc == 0 && err.nerrors == 0, "%s: %d errors", path, err.nerrors);
    cairn_error_clear(&err);
    return net;
}

static cairn_net *parse(const char *text)
{
    cairn_net *net = cairn_net_new();
    cairn_error err;
    ck_assert_ptr_nonnull(net);
    ck_assert_int_eq(cairn_error_init(&err), 0);
    cairn_parse_fieldbook(net, "mem.cfb", text, strlen(text), 0, &err);
    if (!err.nerrors)
        cairn_validate(net, &err);
    ck_assert_int_eq(err.nerrors, 0);
    cairn_error_clear(&err);
    return net;
}

static cairn_misclosures *compute(const cairn_net *net)
{
    cairn_error err;
    cairn_misclosures *m = NULL;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    ck_assert_int_eq(cairn_misclosures_compute(net, &m, &err), 0);
    ck_assert_ptr_nonnull(m);
    cairn_error_clear(&err);
    return m;
}

/* The route of item i as "A B C". */
static const char *route(const cairn_net *net, const cairn_misclosures *m, size_t i,
                         char *buf, size_t n)
{
    buf[0] = 0;
    const cairn_misclosure *it = &m->item[i];
    for (size_t r = 0; r < it->nroute; r++) {
        size_t l = strlen(buf);
        snprintf(buf + l, n - l, "%s%s", r ? " " : "", net->marks[m->route[it->route + r]].id);
    }
    return buf;
}

/* ------------------------------------------------------------------ */
/* Levelling                                                           */
/* ------------------------------------------------------------------ */

START_TEST(level_loop_and_line)
{
    cairn_net *net = load("level.cfb");
    cairn_misclosures *m = compute(net);
    char b[256];
    ck_assert_uint_eq(m->n, 2);
    const cairn_misclosure *loop = &m->item[0], *line = &m->item[1];
    ck_assert_int_eq(loop->kind, CAIRN_MISC_LEVEL_LOOP);
    ck_assert_str_eq(route(net, m, 0, b, sizeof b), "BM1 L1 L2 BM1");
    /* hand-computed from the booked values: 1.2345 − 0.5678 − 0.6640 */
    ck_assert_double_eq_tol(loop->misclosure, 1.2345 - 0.5678 - 0.6640, TOL_LEN);
    ck_assert_double_eq_tol(loop->misclosure, 0.0027, TOL_LEN);
    /* per-km 1 mm over 1.2 + 0.8 + 2.0 km: 1 mm·√4.0 = 2 mm */
    ck_assert_double_eq_tol(loop->expected_sd, 2.0 * MM, 1e-12);
    ck_assert_double_eq_tol(loop->length, 4000.0, 1e-9);
    ck_assert_double_eq_tol(loop->ratio, 1.35, 1e-9);
    ck_assert_int_eq(loop->fail, 0);
    ck_assert(isnan(loop->allowance)); /* no loop-allowance set */
    ck_assert_int_eq(loop->src.line, 7);

    ck_assert_int_eq(line->kind, CAIRN_MISC_LEVEL_LINE);
    ck_assert_str_eq(route(net, m, 1, b, sizeof b), "BM1 L1 L3 BM2");
    /* hand-computed from the booked values: computed − known rise */
    ck_assert_double_eq_tol(line->misclosure,
                            (1.2345 + 2.1000 + 0.4321) - (103.7626 - 100.0000), TOL_LEN);
    ck_assert_double_eq_tol(line->misclosure, 0.0040, TOL_LEN);
    ck_assert_double_eq_tol(line->expected_sd, 1.0 * MM * sqrt(1.2 + 1.5 + 1.0), 1e-12);
    ck_assert_double_eq_tol(line->length, 3700.0, 1e-9);
    ck_assert_int_eq(line->fail, 0);
    ck_assert_uint_eq(m->nfail, 0);
    cairn_misclosures_free(&m);
    ck_assert_ptr_null(m);
    cairn_net_free(&net);
}
END_TEST

START_TEST(level_three_sigma_and_setups)
{
    cairn_net *net = load("level_fail.cfb");
    cairn_misclosures *m = compute(net);
    char b[256];
    ck_assert_uint_eq(m->n, 2);
    /* hand-computed from the booked values: 0.5 + 0.25 − 0.74 = 10 mm
     * against 1 mm·√4 km = 2 mm: ratio 5, above 3 (common practice, no
     * source) */
    ck_assert_double_eq_tol(m->item[0].misclosure, 0.0100, TOL_LEN);
    ck_assert_double_eq_tol(m->item[0].ratio, 5.0, 1e-9);
    ck_assert_int_eq(m->item[0].fail, 1);
    /* two rises P3–P4 close a two-rise loop; setups only: no length,
     * σ = 0.5 mm·√4 for each, hand-computed from the booked values */
    ck_assert_str_eq(route(net, m, 1, b, sizeof b), "P3 P4 P3");
    ck_assert_double_eq_tol(m->item[1].misclosure, 0.1000 - 0.1010, TOL_LEN);
    ck_assert(isnan(m->item[1].length));
    ck_assert_double_eq_tol(m->item[1].expected_sd, sqrt(2.0) * 1.0 * MM, 1e-12);
    ck_assert_int_eq(m->item[1].fail, 0);
    ck_assert_uint_eq(m->nfail, 1);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* A three-rise loop of km1 + km2 + km3 whose rises sum to `mis` (m). */
static cairn_misclosures *allowance_loop(const char *allow, const char *perkm, double km1,
                                         double km2, double km3, double mis, cairn_net **pnet)
{
    char text[1024];
    snprintf(text, sizeof text,
             "option loop-allowance %s\n"
             "instrument LV per-km %s\n"
             "rise G1 G2 2.0000 km %.3f\n"
             "rise G2 G3 -0.5000 km %.3f\n"
             "rise G3 G1 %.4f km %.3f\n",
             allow, perkm, km1, km2, -1.5 + mis, km3);
    *pnet = parse(text);
    return compute(*pnet);
}

/* FGCC 1984 third order, loop: 12 mm·√K (REFERENCES.md §4.3 [M]); a 16 km
 * loop allows 48 mm ([C] example there). σ = 5 mm·√16 = 20 mm keeps the
 * ratio below 3, so only the allowance decides. */
START_TEST(allowance_third_order)
{
    cairn_net *net;
    cairn_misclosures *m = allowance_loop("12mm", "5mm", 5.0, 6.0, 5.0, 0.047, &net);
    ck_assert_uint_eq(m->n, 1);
    ck_assert_double_eq_tol(m->item[0].allowance, 0.048, 1e-12);
    ck_assert_double_eq_tol(m->item[0].misclosure, 0.047, TOL_LEN);
    ck_assert(m->item[0].ratio < 3.0);
    ck_assert_int_eq(m->item[0].fail, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
    m = allowance_loop("12mm", "5mm", 5.0, 6.0, 5.0, 0.049, &net);
    ck_assert_double_eq_tol(m->item[0].misclosure, 0.049, TOL_LEN);
    ck_assert(m->item[0].ratio < 3.0);
    ck_assert_int_eq(m->item[0].fail, 1);
    ck_assert_uint_eq(m->nfail, 1);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* FGCC 1984 first order class I, loop: 4 mm·√K (REFERENCES.md §4.3 [M]);
 * a 9 km loop allows 12 mm ([C] example there). σ = 2 mm·√9 = 6 mm. */
START_TEST(allowance_first_order)
{
    cairn_net *net;
    cairn_misclosures *m = allowance_loop("4mm", "2mm", 3.0, 2.5, 3.5, -0.0115, &net);
    ck_assert_double_eq_tol(m->item[0].allowance, 0.012, 1e-12);
    ck_assert_double_eq_tol(m->item[0].length, 9000.0, 1e-9);
    ck_assert_int_eq(m->item[0].fail, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
    m = allowance_loop("4mm", "2mm", 3.0, 2.5, 3.5, -0.0125, &net);
    ck_assert(m->item[0].ratio < 3.0);
    ck_assert_int_eq(m->item[0].fail, 1);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* ------------------------------------------------------------------ */
/* Traverses: carried here step by step from the booked values         */
/* ------------------------------------------------------------------ */

typedef struct {
    double e, n;
} pt;

static double az(pt a, pt b)
{
    double t = atan2(b.e - a.e, b.n - a.n);
    return t < 0 ? t + 2 * CAIRN_PI : t;
}

static double wrap_pi(double a)
{
    while (a > CAIRN_PI) a -= 2 * CAIRN_PI;
    while (a <= -CAIRN_PI) a += 2 * CAIRN_PI;
    return a;
}

/* EDM σ² = a² + (b·1e-6·s)² (FORMAT.md "Models", no centring given). */
static double dist_var(double s)
{
    double a = 2.0 * MM, b = 2e-6 * s;
    return a * a + b * b;
}

/* Carry a traverse: angles[i] = foresight − backsight at station i (n + 1
 * stations), legs[i] from station i to i + 1; start at p0 with back
 * azimuth az0. Returns the carried closing azimuth; stations into q. */
static double carry(pt p0, double az0, const double *angles, const double *legs, int n,
                    pt *q)
{
    double t = az0;
    q[0] = p0;
    for (int i = 0; i <= n; i++) {
        t += angles[i];                 /* forward azimuth at station i */
        if (i == n)
            break;
        q[i + 1].e = q[i].e + legs[i] * sin(t);
        q[i + 1].n = q[i].n + legs[i] * cos(t);
        t += CAIRN_PI;                  /* back azimuth at station i + 1 */
    }
    return t;
}

START_TEST(traverse_link)
{
    cairn_net *net = load("traverse_link.cfb");
    cairn_misclosures *m = compute(net);
    char b[256];
    ck_assert_uint_eq(m->n, 2);
    pt RA = {1000.000, 2000.000}, A = {1000.000, 1500.000};
    pt B = {1905.330, 1448.917}, RB = {2010.455, 1950.602};
    /* booked hz (foresight − backsight) at A, T1, T2, B */
    double ang[4] = {dms(93, 44, 19.7) - dms(342, 45, 0.0),
                     dms(217, 58, 35.9) - dms(87, 29, 17.7),
                     dms(21, 24, 48.0) - dms(152, 40, 37.4),
                     dms(60, 44, 3.1) - dms(339, 6, 45.0)};
    double leg[3] = {303.5545, 357.8226, 327.7058};
    pt q[4];
    double t = carry(A, az(A, RA), ang, leg, 3, q);
    double mis_ang = wrap_pi(t - az(B, RB));
    /* hand-computed from the booked values */
    ck_assert_str_eq(route(net, m, 0, b, sizeof b), "RA A T1 T2 B RB");
    ck_assert_int_eq(m->item[0].kind, CAIRN_MISC_TRAVERSE_ANGULAR);
    ck_assert_double_eq_tol(m->item[0].misclosure / SEC, mis_ang / SEC, TOL_SEC);
    /* the booking planted +2, −1.5, +3, −2 seconds in the foresights */
    ck_assert_double_eq_tol(m->item[0].misclosure / SEC, 1.5, 0.15);
    /* four angles, each 2 directions of 2": √(4 · 2 · 2²) */
    ck_assert_double_eq_tol(m->item[0].expected_sd / SEC, sqrt(32.0), 1e-9);
    ck_assert_double_eq_tol(m->item[0].length, 303.5545 + 357.8226 + 327.7058, 1e-9);

    ck_assert_str_eq(route(net, m, 1, b, sizeof b), "A T1 T2 B");
    const cairn_misclosure *lin = &m->item[1];
    ck_assert_double_eq_tol(lin->de, q[3].e - B.e, TOL_LEN);
    ck_assert_double_eq_tol(lin->dn, q[3].n - B.n, TOL_LEN);
    ck_assert_double_eq_tol(lin->misclosure, hypot(q[3].e - B.e, q[3].n - B.n), TOL_LEN);
    /* σ_lin² ≈ Σσ_D² + Σ(σ_angle·R_i)² (common approximation, Ghilani & Wolf
     * "Elementary Surveying", traverse chapter, from memory) */
    double v = 0.0, sa2 = 8.0 * SEC * SEC;
    for (int i = 0; i < 3; i++)
        v += dist_var(leg[i]) + sa2 * (pow(B.e - q[i].e, 2) + pow(B.n - q[i].n, 2));
    ck_assert_double_eq_tol(lin->expected_sd, sqrt(v), 1e-12);
    ck_assert_double_eq_tol(lin->precision, (leg[0] + leg[1] + leg[2]) / lin->misclosure, 1e-6);
    ck_assert_uint_eq(m->nfail, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

START_TEST(traverse_closed)
{
    cairn_net *net = load("traverse_loop.cfb");
    cairn_misclosures *m = compute(net);
    char b[256];
    ck_assert_uint_eq(m->n, 2);
    pt C = {5000.0, 5000.0}, RC = {5000.0, 5600.0};
    /* booked hz (foresight − backsight) at C (RC → U1), U1, U2, U3, and C
     * again (U3 → RC, closing on the first backsight) */
    double ang[5] = {dms(32, 10, 9.2) - dms(320, 0, 0.0),
                     dms(44, 47, 21.0) - dms(128, 46, 7.7),
                     dms(1, 3, 23.1) - dms(98, 11, 23.5),
                     dms(344, 54, 7.6) - dms(65, 33, 21.1),
                     dms(320, 0, 0.0) - dms(130, 24, 11.6)};
    double leg[4] = {262.7465, 296.4127, 275.1356, 303.2468};
    pt q[5];
    double t = carry(C, az(C, RC), ang, leg, 4, q);
    ck_assert_str_eq(route(net, m, 0, b, sizeof b), "RC C U1 U2 U3 C RC");
    /* hand-computed from the booked values */
    ck_assert_double_eq_tol(m->item[0].misclosure / SEC, wrap_pi(t - az(C, RC)) / SEC, TOL_SEC);
    /* planted: +1.5, −2.5, +2.0, −4.0 seconds */
    ck_assert_double_eq_tol(m->item[0].misclosure / SEC, -3.0, 0.15);
    ck_assert_double_eq_tol(m->item[0].expected_sd / SEC, sqrt(5 * 8.0), 1e-9);
    ck_assert_str_eq(route(net, m, 1, b, sizeof b), "C U1 U2 U3 C");
    ck_assert_double_eq_tol(m->item[1].de, q[4].e - C.e, TOL_LEN);
    ck_assert_double_eq_tol(m->item[1].dn, q[4].n - C.n, TOL_LEN);
    /* the angle at the start station turns the whole loop about the end
     * point itself: R_0 = 0 */
    double v = 0.0, sa2 = 8.0 * SEC * SEC;
    for (int i = 0; i < 4; i++)
        v += dist_var(leg[i]) + sa2 * (pow(C.e - q[i].e, 2) + pow(C.n - q[i].n, 2));
    ck_assert_double_eq_tol(m->item[1].expected_sd, sqrt(v), 1e-12);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* A traverse needs its orientations: without the RB sight nothing closes. */
START_TEST(traverse_needs_orientation)
{
    cairn_net *net = parse("instrument T direction 2sec distance 2mm+2ppm\n"
                           "mark RA e 1000 n 2000 hold en\n"
                           "mark A e 1000 n 1500 hold en\n"
                           "mark B e 1300 n 1500 hold en\n"
                           "at A\nto RA hz 0\nto P hz 90 horiz 150.000\n"
                           "at P\nto A hz 0\nto B hz 180 horiz 150.000\n"
                           "at B\nto P hz 0\n");
    cairn_misclosures *m = compute(net);
    ck_assert_uint_eq(m->n, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* ------------------------------------------------------------------ */
/* Within setups and repeated measurements                             */
/* ------------------------------------------------------------------ */

START_TEST(face_pairs_sets_distances)
{
    cairn_net *net = load("rounds.cfb");
    cairn_misclosures *m = compute(net);
    char b[256];
    ck_assert_uint_eq(m->n, 6);
    /* face pair to X: hz1 − (hz2 − 180°) = 10°00'00" − 10°00'10" = −10",
     * a collimation of −5"; hand-computed from the booked values */
    ck_assert_int_eq(m->item[0].kind, CAIRN_MISC_FACE_PAIR);
    ck_assert_int_eq(m->item[0].reading, CAIRN_MISC_HZ);
    ck_assert_str_eq(route(net, m, 0, b, sizeof b), "S1 X");
    ck_assert_double_eq_tol(m->item[0].misclosure / SEC, -10.0, TOL_SEC);
    /* √2·σ_dir = √2·4" */
    ck_assert_double_eq_tol(m->item[0].expected_sd / SEC, sqrt(2.0) * 4.0, 1e-9);
    /* zenith: 88°30'00" + 271°29'50" − 360° = −10" (index error −5") */
    ck_assert_int_eq(m->item[1].reading, CAIRN_MISC_ZEN);
    ck_assert_double_eq_tol(m->item[1].misclosure / SEC, -10.0, TOL_SEC);
    /* face pair to Y: 95°15'30" − 95°15'24" = +6" */
    ck_assert_str_eq(route(net, m, 2, b, sizeof b), "S1 Y");
    ck_assert_double_eq_tol(m->item[2].misclosure / SEC, 6.0, TOL_SEC);
    /* per setup: collimation mean of −5" and +3" = −1"; index −5" */
    ck_assert_uint_eq(m->nface, 1);
    ck_assert_int_eq(m->face[0].setup, 0);
    ck_assert_int_eq(m->face[0].npairs_hz, 2);
    ck_assert_double_eq_tol(m->face[0].collimation / SEC, -1.0, TOL_SEC);
    ck_assert_int_eq(m->face[0].npairs_zen, 1);
    ck_assert_double_eq_tol(m->face[0].index_error / SEC, -5.0, TOL_SEC);

    /* set agreement, reduced to X, the first target of set 1 that set 2
     * also has: set 1 (face means) Y − X = 95°15'27" − 10°00'05";
     * set 2: 125°15'40" − 40°00'05". Difference +13"; σ from four means,
     * two of two readings and two single: √(8 + 8 + 16 + 16) */
    ck_assert_int_eq(m->item[3].kind, CAIRN_MISC_SET_AGREEMENT);
    ck_assert_str_eq(route(net, m, 3, b, sizeof b), "S1 X Y");
    double d1 = dms(95, 15, 27) - dms(10, 0, 5), d2 = dms(125, 15, 40) - dms(40, 0, 5);
    ck_assert_double_eq_tol(m->item[3].misclosure / SEC, (d2 - d1) / SEC, TOL_SEC);
    ck_assert_double_eq_tol(m->item[3].misclosure / SEC, 13.0, TOL_SEC);
    ck_assert_double_eq_tol(m->item[3].expected_sd / SEC, sqrt(48.0), 1e-9);

    /* repeated distances: S1–X slopes reduced with their zeniths,
     * s·sin z (face two: 360° − z) */
    ck_assert_int_eq(m->item[4].kind, CAIRN_MISC_REPEAT_DISTANCE);
    ck_assert_str_eq(route(net, m, 4, b, sizeof b), "S1 X");
    double h1 = 180.0000 * sin(dms(88, 30, 0)), h2 = 180.0020 * sin(dms(88, 30, 10));
    ck_assert_double_eq_tol(m->item[4].misclosure, h2 - h1, 1e-9);
    ck_assert_double_eq_tol(m->item[4].expected_sd,
                            sqrt(dist_var(180.0000) + dist_var(180.0020)), 1e-12);
    /* S1–Y both ways: 250.0040, 250.0010, 249.9990: spread 5 mm */
    ck_assert_str_eq(route(net, m, 5, b, sizeof b), "S1 Y");
    ck_assert_double_eq_tol(m->item[5].misclosure, 250.0040 - 249.9990, 1e-9);
    ck_assert_double_eq_tol(m->item[5].length, (250.0040 + 250.0010 + 249.9990) / 3, 1e-9);
    ck_assert_double_eq_tol(m->item[5].expected_sd,
                            sqrt(dist_var(250.0040) + dist_var(249.9990)), 1e-12);
    ck_assert_uint_eq(m->nfail, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* Slopes without a zenith are compared only with the same ih and th. */
START_TEST(slopes_like_with_like)
{
    cairn_net *net = parse("instrument T direction 2sec distance 2mm+2ppm\n"
                           "at A ih 1.500\nto B slope 100.0000 th 1.500\n"
                           "to B slope 100.0010 th 1.500\nto B slope 100.0500 th 2.000\n"
                           "at B ih 1.500\nto A slope 100.0030 th 1.500\n");
    cairn_misclosures *m = compute(net);
    ck_assert_uint_eq(m->n, 1);
    ck_assert_double_eq_tol(m->item[0].misclosure, 100.0030 - 100.0000, 1e-9);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

START_TEST(no_checks)
{
    cairn_net *net = load("none.cfb");
    cairn_misclosures *m = compute(net);
    ck_assert_uint_eq(m->n, 0);
    ck_assert_uint_eq(m->nfail, 0);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* ------------------------------------------------------------------ */
/* misclosures.csv                                                     */
/* ------------------------------------------------------------------ */

START_TEST(csv_rows)
{
    cairn_net *net = load("level.cfb");
    cairn_misclosures *m = compute(net);
    FILE *f = tmpfile();
    ck_assert_ptr_nonnull(f);
    ck_assert_int_eq(cairn_write_misclosures_csv(f, net, m), 0);
    rewind(f);
    char line[512];
    ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    ck_assert_str_eq(line, "kind,route,misclosure,length,expected_sd,ratio,status,source\n");
    ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    ck_assert_str_eq(line, "level-loop,BM1 L1 L2 BM1,0.0027000,4000.0000000,0.0020000,"
                           "1.3500,ok,tests/integration/misclosure/level.cfb:7\n");
    fclose(f);
    char dir[] = "/tmp/cairn-misc-XXXXXX";
    ck_assert_ptr_nonnull(mkdtemp(dir));
    cairn_error err;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    ck_assert_int_eq(cairn_write_misclosures(dir, net, m, &err), 0);
    char path[600];
    snprintf(path, sizeof path, "%s/misclosures.csv", dir);
    ck_assert_int_eq(access(path, R_OK), 0);
    ck_assert_int_eq(unlink(path), 0);
    ck_assert_int_eq(rmdir(dir), 0); /* empty: no temporary left behind */
    cairn_error_clear(&err);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

/* Feet: misclosure and length in the project unit, σ too. */
START_TEST(csv_feet)
{
    cairn_net *net = parse("units ft dms\ninstrument LV per-km 1mm\n"
                           "rise A B 1.0000 km 1\nrise B A -0.9900 km 1\n");
    cairn_misclosures *m = compute(net);
    ck_assert_uint_eq(m->n, 1);
    FILE *f = tmpfile();
    ck_assert_int_eq(cairn_write_misclosures_csv(f, net, m), 0);
    rewind(f);
    char line[512];
    ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    /* 0.01 ft booked; 2000 m = 6561.6797900 ft; √2 mm = 0.0046398 ft
     * (0.3048 m per ft, 85 FR 62698) */
    ck_assert_str_eq(line, "level-loop,A B A,0.0100000,6561.6797900,0.0046398,"
                           "2.1553,ok,mem.cfb:3\n");
    fclose(f);
    cairn_misclosures_free(&m);
    cairn_net_free(&net);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("misclosure");
    TCase *t = tcase_create("levelling");
    tcase_add_test(t, level_loop_and_line);
    tcase_add_test(t, level_three_sigma_and_setups);
    tcase_add_test(t, allowance_third_order);
    tcase_add_test(t, allowance_first_order);
    suite_add_tcase(s, t);
    t = tcase_create("traverse");
    tcase_add_test(t, traverse_link);
    tcase_add_test(t, traverse_closed);
    tcase_add_test(t, traverse_needs_orientation);
    suite_add_tcase(s, t);
    t = tcase_create("setups");
    tcase_add_test(t, face_pairs_sets_distances);
    tcase_add_test(t, slopes_like_with_like);
    tcase_add_test(t, no_checks);
    suite_add_tcase(s, t);
    t = tcase_create("csv");
    tcase_add_test(t, csv_rows);
    tcase_add_test(t, csv_feet);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    SRunner *r = srunner_create(suite());
    srunner_run_all(r, CK_NORMAL);
    int failed = srunner_ntests_failed(r);
    srunner_free(r);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
