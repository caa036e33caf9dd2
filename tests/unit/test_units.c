/* Units, angle parsing and formatting, standard deviations (src/core/units.c).
 *
 * Exact legal definitions checked here (see REFERENCES.md §5):
 *   international foot = 0.3048 m exactly: NIST/NOAA Federal Register notice
 *     "Deprecation of the United States (U.S.) Survey Foot", 85 FR 62698,
 *     5 Oct 2020;
 *   US survey foot = 1200/3937 m exactly: Mendenhall Order, 1893;
 *   gon: 400 gon per full circle: IEEE/ASTM SI 10-2002 §3.3.3;
 *   1 cc = 1e-4 gon = 0.324" (centesimal second; follows from 400 gon = 360°). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cairn/core.h"

#define RAD_PER_DEG (CAIRN_PI / 180.0)
#define RAD_PER_SEC (CAIRN_PI / 648000.0)

START_TEST(length_factors_exact)
{
    /* 85 FR 62698 (2020): the international foot is exactly 0.3048 m. */
    ck_assert(cairn_length_factor(CAIRN_LENGTH_FT) == 0.3048);
    /* Mendenhall Order (1893): the US survey foot is exactly 1200/3937 m. */
    ck_assert(cairn_length_factor(CAIRN_LENGTH_USFT) == 1200.0 / 3937.0);
    ck_assert(cairn_length_factor(CAIRN_LENGTH_M) == 1.0);
    /* REFERENCES.md §5 [C]: the survey foot is 2.000004 ppm longer. */
    double ppm = (cairn_length_factor(CAIRN_LENGTH_USFT) / 0.3048 - 1) * 1e6;
    ck_assert_double_eq_tol(ppm, 2.000004, 1e-6);
    /* 1200/3937 = 0.3048006096012192... m (long division). */
    ck_assert_double_eq_tol(cairn_to_m(1.0, CAIRN_LENGTH_USFT), 0.3048006096012192, 1e-16);
    ck_assert_double_eq_tol(cairn_to_m(1000.0, CAIRN_LENGTH_FT), 304.8, 1e-12);
}
END_TEST

START_TEST(unit_names)
{
    cairn_length_unit lu;
    cairn_angle_unit au;
    ck_assert_int_eq(cairn_length_unit_parse("usft", &lu), 0);
    ck_assert_int_eq(lu, CAIRN_LENGTH_USFT);
    ck_assert_int_eq(cairn_length_unit_parse("yd", &lu), -1);
    ck_assert_int_eq(cairn_length_unit_parse("M", &lu), -1); /* case matters */
    ck_assert_int_eq(cairn_angle_unit_parse("gon", &au), 0);
    ck_assert_int_eq(au, CAIRN_ANGLE_GON);
    ck_assert_int_eq(cairn_angle_unit_parse("grad", &au), -1);
    ck_assert_str_eq(cairn_length_unit_name(CAIRN_LENGTH_FT), "ft");
    ck_assert_str_eq(cairn_angle_unit_name(CAIRN_ANGLE_DMS), "dms");
}
END_TEST

/* Angle parsing table: input, unit, expected return, expected degrees. */
static const struct {
    const char *s;
    cairn_angle_unit u;
    int rc;
    double deg;
} angles[] = {
    {"123.4530", CAIRN_ANGLE_DMS, 0, 123 + 45 / 60.0 + 30 / 3600.0},
    {"123-45-30.5", CAIRN_ANGLE_DMS, 0, 123 + 45 / 60.0 + 30.5 / 3600.0},
    {"0.01034", CAIRN_ANGLE_DMS, 0, 1 / 60.0 + 3.4 / 3600.0},    /* 0°01'03.4" */
    {"123.4", CAIRN_ANGLE_DMS, 0, 123 + 40 / 60.0},               /* 123°40' */
    {"-12.3015", CAIRN_ANGLE_DMS, 0, -(12 + 30 / 60.0 + 15 / 3600.0)},
    {"-12-30-15", CAIRN_ANGLE_DMS, 0, -(12 + 30 / 60.0 + 15 / 3600.0)},
    {"360", CAIRN_ANGLE_DMS, 0, 360},
    {"0.0000", CAIRN_ANGLE_DMS, 0, 0},
    {"359.595999", CAIRN_ANGLE_DMS, 0, 359 + 59 / 60.0 + 59.99 / 3600.0},
    {"12.6000", CAIRN_ANGLE_DMS, -2, 0},  /* 60 minutes */
    {"12.3060", CAIRN_ANGLE_DMS, -2, 0},  /* 60 seconds */
    {"12-60-00", CAIRN_ANGLE_DMS, -2, 0},
    {"12-30-60", CAIRN_ANGLE_DMS, -2, 0},
    {"12.30.15", CAIRN_ANGLE_DMS, -1, 0},
    {"1e3", CAIRN_ANGLE_DMS, -1, 0},
    {"", CAIRN_ANGLE_DMS, -1, 0},
    {"abc", CAIRN_ANGLE_DMS, -1, 0},
    {"12-30", CAIRN_ANGLE_DMS, -1, 0},
    {"90.5", CAIRN_ANGLE_DEG, 0, 90.5},
    {"-0.25", CAIRN_ANGLE_DEG, 0, -0.25},
    {"nan", CAIRN_ANGLE_DEG, -1, 0},
    /* IEEE/ASTM SI 10-2002 §3.3.3: 400 gon per circle, so 100 gon = 90°. */
    {"100", CAIRN_ANGLE_GON, 0, 90},
    {"400", CAIRN_ANGLE_GON, 0, 360},
    {"0.0001", CAIRN_ANGLE_GON, 0, 0.324 / 3600.0}, /* 1 cc = 0.324" */
    {"50.5", CAIRN_ANGLE_GON, 0, 45.45},
    {"1e999", CAIRN_ANGLE_GON, -1, 0},
};

START_TEST(parse_angle_table)
{
    double rad = -99;
    int rc = cairn_parse_angle(angles[_i].s, angles[_i].u, &rad);
    ck_assert_msg(rc == angles[_i].rc, "'%s': rc %d, expected %d", angles[_i].s, rc,
                  angles[_i].rc);
    if (!rc)
        /* 1e-12 rad is far below any surveying precision (2e-7 "). */
        ck_assert_double_eq_tol(rad, angles[_i].deg * RAD_PER_DEG, 1e-12);
}
END_TEST

static const char *fmt(double deg, cairn_angle_unit u, int dec, char *buf)
{
    cairn_format_angle(deg * RAD_PER_DEG, u, dec, buf, 64);
    return buf;
}

START_TEST(format_angle_carries)
{
    char b[64];
    /* 10°20'59.99996" at 4 decimals rounds up and carries into the minute:
     * 60" must never be printed. */
    ck_assert_str_eq(fmt(10 + 20 / 60.0 + 59.99996 / 3600.0, CAIRN_ANGLE_DMS, 4, b),
                     "10-21-00.0000");
    ck_assert_str_eq(fmt(10 + 20 / 60.0 + 59.99994 / 3600.0, CAIRN_ANGLE_DMS, 4, b),
                     "10-20-59.9999");
    /* The half-way value 59.99995" also carries (round half away from
     * zero), whichever side of the half its binary value falls within
     * 1e-9": accept only the carried form or the truncated one, never 60. */
    fmt(10 + 20 / 60.0 + 59.99995 / 3600.0, CAIRN_ANGLE_DMS, 4, b);
    ck_assert_msg(!strcmp(b, "10-21-00.0000") || !strcmp(b, "10-20-59.9999"), "%s", b);
    /* 359°59'59.99999" at 2 decimals rounds to a whole circle. Decision:
     * cairn_format_angle rounds and never wraps (it also prints angle
     * differences and negative values), so this is 360-00-00.00; callers
     * printing directions wrap the rounded value themselves. */
    ck_assert_str_eq(fmt(359 + 59 / 60.0 + 59.99999 / 3600.0, CAIRN_ANGLE_DMS, 2, b),
                     "360-00-00.00");
    ck_assert_str_eq(fmt(0, CAIRN_ANGLE_DMS, 2, b), "0-00-00.00");
    ck_assert_str_eq(fmt(-(12 + 30 / 60.0 + 15.5 / 3600.0), CAIRN_ANGLE_DMS, 1, b),
                     "-12-30-15.5");
    ck_assert_str_eq(fmt(-1e-9, CAIRN_ANGLE_DMS, 2, b), "0-00-00.00"); /* no "-0" */
    ck_assert_str_eq(fmt(123.5, CAIRN_ANGLE_DMS, 0, b), "123-30-00");
    ck_assert_str_eq(fmt(90, CAIRN_ANGLE_GON, 4, b), "100.0000");
    ck_assert_str_eq(fmt(45.25, CAIRN_ANGLE_DEG, 3, b), "45.250");
}
END_TEST

/* Sweep the boundary: no printed value may show 60 seconds or minutes. */
START_TEST(format_angle_never_sixty)
{
    char b[64];
    for (int i = -200; i <= 200; i++) {
        double sec = 59.99 + i * 1e-5;
        double deg = 47 + 59 / 60.0 + sec / 3600.0;
        fmt(deg, CAIRN_ANGLE_DMS, 2, b);
        int d, m;
        double s;
        ck_assert_int_eq(sscanf(b, "%d-%d-%lf", &d, &m, &s), 3);
        ck_assert_msg(m < 60 && s < 60, "%s", b);
        /* and it is the nearest value at 0.01": within 0.005" + rounding */
        double back = d + m / 60.0 + s / 3600.0;
        ck_assert_double_eq_tol(back * 3600, deg * 3600, 0.005 + 1e-7);
    }
}
END_TEST

START_TEST(parse_number_strict)
{
    double x;
    ck_assert_int_eq(cairn_parse_number("12.5", &x), 0);
    ck_assert(x == 12.5);
    ck_assert_int_eq(cairn_parse_number("-1.5e3", &x), 0);
    ck_assert(x == -1500);
    ck_assert_int_eq(cairn_parse_number(".5", &x), 0);
    ck_assert_int_eq(cairn_parse_number("nan", &x), -1);
    ck_assert_int_eq(cairn_parse_number("inf", &x), -1);
    ck_assert_int_eq(cairn_parse_number("1e999", &x), -1);
    ck_assert_int_eq(cairn_parse_number("0x10", &x), -1);
    ck_assert_int_eq(cairn_parse_number(" 1", &x), -1);
    ck_assert_int_eq(cairn_parse_number("1,5", &x), -1);
    ck_assert_int_eq(cairn_parse_number("", &x), -1);
}
END_TEST

/* Standard deviations: text, allowed kinds, expected length (m), angle
 * (rad), ppm, or rc -1. */
static const struct {
    const char *s;
    unsigned allowed;
    int rc;
    double length, angle, ppm;
} sds[] = {
    {"1 mm + 1.5 ppm", CAIRN_SD_LENGTH | CAIRN_SD_PPM, 0, 0.001, 0, 1.5},
    {"1mm+1.5ppm", CAIRN_SD_LENGTH | CAIRN_SD_PPM, 0, 0.001, 0, 1.5},
    {"1.5ppm + 1mm", CAIRN_SD_LENGTH | CAIRN_SD_PPM, 0, 0.001, 0, 1.5},
    {"2 cm", CAIRN_SD_LENGTH, 0, 0.02, 0, 0},
    {"0.004m", CAIRN_SD_LENGTH, 0, 0.004, 0, 0},
    {"0.01ft", CAIRN_SD_LENGTH, 0, 0.003048, 0, 0},            /* 85 FR 62698 */
    {"0.01 usft", CAIRN_SD_LENGTH, 0, 0.012 / 3.937, 0, 0},    /* Mendenhall 1893 */
    {"2sec", CAIRN_SD_ANGLE, 0, 0, 2 * RAD_PER_SEC, 0},
    {"2 \"", CAIRN_SD_ANGLE, 0, 0, 2 * RAD_PER_SEC, 0},
    {"2\"", CAIRN_SD_ANGLE, 0, 0, 2 * RAD_PER_SEC, 0},
    {"1 mgon", CAIRN_SD_ANGLE, 0, 0, CAIRN_PI / 200000.0, 0},  /* SI 10-2002 */
    {"1cc", CAIRN_SD_ANGLE, 0, 0, 0.324 * RAD_PER_SEC, 0},     /* 1 cc = 0.324" */
    {"1", CAIRN_SD_LENGTH, -1, 0, 0, 0},           /* no unit */
    {"", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"1 mm", CAIRN_SD_ANGLE, -1, 0, 0, 0},         /* wrong kind */
    {"2sec", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"1 ppm", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"-1mm", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"1mm+2mm", CAIRN_SD_LENGTH, -1, 0, 0, 0},     /* same kind twice */
    {"1 yd", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"1mm 2ppm", CAIRN_SD_LENGTH | CAIRN_SD_PPM, -1, 0, 0, 0}, /* missing + */
    {"1mm+", CAIRN_SD_LENGTH | CAIRN_SD_PPM, -1, 0, 0, 0},
    {"nan mm", CAIRN_SD_LENGTH, -1, 0, 0, 0},
    {"1e999mm", CAIRN_SD_LENGTH, -1, 0, 0, 0},
};

START_TEST(parse_sd_table)
{
    cairn_sd sd = {0, 0, 0, 0};
    char msg[256] = "";
    int rc = cairn_parse_sd(sds[_i].s, sds[_i].allowed, &sd, msg, sizeof msg);
    ck_assert_msg(rc == sds[_i].rc, "'%s': rc %d (%s)", sds[_i].s, rc, msg);
    if (rc) {
        ck_assert_msg(msg[0] != '\0', "'%s': no message", sds[_i].s);
        return;
    }
    ck_assert_double_eq_tol(sd.length, sds[_i].length, 1e-15);
    ck_assert_double_eq_tol(sd.angle, sds[_i].angle, 1e-18);
    ck_assert_double_eq_tol(sd.ppm, sds[_i].ppm, 1e-15);
}
END_TEST

START_TEST(wrap_angles)
{
    ck_assert_double_eq_tol(cairn_wrap_2pi(-0.5), 2 * CAIRN_PI - 0.5, 1e-15);
    ck_assert(cairn_wrap_2pi(2 * CAIRN_PI) == 0);
    ck_assert_double_eq_tol(cairn_wrap_pi(1.5 * CAIRN_PI), -0.5 * CAIRN_PI, 1e-15);
    ck_assert_double_eq_tol(cairn_wrap_pi(-CAIRN_PI), CAIRN_PI, 1e-15); /* (−π, π] */
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("units");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, length_factors_exact);
    tcase_add_test(tc, unit_names);
    tcase_add_loop_test(tc, parse_angle_table, 0, sizeof angles / sizeof angles[0]);
    tcase_add_test(tc, format_angle_carries);
    tcase_add_test(tc, format_angle_never_sixty);
    tcase_add_test(tc, parse_number_strict);
    tcase_add_loop_test(tc, parse_sd_table, 0, sizeof sds / sizeof sds[0]);
    tcase_add_test(tc, wrap_angles);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
