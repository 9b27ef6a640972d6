/* test_bonnor.c — the isothermal Lane-Emden table and Bonnor-Ebert spheres: the critical sphere
 * against Ebert and Bonnor, the series at the centre, the singular-sphere limit, mass scaling.
 * `test_bonnor --dump XI_MAX STEP` prints "xi psi dpsi" rows for tests/py/test_bonnor_scipy.py.
 * No MPI: the module is serial, so this executable never calls MPI_Init. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include "helmix/bonnor.h"
#include "hx_test.h"

#define CGS_G 6.67430e-8 /* CODATA 2018 gravitational constant, cm^3 g^-1 s^-2 (from memory) */
#define FOUR_PI (4.0 * M_PI)

/* The pressure-bounded mass m(xi) of the brief's definition, evaluated from the table. */
static double pressure_mass_at(const hx_bonnor *be, double xi)
{
    return xi * xi * hx_bonnor_dpsi(be, xi) * exp(-0.5 * hx_bonnor_psi(be, xi)) / sqrt(FOUR_PI);
}

/* The critical sphere: xi_crit = 6.451, rho_c / rho_edge = 14.04, m = 1.1822
 * (Ebert 1955, Z. Astrophys. 37, 217; Bonnor 1956, MNRAS 116, 351). */
static void test_critical(void)
{
    double xc = hx_bonnor_critical_xi();
    printf("critical: xi = %.6f", xc);
    CHECK_CLOSE(xc, 6.451, 1e-3);
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, xc) == HX_OK);
    if (!be) return;
    printf(", contrast = %.5f, m = %.6f, mu = %.5f\n", hx_bonnor_contrast(be),
           hx_bonnor_pressure_mass(be), hx_bonnor_mass_factor(be));
    CHECK_CLOSE(hx_bonnor_xi_max(be), xc, 0);
    CHECK_CLOSE(hx_bonnor_contrast(be), 14.04, 0.01);
    CHECK_CLOSE(hx_bonnor_pressure_mass(be), 1.1822, 1e-3);
    hx_bonnor_destroy(&be);

    /* It is a maximum of m, not a minimum or a plain zero crossing (definition of the critical
     * sphere, Bonnor 1956): m is smaller on both sides, on a table that reaches past it. */
    CHECK(hx_bonnor_create(&be, 20.0) == HX_OK);
    if (!be) return;
    double m0 = pressure_mass_at(be, xc);
    CHECK(pressure_mass_at(be, xc - 0.05) < m0 && pressure_mass_at(be, xc + 0.05) < m0);
    hx_bonnor_destroy(&be);
}

/* M_BE = 1.1822 c_s^4 G^(-3/2) P^(-1/2) with P = rho_edge c_s^2 (Ebert 1955; Bonnor 1956), for a
 * dense-core example: c_s = 0.2 km/s, rho_c = 1e-19 g/cm^3; relative agreement 1e-4. */
static void test_critical_mass(void)
{
    const double c_s = 0.2e5, rho_c = 1e-19;
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, hx_bonnor_critical_xi()) == HX_OK);
    if (!be) return;
    double M = hx_bonnor_mass(be, c_s, rho_c, CGS_G);
    double P = rho_c / hx_bonnor_contrast(be) * c_s * c_s;
    double M_be = 1.1822 * pow(c_s, 4) / (pow(CGS_G, 1.5) * sqrt(P));
    printf("critical sphere at c_s = 0.2 km/s, rho_c = 1e-19 g/cm^3: M = %.6g g = %.4f M_sun, "
           "R = %.4g cm, M / M_BE - 1 = %.2e\n", M, M / 1.98892e33,
           hx_bonnor_radius(be, c_s, rho_c, CGS_G), M / M_be - 1);
    CHECK_CLOSE(M / M_be, 1.0, 1e-4);
    hx_bonnor_destroy(&be);
}

/* Gauss's theorem on the profile: the mass mu = xi^2 psi' equals the volume integral
 * int_0^xi x^2 exp(-psi) dx of the density (the Lane-Emden equation integrated once; Simpson's
 * rule, common practice). This ties hx_bonnor_mass_factor to the density helmix lays down. */
static void test_gauss(void)
{
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 20.0) == HX_OK);
    if (!be) return;
    const int n = 4000; /* even; Simpson's error ~ (20/n)^4 ~ 1e-9 relative */
    double h = 20.0 / n, sum = 0;
    for (int i = 0; i <= n; i++) {
        double x = i * h, w = (i == 0 || i == n) ? 1 : (i % 2 ? 4 : 2);
        sum += w * x * x * exp(-hx_bonnor_psi(be, x));
    }
    double integral = sum * h / 3.0;
    CHECK_CLOSE(hx_bonnor_mass_factor(be) / integral, 1.0, 1e-8);
    hx_bonnor_destroy(&be);
}

/* Near the centre psi = xi^2/6 - xi^4/120 + xi^6/1890 - 61 xi^8/1632960 + ... (Chandrasekhar
 * 1939, ch. IV; the xi^8 term from memory). The three-term sum differs from psi by about the
 * first omitted term: sign and size checked to 10 per cent where the next term is < 3 per cent
 * of it, at xi = 0.3 and 0.6 (integrated part of the table) and 0.05 (series part). */
static void test_series(void)
{
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 2.0) == HX_OK);
    if (!be) return;
    CHECK(hx_bonnor_psi(be, 0.0) == 0.0 && hx_bonnor_dpsi(be, 0.0) == 0.0);
    const double xs[] = {0.05, 0.3, 0.6};
    for (int i = 0; i < 3; i++) {
        double x = xs[i], x2 = x * x;
        double s3 = x2 / 6 - x2 * x2 / 120 + x2 * x2 * x2 / 1890;
        double d3 = x / 3 - x2 * x / 30 + x2 * x2 * x / 315;
        double t4 = -61.0 / 1632960 * pow(x, 8), dt4 = 8 * -61.0 / 1632960 * pow(x, 7);
        CHECK_CLOSE((hx_bonnor_psi(be, x) - s3) / t4, 1.0, 0.1);
        CHECK_CLOSE((hx_bonnor_dpsi(be, x) - d3) / dt4, 1.0, 0.1);
    }
    hx_bonnor_destroy(&be);
}

/* psi increases and psi' > 0 everywhere (mu = xi^2 psi' grows because d mu/dxi = xi^2 exp(-psi)
 * > 0; Chandrasekhar 1939), sampled on and between table nodes out to the largest table. Beyond
 * xi_max the value at xi_max is returned (helmix specification). */
static void test_monotone(void)
{
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 1e4) == HX_OK);
    if (!be) return;
    int bad = 0;
    double prev = hx_bonnor_psi(be, 0.0);
    for (double x = 1e-3; x <= 1e4; x *= 1.0007) { /* ~19000 points, not aligned with nodes */
        double p = hx_bonnor_psi(be, x);
        if (!(p > prev) || !(hx_bonnor_dpsi(be, x) > 0)) bad++;
        prev = p;
    }
    CHECK(bad == 0);
    CHECK(hx_bonnor_psi(be, 2e4) == hx_bonnor_psi(be, 1e4));
    CHECK(hx_bonnor_dpsi(be, 2e4) == hx_bonnor_dpsi(be, 1e4));
    CHECK(isnan(hx_bonnor_psi(be, NAN)));
    hx_bonnor_destroy(&be);
}

/* Far out the solution approaches the singular isothermal sphere, exp(-psi) -> 2 / xi^2, with
 * oscillations damped like xi^(-1/2) (common practice: Chandrasekhar 1939); a few per cent at
 * xi = 1e3, and closer at 1e4 than at 1e2. */
static void test_singular_limit(void)
{
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 1e4) == HX_OK);
    if (!be) return;
    double d2 = 1e2 * 1e2 * exp(-hx_bonnor_psi(be, 1e2)) / 2 - 1;
    double d3 = 1e3 * 1e3 * exp(-hx_bonnor_psi(be, 1e3)) / 2 - 1;
    double d4 = 1e4 * 1e4 * exp(-hx_bonnor_psi(be, 1e4)) / 2 - 1;
    printf("singular limit: xi^2 exp(-psi) / 2 - 1 = %.4f, %.4f, %.4f at xi = 1e2, 1e3, 1e4\n", d2, d3, d4);
    CHECK_CLOSE(d3, 0.0, 0.05);
    CHECK(fabs(d4) < fabs(d2));
    hx_bonnor_destroy(&be);
}

/* Tables of different length put their nodes at different xi; where they overlap they must give
 * the same psi and psi' to the promised ~1e-10, which needs an interpolant of the integrator's
 * order (a linear one would be off by ~1e-7; common practice). */
static void test_tables_agree(void)
{
    hx_bonnor *a = NULL, *b = NULL;
    CHECK(hx_bonnor_create(&a, 6.451) == HX_OK);
    CHECK(hx_bonnor_create(&b, 1e4) == HX_OK);
    if (!a || !b) goto done;
    double worst = 0;
    for (double x = 0.0; x <= 6.451; x += 0.0123) {
        worst = fmax(worst, fabs(hx_bonnor_psi(a, x) - hx_bonnor_psi(b, x)));
        worst = fmax(worst, fabs(hx_bonnor_dpsi(a, x) - hx_bonnor_dpsi(b, x)));
    }
    printf("tables of xi_max 6.451 and 1e4 differ by at most %.2e\n", worst);
    CHECK(worst < 1e-10);
done:
    hx_bonnor_destroy(&a);
    hx_bonnor_destroy(&b);
}

/* Scaling round trip: the central density that gives a mass gives that mass back, and the
 * radius follows a = c_s / sqrt(4 pi G rho_c) (Chandrasekhar 1939); non-physical inputs are NaN. */
static void test_scaling(void)
{
    const double c_s = 0.2e5, M = 2.0 * 1.98892e33; /* two solar masses in grams (from memory) */
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 5.0) == HX_OK);
    if (!be) return;
    double rho_c = hx_bonnor_central_density(be, c_s, M, CGS_G);
    CHECK(rho_c > 0);
    CHECK_CLOSE(hx_bonnor_mass(be, c_s, rho_c, CGS_G) / M, 1.0, 1e-12);
    /* radius and mass together: mean density 3 mu / xi^3 rho_c of a sphere of radius R */
    double R = hx_bonnor_radius(be, c_s, rho_c, CGS_G);
    double mean = M / (FOUR_PI / 3 * R * R * R);
    CHECK_CLOSE(mean / rho_c, 3 * hx_bonnor_mass_factor(be) / 125.0, 1e-12);
    CHECK(isnan(hx_bonnor_central_density(be, c_s, -M, CGS_G)));
    CHECK(isnan(hx_bonnor_radius(be, 0.0, rho_c, CGS_G)));
    CHECK(isnan(hx_bonnor_mass(be, c_s, rho_c, INFINITY)));
    hx_bonnor_destroy(&be);
}

/* xi_max must be a number in (0, 1e4] (helmix specification); the message names the key. */
static void test_bad_input(void)
{
    const double bad[] = {0.0, -1.0, NAN, INFINITY, 1.0001e4, 1e300};
    for (int i = 0; i < 6; i++) {
        hx_bonnor *be = (hx_bonnor *)&bad; /* any non-NULL value: create must reset it */
        CHECK(hx_bonnor_create(&be, bad[i]) == HX_ERR_ARG);
        CHECK(be == NULL);
        CHECK_STR_CONTAINS(hx_error_message(), "xi_max");
    }
    hx_bonnor *be = NULL;
    CHECK(hx_bonnor_create(&be, 1e4) == HX_OK);   /* the limit itself is allowed */
    hx_bonnor_destroy(&be);
    CHECK(hx_bonnor_create(&be, 1e-3) == HX_OK);  /* a table entirely inside the series range */
    if (be) CHECK_CLOSE(hx_bonnor_contrast(be), exp(1e-6 / 6 - 1e-12 / 120), 1e-15);
    hx_bonnor_destroy(&be);
    CHECK(be == NULL);
    hx_bonnor_destroy(&be); /* destroy accepts NULL */
    hx_bonnor_destroy(NULL);
}

/* --dump XI_MAX STEP: rows "xi psi dpsi" at xi = 0, STEP, 2 STEP, ... and xi_max itself, after
 * '#' lines with the critical xi and the sphere's contrast and pressure-bounded mass. */
static int dump(const char *xs, const char *ss)
{
    char *e1, *e2;
    double xi_max = strtod(xs, &e1), step = strtod(ss, &e2);
    hx_bonnor *be = NULL;
    if (*e1 || *e2 || !(step > 0) || hx_bonnor_create(&be, xi_max) != HX_OK) {
        fprintf(stderr, "test_bonnor --dump XI_MAX STEP: %s\n",
                be || *e1 || *e2 || !(step > 0) ? "need two numbers, STEP > 0" : hx_error_message());
        return 2;
    }
    printf("# critical_xi %.17g\n", hx_bonnor_critical_xi());
    printf("# contrast %.17g pressure_mass %.17g mass_factor %.17g\n", hx_bonnor_contrast(be),
           hx_bonnor_pressure_mass(be), hx_bonnor_mass_factor(be));
    printf("# xi psi dpsi\n");
    for (long i = 0;; i++) {
        double x = i * step;
        if (x >= xi_max * (1 - 1e-12)) break; /* xi_max is printed once, exactly, below */
        printf("%.17g %.17g %.17g\n", x, hx_bonnor_psi(be, x), hx_bonnor_dpsi(be, x));
    }
    printf("%.17g %.17g %.17g\n", xi_max, hx_bonnor_psi(be, xi_max), hx_bonnor_dpsi(be, xi_max));
    hx_bonnor_destroy(&be);
    return 0;
}

int main(int argc, char **argv)
{
    if (argc == 4 && strcmp(argv[1], "--dump") == 0) return dump(argv[2], argv[3]);
    if (argc != 1) {
        fprintf(stderr, "usage: test_bonnor [--dump XI_MAX STEP]\n");
        return 2;
    }
    test_critical();
    test_critical_mass();
    test_gauss();
    test_series();
    test_monotone();
    test_singular_limit();
    test_tables_agree();
    test_scaling();
    test_bad_input();
    return hx_test_finish();
}
