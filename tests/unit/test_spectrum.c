/* test_spectrum.c — E(k) shapes: power-law exponent, band zeros and peak, log-log table
 * interpolation, and table parsing errors. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>

#include <mpi.h>

#include "helmix/spectrum.h"
#include "hx_test.h"

static hx_recipe recipe(hx_shape shape)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    r.spectrum.shape = shape;
    r.spectrum.slope = 5.0 / 3.0; /* Kolmogorov 1941 inertial range, E ~ k^-5/3 (textbook) */
    r.spectrum.kmin = 2;
    r.spectrum.kmax = 20;
    return r;
}

static void test_power(void)
{
    hx_recipe r = recipe(HX_SHAPE_POWER);
    hx_spectrum *sp = NULL;
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_OK);
    /* log-log slope between any two k in the band is -slope exactly */
    double s = log(hx_spectrum_energy(sp, 8.0) / hx_spectrum_energy(sp, 3.0)) / log(8.0 / 3.0);
    CHECK_CLOSE(s, -5.0 / 3.0, 1e-12);
    CHECK(hx_spectrum_energy(sp, 1.99) == 0 && hx_spectrum_energy(sp, 20.01) == 0);
    CHECK(hx_spectrum_energy(sp, 2.0) > 0 && hx_spectrum_energy(sp, 20.0) > 0);
    /* per-mode power = E / k^2: a 3D isotropic field whose shells (area ~ 4 pi k^2) follow E */
    CHECK_CLOSE(hx_spectrum_mode_power(sp, 5.0), hx_spectrum_energy(sp, 5.0) / 25.0, 1e-15);
    hx_spectrum_destroy(&sp);
    CHECK(sp == NULL);
    hx_spectrum_destroy(&sp); /* destroy accepts NULL */
}

static void test_band(void)
{
    hx_recipe r = recipe(HX_SHAPE_BAND);
    hx_spectrum *sp = NULL;
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_OK);
    CHECK(hx_spectrum_energy(sp, 2.0) == 0 && hx_spectrum_energy(sp, 20.0) == 0);
    /* a parabola in k peaks midway: (kmin + kmax) / 2 = 11 */
    CHECK(hx_spectrum_energy(sp, 11.0) > hx_spectrum_energy(sp, 10.5));
    CHECK(hx_spectrum_energy(sp, 11.0) > hx_spectrum_energy(sp, 11.5));
    CHECK_CLOSE(hx_spectrum_energy(sp, 5.0), hx_spectrum_energy(sp, 17.0), 1e-12);
    hx_spectrum_destroy(&sp);
}

static void test_table(void)
{
    const char *path = "/tmp/helmix_test_spectrum_table.txt";
    FILE *fp = fopen(path, "w");
    CHECK(fp != NULL);
    if (!fp) return;
    fprintf(fp, "# k E\n1 1\n4 0.0625\n16 0.00390625\n32 0\n");
    fclose(fp);
    hx_recipe r = recipe(HX_SHAPE_TABLE);
    snprintf(r.spectrum.table, sizeof r.spectrum.table, "%s", path);
    r.spectrum.kmin = 1, r.spectrum.kmax = 31;
    hx_spectrum *sp = NULL;
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_OK);
    if (sp) {
        /* table points follow k^-2 exactly; log-log interpolation reproduces a power law between them */
        CHECK_CLOSE(hx_spectrum_energy(sp, 2.0), 0.25, 1e-12);
        CHECK_CLOSE(hx_spectrum_energy(sp, 8.0), 1.0 / 64.0, 1e-12);
        CHECK(hx_spectrum_energy(sp, 20.0) == 0); /* the last interval ends in E = 0 */
    }
    hx_spectrum_destroy(&sp);
    remove(path);

    double *k = NULL, *e = NULL;
    int n = 0;
    CHECK(hx_spectrum_parse_table("1 2\n2 x\n", "t.txt", &k, &e, &n) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "t.txt:2");
    CHECK(hx_spectrum_parse_table("1 2\n1 3\n", "t.txt", &k, &e, &n) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "increase");
    CHECK(hx_spectrum_parse_table("1 2\n", "t.txt", &k, &e, &n) == HX_ERR_ARG);
    CHECK(hx_spectrum_parse_table("1 2\n2 -1\n", "t.txt", &k, &e, &n) == HX_ERR_ARG);
    CHECK(hx_spectrum_parse_table("# c\n1, 2\n\n3 4 # x\n", "t.txt", &k, &e, &n) == HX_OK && n == 2);
    free(k);
    free(e);

    r.spectrum.shape = HX_SHAPE_TABLE;
    snprintf(r.spectrum.table, sizeof r.spectrum.table, "/nonexistent/helmix/table.txt");
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "cannot read");
    /* Issue 9: a table is text read to its end. A NUL is an error at its line, not the end of
     * the rows (the rows after it were dropped before); a device or a directory is no table. */
    static const char nul[] = "1 1\n2 0.5\n\0004 0.1\n";
    k = e = NULL;
    CHECK(hx_spectrum_parse_table_n(nul, sizeof nul - 1, "t.txt", &k, &e, &n) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "t.txt:3: column 1 holds a NUL byte");
    FILE *fp2 = fopen(path, "wb");
    CHECK(fp2 != NULL);
    if (fp2) {
        fwrite(nul, 1, sizeof nul - 1, fp2);
        fclose(fp2);
    }
    snprintf(r.spectrum.table, sizeof r.spectrum.table, "%s", path);
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_ERR_ARG && sp == NULL);
    CHECK_STR_CONTAINS(hx_error_message(), ":3: column 1 holds a NUL byte");
    remove(path);
    snprintf(r.spectrum.table, sizeof r.spectrum.table, "/dev/zero");
    CHECK(hx_spectrum_create(&sp, &r.spectrum, MPI_COMM_SELF) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "not a regular file");
    /* the rows may be split by a comma, and the last line needs no line feed */
    CHECK(hx_spectrum_parse_table_n("1,2\n3 4", 7, "t.txt", &k, &e, &n) == HX_OK && n == 2 && e[1] == 4);
    free(k);
    free(e);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    test_power();
    test_band();
    test_table();
    int rc = hx_test_finish();
    MPI_Finalize();
    return rc;
}
