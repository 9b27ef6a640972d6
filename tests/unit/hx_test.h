/* hx_test.h — the smallest test harness: count checks, print failures with file and line,
 * close with the plain line "N passed, N failed" and exit non-zero on any failure. */
#ifndef HX_TEST_H
#define HX_TEST_H

#include <math.h>
#include <stdio.h>
#include <string.h>

static int hx_test_pass, hx_test_fail;

#define CHECK(cond)                                                                    \
    do {                                                                               \
        if (cond) hx_test_pass++;                                                      \
        else {                                                                         \
            hx_test_fail++;                                                            \
            fprintf(stderr, "%s:%d: CHECK failed: %s\n", __FILE__, __LINE__, #cond);  \
        }                                                                              \
    } while (0)

#define CHECK_CLOSE(a, b, tol)                                                         \
    do {                                                                               \
        double hx_a_ = (a), hx_b_ = (b);                                               \
        if (fabs(hx_a_ - hx_b_) <= (tol)) hx_test_pass++;                              \
        else {                                                                         \
            hx_test_fail++;                                                            \
            fprintf(stderr, "%s:%d: %s = %.17g, expected %s = %.17g (tol %g)\n",       \
                    __FILE__, __LINE__, #a, hx_a_, #b, hx_b_, (double)(tol));          \
        }                                                                              \
    } while (0)

#define CHECK_STR_CONTAINS(hay, needle)                                                \
    do {                                                                               \
        const char *hx_h_ = (hay);                                                     \
        if (hx_h_ && strstr(hx_h_, (needle))) hx_test_pass++;                          \
        else {                                                                         \
            hx_test_fail++;                                                            \
            fprintf(stderr, "%s:%d: \"%s\" does not contain \"%s\"\n", __FILE__,       \
                    __LINE__, hx_h_ ? hx_h_ : "(null)", (needle));                     \
        }                                                                              \
    } while (0)

static int hx_test_finish(void)
{
    printf("%d passed, %d failed\n", hx_test_pass, hx_test_fail);
    return hx_test_fail ? 1 : 0;
}

#endif
