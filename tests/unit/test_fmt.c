/* The fast number formatting of the result writers (src/output/fmt.c)
 * against snprintf itself: the golden reports and result files depend on
 * every byte, so any difference is a bug. Random doubles of every
 * magnitude, exact binary ties (0.125 to two decimals), values that round
 * across a power of ten, zeros of both signs, and values past the fast
 * path's range (which must fall back to snprintf). */
#include <check.h>
#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "../../src/output/fmt.h"

static uint64_t next(uint64_t *s)
{
    *s ^= *s << 13;
    *s ^= *s >> 7;
    *s ^= *s << 17;
    return *s;
}

static void check_value(double x)
{
    char a[128], b[128];
    for (int dec = 0; dec <= 17; dec++) {
        int na = snprintf(a, sizeof a, "%.*f", dec, x);
        int nb = cairn_fmt_fixed(b, sizeof b, x, dec);
        ck_assert_msg(!strcmp(a, b) && na == nb, "%%.%df of %.17g: \"%s\" vs \"%s\"", dec,
                      x, a, b);
    }
    for (int p = 1; p <= 17; p++) {
        int na = snprintf(a, sizeof a, "%.*g", p, x);
        int nb = cairn_fmt_general(b, sizeof b, x, p);
        ck_assert_msg(!strcmp(a, b) && na == nb, "%%.%dg of %.17g: \"%s\" vs \"%s\"", p,
                      x, a, b);
    }
}

START_TEST(edge_cases)
{
    static const double v[] = {
        0.0, -0.0, 0.5, 1.5, 2.5, -2.5, 0.125, 0.375, -0.0625, 1e-300, 5e-324, 1e22,
        1e21, 9.9999999999995, 999999999999.5, 0.00001, 0.0001, 9.99995e-5,
        9.9999999999999995e-07, 9.9999999999999991e-05, 123456789012345678.0,
        1.8446744073709552e19, DBL_MAX, -DBL_MAX, 304098.9439756, 179.99999999995,
        -0.00000004, 4088648.49324905, 0.1, 0.2, 0.3};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++)
        check_value(v[i]);
    char b[8];
    ck_assert_int_eq(cairn_fmt_fixed(b, sizeof b, 12345.678, 3), 9);
    ck_assert_str_eq(b, "12345.6");   /* truncated as snprintf truncates */
    ck_assert_int_eq(cairn_fmt_file_line(b, sizeof b, "ab.cfb", 12), 9);
    ck_assert_str_eq(b, "ab.cfb:");
}
END_TEST

START_TEST(random_values)
{
    uint64_t s = 88172645463325252ULL;
    for (int it = 0; it < 20000; it++) {
        uint64_t r = next(&s);
        double x;
        switch (r % 5) {
        case 0:
            memcpy(&x, &r, sizeof x);
            if (!isfinite(x))
                continue;
            break;
        case 1: /* exact binary fractions: ties at every precision */
            x = (double)((int64_t)(next(&s) % 2000001) - 1000000) /
                (double)(1ULL << (next(&s) % 12));
            break;
        case 2:
            x = ldexp((double)(next(&s) >> 11), (int)(next(&s) % 80) - 90);
            break;
        case 3:
            x = ((double)(next(&s) >> 11) / 9007199254740992.0 - 0.5) *
                pow(10, (double)(int)(next(&s) % 16) - 6);
            break;
        default: /* short decimals, as coordinates and σ are */
            x = round((double)(next(&s) >> 11) / 9007199254740992.0 * 1e6) /
                pow(10, (double)(next(&s) % 8));
            break;
        }
        check_value(x);
    }
}
END_TEST

/* Well-formed UTF-8 per RFC 3629 §4 (the UTF8-octets grammar) that is
 * also an XML 1.0 Char (§2.2): the sequences below are the boundary cases
 * of those two productions. */
START_TEST(utf8_sequences)
{
    static const struct {
        const char *s;
        int len;
    } cases[] = {
        {"a", 1}, {"\x01", 1},                       /* ASCII, controls left to callers */
        {"\xc2\x80", 2}, {"\xdf\xbf", 2},           /* U+0080, U+07FF */
        {"\xc0\xaf", 0}, {"\xc1\xbf", 0},           /* overlong two-byte forms */
        {"\xe0\xa0\x80", 3}, {"\xe0\x9f\xbf", 0},   /* U+0800; overlong */
        {"\xed\x9f\xbf", 3}, {"\xed\xa0\x80", 0},   /* U+D7FF; a surrogate */
        {"\xef\xbf\xbd", 3}, {"\xef\xbf\xbe", 0},   /* U+FFFD; U+FFFE not a Char */
        {"\xf0\x90\x80\x80", 4}, {"\xf0\x8f\xbf\xbf", 0}, /* U+10000; overlong */
        {"\xf4\x8f\xbf\xbf", 4}, {"\xf4\x90\x80\x80", 0}, /* U+10FFFF; beyond */
        {"\xf5\x80\x80\x80", 0}, {"\xff", 0}, {"\x80", 0},  /* never lead bytes */
        {"\xc3", 0}, {"\xe2\x82", 0},               /* cut short by the end */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
        ck_assert_msg(cairn_fmt_utf8_len((const unsigned char *)cases[i].s) == cases[i].len,
                      "case %zu", i);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("fmt");
    TCase *tc = tcase_create("fmt");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, edge_cases);
    tcase_add_test(tc, random_values);
    tcase_add_test(tc, utf8_sequences);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
