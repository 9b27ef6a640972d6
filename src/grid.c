/* grid.c — global sizes, the validation of a grid and its box, and the FFTW-MPI transposed
 * slab layout of one rank. Odd and even sizes alike: FFTW's r2c/c2r keep Nx/2 + 1 points. */
#include "helmix/grid.h"

#include <fftw3-mpi.h>
#include <math.h>

#include "check.h"

double hx_grid_kcorner(const int64_t cells[3], const double box[3])
{
    double lmax = fmax(box[0], fmax(box[1], box[2])), k2 = 0;
    for (int a = 0; a < 3; a++) {
        double ku = (double)(cells[a] / 2) * (lmax / box[a]);
        k2 += ku * ku;
    }
    return sqrt(k2);
}

hx_status hx_grid_check(const int64_t cells[3], const double box[3])
{
    double n = 1, v = 1;
    for (int a = 0; a < 3; a++) {
        if (cells[a] < 2)
            return hx_error_set(HX_ERR_ARG, "grid axis %c has %lld cells: must be >= 2", "xyz"[a], (long long)cells[a]);
        n *= (double)cells[a];
        if (!(box[a] > 0) || !isfinite(box[a]))
            return hx_error_set(HX_ERR_ARG, "box side L%c = %g: must be a finite number > 0", "xyz"[a], box[a]);
        v *= box[a];
    }
    if (!(n < 9.2e18)) /* Nx Ny Nz is an int64 everywhere */
        return hx_error_set(HX_ERR_ARG, "grid %lld x %lld x %lld: %.3g cells do not fit a 64-bit count",
                            (long long)cells[0], (long long)cells[1], (long long)cells[2], n);
    if (!(v > 0) || !isfinite(v))
        return hx_error_set(HX_ERR_ARG, "box %g x %g x %g: its volume %g is not a finite number > 0", box[0], box[1],
                            box[2], v);
    /* the test is also false for a NaN corner, which cannot happen past the checks above */
    double kc = hx_grid_kcorner(cells, box);
    if (!(kc <= HX_GRID_SHELLS_MAX))
        return hx_error_set(HX_ERR_ARG,
                            "box %g x %g x %g is too elongated for %lld x %lld x %lld cells: its grid reaches |k| = %.3g "
                            "in units of 2 pi / max(L), more than the 2^24 = 16777216 shells helmix allows",
                            box[0], box[1], box[2], (long long)cells[0], (long long)cells[1], (long long)cells[2], kc);
    return HX_OK;
}

hx_status hx_grid_init(hx_grid *g, const int64_t cells[3], const double box[3], MPI_Comm comm)
{
    hx_status st = hx_grid_check(cells, box);
    if (st != HX_OK) return st;
    g->lmax = 0;
    for (int a = 0; a < 3; a++) {
        g->n[a] = (ptrdiff_t)cells[a];
        g->box[a] = box[a];
        if (box[a] > g->lmax) g->lmax = box[a];
    }
    HX_MPI(MPI_Comm_rank(comm, &g->rank));
    HX_MPI(MPI_Comm_size(comm, &g->size));
    fftw_mpi_init();
    g->nxc = g->n[0] / 2 + 1; /* 0..Nx/2: for odd Nx the highest positive frequency (Nx-1)/2 */
    g->alloc = fftw_mpi_local_size_3d_transposed(g->n[2], g->n[1], g->nxc, comm, &g->nz, &g->z0, &g->ny, &g->y0);
    if (g->alloc < 1) g->alloc = 1; /* ranks that own nothing still pass a valid pointer */
    return HX_OK;
fail:
    return st;
}
