/* The harness can fail: a deliberately wrong assertion runs in a forked Check
 * sub-process, and this program passes only if Check reports exactly that one
 * failure (and the correct twin passes).  If the harness ever stopped
 * detecting failures, this program would fail. */
#include "sl_test.h"

#include <stdio.h>

START_TEST(deliberately_wrong)
{
    /* 2 + 2 is not 5: this assertion must fail. */
    int two = 2;
    ck_assert_int_eq(two + two, 5);
}
END_TEST

START_TEST(deliberately_right)
{
    int two = 2;
    ck_assert_int_eq(two + two, 4);
}
END_TEST

START_TEST(deliberately_wrong_tolerance)
{
    /* A value 1 % off must fail a 0.1 % relative check. */
    SL_CK_REL(1.01, 1.0, 1e-3);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("harness-self-test");
    TCase *tc = tcase_create("expected");
    tcase_add_test(tc, deliberately_wrong);
    tcase_add_test(tc, deliberately_right);
    tcase_add_test(tc, deliberately_wrong_tolerance);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_set_fork_status(sr, CK_FORK);
    srunner_run_all(sr, CK_SILENT);
    int failed = srunner_ntests_failed(sr);
    int run = srunner_ntests_run(sr);
    srunner_free(sr);
    if (failed == 2 && run == 3) {
        printf("harness: the deliberately failing assertions failed as expected (2 of 3)\n");
        return EXIT_SUCCESS;
    }
    printf("harness: expected 2 failures out of 3, got %d of %d\n", failed, run);
    return EXIT_FAILURE;
}
