/* test_plan.c — run on 1..4 ranks: plan.c's slab rule equals FFTW's own
 * fftw_mpi_local_size_3d_transposed on every rank (also when P does not divide N and when ranks
 * sit idle), the in-band mode counter equals a brute-force count with field.c's test, sizes parse
 * as documented, and the plan's decomposition, layout and verdict say what plan.h promises. */
#include <fftw3-mpi.h>
#include <math.h>
#include <mpi.h>
#include <stdlib.h>
#include <string.h>

#include "helmix/plan.h"
#include "helmix/recipe.h"
#include "hx_test.h"

/* Every rank's planes and complex count against FFTW (the reference the plan must match). */
static void test_slabs(MPI_Comm comm, int rank, int size)
{
    static const int64_t sizes[] = {16, 18, 30, 64, 17, 31}; /* odd sizes too */
    for (int i = 0; i < 6; i++)
        for (int j = 0; j < 6; j++) {
            int64_t nz = sizes[i], ny = sizes[j], nx = sizes[(i + j) % 6], nxc = nx / 2 + 1;
            ptrdiff_t lnz, lz0, lny, ly0;
            ptrdiff_t alloc = fftw_mpi_local_size_3d_transposed(nz, ny, nxc, comm, &lnz, &lz0, &lny, &ly0);
            int64_t z0, y0, pz = hx_plan_rank_planes(nz, size, rank, &z0), py = hx_plan_rank_planes(ny, size, rank, &y0);
            CHECK(pz == lnz);
            CHECK(py == lny);
            CHECK(pz == 0 || z0 == lz0);
            CHECK(py == 0 || y0 == ly0);
            /* max of the two layouts: exact on a rank owning a full block in both (rank 0, the
             * largest); a trailing short rank may get more from FFTW, never more than rank 0 */
            int64_t bz = (nz + size - 1) / size, by = (ny + size - 1) / size;
            int64_t mine = (pz * ny > py * nz ? pz * ny : py * nz) * nxc;
            if (pz == bz && py == by) CHECK(mine == alloc);
            else CHECK(alloc >= mine);
            /* hx_plan_compute's largest rank is rank 0: its count is FFTW's on rank 0 */
            hx_recipe r;
            hx_recipe_defaults(&r);
            r.cells[0] = nx, r.cells[1] = ny, r.cells[2] = nz;
            r.box[0] = r.box[1] = r.box[2] = 1;
            r.spectrum.kmin = 1, r.spectrum.kmax = 3;
            r.compute = HX_PREC_DOUBLE;
            hx_plan p;
            CHECK(hx_plan_compute(&r, size, 1, 0, 20e6, &p) == HX_OK);
            long long a0 = (long long)alloc;
            MPI_Bcast(&a0, 1, MPI_LONG_LONG, 0, comm);
            CHECK(p.alloc_complex == a0);
            CHECK(alloc <= a0);
            long long idle = lnz == 0, all_idle = 0;
            MPI_Allreduce(&idle, &all_idle, 1, MPI_LONG_LONG, MPI_SUM, comm);
            CHECK(p.z.idle == all_idle);
        }
}

/* The brute-force count: field.c's mode_at test on every stored mode of planes [y0, y0 + ny);
 * frequencies as numpy.fft.fftfreq gives them, an even N's Nyquist index N/2 carrying nothing. */
static int64_t brute(const int64_t n[3], const double box[3], double kmin, double kmax, int64_t y0, int64_t ny)
{
    double lmax = fmax(box[0], fmax(box[1], box[2])), lo = kmin * kmin * (1 - 1e-12), hi = kmax * kmax * (1 + 1e-12);
    int64_t count = 0;
    for (int64_t y = y0; y < y0 + ny; y++)
        for (int64_t z = 0; z < n[2]; z++)
            for (int64_t x = 0; x <= n[0] / 2; x++) {
                int64_t idx[3] = {x, y, z};
                double kv[3];
                int nyq = 0;
                for (int a = 0; a < 3; a++) {
                    int64_t f = idx[a] <= (n[a] - 1) / 2 ? idx[a] : idx[a] - n[a];
                    nyq |= 2 * idx[a] == n[a];
                    kv[a] = (double)f * (lmax / box[a]);
                }
                double k2 = kv[0] * kv[0] + kv[1] * kv[1] + kv[2] * kv[2];
                if (!nyq && k2 >= lo && k2 <= hi && k2 != 0) count++;
            }
    return count;
}

static void test_band(void)
{
    static const struct {
        int64_t n[3];
        double box[3], kmin, kmax;
    } cases[] = {
        {{32, 32, 32}, {1, 1, 1}, 1, 15},     /* the default band of a 32^3 cube            */
        {{32, 32, 32}, {1, 1, 1}, 0, 5},      /* kmin 0: k = 0 still carries nothing          */
        {{32, 32, 32}, {1, 1, 1}, 3, 5},      /* both edges on integer radii (|k|^2 = 9, 25) */
        {{24, 16, 40}, {1.5, 1, 2.5}, 1.3, 7.7}, /* non-cubic cells and box                  */
        {{64, 64, 16}, {4, 4, 1}, 1, 14},     /* a sheet: kz in steps of 4                    */
        {{16, 16, 16}, {1, 1, 1}, 2, 40},     /* kmax beyond the grid: capped by Nyquist       */
        {{33, 33, 33}, {1, 1, 1}, 1, 16},     /* odd: the top frequency 16 has its partner     */
        {{45, 32, 17}, {1.5, 1, 0.5}, 1, 40}, /* odd and even axes, the whole grid             */
        {{31, 17, 20}, {1, 1, 1}, 2.5, 9.5},  /* odd x: the last stored plane kx = 15 counts    */
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        const int64_t *n = cases[i].n;
        CHECK(hx_plan_band_modes(n, cases[i].box, cases[i].kmin, cases[i].kmax, 0, n[1]) ==
              brute(n, cases[i].box, cases[i].kmin, cases[i].kmax, 0, n[1]));
        int64_t h = n[1] / 2; /* a rank's planes: the upper half, Nyquist plane included */
        CHECK(hx_plan_band_modes(n, cases[i].box, cases[i].kmin, cases[i].kmax, h, n[1] - h) ==
              brute(n, cases[i].box, cases[i].kmin, cases[i].kmax, h, n[1] - h));
    }
}

static void test_sizes(void)
{
    double b = 0;
    CHECK(hx_plan_parse_size("3.5G", "--mem-per-rank", &b) == HX_OK && b == 3.5e9);
    CHECK(hx_plan_parse_size("1800MiB", "--mem-per-rank", &b) == HX_OK && b == 1800.0 * 1048576.0);
    CHECK(hx_plan_parse_size("2Gi", "--mem-per-rank", &b) == HX_OK && b == 2.0 * 1073741824.0);
    CHECK(hx_plan_parse_size("512k", "--mem-per-rank", &b) == HX_OK && b == 512e3);
    CHECK(hx_plan_parse_size("1e9", "--mem-per-rank", &b) == HX_OK && b == 1e9);
    CHECK(hx_plan_parse_size("4 GB", "--mem-per-rank", &b) == HX_OK && b == 4e9);
    CHECK(hx_plan_parse_size("2X", "--mem-per-rank", &b) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "--mem-per-rank '2X'");
    CHECK(hx_plan_parse_size("-1G", "--mem-per-rank", &b) == HX_ERR_ARG);
    CHECK(hx_plan_parse_size("G", "--mem-per-rank", &b) == HX_ERR_ARG);
    CHECK(hx_plan_parse_size("2Gix", "--mem-per-rank", &b) == HX_ERR_ARG);
}

static void test_plan(void)
{
    hx_recipe r;
    hx_plan p;
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 1024\n[amplitude]\nvrms = 1\n", "test", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK);
    /* 8192 cores on a 1024^3 grid: only 1024 ranks own planes, the rest become threads */
    CHECK(hx_plan_compute(&r, 8192, 1, 0, 20e6, &p) == HX_OK);
    CHECK(p.max_ranks == 1024 && p.layout_ranks == 1024 && p.layout_threads == 8);
    CHECK(p.z.idle == 7168 && p.z.max == 1 && p.z.min == 0);
    /* P not dividing N: ceil(1024 / 48) = 22 planes for ranks 0..45, 12 for rank 46, none for 47 */
    CHECK(hx_plan_compute(&r, 48, 1, 0, 20e6, &p) == HX_OK);
    CHECK(p.z.max == 22 && p.z.min == 0 && p.z.idle == 1);
    CHECK(hx_plan_compute(&r, 40, 1, 0, 20e6, &p) == HX_OK); /* 26 planes x 39 ranks + 10 */
    CHECK(p.z.max == 26 && p.z.min == 10 && p.z.idle == 0);
    CHECK(hx_plan_compute(&r, 48, 1, 0, 20e6, &p) == HX_OK);
    CHECK_CLOSE(p.z.imbalance, 22.0 / (1024.0 / 48.0), 1e-12);
    CHECK(p.balanced_ranks == 32);
    /* the file: three single-precision datasets of 1024^3 values */
    CHECK(p.datasets == 3 && p.data_bytes == 3.0 * 4.0 * 1073741824.0);
    CHECK(p.transforms == 3);
    /* a budget below even the regenerated peak: refused with the numbers and a way out */
    CHECK(hx_plan_compute(&r, 48, 1, 100e6, 20e6, &p) == HX_OK);
    CHECK(!p.fits && p.choice == HX_DRAWS_REGENERATE);
    CHECK(hx_plan_verdict(&p) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "but the budget is 95.4 MiB per rank");
    CHECK(p.fit_ranks > 48);
    /* auto keeps the draws only with a tenth of the budget to spare */
    CHECK(hx_plan_compute(&r, 48, 1, 0, 20e6, &p) == HX_OK);
    double keep = p.keep.peak;
    CHECK(hx_plan_compute(&r, 48, 1, keep / 0.9, 20e6, &p) == HX_OK && p.choice == HX_DRAWS_KEEP && p.fits);
    CHECK(hx_plan_compute(&r, 48, 1, keep / 0.9 * 0.999, 20e6, &p) == HX_OK && p.choice == HX_DRAWS_REGENERATE && p.fits);
    r.draws = HX_DRAWS_KEEP; /* asked for: kept even without room, and then refused */
    CHECK(hx_plan_compute(&r, 48, 1, p.regenerate.peak * 1.01, 20e6, &p) == HX_OK && p.choice == HX_DRAWS_KEEP && !p.fits);
    CHECK(hx_plan_verdict(&p) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "draws = regenerate needs");
    CHECK(hx_plan_compute(&r, 0, 1, 0, 20e6, &p) == HX_ERR_ARG);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm;
    MPI_Comm_dup(MPI_COMM_WORLD, &comm);
    int rank, size;
    MPI_Comm_rank(comm, &rank);
    MPI_Comm_size(comm, &size);
    fftw_mpi_init();
    test_slabs(comm, rank, size);
    if (rank == 0) {
        test_band();
        test_sizes();
        test_plan();
    }
    int fails = hx_test_fail, total_fail = 0;
    MPI_Allreduce(&fails, &total_fail, 1, MPI_INT, MPI_SUM, comm);
    int rc = 0;
    if (rank == 0) rc = total_fail ? (printf("%d passed, %d failed\n", hx_test_pass, total_fail), 1) : hx_test_finish();
    MPI_Bcast(&rc, 1, MPI_INT, 0, comm);
    fftw_mpi_cleanup();
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return rc;
}
