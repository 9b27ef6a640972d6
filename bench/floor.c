/* floor.c — the lower bound for `helmix make`: the least work any generator of a
 * three-component N^3 velocity cube must do with FFTW-MPI and parallel HDF5, in the precision
 * of the run it is compared with.
 *
 * One slab for an in-place N^3 complex-to-real transform is allocated and planned once
 * (FFTW_ESTIMATE, transposed input): fftwf_mpi in single precision, fftw_mpi in double. Then,
 * for each of the three components: fill the k-space slab with cheap deterministic nonzero
 * values, execute the inverse transform, compact the padded real rows in place into
 * x-contiguous rows, and write the slab collectively into one (Nz, Ny, Nx) dataset of a single
 * HDF5 file — float32 for single, float64 for double, so the bytes written are those of a
 * helmix file of that precision. There is no spectrum, no random numbers, no projection and no
 * normalisation: only allocation, transforms, repacking and output.
 *
 * Usage:  mpiexec -n P floor N OUTFILE [single|double]     (default single)
 * Prints one line on rank 0:
 *   BENCH name=floor n=N ranks=P wall_s=T peak_rss_kib=K precision=single|double
 * wall_s is the maximum over ranks of the MPI_Wtime span from after MPI_Init (and a
 * barrier) to after the file is closed; peak_rss_kib is the maximum over ranks of
 * getrusage(RUSAGE_SELF).ru_maxrss, measured at the end. Every MPI, HDF5 and FFTW call is
 * checked; on failure the rank prints the failing call and aborts the job. The set-up, the
 * checks and the measurement are shared with floor_inspect.c in floor_common.h. */
#define FLOOR_NAME "floor"
#include "floor_common.h"

#include <stdint.h>
#include <string.h>

/* Cheap nonzero k-space values of component c at (x, y, z). */
static inline void cheap(ptrdiff_t x, ptrdiff_t y, ptrdiff_t z, int c, double *re, double *im)
{
    const int64_t h = (int64_t)(x * 7 + y * 13 + z * 29 + c * 3) % 17;
    *re = (double)(h - 8) + 0.5;
    *im = (double)((h * 5) % 17 - 8) + 0.25;
}

/* Fill the transposed complex input [y_local][z][x] of component c. */
static void fill(floor_slab *s, int c)
{
    for (ptrdiff_t j = 0; j < s->n1; j++)
        for (ptrdiff_t z = 0; z < s->nz; z++) {
            const ptrdiff_t row = (j * s->nz + z) * s->nxc;
            for (ptrdiff_t x = 0; x < s->nxc; x++) {
                double re, im;
                cheap(x, s->y0 + j, z, c, &re, &im);
                if (s->single) {
                    s->fcdata[row + x][0] = (float)re;
                    s->fcdata[row + x][1] = (float)im;
                } else {
                    s->cdata[row + x][0] = re;
                    s->cdata[row + x][1] = im;
                }
            }
        }
}

/* Compact padded rows [z][y][nxp] into contiguous rows [z][y][nx], in place (a forward
 * memmove never overtakes its source). */
static void compact(floor_slab *s)
{
    const size_t el = s->single ? sizeof(float) : sizeof(double);
    unsigned char *bytes = s->single ? (unsigned char *)s->fcdata : (unsigned char *)s->cdata;
    for (ptrdiff_t r = 1; r < s->n0 * s->ny; r++)
        memmove(bytes + (size_t)(r * s->nx) * el, bytes + (size_t)(r * s->nxp) * el, (size_t)s->nx * el);
}

int main(int argc, char **argv)
{
    int rank = 0, nranks = 1;
    if (floor_init(&argc, &argv, &rank, &nranks)) return 1;

    if (argc != 3 && argc != 4) return floor_bad_args(rank, "usage: floor N OUTFILE [single|double]\n");
    char *end = NULL;
    long nl = strtol(argv[1], &end, 10);
    if (!end || *end != '\0' || nl < 4 || nl % 2 != 0 || nl > 65536)
        return floor_bad_args(rank, "floor: N must be an even integer >= 4, got '%s'\n", argv[1]);
    const char *outpath = argv[2];
    const char *prec = argc == 4 ? argv[3] : "single";
    if (strcmp(prec, "single") && strcmp(prec, "double"))
        return floor_bad_args(rank, "floor: precision must be single or double, got '%s'\n", prec);
    const int single = !strcmp(prec, "single");

    const double t0 = floor_start();

    floor_slab s = floor_slab_alloc_prec(nl, nl, nl, single);
    const ptrdiff_t nz = s.nz, ny = s.ny, nx = s.nx;
    fftw_plan plan = NULL;
    fftwf_plan fplan = NULL;
    if (single) {
        fplan = fftwf_mpi_plan_dft_c2r_3d(nz, ny, nx, s.fcdata, s.frdata, MPI_COMM_WORLD,
                                          FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
        if (!fplan) FLOOR_DIE("fftwf_mpi_plan_dft_c2r_3d");
    } else {
        plan = fftw_mpi_plan_dft_c2r_3d(nz, ny, nx, s.cdata, s.rdata, MPI_COMM_WORLD,
                                        FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
        if (!plan) FLOOR_DIE("fftw_mpi_plan_dft_c2r_3d");
    }

    /* One file, one dataset per component, all ranks collectively; in memory the rank's
     * planes as contiguous rows of the file's type (no conversion, so HDF5 keeps the transfer
     * collective). */
    const hid_t fapl = floor_fapl();
    hid_t file, fspace;
    CK_H5(file, H5Fcreate(outpath, H5F_ACC_TRUNC, H5P_DEFAULT, fapl));
    CK_H5OK(H5Pclose(fapl));
    const hsize_t dims[3] = {(hsize_t)nz, (hsize_t)ny, (hsize_t)nx};
    CK_H5(fspace, H5Screate_simple(3, dims, NULL));
    floor_select_planes(fspace, &s);
    const hid_t mspace = floor_memspace(&s, nx);
    const hid_t dxpl = floor_dxpl();
    const hid_t ftype = single ? H5T_IEEE_F32LE : H5T_IEEE_F64LE, mtype = single ? H5T_NATIVE_FLOAT : H5T_NATIVE_DOUBLE;
    const void *buf = single ? (const void *)s.fcdata : (const void *)s.cdata;

    static const char *names[3] = {"vx", "vy", "vz"};
    for (int c = 0; c < 3; c++) {
        fill(&s, c);
        if (single) fftwf_execute(fplan);
        else fftw_execute(plan);
        compact(&s);
        hid_t dset;
        CK_H5(dset, H5Dcreate2(file, names[c], ftype, fspace, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
        CK_H5OK(H5Dwrite(dset, mtype, mspace, fspace, dxpl, buf));
        CK_H5OK(H5Dclose(dset));
    }

    CK_H5OK(H5Pclose(dxpl));
    CK_H5OK(H5Sclose(mspace));
    CK_H5OK(H5Sclose(fspace));
    CK_H5OK(H5Fclose(file));
    if (fplan) fftwf_destroy_plan(fplan);
    const floor_usage u = floor_stop(t0, plan, &s);

    floor_report(rank, nl, nranks, u, single ? " precision=single" : " precision=double");
    CK_MPI(MPI_Finalize());
    return 0;
}
