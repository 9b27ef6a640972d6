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
 * the rank prints the failing call and aborts the job. */
#include <fftw3-mpi.h>
#include <hdf5.h>
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

static void die(const char *file, int line, const char *what)
{
    int rank = -1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    fprintf(stderr, "floor_inspect: rank %d: %s:%d: %s failed\n", rank, file, line, what);
    MPI_Abort(MPI_COMM_WORLD, 1);
    exit(1);
}

/* MPI calls return MPI_SUCCESS (the error handler is set to MPI_ERRORS_RETURN). */
#define CK_MPI(call)                                                                   \
    do {                                                                               \
        int ck_rc_ = (call);                                                           \
        if (ck_rc_ != MPI_SUCCESS) {                                                   \
            char ck_buf_[MPI_MAX_ERROR_STRING + 512];                                  \
            char ck_msg_[MPI_MAX_ERROR_STRING];                                        \
            int ck_len_ = 0;                                                           \
            MPI_Error_string(ck_rc_, ck_msg_, &ck_len_);                               \
            snprintf(ck_buf_, sizeof ck_buf_, "%s (%s)", #call, ck_msg_);              \
            die(__FILE__, __LINE__, ck_buf_);                                          \
        }                                                                              \
    } while (0)
/* HDF5 calls return a negative hid_t / herr_t / htri_t on failure. */
#define CK_H5(var, call)                                                               \
    do {                                                                               \
        if (((var) = (call)) < 0) die(__FILE__, __LINE__, #call);                      \
    } while (0)
#define CK_H5OK(call)                                                                  \
    do {                                                                               \
        if ((call) < 0) die(__FILE__, __LINE__, #call);                                \
    } while (0)

static const char *const names[3] = {"/data/grid_0000000000/velocity_x",
                                     "/data/grid_0000000000/velocity_y",
                                     "/data/grid_0000000000/velocity_z"};

int main(int argc, char **argv)
{
    if (MPI_Init(&argc, &argv) != MPI_SUCCESS) {
        fprintf(stderr, "floor_inspect: MPI_Init failed\n");
        return 1;
    }
    CK_MPI(MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN));
    int rank = 0, nranks = 1;
    CK_MPI(MPI_Comm_rank(MPI_COMM_WORLD, &rank));
    CK_MPI(MPI_Comm_size(MPI_COMM_WORLD, &nranks));

    if (argc != 2) {
        if (rank == 0) fprintf(stderr, "usage: floor_inspect FILE\n");
        MPI_Finalize();
        return 2;
    }
    const char *inpath = argv[1];

    CK_MPI(MPI_Barrier(MPI_COMM_WORLD));
    const double t0 = MPI_Wtime();

    fftw_mpi_init();

    /* Open the file collectively and take the shape from the first component. */
    hid_t fapl, file;
    CK_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    CK_H5OK(H5Pset_fapl_mpio(fapl, MPI_COMM_WORLD, MPI_INFO_NULL));
    CK_H5(file, H5Fopen(inpath, H5F_ACC_RDONLY, fapl));
    CK_H5OK(H5Pclose(fapl));

    hid_t dset[3];
    for (int c = 0; c < 3; c++) CK_H5(dset[c], H5Dopen2(file, names[c], H5P_DEFAULT));

    hid_t fspace;
    CK_H5(fspace, H5Dget_space(dset[0]));
    int nd;
    CK_H5(nd, H5Sget_simple_extent_ndims(fspace));
    if (nd != 3) die(__FILE__, __LINE__, "3-D velocity_x");
    hsize_t dims[3];
    CK_H5OK(H5Sget_simple_extent_dims(fspace, dims, NULL));
    for (int c = 1; c < 3; c++) {
        hid_t sp;
        hsize_t d2[3];
        CK_H5(sp, H5Dget_space(dset[c]));
        int nd2;
        CK_H5(nd2, H5Sget_simple_extent_ndims(sp));
        if (nd2 != 3) die(__FILE__, __LINE__, "3-D velocity_y and velocity_z");
        CK_H5OK(H5Sget_simple_extent_dims(sp, d2, NULL));
        if (memcmp(d2, dims, sizeof dims)) die(__FILE__, __LINE__, "equal shapes of the three components");
        CK_H5OK(H5Sclose(sp));
    }
    /* (Nz, Ny, Nx) with x fastest, as helmix writes it. */
    const ptrdiff_t nz = (ptrdiff_t)dims[0], ny = (ptrdiff_t)dims[1], nx = (ptrdiff_t)dims[2];
    if (nx < 2 || ny < 2 || nz < 2 || nx % 2) die(__FILE__, __LINE__, "grid shape (even Nx >= 2, Ny >= 2, Nz >= 2)");
    const ptrdiff_t nxc = nx / 2 + 1; /* complex points along x  */
    const ptrdiff_t nxp = 2 * nxc;    /* padded real row length   */

    /* Slab sizes: real side distributed over z (local_n0), transposed complex side over y. */
    ptrdiff_t local_n0 = 0, local_0_start = 0, local_n1 = 0, local_1_start = 0;
    ptrdiff_t alloc_local = fftw_mpi_local_size_3d_transposed(
        nz, ny, nxc, MPI_COMM_WORLD, &local_n0, &local_0_start, &local_n1, &local_1_start);
    if (alloc_local < 0) die(__FILE__, __LINE__, "fftw_mpi_local_size_3d_transposed");
    if (alloc_local < 1) alloc_local = 1; /* a rank with no planes still passes a valid pointer */

    fftw_complex *cdata = fftw_alloc_complex((size_t)alloc_local);
    if (!cdata) die(__FILE__, __LINE__, "fftw_alloc_complex");
    double *rdata = (double *)cdata;

    fftw_plan plan = fftw_mpi_plan_dft_r2c_3d(nz, ny, nx, rdata, cdata, MPI_COMM_WORLD,
                                              FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_OUT);
    if (!plan) die(__FILE__, __LINE__, "fftw_mpi_plan_dft_r2c_3d");

    /* File selection: this rank's planes [z0, z0 + local_n0). Memory: the same block laid
     * into padded rows of nxp doubles. A rank that owns no planes selects nothing but still
     * joins each collective read. */
    hid_t mspace, dxpl;
    if (local_n0 > 0) {
        const hsize_t start[3] = {(hsize_t)local_0_start, 0, 0};
        const hsize_t count[3] = {(hsize_t)local_n0, (hsize_t)ny, (hsize_t)nx};
        const hsize_t mdims[3] = {(hsize_t)local_n0, (hsize_t)ny, (hsize_t)nxp};
        const hsize_t zero[3] = {0, 0, 0};
        CK_H5OK(H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL));
        CK_H5(mspace, H5Screate_simple(3, mdims, NULL));
        CK_H5OK(H5Sselect_hyperslab(mspace, H5S_SELECT_SET, zero, NULL, count, NULL));
    } else {
        const hsize_t one = 1;
        CK_H5OK(H5Sselect_none(fspace));
        CK_H5(mspace, H5Screate_simple(1, &one, NULL));
        CK_H5OK(H5Sselect_none(mspace));
    }
    CK_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    CK_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));

    double k0[3] = {0, 0, 0}; /* real part of the k = 0 mode, on the rank that owns ky = 0 */
    for (int c = 0; c < 3; c++) {
        CK_H5OK(H5Dread(dset[c], H5T_NATIVE_DOUBLE, mspace, fspace, dxpl, rdata));
        fftw_execute(plan);
        if (local_n1 > 0 && local_1_start == 0) k0[c] = cdata[0][0];
    }

    CK_H5OK(H5Pclose(dxpl));
    CK_H5OK(H5Sclose(mspace));
    CK_H5OK(H5Sclose(fspace));
    for (int c = 0; c < 3; c++) CK_H5OK(H5Dclose(dset[c]));
    CK_H5OK(H5Fclose(file));
    fftw_destroy_plan(plan);
    fftw_free(cdata);
    fftw_mpi_cleanup();

    const double t_local = MPI_Wtime() - t0;
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) != 0) die(__FILE__, __LINE__, "getrusage");
    long rss_local = ru.ru_maxrss; /* KiB on Linux */
    double t_max = 0.0, k0_sum[3] = {0, 0, 0};
    long rss_max = 0;
    CK_MPI(MPI_Reduce(&t_local, &t_max, 1, MPI_DOUBLE, MPI_MAX, 0, MPI_COMM_WORLD));
    CK_MPI(MPI_Reduce(&rss_local, &rss_max, 1, MPI_LONG, MPI_MAX, 0, MPI_COMM_WORLD));
    CK_MPI(MPI_Reduce(k0, k0_sum, 3, MPI_DOUBLE, MPI_SUM, 0, MPI_COMM_WORLD));
    if (rank == 0) {
        const double ncell = (double)nx * (double)ny * (double)nz;
        printf("BENCH name=floor_inspect n=%td ranks=%d wall_s=%.4f peak_rss_kib=%ld "
               "mean=%.6e,%.6e,%.6e\n",
               nx, nranks, t_max, rss_max, k0_sum[0] / ncell, k0_sum[1] / ncell,
               k0_sum[2] / ncell);
    }
    CK_MPI(MPI_Finalize());
    return 0;
}
