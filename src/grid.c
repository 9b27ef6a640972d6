/* grid.c — global sizes and the FFTW-MPI transposed slab layout of one rank. */
#include "helmix/grid.h"

#include <fftw3-mpi.h>

#include "check.h"

hx_status hx_grid_init(hx_grid *g, const int64_t cells[3], const double box[3], MPI_Comm comm)
{
    hx_status st = HX_OK;
    g->lmax = 0;
    for (int a = 0; a < 3; a++) {
        if (cells[a] < 2 || cells[a] % 2)
            HX_FAIL(HX_ERR_ARG, "grid axis %d has %lld cells: must be even and >= 2", a, (long long)cells[a]);
        if (!(box[a] > 0)) HX_FAIL(HX_ERR_ARG, "box side %d is %g: must be > 0", a, box[a]);
        g->n[a] = (ptrdiff_t)cells[a];
        g->box[a] = box[a];
        if (box[a] > g->lmax) g->lmax = box[a];
    }
    HX_MPI(MPI_Comm_rank(comm, &g->rank));
    HX_MPI(MPI_Comm_size(comm, &g->size));
    fftw_mpi_init();
    g->nxc = g->n[0] / 2 + 1;
    g->alloc = fftw_mpi_local_size_3d_transposed(g->n[2], g->n[1], g->nxc, comm, &g->nz, &g->z0, &g->ny, &g->y0);
    if (g->alloc < 1) g->alloc = 1; /* ranks that own nothing still pass a valid pointer */
    return HX_OK;
fail:
    return st;
}
