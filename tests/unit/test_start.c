/*
 * test_start.c — Check suite for starting coordinates (src/solve/start*.c,
 * issue #4).
 *
 * Oracle: every network here is built from invented truth coordinates
 * (fictional marks), and its observations are computed from that truth by
 * the FORMAT.md "Models" formulas written out again in start_fixture.h
 * (t_sight, t_sight1, t_rise, t_azimuth, t_angle; sharing no code with the
 * library). All but the control is withheld, and
 * the computed starts are compared with the truth: "against the exact
 * synthetic geometry" — 1e-6 m for noise-free data (the computations are
 * closed-form or converge to rounding), a few cm with small noise (2 mm,
 * 2"; common practice, no source). Nets are built with cairn_net_* so the
 * suite does not depend on the parsers.
 */
#include <check.h>
#include "start_fixture.h"

/* ------------------------------------------------------------ traverses */

/* Open traverse from A (backsight B) to C (foresight D), all four held;
 * face two on every second foresight. Loop 0: exact, 1: noisy. */
START_TEST(test_open_traverse)
{
    T t;
    t_init(&t, 2, _i ? 0.002 : 0.0, _i ? 2 * SEC : 0.0);
    int B = t_mark(&t, "B", 1000.0, 2500.0, 0);
    int A = t_mark(&t, "A", 1100.0, 2000.0, 0);
    int P[4];
    P[0] = t_mark(&t, "T1", 1350.0, 1890.0, 0);
    P[1] = t_mark(&t, "T2", 1620.0, 2010.0, 0);
    P[2] = t_mark(&t, "T3", 1890.0, 1870.0, 0);
    P[3] = t_mark(&t, "T4", 2150.0, 2050.0, 0);
    int C = t_mark(&t, "C", 2400.0, 1960.0, 0);
    int D = t_mark(&t, "D", 2550.0, 2400.0, 0);
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, EN);
    t_give(&t, C, EN, EN);
    t_give(&t, D, EN, EN);
    int chain[6] = {A, P[0], P[1], P[2], P[3], C};
    t_setup(&t, A, 0.3, 0);
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, P[0], R_DIR | R_HORIZ, 0, 1);
    for (int k = 1; k < 5; k++) {
        t_setup(&t, chain[k], 0.1 * k, 0);
        t_sight(&t, chain[k - 1], R_DIR | R_HORIZ, 0, 1);
        t_sight(&t, chain[k + 1], R_DIR | R_HORIZ, 0, k % 2 ? 2 : 1);
    }
    t_setup(&t, C, 1.0, 0);
    t_sight(&t, P[3], R_DIR, 0, 1);
    t_sight(&t, D, R_DIR, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nerrors, 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    for (int k = 0; k < 4; k++) /* against the exact synthetic geometry */
        t_check(&t, P[k], EN, _i ? NOISY : EXACT);
    t_check(&t, A, 0, 0.0);
    ck_assert_str_eq(t_step(&t, P[0], EN)->method, "polar from A");
    /* T4 is reached from both ends in the same wave. */
    ck_assert_str_eq(t_step(&t, P[3], EN)->method, "polar from C");
    ck_assert_uint_eq(cairn_start_report_count(t.rep), 4);
    t_done(&t);
}
END_TEST

/* Closed loop from held A oriented on held R, back to A. */
START_TEST(test_closed_loop)
{
    T t;
    t_init(&t, 0, _i ? 0.002 : 0.0, _i ? 2 * SEC : 0.0);
    int R = t_mark(&t, "R9", 5000.0, 5800.0, 0);
    int A = t_mark(&t, "A", 5000.0, 5000.0, 0);
    const double pts[5][2] = {{5300, 5100}, {5450, 4800}, {5200, 4550}, {4850, 4600}, {4750, 4850}};
    int L[7];
    L[0] = A;
    char id[16];
    for (int k = 0; k < 5; k++) {
        snprintf(id, sizeof id, "L%d", k + 1);
        L[k + 1] = t_mark(&t, id, pts[k][0], pts[k][1], 0);
    }
    L[6] = A;
    t_give(&t, A, EN, EN);
    t_give(&t, R, EN, EN);
    t_setup(&t, A, 2.0, 0);
    t_sight(&t, R, R_DIR, 0, 1);
    t_sight(&t, L[1], R_DIR | R_HORIZ, 0, 1);
    t_sight(&t, L[5], R_DIR | R_HORIZ, 0, 1);
    for (int k = 1; k <= 5; k++) {
        t_setup(&t, L[k], -0.7 * k, 0);
        t_sight(&t, L[k - 1], R_DIR | R_HORIZ, 0, 1);
        t_sight(&t, L[k + 1], R_DIR | R_HORIZ, 0, 1);
    }
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    for (int k = 1; k <= 5; k++) /* against the exact synthetic geometry */
        t_check(&t, L[k], EN, _i ? NOISY : EXACT);
    t_done(&t);
}
END_TEST

/* --------------------------------------------- intersection, resection */

START_TEST(test_intersection)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "S1", 200.0, 300.0, 0);
    int B = t_mark(&t, "S2", 800.0, 250.0, 0);
    int P = t_mark(&t, "N4", 520.0, 780.0, 0);
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, 0); /* weighted or starting value: known all the same */
    t.net->marks[B].sd_en = 0.01;
    t_setup(&t, A, 0.5, 0);
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR, 0, 1);
    t_setup(&t, B, 4.0, 0);
    t_sight(&t, A, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR, 0, 2);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, EN, EXACT); /* against the exact synthetic geometry */
    ck_assert_str_eq(t_step(&t, P, EN)->method, "intersection from S1 and S2");
    t_done(&t);
}
END_TEST

/* Resection with 3 (loop 0, 1: exact, noisy) and 4 (loop 2, 3) known
 * marks; loop 4: 4 marks, noisy, the station far outside the marks. */
START_TEST(test_resection)
{
    T t;
    int noisy = _i % 2 == 1 || _i == 4;
    t_init(&t, 2, noisy ? 0.002 : 0.0, noisy ? 2 * SEC : 0.0);
    const double K[4][2] = {{1000, 3000}, {2600, 2900}, {2900, 1100}, {900, 1200}};
    int k[4];
    char id[16];
    for (int j = 0; j < 4; j++) {
        snprintf(id, sizeof id, "K%d", j + 1);
        k[j] = t_mark(&t, id, K[j][0], K[j][1], 0);
        t_give(&t, k[j], EN, EN);
    }
    int P = _i == 4 ? t_mark(&t, "FS", 4200.0, 2500.0, 0) : t_mark(&t, "FS", 1700.0, 2300.0, 0);
    int nk = _i >= 2 ? 4 : 3;
    t_setup(&t, P, 5.5, 0);
    for (int j = 0; j < nk; j++)
        t_sight(&t, k[j], R_DIR, 0, j == 1 ? 2 : 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, EN, noisy ? NOISY : EXACT); /* against the exact synthetic geometry */
    ck_assert_str_eq(t_step(&t, P, EN)->method, "resection");
    t_done(&t);
}
END_TEST

/* ------------------------------------------------------- trilateration */

/* A free station P sights held A and B with direction and distance: two
 * circle points, the directions at P choose (P on either side, loop). */
START_TEST(test_trilateration_dirs)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 0);
    int B = t_mark(&t, "B", 0.0, 400.0, 0);
    int P = t_mark(&t, "P", _i ? -250.0 : 250.0, 150.0, 0);
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, EN);
    t_setup(&t, P, 1.2, 0);
    t_sight(&t, A, R_DIR | R_HORIZ, 0, 1);
    t_sight(&t, B, R_DIR | R_HORIZ, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    t_check(&t, P, EN, EXACT); /* against the exact synthetic geometry */
    ck_assert_str_eq(t_step(&t, P, EN)->method, "trilateration from A and B");
    t_done(&t);
}
END_TEST

/* Distances from A and B (setups with no direction) and one direction
 * from an oriented setup at C choose the side. */
START_TEST(test_trilateration_ray)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 0);
    int B = t_mark(&t, "B", 0.0, 400.0, 0);
    int C = t_mark(&t, "C", -300.0, 200.0, 0);
    int P = t_mark(&t, "P", _i ? -250.0 : 250.0, 150.0, 0);
    for (int m = A; m <= C; m++)
        t_give(&t, m, EN, EN);
    t_setup(&t, A, 0, 0);
    t_sight(&t, P, R_HORIZ, 0, 1);
    t_setup(&t, B, 0, 0);
    t_sight(&t, P, R_HORIZ, 0, 1);
    t_setup(&t, C, 0.4, 0);
    t_sight(&t, A, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    t_check(&t, P, EN, EXACT); /* against the exact synthetic geometry */
    t_done(&t);
}
END_TEST

/* Only two distances: ambiguous, warned, the point right of A→B kept. */
START_TEST(test_trilateration_ambiguous)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 0);
    int B = t_mark(&t, "B", 0.0, 400.0, 0);
    int P = t_mark(&t, "P", 250.0, 150.0, 0); /* east: right of A→B */
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, EN);
    t_setup(&t, A, 0, 0);
    int ia = t_sight(&t, P, R_HORIZ, 0, 1);
    t_setup(&t, B, 0, 0);
    int ib = t_sight(&t, P, R_HORIZ, 0, 1);
    int la = t.net->obs[ia].src.line, lb = t.net->obs[ib].src.line;
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, EN, EXACT);
    ck_assert_int_eq(t.err.nwarnings, 1);
    char want[256];
    snprintf(want, sizeof want,
             "starting position for P from the distances at t.cfb:%d and t.cfb:%d "
             "is ambiguous (two circle points, nothing to choose by); taking the "
             "one right of A to B", la, lb);
    ck_assert_str_eq(t.err.diag[0].message, want);
    ck_assert_int_eq(t.err.diag[0].line, la);
    t_done(&t);
}
END_TEST

/* ------------------------------------------- azimuths, angles, partial */

START_TEST(test_azimuth_angle)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 100.0, 100.0, 0);
    int B = t_mark(&t, "B", 600.0, 200.0, 0);
    int P = t_mark(&t, "P", 300.0, 500.0, 0);
    int Q = t_mark(&t, "Q", 700.0, -200.0, 0);
    int S = t_mark(&t, "S", -200.0, 300.0, 0);
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, EN);
    t_azimuth(&t, A, P); /* azimuth from known A + distance: polar */
    t_setup(&t, A, 0, 0);
    t_sight(&t, P, R_HORIZ, 0, 1);
    t_angle(&t, B, A, Q); /* angle at known B from known A: azimuth to Q */
    t_setup(&t, B, 0, 0);
    t_sight(&t, Q, R_HORIZ, 0, 1);
    t_azimuth(&t, S, A); /* booked from the unknown mark: reversed */
    t_setup(&t, S, 0, 0);
    t_sight(&t, A, R_HORIZ, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, EN, EXACT); /* against the exact synthetic geometry */
    t_check(&t, Q, EN, EXACT);
    t_check(&t, S, EN, EXACT);
    ck_assert_str_eq(t_step(&t, Q, EN)->method, "polar from B");
    t_done(&t);
}
END_TEST

/* ---------------------------------------------------------------- free */

START_TEST(test_free_network)
{
    T t;
    t_init(&t, 3, 0, 0);
    int S1 = t_mark(&t, "S1", 500.0, 700.0, 20.0);
    int S2 = t_mark(&t, "S2", 560.0, 780.0, 21.5);
    int S3 = t_mark(&t, "S3", 430.0, 790.0, 19.2);
    t_setup(&t, S1, 0.9, 1.5);
    t_sight(&t, S2, R_DIR | R_ZEN | R_SLOPE, 1.6, 1);
    t_sight(&t, S3, R_DIR | R_ZEN | R_SLOPE, 1.6, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    /* Oracle: the truth moved to S1 = origin, turned so that S1→S2 points
     * north, heights less h(S1). */
    double rot = t_az(&t, S1, S2);
    for (int m = S1; m <= S3; m++) {
        double de = t.te[m] - t.te[S1], dn = t.tn[m] - t.tn[S1];
        double e = de * cos(rot) - dn * sin(rot), n = de * sin(rot) + dn * cos(rot);
        ck_assert_double_eq_tol(t.net->marks[m].e, e, EXACT);
        ck_assert_double_eq_tol(t.net->marks[m].n, n, EXACT);
        ck_assert_double_eq_tol(t.net->marks[m].h, t.th[m] - t.th[S1], EXACT);
        ck_assert_uint_eq(t.net->marks[m].computed, ENH);
    }
    ck_assert_double_eq_tol(t.net->marks[S2].e, 0.0, EXACT);
    ck_assert_str_eq(t_step(&t, S1, EN)->method, "free-network origin");
    ck_assert_str_eq(t_step(&t, S1, CAIRN_H)->method, "free-network origin");
    t_done(&t);
}
END_TEST

/* Directions only: the first sight's target is put 100 m north. */
START_TEST(test_free_directions_only)
{
    T t;
    t_init(&t, 2, 0, 0);
    int S1 = t_mark(&t, "S1", 0.0, 0.0, 0);
    int S2 = t_mark(&t, "S2", 300.0, 0.0, 0);
    int S3 = t_mark(&t, "S3", 150.0, 200.0, 0);
    t_setup(&t, S1, 0.2, 0);
    t_sight(&t, S2, R_DIR, 0, 1);
    t_sight(&t, S3, R_DIR, 0, 1);
    t_setup(&t, S2, 1.1, 0);
    t_sight(&t, S1, R_DIR, 0, 1);
    t_sight(&t, S3, R_DIR, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_double_eq_tol(t.net->marks[S2].e, 0.0, EXACT);
    ck_assert_double_eq_tol(t.net->marks[S2].n, 100.0, EXACT);
    /* Oracle: the truth scaled by 100/300 and turned 90° (S1→S2 east → north). */
    ck_assert_double_eq_tol(t.net->marks[S3].e, -200.0 / 3.0, EXACT);
    ck_assert_double_eq_tol(t.net->marks[S3].n, 50.0, EXACT);
    ck_assert_str_eq(t_step(&t, S2, EN)->method, "free-network scale");
    t_done(&t);
}
END_TEST

/* ------------------------------------------------------------- heights */

/* Held BM1; C is reached in the same wave through A, B and D with
 * misclosures 0, +4 mm, +30 mm: the median keeps +4 mm (no warning, all
 * within 0.05 m). Loop 1: no noise, C exact. */
START_TEST(test_levelling_paths)
{
    T t;
    t_init(&t, 0, 0, 0);
    int BM = t_mark(&t, "BM1", 0, 0, 10.0);
    int A = t_mark(&t, "A", 0, 0, 11.2);
    int B = t_mark(&t, "B", 0, 0, 9.4);
    int D = t_mark(&t, "D", 0, 0, 12.9);
    int C = t_mark(&t, "C", 0, 0, 10.7);
    t_give(&t, BM, CAIRN_H, CAIRN_H);
    t_rise(&t, BM, A, 0);
    t_rise(&t, B, BM, 0); /* booked the other way round */
    t_rise(&t, BM, D, 0);
    t_rise(&t, A, C, 0);
    t_rise(&t, B, C, _i ? 0 : 0.004);
    t_rise(&t, D, C, _i ? 0 : 0.030);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    for (int m = A; m <= D; m++)
        t_check(&t, m, CAIRN_H, EXACT); /* against the exact synthetic geometry */
    ck_assert_double_eq_tol(t.net->marks[C].h, 10.7 + (_i ? 0 : 0.004), EXACT);
    ck_assert_int_eq(t_step(&t, C, CAIRN_H)->ncand, 3);
    ck_assert_str_eq(t_step(&t, A, CAIRN_H)->method, "levelled from BM1");
    ck_assert_uint_eq(t.net->marks[BM].computed, 0);
    t_done(&t);
}
END_TEST

/* A levelling line with no known height: the first mark gets h = 0. */
START_TEST(test_levelling_free)
{
    T t;
    t_init(&t, 1, 0, 0);
    int A = t_mark(&t, "X1", 0, 0, 50.0);
    int B = t_mark(&t, "X2", 0, 0, 52.5);
    t_rise(&t, A, B, 0);
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_double_eq_tol(t.net->marks[A].h, 0.0, EXACT);
    ck_assert_double_eq_tol(t.net->marks[B].h, 2.5, EXACT);
    t_done(&t);
}
END_TEST

/* 3-D: held A, B; traverse with zenith, slope, ih, th, one face two. */
START_TEST(test_three_d)
{
    T t;
    t_init(&t, 0, _i ? 0.002 : 0.0, _i ? 2 * SEC : 0.0);
    int A = t_mark(&t, "A", 3000.0, 4000.0, 101.20);
    int B = t_mark(&t, "B", 3100.0, 4900.0, 99.70);
    int P1 = t_mark(&t, "P1", 3600.0, 4200.0, 130.55);
    int P2 = t_mark(&t, "P2", 4300.0, 3900.0, 88.05);
    int P3 = t_mark(&t, "P3", 4000.0, 4500.0, 112.0);
    t_give(&t, A, ENH, ENH);
    t_give(&t, B, ENH, ENH);
    t_setup(&t, A, 0.7, 1.552);
    t_sight(&t, B, R_DIR | R_ZEN | R_SLOPE, 1.600, 1);
    t_sight(&t, P1, R_DIR | R_ZEN | R_SLOPE, 1.600, 1);
    t_setup(&t, P1, 2.1, 1.498);
    t_sight(&t, A, R_DIR | R_ZEN | R_SLOPE, 1.300, 1);
    t_sight(&t, P2, R_DIR | R_ZEN | R_SLOPE, 2.000, 2);
    t_sight(&t, P3, R_DIR | R_ZEN | R_HORIZ, 1.700, 1); /* zenith + horiz */
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    for (int m = P1; m <= P3; m++) /* against the exact synthetic geometry */
        t_check(&t, m, ENH, _i ? NOISY : EXACT);
    ck_assert_str_eq(t_step(&t, P2, CAIRN_H)->method, "trig height from P1");
    t_done(&t);
}
END_TEST

/* Dimension 1: trig heights by exactly the dimension-1 formula. */
START_TEST(test_dim1_trig)
{
    T t;
    t_init(&t, 1, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 45.0);
    int P = t_mark(&t, "P", 800.0, 300.0, 61.3);
    int Q = t_mark(&t, "Q", 1500.0, -200.0, 38.9);
    t_give(&t, A, CAIRN_H, CAIRN_H);
    t_setup(&t, A, 0, 1.45);
    t_sight1(&t, P, 1.8);
    t_setup(&t, P, 0, 1.52);
    t_sight1(&t, Q, 2.1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, CAIRN_H, EXACT); /* against the exact synthetic geometry */
    t_check(&t, Q, CAIRN_H, EXACT);
    t_done(&t);
}
END_TEST

/* A mark given only its height gets e, n computed; h stays. */
START_TEST(test_partial_given)
{
    T t;
    t_init(&t, 3, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 10.0);
    int B = t_mark(&t, "B", 0.0, 500.0, 12.0);
    int P = t_mark(&t, "P", 300.0, 200.0, 14.0);
    t_give(&t, A, ENH, ENH);
    t_give(&t, B, ENH, ENH);
    t_give(&t, P, CAIRN_H, CAIRN_H);
    t_setup(&t, A, 0.0, 1.5);
    t_sight(&t, B, R_DIR | R_ZEN | R_SLOPE, 1.5, 1);
    t_sight(&t, P, R_DIR | R_ZEN | R_SLOPE, 1.5, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, ENH, EXACT);
    ck_assert_uint_eq(t.net->marks[P].computed, EN);
    t_done(&t);
}
END_TEST

/* --------------------------------------------------------- diagnostics */

/* P reached from A, B and C by polar points; a 1 m error on the distance
 * from B. Warned, and the median of the 3 ways is kept. */
START_TEST(test_disagreement)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 0);
    int B = t_mark(&t, "B", 600.0, 0.0, 0);
    int C = t_mark(&t, "C", 300.0, -400.0, 0);
    int P = t_mark(&t, "N7", 320.0, 450.0, 0);
    for (int m = A; m <= C; m++)
        t_give(&t, m, EN, EN);
    t_setup(&t, A, 0.1, 0);
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR | R_HORIZ, 0, 1);
    t_setup(&t, B, 0.2, 0);
    t_sight(&t, A, R_DIR, 0, 1);
    int bad = t_sight(&t, P, R_DIR | R_HORIZ, 0, 1) + 1;
    t.net->obs[bad].value += 1.0;
    int badline = t.net->obs[bad].src.line;
    t_setup(&t, C, 0.3, 0);
    t_sight(&t, A, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR | R_HORIZ, 0, 1);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, P, EN, 0.01);
    ck_assert_int_eq(t.err.nwarnings, 1);
    char want[128];
    snprintf(want, sizeof want, "starting positions for N7 from t.cfb:%d and t.cfb:", badline);
    ck_assert_msg(strncmp(t.err.diag[0].message, want, strlen(want)) == 0, "%s",
                  t.err.diag[0].message);
    ck_assert_msg(strstr(t.err.diag[0].message, " disagree by 1.00 m; keeping the median of 3"),
                  "%s", t.err.diag[0].message);
    ck_assert_int_eq(t.err.diag[0].severity, CAIRN_SEV_WARNING);
    ck_assert_int_eq(t.err.diag[0].line, badline);
    t_done(&t);
}
END_TEST

/* Three levelling paths to C, one with a 1 m blunder. */
START_TEST(test_disagreement_height)
{
    T t;
    t_init(&t, 0, 0, 0);
    int BM = t_mark(&t, "BM1", 0, 0, 10.0);
    int C = t_mark(&t, "C", 0, 0, 10.7);
    t_give(&t, BM, CAIRN_H, CAIRN_H);
    int r1 = t_rise(&t, BM, C, 0);
    int r2 = t_rise(&t, BM, C, 1.0);
    t_rise(&t, BM, C, 0);
    ck_assert_int_eq(t_run(&t, 0), 0);
    t_check(&t, C, CAIRN_H, EXACT);
    ck_assert_int_eq(t.err.nwarnings, 1);
    char want[160];
    snprintf(want, sizeof want,
             "starting heights for C from t.cfb:%d and t.cfb:%d disagree by 1.00 m; "
             "keeping the median of 3",
             t.net->obs[r2].src.line, t.net->obs[r1].src.line);
    ck_assert_str_eq(t.err.diag[0].message, want);
    t_done(&t);
}
END_TEST

/* N7: one distance only; N8, N9: a part with no coordinates; X1: height
 * with no connection to a known height. */
START_TEST(test_unreachable)
{
    T t;
    t_init(&t, 0, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 5.0);
    int B = t_mark(&t, "B", 0.0, 500.0, 0);
    int N7 = t_mark(&t, "N7", 200.0, 100.0, 0);
    int N8 = t_mark(&t, "N8", 900.0, 900.0, 0);
    int N9 = t_mark(&t, "N9", 950.0, 800.0, 0);
    int X1 = t_mark(&t, "X1", 0, 0, 3.0);
    int X2 = t_mark(&t, "X2", 0, 0, 4.0);
    t_give(&t, A, ENH, ENH);
    t_give(&t, B, EN, EN);
    t_setup(&t, A, 0, 0);
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, N7, R_HORIZ, 0, 1);
    t_setup(&t, N8, 0, 0);
    t_sight(&t, N9, R_DIR | R_HORIZ, 0, 1);
    t_rise(&t, A, B, 0); /* the height part has control ... */
    t_rise(&t, X1, X2, 0); /* ... which X1, X2 do not reach */
    ck_assert_int_eq(t_run(&t, 0), -1);
    ck_assert_int_eq(t.err.nerrors, 1);
    const cairn_diag *d = NULL;
    for (int i = 0; i < t.err.ndiag; i++)
        if (t.err.diag[i].severity == CAIRN_SEV_ERROR)
            d = &t.err.diag[i];
    ck_assert_ptr_nonnull(d);
    ck_assert_str_eq(d->message,
                     "cannot compute starting coordinates: N7 (only one distance, no "
                     "direction), N8 (not connected to any mark with coordinates), N9 "
                     "(not connected to any mark with coordinates), X1 (height: not "
                     "connected to any mark with a height), X2 (height: not connected "
                     "to any mark with a height)");
    ck_assert_str_eq(d->file, "t.cfb");
    ck_assert_int_eq(d->line, t.net->marks[N7].ref.line);
    ck_assert_uint_eq(t.net->marks[N8].computed, 0);
    ck_assert_uint_eq(t.net->marks[X1].computed, 0);
    (void)N9;
    (void)X2;
    t_done(&t);
}
END_TEST

START_TEST(test_unreachable_reasons)
{
    T t;
    t_init(&t, 2, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 0);
    int B = t_mark(&t, "B", 0.0, 500.0, 0);
    int C = t_mark(&t, "C", 400.0, 500.0, 0);
    int P = t_mark(&t, "P", 200.0, 100.0, 0);
    int Q = t_mark(&t, "Q", 300.0, 300.0, 0);
    int R = t_mark(&t, "R", 500.0, 100.0, 0);
    t_give(&t, A, EN, EN);
    t_give(&t, B, EN, EN);
    t_give(&t, C, EN, EN);
    t_setup(&t, A, 0, 0);
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, P, R_DIR, 0, 1);  /* one direction only */
    t_setup(&t, Q, 0, 0);         /* a setup at Q seeing two known marks */
    t_sight(&t, B, R_DIR, 0, 1);
    t_sight(&t, C, R_DIR, 0, 1);
    t_sight(&t, R, R_DIR, 0, 1);  /* R only through Q */
    ck_assert_int_eq(t_run(&t, 0), -1);
    ck_assert(t_has_msg(&t, CAIRN_SEV_ERROR,
                        "P (only one direction, no distance), Q (only 2 directions from "
                        "its setup to marks with coordinates, a resection needs 3), R "
                        "(only connected through marks that cannot be computed)"));
    t_done(&t);
}
END_TEST

/* Dimension 3: a slope distance alone gives no height difference. */
START_TEST(test_unreachable_height)
{
    T t;
    t_init(&t, 3, 0, 0);
    int A = t_mark(&t, "A", 0.0, 0.0, 10.0);
    int B = t_mark(&t, "B", 0.0, 500.0, 12.0);
    int P = t_mark(&t, "P", 300.0, 200.0, 14.0);
    t_give(&t, A, ENH, ENH);
    t_give(&t, B, ENH, ENH);
    t_setup(&t, A, 0.0, 1.5);
    t_sight(&t, B, R_DIR, 1.5, 1);
    t_sight(&t, P, R_DIR | R_SLOPE, 1.5, 1);
    int Q = t_mark(&t, "Q", -250.0, 150.0, 40.0);
    t_give(&t, Q, CAIRN_H, 0); /* its height given: the slope is reduced */
    t_sight(&t, Q, R_DIR | R_SLOPE, 1.5, 1);
    ck_assert_int_eq(t_run(&t, 0), -1);
    /* Pythagoras on Δz = 30 m neglects d²/2R = 0.007 m of it: 0.7 mm. */
    t_check(&t, Q, EN, 0.001);
    ck_assert(t_has_msg(&t, CAIRN_SEV_ERROR, "cannot compute starting coordinates: P "
                        "(height: no observation gives its height difference)"));
    /* The plane position was still computed, taking the slope (P's height
     * is unknown) as the plane length: against the exact synthetic
     * geometry up to Δz²/2d = 16/721 ≈ 0.022 m along the line. */
    ck_assert_uint_eq(t.net->marks[P].computed, EN);
    ck_assert_double_eq_tol(hypot(t.net->marks[P].e, t.net->marks[P].n), hypot(300.0, 200.0) + 16.0 / 721.0, 0.001);
    t_done(&t);
}
END_TEST

START_TEST(test_empty_and_report)
{
    cairn_net *net = cairn_net_new();
    cairn_error err;
    cairn_start_report *rep = NULL;
    ck_assert_int_eq(cairn_error_init(&err), 0);
    ck_assert_int_eq(cairn_start_compute(net, 0, &rep, &err), 0);
    ck_assert_uint_eq(cairn_start_report_count(rep), 0);
    ck_assert_ptr_null(cairn_start_report_step(rep, 0));
    ck_assert_uint_eq(cairn_start_report_nwarnings(rep), 0);
    cairn_start_report_free(&rep);
    cairn_start_report_free(&rep);
    ck_assert_int_eq(cairn_start_compute(net, 0, NULL, &err), 0);
    ck_assert_uint_eq(cairn_start_report_count(NULL), 0);
    cairn_error_clear(&err);
    cairn_net_free(&net);
}
END_TEST

/* A 30 × 30 grid, each mark sighting its 4 neighbours (direction and
 * distance), one held corner and an azimuth mark; every start exact. */
START_TEST(test_grid)
{
    T t;
    t_init(&t, 2, 0, 0);
    enum { G = 30 };
    int id[G][G];
    char name[32];
    for (int r = 0; r < G; r++)
        for (int q = 0; q < G; q++) {
            snprintf(name, sizeof name, "G%d.%d", r, q);
            id[r][q] = t_mark(&t, name, 100.0 * q + 7.0 * sin(r * 1.3 + q),
                              100.0 * r + 6.0 * cos(q * 0.7 + r), 0);
        }
    t_give(&t, id[0][0], EN, EN);
    t_give(&t, id[0][1], EN, EN);
    for (int r = 0; r < G; r++)
        for (int q = 0; q < G; q++) {
            t_setup(&t, id[r][q], 0.01 * (r + q), 0);
            const int dr[4] = {1, 0, -1, 0}, dq[4] = {0, 1, 0, -1};
            for (int j = 0; j < 4; j++) {
                int rr = r + dr[j], qq = q + dq[j];
                if (rr >= 0 && rr < G && qq >= 0 && qq < G)
                    t_sight(&t, id[rr][qq], R_DIR | R_HORIZ, 0, 1);
            }
        }
    ck_assert_int_eq(t_run(&t, 0), 0);
    ck_assert_int_eq(t.err.nwarnings, 0);
    for (int r = 0; r < G; r++) /* against the exact synthetic geometry */
        for (int q = 0; q < G; q++)
            t_check(&t, id[r][q], EN, EXACT);
    t_done(&t);
}
END_TEST

static Suite *start_suite(void)
{
    Suite *s = suite_create("start");
    TCase *tc = tcase_create("plane");
    tcase_add_loop_test(tc, test_open_traverse, 0, 2);
    tcase_add_loop_test(tc, test_closed_loop, 0, 2);
    tcase_add_test(tc, test_intersection);
    tcase_add_loop_test(tc, test_resection, 0, 5);
    tcase_add_loop_test(tc, test_trilateration_dirs, 0, 2);
    tcase_add_loop_test(tc, test_trilateration_ray, 0, 2);
    tcase_add_test(tc, test_trilateration_ambiguous);
    tcase_add_test(tc, test_azimuth_angle);
    tcase_add_test(tc, test_free_network);
    tcase_add_test(tc, test_free_directions_only);
    tcase_add_test(tc, test_grid);
    suite_add_tcase(s, tc);
    TCase *th = tcase_create("height");
    tcase_add_loop_test(th, test_levelling_paths, 0, 2);
    tcase_add_test(th, test_levelling_free);
    tcase_add_loop_test(th, test_three_d, 0, 2);
    tcase_add_test(th, test_dim1_trig);
    tcase_add_test(th, test_partial_given);
    suite_add_tcase(s, th);
    TCase *td = tcase_create("diagnostics");
    tcase_add_test(td, test_disagreement);
    tcase_add_test(td, test_disagreement_height);
    tcase_add_test(td, test_unreachable);
    tcase_add_test(td, test_unreachable_reasons);
    tcase_add_test(td, test_unreachable_height);
    tcase_add_test(td, test_empty_and_report);
    suite_add_tcase(s, td);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(start_suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
