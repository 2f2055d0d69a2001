/* Unit tests for the err module: status codes, trace, sysexits mapping. */
#include "sl_test.h"
#include "steamloft/err.h"

#include <string.h>
#include <sysexits.h>

static int inner(sl_err *e, double x)
{
    if (x < 0)
        SL_FAIL_RETURN(e, SL_EDATA, "x = %g is negative (valid range 0 to inf)", x);
    return SL_OK;
}

static int outer(sl_err *e, double x)
{
    SL_TRY_RETURN(e, inner(e, x));
    return SL_OK;
}

START_TEST(test_fail_and_trace)
{
    sl_err e = {0};
    ck_assert_int_eq(outer(&e, 1.0), SL_OK);
    ck_assert_int_eq(e.code, SL_OK);
    ck_assert_int_eq(outer(&e, -2.0), SL_EDATA);
    ck_assert_int_eq(e.code, SL_EDATA);
    ck_assert_str_eq(e.msg, "x = -2 is negative (valid range 0 to inf)");
    /* Trace reads innermost first: inner:line <- outer:line */
    ck_assert_ptr_nonnull(strstr(e.trace, "inner:"));
    ck_assert_ptr_nonnull(strstr(e.trace, " <- outer:"));
    ck_assert(strstr(e.trace, "inner:") < strstr(e.trace, "outer:"));
    sl_err_clear(&e);
    ck_assert_int_eq(e.code, SL_OK);
    ck_assert_str_eq(e.msg, "");
}
END_TEST

START_TEST(test_null_record)
{
    /* A NULL record is allowed: the status still comes back. */
    ck_assert_int_eq(inner(NULL, -1.0), SL_EDATA);
    ck_assert_int_eq(outer(NULL, -1.0), SL_EDATA);
}
END_TEST

START_TEST(test_trace_truncates)
{
    sl_err e = {0};
    sl_err_set(&e, SL_EIO, "f", 1, "m");
    for (int i = 0; i < 200; i++)
        sl_err_push(&e, SL_EIO, "a_rather_long_function_name", 1000 + i);
    ck_assert_uint_lt(strlen(e.trace), sizeof e.trace);
    ck_assert_int_eq(e.code, SL_EIO);
}
END_TEST

START_TEST(test_sysexits)
{
    /* Each status maps to its <sysexits.h> code (the system header is the
     * reference; README.md, Exit codes, documents the same table). */
    ck_assert_int_eq(sl_err_exit_code(SL_OK), EX_OK);
    ck_assert_int_eq(sl_err_exit_code(SL_EUSAGE), EX_USAGE);
    ck_assert_int_eq(sl_err_exit_code(SL_EDATA), EX_DATAERR);
    ck_assert_int_eq(sl_err_exit_code(SL_ENOINPUT), EX_NOINPUT);
    ck_assert_int_eq(sl_err_exit_code(SL_ENUMERIC), EX_SOFTWARE);
    ck_assert_int_eq(sl_err_exit_code(SL_EINTERNAL), EX_SOFTWARE);
    ck_assert_int_eq(sl_err_exit_code(SL_ECANTCREAT), EX_CANTCREAT);
    ck_assert_int_eq(sl_err_exit_code(SL_EIO), EX_IOERR);
    ck_assert_int_eq(sl_err_exit_code(SL_ECONFIG), EX_CONFIG);
    ck_assert_str_eq(sl_err_name(SL_ECANTCREAT), "cannot create output");
}
END_TEST

static Suite *err_suite(void)
{
    Suite *s = suite_create("err");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, test_fail_and_trace);
    tcase_add_test(tc, test_null_record);
    tcase_add_test(tc, test_trace_truncates);
    tcase_add_test(tc, test_sysexits);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(err_suite)
