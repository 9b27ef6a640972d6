/* test_diag.c — the shared summary: moments and PDF of known samples, the compensated slope
 * fit on an exact power law, and energies/share from shell sums. */
#include <math.h>
#include <mpi.h>
#include <stdlib.h>

#include "helmix/diag.h"
#include "hx_test.h"

/* A two-point sample {-1, +1} (n each) has mean 0, rms 1, skewness 0 and excess kurtosis
 * 1 - 3 = -2 (fourth moment 1 over variance squared 1; textbook). An exponential-like
 * sample is checked against numbers worked by hand below. */
static void test_moments(void)
{
    hx_diag d = {0};
    double two[8] = {-1, 1, -1, 1, -1, 1, -1, 1};
    CHECK(hx_diag_moments(&d, 0, two, HX_PREC_DOUBLE, 2, 4, 4, 8, 1, MPI_COMM_WORLD) == HX_OK);
    CHECK_CLOSE(d.mean[0], 0.0, 1e-15);
    CHECK_CLOSE(d.rms[0], 1.0, 1e-15);
    CHECK_CLOSE(d.skew[0], 0.0, 1e-15);
    CHECK_CLOSE(d.kurt[0], -2.0, 1e-14);
    /* values at z = -1 and +1 land in bins 40 and 60 of [-5, 5] (width 0.1): density 0.5/0.1 = 5 */
    CHECK_CLOSE(d.pdf[0][40], 5.0, 1e-12);
    CHECK_CLOSE(d.pdf[0][60], 5.0, 1e-12);
    /* {0, 0, 0, 3}: mean 0.75, variance 1.6875, third central moment (3 (-0.75)^3 + 2.25^3) / 4
     * = 2.53125, so skewness 2.53125 / 1.6875^1.5 = 2/sqrt(3) (by hand) */
    float skewed[4] = {0, 0, 0, 3};
    CHECK(hx_diag_moments(&d, 1, skewed, HX_PREC_SINGLE, 1, 4, 4, 4, 1, MPI_COMM_WORLD) == HX_OK);
    CHECK_CLOSE(d.mean[1], 0.75, 1e-15);
    CHECK_CLOSE(d.rms[1], sqrt(9.0 / 4.0), 1e-15);
    CHECK_CLOSE(d.skew[1], 2.0 / sqrt(3.0), 1e-14);
    /* padded rows: the stride skips the padding values */
    double padded[6] = {2, 2, 99, 2, 2, 99};
    CHECK(hx_diag_moments(&d, 2, padded, HX_PREC_DOUBLE, 2, 2, 3, 4, 1, MPI_COMM_WORLD) == HX_OK);
    CHECK_CLOSE(d.mean[2], 2.0, 1e-15);
    CHECK(isnan(d.skew[2])); /* zero variance: no shape */
}

/* Threads: 1, 2, 3 and 5 threads give the same bits (rows summed in fixed blocks of 64, added
 * in block order), for 300 rows of 37 values, padded to 40, whose blocks the thread counts do
 * not divide; and the moments agree with a plain sum of the same sample to round-off. */
static void test_threads(void)
{
    enum { ROWS = 300, NX = 37, STRIDE = 40 };
    double *v = malloc(ROWS * STRIDE * sizeof *v);
    CHECK(v != NULL);
    if (!v) return;
    double s1 = 0;
    for (int r = 0; r < ROWS; r++)
        for (int i = 0; i < STRIDE; i++) {
            double x = sin(0.37 * (r * STRIDE + i)) + 0.25 * cos(1.3 * r) + 3.0; /* a shifted, skewed sample */
            v[r * STRIDE + i] = i < NX ? x * x : 1e300; /* the padding must never be read */
            if (i < NX) s1 += x * x;
        }
    hx_diag ref = {0}, d = {0};
    CHECK(hx_diag_moments(&ref, 0, v, HX_PREC_DOUBLE, ROWS, NX, STRIDE, ROWS * NX, 1, MPI_COMM_WORLD) == HX_OK);
    CHECK_CLOSE(ref.mean[0], s1 / (ROWS * NX), 1e-13 * fabs(ref.mean[0]));
    for (int t = 2; t <= 5; t += t == 3 ? 2 : 1) {
        CHECK(hx_diag_moments(&d, 0, v, HX_PREC_DOUBLE, ROWS, NX, STRIDE, ROWS * NX, t, MPI_COMM_WORLD) == HX_OK);
        CHECK(d.mean[0] == ref.mean[0] && d.rms[0] == ref.rms[0] && d.skew[0] == ref.skew[0] && d.kurt[0] == ref.kurt[0]);
        int same = 1;
        for (int b = 0; b < HX_DIAG_BINS; b++) same &= d.pdf[0][b] == ref.pdf[0][b];
        CHECK(same);
    }
    free(v);
}

/* One-pass sums about a known centre give the same moments as the three-pass route. */
static void test_one_pass(void)
{
    hx_diag d = {0};
    hx_moments m;
    const double v[4] = {0, 0, 0, 3};
    hx_moments_init(&m, 0.0, 1.5);
    m.n = 4;
    hx_moments_add_doubles(&m, v, 4);
    CHECK(hx_moments_reduce(&m, MPI_COMM_WORLD) == HX_OK);
    hx_diag_set_moments(&d, 0, &m);
    CHECK_CLOSE(d.mean[0], 0.75, 1e-15);
    CHECK_CLOSE(d.rms[0], 1.5, 1e-15);
    CHECK_CLOSE(d.skew[0], 2.0 / sqrt(3.0), 1e-14);
    /* excess kurtosis by hand: (3 (0.75)^4 + 2.25^4) / 4 / 1.6875^2 - 3 = -2/3 */
    CHECK_CLOSE(d.kurt[0], -2.0 / 3.0, 1e-14);
    /* bins of v / 1.5: 0 -> bin 50 (three values), 2 -> bin 70 (one value); density count / (n 0.1) */
    CHECK_CLOSE(d.pdf[0][50], 3.0 / 0.4, 1e-12);
    CHECK_CLOSE(d.pdf[0][70], 1.0 / 0.4, 1e-12);
}

/* A spectrum whose compensated shell values follow k^-5/3 exactly is fitted exactly. */
static void test_slope_and_energies(void)
{
    hx_diag d = {0};
    CHECK(hx_diag_shells(&d, 40) == HX_OK);
    for (int s = 1; s < 40; s++) {
        d.shell_modes[s] = 4.0 * M_PI * s * s * (1.0 + 0.1 * (s % 3)); /* uneven counts, compensated away */
        d.shell_e[s] = pow(s, -5.0 / 3.0) * d.shell_modes[s] / (4.0 * M_PI * s * s);
        d.shell_comp[s] = 0.25 * d.shell_e[s];
    }
    d.fit_kmin = 2, d.fit_kmax = 30;
    d.rms[0] = d.rms[1] = d.rms[2] = 1.0;
    hx_diag_finish(&d);
    CHECK_CLOSE(d.slope, 5.0 / 3.0, 1e-12);
    CHECK_CLOSE(d.slope_err, 0.0, 1e-10);
    CHECK_CLOSE(d.fraction, 0.25, 1e-15);
    CHECK_CLOSE(d.e_sol, 0.75 * d.e_total, 1e-15);
    CHECK_CLOSE(d.rms3, sqrt(3.0), 1e-15);
    double sl, er;
    hx_diag_fit_slope(&d, 2, 3, &sl, &er); /* two shells: too few for a slope with an error */
    CHECK(isnan(sl));
    hx_diag_clear(&d);
    CHECK(d.shell_e == NULL && d.nshell == 0);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    test_moments();
    test_one_pass();
    test_threads();
    test_slope_and_energies();
    int rc = hx_test_finish();
    MPI_Finalize();
    return rc;
}
