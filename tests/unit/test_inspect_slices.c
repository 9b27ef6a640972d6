/* test_inspect_slices.c — run on 1..4 ranks: inspect's mid-plane slices (speed, divergence,
 * |vorticity| on the plane z index floor(Nz/2)) of an analytic field written as a foreign cube,
 * against the closed form at that plane's cell centres, on odd, even and mixed grids. An odd
 * Nz has no integer half-way plane: the slice is the plane floor(Nz/2), and its phase per kz is
 * a root of unity instead of (-1)^kz. */
#include <hdf5.h>
#include <math.h>
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "helmix/inspect.h"
#include "hx_test.h"

/* The field, its divergence and curl (derivatives by hand; a trigonometric polynomial whose
 * highest frequency, 2 along z, lies below N/2 on every tested axis, so spectral derivatives of
 * its samples are exact: sampling theorem, common practice). a, b, c = 2 pi / L_x,y,z. */
static void field(const double k[3], double x, double y, double z, double v[3], double *div, double w[3])
{
    const double a = k[0], b = k[1], c = k[2];
    v[0] = sin(c * z) + cos(b * y);
    v[1] = sin(a * x) * cos(2 * c * z);
    v[2] = cos(a * x) * sin(b * y) + 0.5 * sin(2 * c * z + 0.3);
    *div = c * cos(2 * c * z + 0.3);
    w[0] = b * cos(a * x) * cos(b * y) + 2 * c * sin(a * x) * sin(2 * c * z);
    w[1] = c * cos(c * z) + a * sin(a * x) * sin(b * y);
    w[2] = a * cos(a * x) * cos(2 * c * z) + b * sin(b * y);
}

/* Rank 0 writes /u, /v, /w of shape (Nz, Ny, Nx) at cell centres (i + 1/2) L / N. */
static int write_cube(const char *path, const int64_t n[3], const double box[3], const double k[3])
{
    size_t cells = (size_t)(n[0] * n[1] * n[2]);
    double *u[3];
    for (int c = 0; c < 3; c++) u[c] = malloc(cells * sizeof(double));
    for (int64_t iz = 0; iz < n[2]; iz++)
        for (int64_t iy = 0; iy < n[1]; iy++)
            for (int64_t ix = 0; ix < n[0]; ix++) {
                double v[3], dv, w[3];
                field(k, (ix + 0.5) * box[0] / n[0], (iy + 0.5) * box[1] / n[1], (iz + 0.5) * box[2] / n[2], v, &dv, w);
                for (int c = 0; c < 3; c++) u[c][(iz * n[1] + iy) * n[0] + ix] = v[c];
            }
    hid_t f = H5Fcreate(path, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
    hsize_t dims[3] = {(hsize_t)n[2], (hsize_t)n[1], (hsize_t)n[0]};
    hid_t sp = H5Screate_simple(3, dims, NULL);
    int ok = f >= 0 && sp >= 0;
    for (int c = 0; c < 3 && ok; c++) {
        hid_t d = H5Dcreate2(f, (const char *[]){"/u", "/v", "/w"}[c], H5T_NATIVE_DOUBLE, sp, H5P_DEFAULT, H5P_DEFAULT,
                             H5P_DEFAULT);
        ok = d >= 0 && H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, u[c]) >= 0;
        if (d >= 0) H5Dclose(d);
    }
    if (sp >= 0) H5Sclose(sp);
    if (f >= 0) H5Fclose(f);
    for (int c = 0; c < 3; c++) free(u[c]);
    return ok;
}

static void test_grid(MPI_Comm comm, int rank, const int64_t n[3], const double box[3])
{
    char path[128] = "";
    const double k[3] = {2 * M_PI / box[0], 2 * M_PI / box[1], 2 * M_PI / box[2]};
    int ok = 1;
    if (rank == 0) {
        snprintf(path, sizeof path, "/tmp/hx_slices_%ld_%lldx%lldx%lld.h5", (long)getpid(), (long long)n[0],
                 (long long)n[1], (long long)n[2]);
        ok = write_cube(path, n, box, k);
    }
    MPI_Bcast(path, sizeof path, MPI_CHAR, 0, comm);
    MPI_Bcast(&ok, 1, MPI_INT, 0, comm);
    CHECK(ok);
    hx_inspect_opts o;
    memset(&o, 0, sizeof o);
    o.cube.file = path;
    o.cube.vector = "/u,/v,/w";
    o.cube.order = HX_ORDER_ZYX;
    o.cube.has_box = 1;
    memcpy(o.cube.box, box, sizeof o.cube.box);
    o.slices = 1;
    hx_diag d;
    hx_request q;
    int found = 0;
    hx_status st = hx_inspect_run(&o, NULL, comm, &d, &q, &found);
    CHECK(st == HX_OK);
    if (st != HX_OK) printf("inspect: %s\n", hx_error_message());
    if (st == HX_OK && rank == 0) {
        CHECK(d.slice_n[0] == n[0] && d.slice_n[1] == n[1]);
        const int64_t zm = n[2] / 2; /* the plane the report names "z index Nz/2" */
        double worst[3] = {0, 0, 0};
        for (int64_t iy = 0; iy < n[1]; iy++)
            for (int64_t ix = 0; ix < n[0]; ix++) {
                double v[3], dv, w[3];
                field(k, (ix + 0.5) * box[0] / n[0], (iy + 0.5) * box[1] / n[1], (zm + 0.5) * box[2] / n[2], v, &dv, w);
                double sp = sqrt(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]), om = sqrt(w[0] * w[0] + w[1] * w[1] + w[2] * w[2]);
                int64_t i = iy * n[0] + ix;
                worst[0] = fmax(worst[0], fabs(d.slice_speed[i] - sp));
                worst[1] = fmax(worst[1], fabs(d.slice_div[i] - dv) / k[2]);
                worst[2] = fmax(worst[2], fabs(d.slice_vort[i] - om) / k[2]);
            }
        /* values of order 1 (speed) and of order 2 pi / L (gradients): round-off of a few hundred
         * cells' transforms stays far below 1e-11 */
        for (int j = 0; j < 3; j++) CHECK(worst[j] < 1e-11);
        if (!(worst[0] < 1e-11 && worst[1] < 1e-11 && worst[2] < 1e-11))
            printf("  %lldx%lldx%lld: worst speed %.2e, divergence %.2e, vorticity %.2e\n", (long long)n[0],
                   (long long)n[1], (long long)n[2], worst[0], worst[1], worst[2]);
    }
    if (st == HX_OK) hx_diag_clear(&d);
    MPI_Barrier(comm);
    if (rank == 0) remove(path);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm;
    MPI_Comm_dup(MPI_COMM_WORLD, &comm);
    MPI_Comm_set_errhandler(comm, MPI_ERRORS_RETURN);
    int rank;
    MPI_Comm_rank(comm, &rank);
    static const int64_t grids[][3] = {{9, 6, 7}, {8, 7, 8}, {5, 5, 5}, {10, 9, 11}, {6, 8, 6}};
    const double box[3] = {1.0, 1.5, 0.75};
    for (size_t t = 0; t < sizeof grids / sizeof grids[0]; t++) test_grid(comm, rank, grids[t], box);
    int fails = hx_test_fail, total_fail = 0;
    MPI_Allreduce(&fails, &total_fail, 1, MPI_INT, MPI_SUM, comm);
    int rc = 0;
    if (rank == 0) rc = total_fail ? (printf("%d passed, %d failed\n", hx_test_pass, total_fail), 1) : hx_test_finish();
    MPI_Bcast(&rc, 1, MPI_INT, 0, comm);
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return rc;
}
