/* floor_common.h — what the two helmix benchmark floors share (bench/floor.c for
 * `helmix make`, bench/floor_inspect.c for `helmix inspect`): start-up of MPI, checks on
 * every MPI / HDF5 / FFTW call, the in-place z-slab of an N^3 real <-> complex transform
 * (FFTW-MPI transposed layout), the parallel-HDF5 file, transfer and selection set-up, and
 * the measured span with its BENCH line. The slab serves double (fftw_*) and single
 * (fftwf_*) precision transforms alike: the layout is the same, only the element size differs.
 *
 * Define FLOOR_NAME (the program name, "floor" or "floor_inspect") before including this
 * header: it names the program in error messages and in the BENCH line
 *   BENCH name=FLOOR_NAME n=N ranks=P wall_s=T peak_rss_kib=K[ extra]
 * wall_s is the maximum over ranks of the MPI_Wtime span from floor_start (a barrier, then
 * the clock) to floor_stop; peak_rss_kib is the maximum over ranks of
 * getrusage(RUSAGE_SELF).ru_maxrss, measured in floor_stop. On a failed call the rank prints
 * the call and aborts the job. */
#ifndef HELMIX_BENCH_FLOOR_COMMON_H
#define HELMIX_BENCH_FLOOR_COMMON_H

#ifndef FLOOR_NAME
#error "define FLOOR_NAME before including floor_common.h"
#endif

#include <fftw3-mpi.h>
#include <hdf5.h>
#include <mpi.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/resource.h>

static inline void floor_die(const char *file, int line, const char *what)
{
    int rank = -1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    fprintf(stderr, FLOOR_NAME ": rank %d: %s:%d: %s failed\n", rank, file, line, what);
    MPI_Abort(MPI_COMM_WORLD, 1);
    exit(1);
}
#define FLOOR_DIE(what) floor_die(__FILE__, __LINE__, (what))

/* MPI calls return MPI_SUCCESS (floor_init sets the error handler to MPI_ERRORS_RETURN). */
#define CK_MPI(call)                                                                   \
    do {                                                                               \
        int ck_rc_ = (call);                                                           \
        if (ck_rc_ != MPI_SUCCESS) {                                                   \
            char ck_buf_[MPI_MAX_ERROR_STRING + 512];                                  \
            char ck_msg_[MPI_MAX_ERROR_STRING];                                        \
            int ck_len_ = 0;                                                           \
            MPI_Error_string(ck_rc_, ck_msg_, &ck_len_);                               \
            snprintf(ck_buf_, sizeof ck_buf_, "%s (%s)", #call, ck_msg_);              \
            FLOOR_DIE(ck_buf_);                                                        \
        }                                                                              \
    } while (0)
/* HDF5 calls return a negative hid_t / herr_t / htri_t / int on failure. */
#define CK_H5(var, call)                                                               \
    do {                                                                               \
        if (((var) = (call)) < 0) FLOOR_DIE(#call);                                    \
    } while (0)
#define CK_H5OK(call)                                                                  \
    do {                                                                               \
        if ((call) < 0) FLOOR_DIE(#call);                                              \
    } while (0)

/* MPI_Init, errors returned instead of fatal, rank and size. Returns 0, or 1 if MPI could
 * not start (then nothing else may be called). */
static inline int floor_init(int *argc, char ***argv, int *rank, int *nranks)
{
    int provided = MPI_THREAD_SINGLE; /* FFTW's threads (OMP_NUM_THREADS > 1) call no MPI */
    if (MPI_Init_thread(argc, argv, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS) {
        fprintf(stderr, FLOOR_NAME ": MPI_Init failed\n");
        return 1;
    }
    CK_MPI(MPI_Comm_set_errhandler(MPI_COMM_WORLD, MPI_ERRORS_RETURN));
    CK_MPI(MPI_Comm_rank(MPI_COMM_WORLD, rank));
    CK_MPI(MPI_Comm_size(MPI_COMM_WORLD, nranks));
    return 0;
}

/* Wrong command line: the message (printf format) on rank 0, MPI shut down; returns the
 * exit status 2 for main to return. */
static inline int floor_bad_args(int rank, const char *fmt, ...)
{
    if (rank == 0) {
        va_list ap;
        va_start(ap, fmt);
        vfprintf(stderr, fmt, ap);
        va_end(ap);
    }
    MPI_Finalize();
    return 2;
}

/* Start of the measured span: all ranks together, then FFTW-MPI, with OMP_NUM_THREADS threads
 * per rank for the transforms when it is above 1 (as helmix --threads). Returns the start time. */
static inline double floor_start(void)
{
    CK_MPI(MPI_Barrier(MPI_COMM_WORLD));
    const double t0 = MPI_Wtime();
    const char *env = getenv("OMP_NUM_THREADS");
    int threads = env ? atoi(env) : 1;
    if (threads > 1) {
        if (!fftw_init_threads() || !fftwf_init_threads()) FLOOR_DIE("fftw_init_threads");
        fftw_plan_with_nthreads(threads);
        fftwf_plan_with_nthreads(threads);
    }
    fftw_mpi_init();
    fftwf_mpi_init();
    return t0;
}

/* One in-place slab for an (nz, ny, nx) real <-> (nz, ny, nx/2+1) complex transform in
 * FFTW-MPI's transposed layout: the real side is distributed over z (planes
 * [z0, z0 + n0)), the complex side, stored [y_local][z][x], over y (rows [y0, y0 + n1)).
 * Real rows are padded to nxp = 2 (nx/2 + 1) values. With single = 1 the memory holds floats
 * (fcdata, frdata, half the bytes); otherwise doubles (cdata, rdata). */
typedef struct {
    ptrdiff_t nz, ny, nx;
    ptrdiff_t nxc, nxp; /* complex points along x; padded real row length */
    ptrdiff_t n0, z0;   /* real side: this rank's z planes */
    ptrdiff_t n1, y0;   /* complex side: this rank's y rows */
    int single;
    fftw_complex *cdata;
    double *rdata; /* the same memory seen as real rows */
    fftwf_complex *fcdata; /* single: the memory as float complex values and real rows */
    float *frdata;
} floor_slab;

static inline floor_slab floor_slab_alloc_prec(ptrdiff_t nz, ptrdiff_t ny, ptrdiff_t nx, int single)
{
    floor_slab s = {.nz = nz, .ny = ny, .nx = nx, .nxc = nx / 2 + 1, .nxp = 2 * (nx / 2 + 1), .single = single};
    ptrdiff_t alloc_local = fftw_mpi_local_size_3d_transposed(nz, ny, s.nxc, MPI_COMM_WORLD,
                                                              &s.n0, &s.z0, &s.n1, &s.y0);
    if (alloc_local < 0) FLOOR_DIE("fftw_mpi_local_size_3d_transposed");
    if (alloc_local < 1) alloc_local = 1; /* a rank with no planes still gets a valid pointer */
    if (single) {
        s.fcdata = fftwf_alloc_complex((size_t)alloc_local);
        if (!s.fcdata) FLOOR_DIE("fftwf_alloc_complex");
        s.frdata = (float *)s.fcdata;
    } else {
        s.cdata = fftw_alloc_complex((size_t)alloc_local);
        if (!s.cdata) FLOOR_DIE("fftw_alloc_complex");
        s.rdata = (double *)s.cdata;
    }
    return s;
}

static inline floor_slab floor_slab_alloc(ptrdiff_t nz, ptrdiff_t ny, ptrdiff_t nx)
{
    return floor_slab_alloc_prec(nz, ny, nx, 0);
}

/* HDF5 property lists for all ranks together: MPI-IO file access, collective transfer. */
static inline hid_t floor_fapl(void)
{
    hid_t fapl;
    CK_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    CK_H5OK(H5Pset_fapl_mpio(fapl, MPI_COMM_WORLD, MPI_INFO_NULL));
    return fapl;
}
static inline hid_t floor_dxpl(void)
{
    hid_t dxpl;
    CK_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    CK_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));
    return dxpl;
}

/* Select this rank's z planes of an (nz, ny, nx) file dataspace, or nothing if it owns none
 * (it still joins every collective transfer). */
static inline void floor_select_planes(hid_t fspace, const floor_slab *s)
{
    if (s->n0 > 0) {
        const hsize_t start[3] = {(hsize_t)s->z0, 0, 0};
        const hsize_t count[3] = {(hsize_t)s->n0, (hsize_t)s->ny, (hsize_t)s->nx};
        CK_H5OK(H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL));
    } else {
        CK_H5OK(H5Sselect_none(fspace));
    }
}

/* Memory dataspace of this rank's planes held as rows of `row` elements of which the first
 * nx are data: row = nx for contiguous rows, row = nxp for the padded rows of the slab. */
static inline hid_t floor_memspace(const floor_slab *s, ptrdiff_t row)
{
    hid_t mspace;
    if (s->n0 > 0) {
        const hsize_t mdims[3] = {(hsize_t)s->n0, (hsize_t)s->ny, (hsize_t)row};
        CK_H5(mspace, H5Screate_simple(3, mdims, NULL));
        if (row != s->nx) {
            const hsize_t zero[3] = {0, 0, 0};
            const hsize_t count[3] = {(hsize_t)s->n0, (hsize_t)s->ny, (hsize_t)s->nx};
            CK_H5OK(H5Sselect_hyperslab(mspace, H5S_SELECT_SET, zero, NULL, count, NULL));
        }
    } else {
        const hsize_t one = 1;
        CK_H5(mspace, H5Screate_simple(1, &one, NULL));
        CK_H5OK(H5Sselect_none(mspace));
    }
    return mspace;
}

/* End of the measured span: the plan and the slab are released and FFTW-MPI cleaned up.
 * Time and peak RSS are reduced to their maxima over ranks (valid on rank 0). */
typedef struct {
    double wall_s;
    long peak_rss_kib;
} floor_usage;

/* plan: the double-precision plan, or NULL when the caller destroyed its (single) plan. */
static inline floor_usage floor_stop(double t0, fftw_plan plan, floor_slab *s)
{
    if (plan) fftw_destroy_plan(plan);
    if (s->cdata) fftw_free(s->cdata);
    if (s->fcdata) fftwf_free(s->fcdata);
    s->cdata = NULL;
    s->rdata = NULL;
    s->fcdata = NULL;
    s->frdata = NULL;
    fftw_mpi_cleanup();
    fftwf_mpi_cleanup();

    const double t_local = MPI_Wtime() - t0;
    struct rusage ru;
    if (getrusage(RUSAGE_SELF, &ru) != 0) FLOOR_DIE("getrusage");
    long rss_local = ru.ru_maxrss; /* KiB on Linux */
    floor_usage u = {0.0, 0};
    CK_MPI(MPI_Reduce(&t_local, &u.wall_s, 1, MPI_DOUBLE, MPI_MAX, 0, MPI_COMM_WORLD));
    CK_MPI(MPI_Reduce(&rss_local, &u.peak_rss_kib, 1, MPI_LONG, MPI_MAX, 0, MPI_COMM_WORLD));
    return u;
}

/* The BENCH line on rank 0, with `extra` (empty or starting with a space) at its end. */
static inline void floor_report(int rank, long n, int nranks, floor_usage u, const char *extra)
{
    if (rank == 0)
        printf("BENCH name=" FLOOR_NAME " n=%ld ranks=%d wall_s=%.4f peak_rss_kib=%ld%s\n", n,
               nranks, u.wall_s, u.peak_rss_kib, extra);
}

#endif
