/* floor_inspect.c — the lower bound for `helmix inspect`: the least work any FFTW-MPI +
 * parallel-HDF5 analysis of a three-component N^3 velocity cube must do.
 *
 * One slab for an in-place N^3 real-to-complex transform is allocated and planned once
 * (FFTW_ESTIMATE, transposed output). Then, for each of the three components: read this
 * rank's z slab of /data/grid_0000000000/velocity_{x,y,z} collectively with parallel HDF5,
 * converted to double, directly into the padded rows of the slab (memory hyperslab with row
 * stride 2*(Nx/2+1)), and execute the forward transform. Nothing is done with the spectrum:
 * no moments, no shells, no projection, no second slab. Only open, read, transform.
 *
 * Usage:  mpiexec -n P floor_inspect FILE
 * Prints one line on rank 0:
 *   BENCH name=floor_inspect n=N ranks=P wall_s=T peak_rss_kib=K mean=MX,MY,MZ
 * wall_s is the maximum over ranks of the MPI_Wtime span from after MPI_Init (and a
 * barrier) to after the file is closed and the slab freed; peak_rss_kib is the maximum over
 * ranks of getrusage(RUSAGE_SELF).ru_maxrss, measured at the end. mean is the k = 0 mode of
 * each transform divided by N^3 (a check that the data really went through; it must match
 * the means `helmix inspect` prints). Every MPI, HDF5 and FFTW call is checked; on failure
 * the rank prints the failing call and aborts the job. The set-up, the checks and the
 * measurement are shared with floor.c in floor_common.h. */
#define FLOOR_NAME "floor_inspect"
#include "floor_common.h"

#include <string.h>

static const char *const names[3] = {"/data/grid_0000000000/velocity_x",
                                     "/data/grid_0000000000/velocity_y",
                                     "/data/grid_0000000000/velocity_z"};

int main(int argc, char **argv)
{
    int rank = 0, nranks = 1;
    if (floor_init(&argc, &argv, &rank, &nranks)) return 1;

    if (argc != 2) return floor_bad_args(rank, "usage: floor_inspect FILE\n");
    const char *inpath = argv[1];

    const double t0 = floor_start();

    /* Open the file collectively and take the shape from the first component. */
    const hid_t fapl = floor_fapl();
    hid_t file;
    CK_H5(file, H5Fopen(inpath, H5F_ACC_RDONLY, fapl));
    CK_H5OK(H5Pclose(fapl));

    hid_t dset[3];
    for (int c = 0; c < 3; c++) CK_H5(dset[c], H5Dopen2(file, names[c], H5P_DEFAULT));

    hid_t fspace;
    CK_H5(fspace, H5Dget_space(dset[0]));
    int nd;
    CK_H5(nd, H5Sget_simple_extent_ndims(fspace));
    if (nd != 3) FLOOR_DIE("3-D velocity_x");
    hsize_t dims[3];
    CK_H5OK(H5Sget_simple_extent_dims(fspace, dims, NULL));
    for (int c = 1; c < 3; c++) {
        hid_t sp;
        hsize_t d2[3];
        CK_H5(sp, H5Dget_space(dset[c]));
        int nd2;
        CK_H5(nd2, H5Sget_simple_extent_ndims(sp));
        if (nd2 != 3) FLOOR_DIE("3-D velocity_y and velocity_z");
        CK_H5OK(H5Sget_simple_extent_dims(sp, d2, NULL));
        if (memcmp(d2, dims, sizeof dims)) FLOOR_DIE("equal shapes of the three components");
        CK_H5OK(H5Sclose(sp));
    }
    /* (Nz, Ny, Nx) with x fastest, as helmix writes it. */
    const ptrdiff_t nz = (ptrdiff_t)dims[0], ny = (ptrdiff_t)dims[1], nx = (ptrdiff_t)dims[2];
    if (nx < 2 || ny < 2 || nz < 2 || nx % 2) FLOOR_DIE("grid shape (even Nx >= 2, Ny >= 2, Nz >= 2)");

    floor_slab s = floor_slab_alloc(nz, ny, nx);
    fftw_plan plan = fftw_mpi_plan_dft_r2c_3d(nz, ny, nx, s.rdata, s.cdata, MPI_COMM_WORLD,
                                              FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_OUT);
    if (!plan) FLOOR_DIE("fftw_mpi_plan_dft_r2c_3d");

    /* File selection: this rank's planes [z0, z0 + n0). Memory: the same block laid into
     * padded rows of nxp doubles. */
    floor_select_planes(fspace, &s);
    const hid_t mspace = floor_memspace(&s, s.nxp);
    const hid_t dxpl = floor_dxpl();

    double k0[3] = {0, 0, 0}; /* real part of the k = 0 mode, on the rank that owns ky = 0 */
    for (int c = 0; c < 3; c++) {
        CK_H5OK(H5Dread(dset[c], H5T_NATIVE_DOUBLE, mspace, fspace, dxpl, s.rdata));
        fftw_execute(plan);
        if (s.n1 > 0 && s.y0 == 0) k0[c] = s.cdata[0][0];
    }

    CK_H5OK(H5Pclose(dxpl));
    CK_H5OK(H5Sclose(mspace));
    CK_H5OK(H5Sclose(fspace));
    for (int c = 0; c < 3; c++) CK_H5OK(H5Dclose(dset[c]));
    CK_H5OK(H5Fclose(file));
    const floor_usage u = floor_stop(t0, plan, &s);

    double k0_sum[3] = {0, 0, 0};
    CK_MPI(MPI_Reduce(k0, k0_sum, 3, MPI_DOUBLE, MPI_SUM, 0, MPI_COMM_WORLD));
    const double ncell = (double)nx * (double)ny * (double)nz;
    char mean[128];
    snprintf(mean, sizeof mean, " mean=%.6e,%.6e,%.6e", k0_sum[0] / ncell, k0_sum[1] / ncell,
             k0_sum[2] / ncell);
    floor_report(rank, (long)nx, nranks, u, mean);
    CK_MPI(MPI_Finalize());
    return 0;
}
