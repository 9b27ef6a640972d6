/* floor.c — the lower bound for `helmix make`: the least work any generator of a
 * three-component N^3 velocity cube must do with FFTW-MPI and parallel HDF5.
 *
 * One slab for an in-place N^3 complex-to-real transform is allocated and planned once
 * (FFTW_ESTIMATE, transposed input). Then, for each of the three components: fill the
 * k-space slab with cheap deterministic nonzero values, execute the inverse transform,
 * compact the padded real rows in place into x-contiguous float32, and write the slab
 * collectively into one (Nz, Ny, Nx) dataset of a single HDF5 file. There is no spectrum,
 * no random numbers, no projection and no normalisation: only allocation, transforms,
 * repacking and output.
 *
 * Usage:  mpiexec -n P floor N OUTFILE
 * Prints one line on rank 0:
 *   BENCH name=floor n=N ranks=P wall_s=T peak_rss_kib=K
 * wall_s is the maximum over ranks of the MPI_Wtime span from after MPI_Init (and a
 * barrier) to after the file is closed; peak_rss_kib is the maximum over ranks of
 * getrusage(RUSAGE_SELF).ru_maxrss, measured at the end. Every MPI, HDF5 and FFTW call is
 * checked; on failure the rank prints the failing call and aborts the job. */
#include <fftw3-mpi.h>
#include <hdf5.h>
#include <mpi.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

static void die(const char *file, int line, const char *what)
{
    int rank = -1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    fprintf(stderr, "floor: rank %d: %s:%d: %s failed\n", rank, file, line, what);
    MPI_Abort(MPI_COMM_WORLD, 1);
    exit(1);
}

/* MPI calls return MPI_SUCCESS (the error handler is set to MPI_ERRORS_RETURN). */
#define CK_MPI(call)                                                                   \
    do {                                                                               \
        int ck_rc_ = (call);                                                           \
        if (ck_rc_ != MPI_SUCCESS) {                                                   \
            char ck_buf_[MPI_MAX_ERROR_STRING + 512];                                   \
            char ck_msg_[MPI_MAX_ERROR_STRING];                                        \
            int ck_len_ = 0;                                                           \
            MPI_Error_string(ck_rc_, ck_msg_, &ck_len_);                               \
            snprintf(ck_buf_, sizeof ck_buf_, "%s (%s)", #call, ck_msg_);              \
            die(__FILE__, __LINE__, ck_buf_);                                          \
        }                                                                              \
    } while (0)
/* HDF5 calls return a negative hid_t / herr_t on failure. */
#define CK_H5(var, call)                                                               \
    do {                                                                               \
        if (((var) = (call)) < 0) die(__FILE__, __LINE__, #call);                      \
    } while (0)
#define CK_H5OK(call)                                                                  \
    do {                                                                               \
        if ((call) < 0) die(__FILE__, __LINE__, #call);                                \
    } while (0)

int main(int argc, char **argv)
{
    if (MPI_Init(&argc, &argv) != MPI_SUCCESS) {
        fprintf(stderr, "floor: MPI_Init failed\n");
        return 1;
    }
    CK_MPI(MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN));
    int rank = 0, nranks = 1;
    CK_MPI(MPI_Comm_rank(MPI_COMM_WORLD, &rank));
    CK_MPI(MPI_Comm_size(MPI_COMM_WORLD, &nranks));

    if (argc != 3) {
        if (rank == 0) fprintf(stderr, "usage: floor N OUTFILE\n");
        MPI_Finalize();
        return 2;
    }
    char *end = NULL;
    long nl = strtol(argv[1], &end, 10);
    if (!end || *end != '\0' || nl < 4 || nl % 2 != 0 || nl > 65536) {
        if (rank == 0) fprintf(stderr, "floor: N must be an even integer >= 4, got '%s'\n", argv[1]);
        MPI_Finalize();
        return 2;
    }
    const ptrdiff_t nz = nl, ny = nl, nx = nl;
    const ptrdiff_t nxc = nx / 2 + 1; /* complex points along x   */
    const ptrdiff_t nxp = 2 * nxc;    /* padded real row length    */
    const char *outpath = argv[2];

    CK_MPI(MPI_Barrier(MPI_COMM_WORLD));
    const double t0 = MPI_Wtime();

    fftw_mpi_init();

    /* Slab sizes: real side distributed over z (local_n0), transposed complex side
     * distributed over y (local_n1). */
    ptrdiff_t local_n0 = 0, local_0_start = 0, local_n1 = 0, local_1_start = 0;
    const ptrdiff_t alloc_local = fftw_mpi_local_size_3d_transposed(
        nz, ny, nxc, MPI_COMM_WORLD, &local_n0, &local_0_start, &local_n1, &local_1_start);
    if (alloc_local <= 0) die(__FILE__, __LINE__, "fftw_mpi_local_size_3d_transposed");

    fftw_complex *cdata = fftw_alloc_complex((size_t)alloc_local);
    if (!cdata) die(__FILE__, __LINE__, "fftw_alloc_complex");
    double *rdata = (double *)cdata;

    fftw_plan plan = fftw_mpi_plan_dft_c2r_3d(nz, ny, nx, cdata, rdata, MPI_COMM_WORLD,
                                              FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    if (!plan) die(__FILE__, __LINE__, "fftw_mpi_plan_dft_c2r_3d");

    /* One file, one dataset per component, all ranks collectively. */
    hid_t fapl, file, fspace, mspace, dxpl;
    CK_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    CK_H5OK(H5Pset_fapl_mpio(fapl, MPI_COMM_WORLD, MPI_INFO_NULL));
    CK_H5(file, H5Fcreate(outpath, H5F_ACC_TRUNC, H5P_DEFAULT, fapl));
    CK_H5OK(H5Pclose(fapl));

    const hsize_t dims[3] = {(hsize_t)nz, (hsize_t)ny, (hsize_t)nx};
    const hsize_t start[3] = {(hsize_t)local_0_start, 0, 0};
    const hsize_t count[3] = {(hsize_t)local_n0, (hsize_t)ny, (hsize_t)nx};
    CK_H5(fspace, H5Screate_simple(3, dims, NULL));
    const hsize_t mcount = (hsize_t)local_n0 * (hsize_t)ny * (hsize_t)nx;
    const hsize_t mdims = mcount > 0 ? mcount : 1;
    CK_H5(mspace, H5Screate_simple(1, &mdims, NULL));
    if (local_n0 > 0) {
        CK_H5OK(H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL));
    } else {
        CK_H5OK(H5Sselect_none(fspace));
        CK_H5OK(H5Sselect_none(mspace));
    }
    CK_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    CK_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));

    static const char *names[3] = {"vx", "vy", "vz"};
    for (int c = 0; c < 3; c++) {
        /* Fill the transposed complex input [y_local][z][x] with cheap nonzero values. */
        for (ptrdiff_t j = 0; j < local_n1; j++) {
            const ptrdiff_t y = local_1_start + j;
            for (ptrdiff_t z = 0; z < nz; z++) {
                fftw_complex *row = cdata + (j * nz + z) * nxc;
                for (ptrdiff_t x = 0; x < nxc; x++) {
                    const int64_t h = (int64_t)(x * 7 + y * 13 + z * 29 + c * 3) % 17;
                    row[x][0] = (double)(h - 8) + 0.5;
                    row[x][1] = (double)((h * 5) % 17 - 8) + 0.25;
                }
            }
        }

        fftw_execute(plan);

        /* Compact padded double rows [z][y][nxp] into contiguous float rows [z][y][nx],
         * in place. The float destination never overtakes the double source when the copy
         * runs forward, and memcpy keeps the type punning well defined. */
        unsigned char *bytes = (unsigned char *)cdata;
        for (ptrdiff_t r = 0; r < local_n0 * ny; r++) {
            const size_t src = (size_t)(r * nxp) * sizeof(double);
            const size_t dst = (size_t)(r * nx) * sizeof(float);
            for (ptrdiff_t x = 0; x < nx; x++) {
                double d;
                memcpy(&d, bytes + src + (size_t)x * sizeof(double), sizeof d);
                const float f = (float)d;
                memcpy(bytes + dst + (size_t)x * sizeof(float), &f, sizeof f);
            }
        }

        hid_t dset;
        CK_H5(dset, H5Dcreate2(file, names[c], H5T_NATIVE_FLOAT, fspace, H5P_DEFAULT,
                               H5P_DEFAULT, H5P_DEFAULT));
        CK_H5OK(H5Dwrite(dset, H5T_NATIVE_FLOAT, mspace, fspace, dxpl, cdata));
        CK_H5OK(H5Dclose(dset));
    }

    CK_H5OK(H5Pclose(dxpl));
    CK_H5OK(H5Sclose(mspace));
    CK_H5OK(H5Sclose(fspace));
    CK_H5OK(H5Fclose(file));
    fftw_destroy_plan(plan);
    fftw_free(cdata);
    fftw_mpi_cleanup();

    const double t_local = MPI_Wtime() - t0;
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) != 0) die(__FILE__, __LINE__, "getrusage");
    long rss_local = ru.ru_maxrss; /* KiB on Linux */
    double t_max = 0.0;
    long rss_max = 0;
    CK_MPI(MPI_Reduce(&t_local, &t_max, 1, MPI_DOUBLE, MPI_MAX, 0, MPI_COMM_WORLD));
    CK_MPI(MPI_Reduce(&rss_local, &rss_max, 1, MPI_LONG, MPI_MAX, 0, MPI_COMM_WORLD));
    if (rank == 0)
        printf("BENCH name=floor n=%ld ranks=%d wall_s=%.4f peak_rss_kib=%ld\n", nl, nranks,
               t_max, rss_max);
    CK_MPI(MPI_Finalize());
    return 0;
}
