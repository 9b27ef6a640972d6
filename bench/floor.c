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
 * checked; on failure the rank prints the failing call and aborts the job. The set-up, the
 * checks and the measurement are shared with floor_inspect.c in floor_common.h. */
#define FLOOR_NAME "floor"
#include "floor_common.h"

#include <stdint.h>
#include <string.h>

int main(int argc, char **argv)
{
    int rank = 0, nranks = 1;
    if (floor_init(&argc, &argv, &rank, &nranks)) return 1;

    if (argc != 3) return floor_bad_args(rank, "usage: floor N OUTFILE\n");
    char *end = NULL;
    long nl = strtol(argv[1], &end, 10);
    if (!end || *end != '\0' || nl < 4 || nl % 2 != 0 || nl > 65536)
        return floor_bad_args(rank, "floor: N must be an even integer >= 4, got '%s'\n", argv[1]);
    const char *outpath = argv[2];

    const double t0 = floor_start();

    floor_slab s = floor_slab_alloc(nl, nl, nl);
    const ptrdiff_t nz = s.nz, ny = s.ny, nx = s.nx, nxc = s.nxc, nxp = s.nxp;
    fftw_plan plan = fftw_mpi_plan_dft_c2r_3d(nz, ny, nx, s.cdata, s.rdata, MPI_COMM_WORLD,
                                              FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    if (!plan) FLOOR_DIE("fftw_mpi_plan_dft_c2r_3d");

    /* One file, one dataset per component, all ranks collectively; in memory the rank's
     * planes as contiguous float rows. */
    const hid_t fapl = floor_fapl();
    hid_t file, fspace;
    CK_H5(file, H5Fcreate(outpath, H5F_ACC_TRUNC, H5P_DEFAULT, fapl));
    CK_H5OK(H5Pclose(fapl));
    const hsize_t dims[3] = {(hsize_t)nz, (hsize_t)ny, (hsize_t)nx};
    CK_H5(fspace, H5Screate_simple(3, dims, NULL));
    floor_select_planes(fspace, &s);
    const hid_t mspace = floor_memspace(&s, nx);
    const hid_t dxpl = floor_dxpl();

    static const char *names[3] = {"vx", "vy", "vz"};
    for (int c = 0; c < 3; c++) {
        /* Fill the transposed complex input [y_local][z][x] with cheap nonzero values. */
        for (ptrdiff_t j = 0; j < s.n1; j++) {
            const ptrdiff_t y = s.y0 + j;
            for (ptrdiff_t z = 0; z < nz; z++) {
                fftw_complex *row = s.cdata + (j * nz + z) * nxc;
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
        unsigned char *bytes = (unsigned char *)s.cdata;
        for (ptrdiff_t r = 0; r < s.n0 * ny; r++) {
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
        CK_H5OK(H5Dwrite(dset, H5T_NATIVE_FLOAT, mspace, fspace, dxpl, s.cdata));
        CK_H5OK(H5Dclose(dset));
    }

    CK_H5OK(H5Pclose(dxpl));
    CK_H5OK(H5Sclose(mspace));
    CK_H5OK(H5Sclose(fspace));
    CK_H5OK(H5Fclose(file));
    const floor_usage u = floor_stop(t0, plan, &s);

    floor_report(rank, nl, nranks, u, "");
    CK_MPI(MPI_Finalize());
    return 0;
}
