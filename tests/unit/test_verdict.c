/* test_verdict.c — requested versus measured: each line passes inside its tolerance and
 * fails outside it, information lines never fail, and --expect/--tolerance text is parsed
 * or refused with a clear message. */
#include <math.h>

#include "helmix/verdict.h"
#include "hx_test.h"

static hx_diag cube(double fraction, double rms3, double slope)
{
    hx_diag d = {0};
    d.fraction = fraction;
    d.rms3 = rms3;
    d.slope = slope;
    return d;
}

static int line_passed(const hx_verdict *v, const char *what)
{
    for (int i = 0; i < v->n; i++)
        if (!strcmp(v->line[i].quantity, what)) return v->line[i].passed;
    return -1;
}

static void test_judge(void)
{
    hx_request q;
    hx_verdict v;
    hx_request_defaults(&q, 1, 0); /* single precision: 1e-5 on rms and share */
    q.has_vrms = 1, q.vrms = 2.0;
    q.has_fraction = 1, q.fraction = 0.3;
    q.has_slope = 1, q.slope = 2.0;
    q.expected_fraction = 0.3;
    hx_diag d = cube(0.300004, 2.00001, 1.9);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    CHECK(line_passed(&v, "rms velocity") == 1);
    CHECK(line_passed(&v, "spectral slope") == 1);
    d = cube(0.3002, 2.0, 1.9);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "compressive share") == 0);
    d = cube(0.3, 2.0, 1.8); /* slope off by 0.2 > 0.15 */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "spectral slope") == 0);
    d = cube(0.3, 2.0, NAN); /* no slope measured: a request cannot pass on NaN */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed);
    /* free draws: judged against the recorded share, the ensemble value is information only */
    hx_request_defaults(&q, 0, 0);
    q.has_recorded = 1, q.recorded_fraction = 0.2526;
    q.expected_fraction = 1.0 / 3.0;
    d = cube(0.2526, 1.0, 2.0);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 2 && isnan(v.line[1].tolerance));
}

static void test_parse(void)
{
    hx_request q;
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "fraction=0.4,slope=1.6666667,vrms=3", 0, "--expect") == HX_OK);
    CHECK(q.has_fraction && q.has_slope && q.has_vrms && q.fraction == 0.4 && q.vrms == 3);
    CHECK(hx_request_parse(&q, "fraction=0.02", 1, "--tolerance") == HX_OK && q.tol_fraction == 0.02);
    CHECK(hx_request_parse(&q, "fraction=1.5", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "[0, 1]");
    CHECK(hx_request_parse(&q, "frac=0.1", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "unknown key 'frac'");
    CHECK(hx_request_parse(&q, "slope=abc", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "not a number");
    CHECK(hx_request_parse(&q, "vrms", 0, "--expect") == HX_ERR_ARG);
}

int main(void)
{
    test_judge();
    test_parse();
    return hx_test_finish();
}
