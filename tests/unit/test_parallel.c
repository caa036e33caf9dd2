/* Unit tests of src/core/parallel.c: every index of a loop is visited
 * exactly once, parts are contiguous and in order, and small loops stay
 * on one part. */
#include <check.h>
#include <stdlib.h>

#include "cairn/core.h"

typedef struct {
    unsigned char *seen;
    size_t lo[CAIRN_PARALLEL_MAX], hi[CAIRN_PARALLEL_MAX];
    double sum[CAIRN_PARALLEL_MAX];
} ctx;

static void body(void *vc, int part, size_t lo, size_t hi)
{
    ctx *c = vc;
    c->lo[part] = lo;
    c->hi[part] = hi;
    double s = 0;
    for (size_t i = lo; i < hi; i++) {
        c->seen[i]++;
        s += (double)i;
    }
    c->sum[part] = s;
}

START_TEST(covers_every_index_once)
{
    const size_t ns[] = {0, 1, 7, 1000, 100003};
    for (size_t t = 0; t < sizeof ns / sizeof ns[0]; t++) {
        size_t n = ns[t];
        for (int parts = 1; parts <= CAIRN_PARALLEL_MAX; parts++) {
            ctx c = {calloc(n ? n : 1, 1), {0}, {0}, {0}};
            ck_assert_ptr_nonnull(c.seen);
            cairn_parallel_for(n, parts, body, &c);
            for (size_t i = 0; i < n; i++)
                ck_assert_int_eq(c.seen[i], 1);
            double s = 0;
            for (int p = 0; p < parts; p++) {
                ck_assert_uint_eq(c.lo[p], p ? c.hi[p - 1] : 0);
                s += c.sum[p];
            }
            ck_assert_uint_eq(c.hi[parts - 1], n);
            /* Σ i = n(n−1)/2, exact in doubles at these sizes */
            ck_assert(s == (double)n * ((double)n - 1) / 2);
            free(c.seen);
        }
    }
}
END_TEST

START_TEST(small_loops_one_part)
{
    ck_assert_int_eq(cairn_parallel_parts(0, 20000), 1);
    ck_assert_int_eq(cairn_parallel_parts(39999, 20000), 1);
    int p = cairn_parallel_parts(1000000, 20000);
    ck_assert_int_ge(p, 1);
    ck_assert_int_le(p, CAIRN_PARALLEL_MAX);
    ck_assert_int_ge(cairn_parallel_parts(10, 0), 1);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("parallel");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, covers_every_index_once);
    tcase_add_test(tc, small_loops_one_part);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
