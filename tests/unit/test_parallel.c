/* Unit tests of src/core/parallel.c: every index of a loop is visited
 * exactly once, parts are contiguous and in order, and small loops stay
 * on one part. */
#if defined(__linux__) && !defined(_GNU_SOURCE)
#define _GNU_SOURCE 1   /* sched_setaffinity, CPU_* */
#endif
#include <check.h>
#ifdef __linux__
#include <sched.h>
#endif
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

#ifdef __linux__
/* Bound to one processor (as by taskset -c), the loops use one part
 * whatever the machine has: sched_setaffinity(2). */
START_TEST(affinity_limits_parts)
{
    cpu_set_t all, one;
    ck_assert_int_eq(sched_getaffinity(0, sizeof all, &all), 0);
    int first = 0;
    while (first < CPU_SETSIZE && !CPU_ISSET(first, &all))
        first++;
    ck_assert_int_lt(first, CPU_SETSIZE);
    CPU_ZERO(&one);
    CPU_SET(first, &one);
    ck_assert_int_eq(sched_setaffinity(0, sizeof one, &one), 0);
    int p = cairn_parallel_parts(10000000, 1);
    ck_assert_int_eq(sched_setaffinity(0, sizeof all, &all), 0);
    ck_assert_int_eq(p, 1);
    int want = CPU_COUNT(&all) < CAIRN_PARALLEL_MAX ? CPU_COUNT(&all) : CAIRN_PARALLEL_MAX;
    ck_assert_int_eq(cairn_parallel_parts(10000000, 1), want);
}
END_TEST
#endif

int main(void)
{
    Suite *s = suite_create("parallel");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, covers_every_index_once);
    tcase_add_test(tc, small_loops_one_part);
#ifdef __linux__
    tcase_add_test(tc, affinity_limits_parts);
#endif
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
