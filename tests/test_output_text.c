/* output_text: the three-significant-figure formatter of the text summary
 * and tables.  Reference: C's own "%.3g" (ISO C 7.21.6.1: round to 3
 * significant digits), read back with strtod; our formatter must give the
 * same value, written without an exponent from 0.001 to 999999. */
#include "sl_test.h"

#include "steamloft/output_text.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

START_TEST(three_significant_figures)
{
    /* SEEN: ISO C's %.3g rounding; exact equality of the parsed values (the
     * same decimal digits, so no tolerance). */
    const double xs[] = {59.42998842, 4.198037559, 6.981558865, 1415.661189, 437.9007733, 0.0257431,
                         999.7,       0.9996,      0.00104,     123456.7,    -8.0,        1.832176836e18,
                         2.78e-4,     0.0,         100.0,       0.0130405458};
    for (size_t i = 0; i < sizeof xs / sizeof xs[0]; i++) {
        char got[32], ref[32];
        sl_output_fmt3(got, sizeof got, xs[i]);
        snprintf(ref, sizeof ref, "%.3g", xs[i]);
        ck_assert_msg(strtod(got, NULL) == strtod(ref, NULL), "%.10g: got %s, %%.3g gives %s", xs[i], got, ref);
        double a = fabs(xs[i]);
        if (a >= 1e-3 && a < 1e6)
            ck_assert_msg(strchr(got, 'e') == NULL, "%s has an exponent", got);
    }
    char b[32];
    sl_output_fmt3(b, sizeof b, 59.42998842);
    ck_assert_str_eq(b, "59.4");
    sl_output_fmt3(b, sizeof b, 1415.661189);
    ck_assert_str_eq(b, "1420");
    sl_output_fmt3(b, sizeof b, 999.7);
    ck_assert_str_eq(b, "1000");
    sl_output_fmt3(b, sizeof b, 0.0130405458);
    ck_assert_str_eq(b, "0.0130");
    sl_output_fmt3(b, sizeof b, NAN);
    ck_assert_str_eq(b, "none");
}
END_TEST

static Suite *output_text_suite(void)
{
    Suite *s = suite_create("output_text");
    TCase *tc = tcase_create("core");
    tcase_add_test(tc, three_significant_figures);
    suite_add_tcase(s, tc);
    return s;
}

SL_TEST_MAIN(output_text_suite)
