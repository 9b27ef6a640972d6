/* test_mpi.c — run on 1..4 ranks: a failure on one rank becomes the same status and message
 * on every rank, and the slab layout of every tested grid covers each plane exactly once. */
#include <math.h>
#include <mpi.h>
#include <string.h>

#include "helmix/error.h"
#include "helmix/grid.h"
#include "hx_test.h"

static void test_agree(MPI_Comm comm, int rank, int size)
{
    CHECK(hx_error_agree(comm, HX_OK) == HX_OK);
    int bad = size - 1; /* the last rank fails */
    hx_status st = rank == bad ? hx_error_set(HX_ERR_HDF5, "disk trouble on rank %d", rank) : HX_OK;
    if (rank != bad) hx_error_clear();
    hx_status agreed = hx_error_agree(comm, st);
    CHECK(agreed == HX_ERR_HDF5);
    char want[64];
    snprintf(want, sizeof want, "disk trouble on rank %d", bad);
    CHECK_STR_CONTAINS(hx_error_message(), want);
}

static void test_layout(MPI_Comm comm, int size)
{
    /* odd and mixed sizes too: FFTW's r2c layout keeps Nx/2 + 1 points for any Nx (FFTW manual,
     * "Multi-dimensional Transforms of Real Data") */
    static const int64_t grids[][3] = {{8, 8, 8}, {16, 12, 6}, {8, 8, 4}, {10, 6, 2}, {9, 7, 5}, {31, 32, 17}, {4, 5, 3}};
    const double box[3] = {1, 1, 1};
    for (size_t t = 0; t < sizeof grids / sizeof grids[0]; t++) {
        hx_grid g;
        CHECK(hx_grid_init(&g, grids[t], box, comm) == HX_OK);
        long long planes[2] = {(long long)g.nz, (long long)g.ny}, tot[2];
        MPI_Allreduce(planes, tot, 2, MPI_LONG_LONG, MPI_SUM, comm);
        CHECK(tot[0] == grids[t][2]); /* real-space z planes, each once */
        CHECK(tot[1] == grids[t][1]); /* k-space y planes, each once   */
        CHECK(g.alloc >= g.nz * g.n[1] * 2 * g.nxc / 2 && g.alloc >= g.ny * g.n[2] * g.nxc);
        CHECK(g.nxc == grids[t][0] / 2 + 1);
    }
    /* every index of an odd axis has its partner: the frequencies are 0, +-1 .. +-(N-1)/2 (numpy.fft.fftfreq) */
    CHECK(hx_grid_freq(2, 5) == 2 && hx_grid_freq(3, 5) == -2 && hx_grid_freq(4, 5) == -1);
    CHECK(hx_grid_freq(2, 4) == -2 && hx_grid_freq(1, 4) == 1); /* even: the Nyquist index counts as -N/2 */
    hx_grid g;
    const int64_t tiny[3] = {8, 1, 8}, n16[3] = {16, 16, 16};
    CHECK(hx_grid_init(&g, tiny, box, comm) == HX_ERR_ARG);
    /* the box: finite sides > 0, and a grid that spans at most 2^24 shells (the limit helmix states) */
    const double flat[3] = {1, 1, 1e12}, nan_side[3] = {1, NAN, 1}, huge[3] = {1e308, 1e308, 1e308},
                 long_ok[3] = {1, 1, 1e6}, inf_side[3] = {INFINITY, 1, 1};
    CHECK(hx_grid_init(&g, n16, flat, comm) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "too elongated");
    CHECK(hx_grid_init(&g, n16, nan_side, comm) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "Ly = nan");
    CHECK(hx_grid_init(&g, n16, inf_side, comm) == HX_ERR_ARG);
    CHECK(hx_grid_init(&g, n16, huge, comm) == HX_ERR_ARG); /* its volume overflows */
    CHECK(hx_grid_init(&g, n16, long_ok, comm) == HX_OK);   /* 1e6 * sqrt(2) * 8 = 1.13e7 shells: allowed */
    CHECK(hx_grid_kcorner(n16, flat) > 1.1e13);
    (void)size;
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm;
    MPI_Comm_dup(MPI_COMM_WORLD, &comm);
    MPI_Comm_set_errhandler(comm, MPI_ERRORS_RETURN);
    int rank, size;
    MPI_Comm_rank(comm, &rank);
    MPI_Comm_size(comm, &size);
    test_agree(comm, rank, size);
    test_layout(comm, size);
    int fails = hx_test_fail, total_fail = 0;
    MPI_Allreduce(&fails, &total_fail, 1, MPI_INT, MPI_SUM, comm);
    int rc = 0;
    if (rank == 0) rc = total_fail ? (printf("%d passed, %d failed\n", hx_test_pass, total_fail), 1) : hx_test_finish();
    MPI_Bcast(&rc, 1, MPI_INT, 0, comm);
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return rc;
}
