/* test_make.c — the generator pipeline as a library call, on any rank count: a validated recipe
 * becomes a complete file (no partial, lock or stale sidecar left), its result holds the asked
 * rms and share (exact total: Parseval, common practice), a second run onto the same file is
 * refused without force and replaces it with force, and a run that cannot fit its memory budget
 * is refused before anything is written (the documented exit codes map HX_ERR_ARG to 2). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "helmix/make.h"
#include "hx_test.h"

static int exists(const char *path) { return access(path, F_OK) == 0; }

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm = MPI_COMM_WORLD;
    int rank = 0;
    MPI_Comm_rank(comm, &rank);
    char dir[64] = "/tmp/helmix_test_make_XXXXXX";
    if (rank == 0 && !mkdtemp(dir)) dir[0] = '\0';
    MPI_Bcast(dir, sizeof dir, MPI_CHAR, 0, comm);
    CHECK(dir[0] != '\0');
    char file[128], partial[160], lock[160], xmf[160];
    snprintf(file, sizeof file, "%s/cube.h5", dir);
    snprintf(partial, sizeof partial, "%s.partial", file);
    snprintf(lock, sizeof lock, "%s.lock", file);
    snprintf(xmf, sizeof xmf, "%s.xmf", file);

    hx_recipe r;
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_set(&r, "grid.cells=12") == HX_OK);
    CHECK(hx_recipe_set(&r, "mix.compressive_fraction=0.25") == HX_OK);
    CHECK(hx_recipe_set(&r, "amplitude.vrms=3") == HX_OK);
    snprintf(r.file, sizeof r.file, "%s", file);
    CHECK(hx_recipe_validate(&r) == HX_OK);
    hx_log quiet;
    hx_log_init(&quiet, comm, HX_LOG_QUIET, stderr);

    hx_make_result res;
    memset(&res, 0, sizeof res);
    CHECK(hx_make_run(&r, 0, NULL, &quiet, comm, &res) == HX_OK);
    MPI_Barrier(comm);
    CHECK(exists(file) && exists(xmf) && !exists(partial) && !exists(lock));
    CHECK_CLOSE(res.vrms_x, 3.0, 3e-6);     /* single-precision values written */
    CHECK_CLOSE(res.vrms_k, 3.0, 1e-12);    /* the k-space normalisation itself */
    CHECK_CLOSE(res.fraction, 0.25, 1e-12);
    CHECK(res.peak_rss > 0);

    /* onto an existing file: refused without force (agreed on every rank), replaced with it */
    CHECK(hx_make_run(&r, 0, NULL, &quiet, comm, NULL) == HX_ERR_EXISTS);
    CHECK(hx_make_run(&r, 1, NULL, &quiet, comm, NULL) == HX_OK);
    MPI_Barrier(comm);
    CHECK(exists(file) && !exists(partial) && !exists(lock));

    /* a budget of 1 MiB per rank: refused before any file is created */
    hx_run_opts run = hx_run_defaults();
    run.mem_per_rank = 1048576.0;
    snprintf(r.file, sizeof r.file, "%s/small.h5", dir);
    CHECK(hx_make_run(&r, 0, &run, &quiet, comm, NULL) == HX_ERR_ARG);
    MPI_Barrier(comm);
    char small_partial[160];
    snprintf(small_partial, sizeof small_partial, "%s.partial", r.file);
    CHECK(!exists(r.file) && !exists(small_partial));

    MPI_Barrier(comm);
    if (rank == 0) {
        remove(file);
        remove(xmf);
        rmdir(dir);
    }
    int fails = hx_test_fail;
    MPI_Allreduce(MPI_IN_PLACE, &fails, 1, MPI_INT, MPI_SUM, comm);
    int code = rank == 0 ? hx_test_finish() : 0;
    MPI_Finalize();
    return fails ? 1 : code;
}
