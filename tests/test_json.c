/* Unit tests for the one JSON writer (json.h): the exact text of a small
 * document (layout, escaping per RFC 8259 section 7, NaN as null), invalid
 * UTF-8 replaced by U+FFFD, misuse of the nesting reported, and a write
 * error reported (on /dev/full).  The expected strings are written out by
 * hand from RFC 8259's grammar, not produced by the writer. */
#include "sl_test.h"
#include "steamloft/json.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* Run the writer into memory; return the text (caller frees). */
static char *written(void (*fill)(sl_json *), int *status)
{
    char *buf = NULL;
    size_t n = 0;
    FILE *f = open_memstream(&buf, &n);
    ck_assert_ptr_nonnull(f);
    sl_json j;
    sl_err e = {0};
    sl_json_begin(&j, f);
    fill(&j);
    *status = sl_json_end(&j, &e);
    fclose(f);
    return buf;
}

static void small_doc(sl_json *j)
{
    sl_json_string(j, "name", "a \"b\" \\ c\n\t\x01");
    sl_json_number(j, "x_m", 1.5e-3);
    sl_json_number(j, "nan", NAN);
    sl_json_integer(j, "n", -42);
    sl_json_bool(j, "ok", 1);
    sl_json_string(j, "none", NULL);
    sl_json_begin_array(j, "row", SL_JSON_INLINE);
    sl_json_number(j, NULL, 1);
    sl_json_number(j, NULL, 2);
    sl_json_end_array(j);
    sl_json_begin_object(j, "sub", SL_JSON_LINES);
    sl_json_null(j, "z");
    sl_json_end_object(j);
    sl_json_begin_array(j, "empty", SL_JSON_LINES);
    sl_json_end_array(j);
}

START_TEST(test_exact_text)
{
    int st;
    char *t = written(small_doc, &st);
    ck_assert_int_eq(st, SL_OK);
    ck_assert_str_eq(t, "{\n"
                        "  \"name\": \"a \\\"b\\\" \\\\ c\\n\\t\\u0001\",\n"
                        "  \"x_m\": 0.0015,\n"
                        "  \"nan\": null,\n"
                        "  \"n\": -42,\n"
                        "  \"ok\": true,\n"
                        "  \"none\": null,\n"
                        "  \"row\": [1, 2],\n"
                        "  \"sub\": {\n"
                        "    \"z\": null\n"
                        "  },\n"
                        "  \"empty\": []\n"
                        "}\n");
    free(t);
}
END_TEST

static void utf8_doc(sl_json *j)
{
    /* valid two- and three-byte sequences, a lone Latin-1 byte, an overlong
     * slash, a surrogate half, a truncated sequence at the end */
    sl_json_string(j, "s", "\xc3\xa9\xe2\x82\xac|\xe9|\xc0\xaf|\xed\xa0\x80|\xe2\x82");
}

START_TEST(test_utf8)
{
    int st;
    char *t = written(utf8_doc, &st);
    ck_assert_int_eq(st, SL_OK);
    ck_assert_str_eq(t, "{\n  \"s\": \"\xc3\xa9\xe2\x82\xac|\\ufffd|\\ufffd\\ufffd|\\ufffd\\ufffd\\ufffd|"
                        "\\ufffd\\ufffd\"\n}\n");
    free(t);
}
END_TEST

static void unclosed(sl_json *j) { sl_json_begin_object(j, "a", SL_JSON_LINES); }
static void keyless(sl_json *j) { sl_json_number(j, NULL, 1.0); }
static void crossed(sl_json *j)
{
    sl_json_begin_array(j, "a", SL_JSON_LINES);
    sl_json_end_object(j);
}

START_TEST(test_misuse)
{
    int st;
    char *t = written(unclosed, &st);
    ck_assert_int_eq(st, SL_EINTERNAL);
    ck_assert_str_eq(t, "{\n  \"a\": {}\n}\n"); /* still balanced */
    free(t);
    free(written(keyless, &st));
    ck_assert_int_eq(st, SL_EINTERNAL);
    free(written(crossed, &st));
    ck_assert_int_eq(st, SL_EINTERNAL);
}
END_TEST

START_TEST(test_write_error)
{
    FILE *f = fopen("/dev/full", "w");
    if (f == NULL)
        SL_SKIP("/dev/full not available");
    sl_json j;
    sl_err e = {0};
    sl_json_begin(&j, f);
    sl_json_string(&j, "k", "v");
    ck_assert_int_eq(sl_json_end(&j, &e), SL_EIO);
    ck_assert_ptr_nonnull(strstr(e.msg, "cannot write"));
    fclose(f);
}
END_TEST

static Suite *json_suite(void)
{
    Suite *s = suite_create("json");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, test_exact_text);
    tcase_add_test(tc, test_utf8);
    tcase_add_test(tc, test_misuse);
    tcase_add_test(tc, test_write_error);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(json_suite)
