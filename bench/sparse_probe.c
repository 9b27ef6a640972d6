/* sparse_probe.c — would a sparse FFT backend pay for helmix? Every helmix spectrum is zero
 * outside |k| <= kmax, so the inverse transform could start from the in-band z-sticks alone.
 * This probe compares, for one N^3 complex-to-real transform with the modes |n| <= kmax
 * filled (n = 0 excluded) and everything else zero:
 *   dense_double  FFTW-MPI c2r in double (helmix's transform: transposed input, FFTW_ESTIMATE)
 *   dense_single  FFTW-MPI c2r in single (fftwf_mpi)
 *   sparse_double SpFFT's distributed R2C backward transform in double, from the in-band
 *                 z-sticks (each rank the sticks of its FFTW y rows) into the same z slabs
 * Measured per method: planning time, fill time (zeroing and writing the coefficients), the
 * transform time (minimum over REPS executions), the bytes this rank sends to other ranks in
 * one execution (counted by PMPI wrappers of every send and all-to-all call below, so whatever
 * algorithm FFTW or SpFFT picks is seen), and the peak RSS of the process.
 *
 * Usage:  mpiexec -n P sparse_probe N KMAX METHOD [REPS=5]
 *   METHOD dense_double | dense_single | sparse_double: time that method alone;
 *   METHOD check: run all three once and print the largest absolute difference of the single
 *                 and sparse fields from the dense double one, and that field's largest value.
 * Prints lines on rank 0:
 *   PROBE method=M n=N kmax=K ranks=P plan_s=T fill_s=T exec_s=T sent_bytes=B peak_rss_kib=K modes=M
 *   PROBE check n=N kmax=K ranks=P max_abs=A diff_single=D diff_sparse=D
 * Times and bytes are maxima over ranks. OMP_NUM_THREADS should be 1 (SpFFT is given one
 * thread, as FFTW is). */
#include <fftw3-mpi.h>
#include <math.h>
#include <mpi.h>
#include <spfft/spfft.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

/* --- bytes sent to other ranks, through the MPI profiling interface -------------------------- */
static long long sent_bytes;

static long long type_bytes(MPI_Datatype t, long long count)
{
    int size = 0;
    PMPI_Type_size(t, &size);
    return (long long)size * count;
}

static int my_rank(MPI_Comm comm)
{
    int r = 0;
    PMPI_Comm_rank(comm, &r);
    return r;
}

int MPI_Send(const void *buf, int count, MPI_Datatype t, int dest, int tag, MPI_Comm comm)
{
    if (dest != my_rank(comm)) sent_bytes += type_bytes(t, count);
    return PMPI_Send(buf, count, t, dest, tag, comm);
}

int MPI_Isend(const void *buf, int count, MPI_Datatype t, int dest, int tag, MPI_Comm comm, MPI_Request *req)
{
    if (dest != my_rank(comm)) sent_bytes += type_bytes(t, count);
    return PMPI_Isend(buf, count, t, dest, tag, comm, req);
}

int MPI_Sendrecv(const void *sbuf, int scount, MPI_Datatype st, int dest, int stag, void *rbuf, int rcount,
                 MPI_Datatype rt, int src, int rtag, MPI_Comm comm, MPI_Status *status)
{
    if (dest != my_rank(comm)) sent_bytes += type_bytes(st, scount);
    return PMPI_Sendrecv(sbuf, scount, st, dest, stag, rbuf, rcount, rt, src, rtag, comm, status);
}

int MPI_Alltoall(const void *sbuf, int scount, MPI_Datatype st, void *rbuf, int rcount, MPI_Datatype rt, MPI_Comm comm)
{
    int p = 1;
    PMPI_Comm_size(comm, &p);
    sent_bytes += type_bytes(st, (long long)scount * (p - 1));
    return PMPI_Alltoall(sbuf, scount, st, rbuf, rcount, rt, comm);
}

int MPI_Alltoallv(const void *sbuf, const int *scounts, const int *sdispls, MPI_Datatype st, void *rbuf,
                  const int *rcounts, const int *rdispls, MPI_Datatype rt, MPI_Comm comm)
{
    int p = 1, me = my_rank(comm);
    PMPI_Comm_size(comm, &p);
    for (int i = 0; i < p; i++)
        if (i != me) sent_bytes += type_bytes(st, scounts[i]);
    return PMPI_Alltoallv(sbuf, scounts, sdispls, st, rbuf, rcounts, rdispls, rt, comm);
}

int MPI_Alltoallw(const void *sbuf, const int *scounts, const int *sdispls, const MPI_Datatype *st, void *rbuf,
                  const int *rcounts, const int *rdispls, const MPI_Datatype *rt, MPI_Comm comm)
{
    int p = 1, me = my_rank(comm);
    PMPI_Comm_size(comm, &p);
    for (int i = 0; i < p; i++)
        if (i != me) sent_bytes += type_bytes(st[i], scounts[i]);
    return PMPI_Alltoallw(sbuf, scounts, sdispls, st, rbuf, rcounts, rdispls, rt, comm);
}

/* --- the spectrum ------------------------------------------------------------------------------ */
static void die(const char *what)
{
    fprintf(stderr, "sparse_probe: rank %d: %s failed\n", my_rank(MPI_COMM_WORLD), what);
    MPI_Abort(MPI_COMM_WORLD, 1);
    exit(1);
}

static uint64_t mix64(uint64_t z)
{
    z += 0x9e3779b97f4a7c15ULL;
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
    return z ^ (z >> 31);
}

static double unit(uint64_t h) { return (double)(h >> 11) * 0x1.0p-53 - 0.5; }

/* The coefficient of mode (x >= 0, y, z) (signed wavenumbers), zero outside 0 < |n| <= kmax.
 * On the x = 0 plane the value of (0, -y, -z) is the conjugate of that of (0, y, z), so the
 * field is real whatever the transform does with that plane. */
static void coef(long x, long y, long z, double kmax, double *re, double *im)
{
    *re = *im = 0.0;
    if ((x == 0 && y == 0 && z == 0) || (double)(x * x + y * y + z * z) > kmax * kmax) return;
    int flip = x == 0 && (y < 0 || (y == 0 && z < 0));
    if (flip) y = -y, z = -z;
    uint64_t key = ((uint64_t)(x & 0xfffff) << 40) ^ ((uint64_t)(y & 0xfffff) << 20) ^ (uint64_t)(z & 0xfffff);
    *re = unit(mix64(key));
    *im = flip ? -unit(mix64(key ^ 0x5555555555555555ULL)) : unit(mix64(key ^ 0x5555555555555555ULL));
}

static long signed_index(long i, long n) { return i <= n / 2 ? i : i - n; }

/* --- the three methods ------------------------------------------------------------------------- */
typedef struct {
    long n;
    double kmax;
    ptrdiff_t n0, z0, n1, y0, alloc; /* FFTW-MPI transposed layout */
    double plan_s, fill_s, exec_s;
    long long sent;
    long long modes; /* coefficients this rank holds */
    double *field;   /* this rank's real planes [z][y][x], contiguous (for the check) */
} probe;

static void layout(probe *p)
{
    p->alloc = fftw_mpi_local_size_3d_transposed(p->n, p->n, p->n / 2 + 1, MPI_COMM_WORLD, &p->n0, &p->z0, &p->n1, &p->y0);
    if (p->alloc < 1) p->alloc = 1;
}

/* Keep this rank's planes as contiguous doubles, from padded rows of `el` bytes per value. */
static void keep_field(probe *p, const void *rows, int single)
{
    const long n = p->n, nxp = 2 * (n / 2 + 1);
    p->field = malloc((size_t)(p->n0 * n * n) * sizeof *p->field);
    if (!p->field && p->n0 > 0) die("malloc");
    for (ptrdiff_t r = 0; r < p->n0 * n; r++)
        for (long x = 0; x < n; x++)
            p->field[r * n + x] = single ? (double)((const float *)rows)[r * nxp + x] : ((const double *)rows)[r * nxp + x];
}

static void dense(probe *p, int single, int reps, int keep)
{
    const long n = p->n, nxc = n / 2 + 1;
    void *mem = single ? (void *)fftwf_alloc_complex((size_t)p->alloc) : (void *)fftw_alloc_complex((size_t)p->alloc);
    if (!mem) die("fftw_alloc_complex");
    double t = MPI_Wtime();
    fftw_plan pd = NULL;
    fftwf_plan pf = NULL;
    if (single) pf = fftwf_mpi_plan_dft_c2r_3d(n, n, n, mem, mem, MPI_COMM_WORLD, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    else pd = fftw_mpi_plan_dft_c2r_3d(n, n, n, mem, mem, MPI_COMM_WORLD, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    if (!pd && !pf) die("fftw_mpi_plan_dft_c2r_3d");
    p->plan_s = MPI_Wtime() - t;
    p->exec_s = p->fill_s = INFINITY;
    for (int rep = 0; rep < reps; rep++) {
        t = MPI_Wtime();
        memset(mem, 0, (size_t)p->alloc * (single ? sizeof(fftwf_complex) : sizeof(fftw_complex)));
        p->modes = 0;
        for (ptrdiff_t j = 0; j < p->n1; j++) {
            long y = signed_index(p->y0 + j, n);
            if (fabs((double)y) > p->kmax) continue;
            for (long zi = 0; zi < n; zi++) {
                long z = signed_index(zi, n);
                for (long x = 0; x < nxc && (double)x <= p->kmax; x++) {
                    double re, im;
                    coef(x, y, z, p->kmax, &re, &im);
                    if (re == 0.0 && im == 0.0) continue;
                    ptrdiff_t at = (j * n + zi) * nxc + x;
                    if (single) ((float *)mem)[2 * at] = (float)re, ((float *)mem)[2 * at + 1] = (float)im;
                    else ((double *)mem)[2 * at] = re, ((double *)mem)[2 * at + 1] = im;
                    p->modes++;
                }
            }
        }
        double t1 = MPI_Wtime();
        sent_bytes = 0;
        if (single) fftwf_execute(pf);
        else fftw_execute(pd);
        double t2 = MPI_Wtime();
        p->sent = sent_bytes;
        if (t1 - t < p->fill_s) p->fill_s = t1 - t;
        if (t2 - t1 < p->exec_s) p->exec_s = t2 - t1;
    }
    if (keep) keep_field(p, mem, single);
    if (pf) fftwf_destroy_plan(pf);
    if (pd) fftw_destroy_plan(pd);
    if (single) fftwf_free(mem);
    else fftw_free(mem);
}

#define SP(call)                                                                                   \
    do {                                                                                           \
        if ((call) != SPFFT_SUCCESS) die(#call);                                                   \
    } while (0)

static void sparse(probe *p, int reps, int keep)
{
    const long n = p->n, kmax = (long)floor(p->kmax);
    /* this rank's sticks: (x, y) with x >= 0, y in its FFTW rows, x^2 + y^2 <= kmax^2; on the
     * x = 0 plane only y >= 0 (SpFFT completes the plane by Hermitian symmetry); every in-band z */
    long long cap = 0;
    for (ptrdiff_t j = 0; j < p->n1; j++) {
        long y = signed_index(p->y0 + j, n);
        for (long x = 0; x <= kmax; x++)
            if ((double)(x * x + y * y) <= p->kmax * p->kmax && !(x == 0 && y < 0)) cap += 2 * kmax + 1;
    }
    int *idx = malloc((size_t)(3 * cap + 3) * sizeof *idx);
    double *val = malloc((size_t)(2 * cap + 2) * sizeof *val);
    if (!idx || !val) die("malloc");
    long long m = 0;
    for (ptrdiff_t j = 0; j < p->n1; j++) {
        long y = signed_index(p->y0 + j, n);
        for (long x = 0; x <= kmax; x++) {
            if ((double)(x * x + y * y) > p->kmax * p->kmax || (x == 0 && y < 0)) continue;
            for (long z = -kmax; z <= kmax; z++) {
                if ((double)(x * x + y * y + z * z) > p->kmax * p->kmax || (x == 0 && y == 0 && z == 0)) continue;
                idx[3 * m] = (int)x, idx[3 * m + 1] = (int)y, idx[3 * m + 2] = (int)z;
                m++;
            }
        }
    }
    p->modes = m;
    SpfftTransform tr = NULL;
    double t = MPI_Wtime();
    SP(spfft_transform_create_independent_distributed(&tr, 1, MPI_COMM_WORLD, SPFFT_EXCH_DEFAULT, SPFFT_PU_HOST,
                                                      SPFFT_TRANS_R2C, (int)n, (int)n, (int)n, (int)p->n0, (int)m,
                                                      SPFFT_INDEX_TRIPLETS, idx));
    p->plan_s = MPI_Wtime() - t;
    int zlen = 0, zoff = 0;
    SP(spfft_transform_local_z_length(tr, &zlen));
    SP(spfft_transform_local_z_offset(tr, &zoff));
    if (zlen != p->n0 || zoff != p->z0) die("SpFFT's z slab differs from FFTW's");
    p->exec_s = p->fill_s = INFINITY;
    double *space = NULL;
    for (int rep = 0; rep < reps; rep++) {
        t = MPI_Wtime();
        for (long long i = 0; i < m; i++) coef(idx[3 * i], idx[3 * i + 1], idx[3 * i + 2], p->kmax, &val[2 * i], &val[2 * i + 1]);
        double t1 = MPI_Wtime();
        sent_bytes = 0;
        SP(spfft_transform_backward(tr, val, SPFFT_PU_HOST));
        double t2 = MPI_Wtime();
        p->sent = sent_bytes;
        if (t1 - t < p->fill_s) p->fill_s = t1 - t;
        if (t2 - t1 < p->exec_s) p->exec_s = t2 - t1;
    }
    SP(spfft_transform_get_space_domain(tr, SPFFT_PU_HOST, &space));
    if (keep) {
        p->field = malloc((size_t)(p->n0 * n * n) * sizeof *p->field);
        if (!p->field && p->n0 > 0) die("malloc");
        memcpy(p->field, space, (size_t)(p->n0 * n * n) * sizeof *p->field);
    }
    SP(spfft_transform_destroy(tr));
    free(idx);
    free(val);
}

static double max_over_ranks(double v)
{
    double out = 0;
    PMPI_Allreduce(&v, &out, 1, MPI_DOUBLE, MPI_MAX, MPI_COMM_WORLD);
    return out;
}

static void report(const probe *p, const char *method, int nranks)
{
    struct rusage ru;
    getrusage(RUSAGE_SELF, &ru);
    double plan = max_over_ranks(p->plan_s), fill = max_over_ranks(p->fill_s), exec = max_over_ranks(p->exec_s);
    double sent = max_over_ranks((double)p->sent), rss = max_over_ranks((double)ru.ru_maxrss);
    double modes = 0, mine = (double)p->modes;
    PMPI_Allreduce(&mine, &modes, 1, MPI_DOUBLE, MPI_SUM, MPI_COMM_WORLD);
    if (my_rank(MPI_COMM_WORLD) == 0)
        printf("PROBE method=%s n=%ld kmax=%g ranks=%d plan_s=%.4f fill_s=%.4f exec_s=%.4f sent_bytes=%.0f "
               "peak_rss_kib=%.0f modes=%.0f\n",
               method, p->n, p->kmax, nranks, plan, fill, exec, sent, rss, modes);
}

static double max_diff(const probe *a, const probe *b)
{
    double d = 0;
    for (ptrdiff_t i = 0; i < a->n0 * a->n * a->n; i++) d = fmax(d, fabs(a->field[i] - b->field[i]));
    return max_over_ranks(d);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    int rank = 0, nranks = 1;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    MPI_Comm_size(MPI_COMM_WORLD, &nranks);
    if (argc < 4 || argc > 5) {
        if (rank == 0) fprintf(stderr, "usage: sparse_probe N KMAX dense_double|dense_single|sparse_double|check [REPS]\n");
        MPI_Finalize();
        return 2;
    }
    fftw_mpi_init();
    fftwf_mpi_init();
    probe base = {.n = atol(argv[1]), .kmax = atof(argv[2])};
    const char *method = argv[3];
    int reps = argc == 5 ? atoi(argv[4]) : 5;
    if (base.n < 4 || base.n % 2 || !(base.kmax >= 1 && base.kmax < base.n / 2) || reps < 1) {
        if (rank == 0) fprintf(stderr, "sparse_probe: need an even N >= 4, 1 <= KMAX < N/2 and REPS >= 1\n");
        MPI_Finalize();
        return 2;
    }
    layout(&base);
    if (!strcmp(method, "check")) {
        probe d = base, s = base, sp = base;
        dense(&d, 0, 1, 1);
        dense(&s, 1, 1, 1);
        sparse(&sp, 1, 1);
        double big = 0;
        for (ptrdiff_t i = 0; i < d.n0 * d.n * d.n; i++) big = fmax(big, fabs(d.field[i]));
        big = max_over_ranks(big);
        double ds = max_diff(&s, &d), dsp = max_diff(&sp, &d);
        if (rank == 0)
            printf("PROBE check n=%ld kmax=%g ranks=%d max_abs=%.6e diff_single=%.3e diff_sparse=%.3e\n", base.n,
                   base.kmax, nranks, big, ds, dsp);
        free(d.field), free(s.field), free(sp.field);
    } else if (!strcmp(method, "dense_double") || !strcmp(method, "dense_single")) {
        dense(&base, !strcmp(method, "dense_single"), reps, 0);
        report(&base, method, nranks);
    } else if (!strcmp(method, "sparse_double")) {
        sparse(&base, reps, 0);
        report(&base, method, nranks);
    } else {
        if (rank == 0) fprintf(stderr, "sparse_probe: unknown method '%s'\n", method);
        MPI_Finalize();
        return 2;
    }
    fftw_mpi_cleanup();
    fftwf_mpi_cleanup();
    MPI_Finalize();
    return 0;
}
