/* Shared helpers for the Check unit tests.  Each test program is
 * tests/test_<module>.c; it builds a suite and ends with SL_TEST_MAIN.
 *
 * Every physical check names its source and whether the value was seen in
 * the source (SEEN), is from memory (MEM), derived by us from a published
 * formula (DERIVED), or common practice with no source (PRACTICE), in a
 * comment beside it, with the reason for its tolerance. */
#ifndef SL_TEST_H
#define SL_TEST_H

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "steamloft/err.h"

/* Relative closeness: |got - want| <= rtol * |want|. */
#define SL_CK_REL(got, want, rtol)                                                    \
    do {                                                                              \
        double sl_g_ = (got), sl_w_ = (want), sl_t_ = (rtol);                         \
        ck_assert_msg(isfinite(sl_g_) && fabs(sl_g_ - sl_w_) <= sl_t_ * fabs(sl_w_),  \
                      "%s = %.10g, want %.10g (rel tol %.3g, off by %.3g)", #got,      \
                      sl_g_, sl_w_, sl_t_, sl_w_ != 0 ? (sl_g_ - sl_w_) / sl_w_ : sl_g_); \
    } while (0)

/* Absolute closeness: |got - want| <= atol. */
#define SL_CK_ABS(got, want, atol)                                                    \
    do {                                                                              \
        double sl_g_ = (got), sl_w_ = (want), sl_t_ = (atol);                         \
        ck_assert_msg(isfinite(sl_g_) && fabs(sl_g_ - sl_w_) <= sl_t_,                \
                      "%s = %.10g, want %.10g (abs tol %.3g)", #got, sl_g_, sl_w_, sl_t_); \
    } while (0)

/* Value inside a closed interval. */
#define SL_CK_RANGE(got, lo, hi)                                                      \
    do {                                                                              \
        double sl_g_ = (got), sl_l_ = (lo), sl_h_ = (hi);                             \
        ck_assert_msg(isfinite(sl_g_) && sl_g_ >= sl_l_ && sl_g_ <= sl_h_,            \
                      "%s = %.10g, want within [%.10g, %.10g]", #got, sl_g_, sl_l_, sl_h_); \
    } while (0)

/* Skip the rest of a test because an optional tool is missing: prints
 * "# SKIP <reason>" (tests/run-all.sh counts these lines) and returns from
 * the test function.  Never use it to hide a failure. */
#define SL_SKIP(...)                                                                  \
    do {                                                                              \
        printf("# SKIP ");                                                            \
        printf(__VA_ARGS__);                                                          \
        printf("\n");                                                                 \
        fflush(stdout);                                                               \
        return;                                                                       \
    } while (0)

/* main() for a test program made of one suite-building function.  GSL's
 * abort-on-error handler is switched off, as in the program's own main, so a
 * GSL error reaches the code's status checks instead of aborting the test. */
#define SL_TEST_MAIN(suite_fn)                                                        \
    int main(void)                                                                    \
    {                                                                                 \
        sl_err_gsl_handler_off();                                                     \
        SRunner *sr = srunner_create(suite_fn());                                     \
        srunner_run_all(sr, CK_NORMAL);                                               \
        int failed = srunner_ntests_failed(sr);                                       \
        srunner_free(sr);                                                             \
        return failed == 0 ? EXIT_SUCCESS : EXIT_FAILURE;                             \
    }

#endif
