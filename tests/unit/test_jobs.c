/* Unit tests of src/output/jobs.c: result files written at the same time,
 * each job's failure reported as its own (a full disk is /dev/full). */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "../../src/output/jobs.h"

static int write_many(FILE *f, void *ctx)
{
    const char *s = ctx;
    for (int k = 0; k < 200000; k++)
        if (fputs(s, f) < 0)
            return -1;
    return 0;
}

static int write_fails(FILE *f, void *ctx)
{
    (void)f;
    (void)ctx;
    return -1;
}

static long file_size(FILE *f)
{
    fseek(f, 0, SEEK_END);
    return ftell(f);
}

START_TEST(jobs_write_and_report)
{
    FILE *a = tmpfile(), *b = tmpfile(), *c = tmpfile();
    ck_assert(a && b && c);
    cairn_write_job jobs[3] = {{write_many, "abc\n", a, 7}, {write_fails, NULL, b, 7},
                               {write_many, "z", c, 7}};
    ck_assert_int_eq(cairn_output_run(jobs, 3), -1);
    ck_assert_int_eq(jobs[0].status, 0);
    ck_assert_int_eq(jobs[1].status, -1);
    ck_assert_int_eq(jobs[2].status, 0);
    ck_assert_int_eq(file_size(a), 4L * 200000);
    ck_assert_int_eq(file_size(c), 200000L);
    fclose(a);
    fclose(b);
    fclose(c);

    /* all succeed: 0; one job alone runs on this thread */
    FILE *d = tmpfile();
    cairn_write_job one = {write_many, "x", d, 7};
    ck_assert_int_eq(cairn_output_run(&one, 1), 0);
    ck_assert_int_eq(one.status, 0);
    ck_assert_int_eq(file_size(d), 200000L);
    fclose(d);
}
END_TEST

/* A full disk shows when the stream is flushed: that job fails, the
 * other one does not. */
START_TEST(jobs_full_disk)
{
    FILE *full = fopen("/dev/full", "w");
    if (!full)
        return;   /* no /dev/full here: nothing to test */
    FILE *ok = tmpfile();
    ck_assert_ptr_nonnull(ok);
    cairn_write_job jobs[2] = {{write_many, "abc\n", full, 7}, {write_many, "q", ok, 7}};
    ck_assert_int_eq(cairn_output_run(jobs, 2), -1);
    ck_assert_int_eq(jobs[0].status, -1);
    ck_assert_int_eq(jobs[1].status, 0);
    fclose(full);
    fclose(ok);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("jobs");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, jobs_write_and_report);
    tcase_add_test(tc, jobs_full_disk);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
