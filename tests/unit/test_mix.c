/* test_mix.c — the mix factors: rms and compressive share come out as asked for every rule,
 * and the expected share of zeta matches the published formula. */
#include <math.h>
#include <stdlib.h>

#include "helmix/mix.h"
#include "hx_test.h"

static hx_recipe base(void)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    r.vrms = 2.0;
    return r;
}

static double energy(const double *sol, const double *comp, const double *a, const double *b, int n)
{
    double e = 0;
    for (int s = 0; s < n; s++) e += a[s] * a[s] * sol[s] + b[s] * b[s] * comp[s];
    return e;
}

/* (1-zeta)^2 / (1 - 2 zeta + 3 zeta^2): Federrath et al. 2010, A&A 512, A81 (eq. 9).
 * Values worked by hand: zeta = 0 -> 1, 1 -> 0, 0.5 -> 0.25/0.75 = 1/3. */
static void test_expected(void)
{
    CHECK_CLOSE(hx_mix_expected_fraction(0.0), 1.0, 1e-15);
    CHECK_CLOSE(hx_mix_expected_fraction(1.0), 0.0, 1e-15);
    CHECK_CLOSE(hx_mix_expected_fraction(0.5), 1.0 / 3.0, 1e-15);
    for (double z = 0; z <= 1.0; z += 0.125)
        CHECK_CLOSE(hx_mix_expected_fraction(z), (1 - z) * (1 - z) / (1 - 2 * z + 3 * z * z), 1e-15);
}

static void test_rules(void)
{
    enum { NS = 6 };
    const double sol[NS] = {0, 2.0, 1.5, 0.7, 0.3, 0.1}, comp[NS] = {0, 0.9, 0.8, 0.4, 0.2, 0.04};
    double a[NS], b[NS];
    hx_recipe r = base();

    r.mix.mode = HX_MIX_ZETA, r.mix.zeta = 0.3, r.mix.exact = HX_EXACT_NONE;
    CHECK(hx_mix_solve(&r.mix, r.vrms, sol, comp, NS, a, b) == HX_OK);
    CHECK_CLOSE(energy(sol, comp, a, b, NS), 4.0, 1e-13);
    CHECK_CLOSE(a[2] / b[2], 0.3 / 0.7, 1e-14);

    /* a freely drawn fraction: weights (sqrt(1-f), sqrt(2f)) so that with E sol = 2 E comp per
     * mode (two transverse directions, one longitudinal) the expected share is f */
    r.mix.mode = HX_MIX_FRACTION, r.mix.compressive_fraction = 0.4;
    const double iso_sol[NS] = {0, 2, 2, 2, 2, 2}, iso_comp[NS] = {0, 1, 1, 1, 1, 1};
    CHECK(hx_mix_solve(&r.mix, r.vrms, iso_sol, iso_comp, NS, a, b) == HX_OK);
    CHECK_CLOSE(hx_mix_realized_fraction(iso_sol, iso_comp, a, b, NS), 0.4, 1e-14);
    CHECK_CLOSE(energy(iso_sol, iso_comp, a, b, NS), 4.0, 1e-13);
    r.mix.mode = HX_MIX_ZETA;

    r.mix.exact = HX_EXACT_TOTAL; /* pinned to the expected share of zeta */
    CHECK(hx_mix_solve(&r.mix, r.vrms, sol, comp, NS, a, b) == HX_OK);
    CHECK_CLOSE(hx_mix_realized_fraction(sol, comp, a, b, NS), hx_mix_expected_fraction(0.3), 1e-14);
    CHECK_CLOSE(energy(sol, comp, a, b, NS), 4.0, 1e-13);

    r.mix.mode = HX_MIX_FRACTION, r.mix.compressive_fraction = 0.8, r.mix.exact = HX_EXACT_SHELL;
    CHECK(hx_mix_solve(&r.mix, r.vrms, sol, comp, NS, a, b) == HX_OK);
    CHECK_CLOSE(energy(sol, comp, a, b, NS), 4.0, 1e-13);
    double unmixed = 0;
    for (int s = 0; s < NS; s++) unmixed += sol[s] + comp[s];
    for (int s = 1; s < NS; s++) {
        double es = a[s] * a[s] * sol[s], ec = b[s] * b[s] * comp[s];
        CHECK_CLOSE(ec / (es + ec), 0.8, 1e-14);
        /* each shell keeps its share of the unmixed energy */
        CHECK_CLOSE((es + ec) / 4.0, (sol[s] + comp[s]) / unmixed, 1e-14);
    }
    CHECK(a[0] == 0 && b[0] == 0);

    r.mix.compressive_fraction = 1.0, r.mix.exact = HX_EXACT_TOTAL;
    CHECK(hx_mix_solve(&r.mix, r.vrms, sol, comp, NS, a, b) == HX_OK);
    CHECK(a[3] == 0);
    CHECK_CLOSE(hx_mix_realized_fraction(sol, comp, a, b, NS), 1.0, 1e-15);
}

/* Requests that cannot be met are refused with a reason, not met approximately. */
static void test_refusals(void)
{
    const double sol[3] = {0, 1, 1}, nocomp[3] = {0, 0, 0}, zero[3] = {0, 0, 0};
    double a[3], b[3];
    hx_recipe r = base();
    r.mix.mode = HX_MIX_FRACTION, r.mix.compressive_fraction = 0.5, r.mix.exact = HX_EXACT_TOTAL;
    CHECK(hx_mix_solve(&r.mix, r.vrms, sol, nocomp, 3, a, b) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "no compressive power");
    CHECK(hx_mix_solve(&r.mix, r.vrms, zero, zero, 3, a, b) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "no power");
}

int main(void)
{
    test_expected();
    test_rules();
    test_refusals();
    return hx_test_finish();
}
