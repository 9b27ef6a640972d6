/* helmix/grid.h — global sizes, box, wavenumbers and the FFTW-MPI slab layout of one rank.
 *
 * Real space is (Nz, Ny, Nx), x fastest, distributed in z slabs. k space uses FFTW's
 * transposed layout (Ny, Nz, Nx/2+1), distributed in y slabs, so a c2r/r2c pair needs no
 * extra global transpose. Both slab ranges come from fftw_mpi_local_size_3d_transposed and
 * feed the HDF5 hyperslabs directly. A rank may own zero planes. */
#ifndef HELMIX_GRID_H
#define HELMIX_GRID_H

#include <mpi.h>
#include <stddef.h>
#include <stdint.h>

#include "helmix/error.h"

typedef struct hx_grid {
    ptrdiff_t n[3];      /* Nx, Ny, Nz                                                 */
    double box[3];       /* Lx, Ly, Lz                                                 */
    double lmax;         /* largest side: wavenumbers are in units of 2 pi / lmax      */
    ptrdiff_t nxc;       /* Nx/2 + 1 complex points along x                            */
    ptrdiff_t alloc;     /* complex elements this rank must allocate                   */
    ptrdiff_t z0, nz;    /* real-space planes [z0, z0+nz) owned here                   */
    ptrdiff_t y0, ny;    /* k-space planes ky index [y0, y0+ny) owned here             */
    int rank, size;
} hx_grid;

/* Collective: compute the layout of an Nx*Ny*Nz grid on comm. Calls fftw_mpi_init (idempotent).
 * HX_ERR_ARG if a size is < 2 or odd. */
hx_status hx_grid_init(hx_grid *g, const int64_t cells[3], const double box[3], MPI_Comm comm);

/* Signed integer frequency of array index i on an axis of n points (n/2 maps to -n/2). */
static inline ptrdiff_t hx_grid_freq(ptrdiff_t i, ptrdiff_t n) { return i <= n / 2 - (n % 2 == 0) ? i : i - n; }

/* Wavenumber factor of axis a: k_a = n_a * hx_grid_kunit(g, a) in units of 2 pi / lmax. */
static inline double hx_grid_kunit(const hx_grid *g, int a) { return g->lmax / g->box[a]; }

/* Total number of cells. */
static inline int64_t hx_grid_cells(const hx_grid *g) { return (int64_t)g->n[0] * g->n[1] * g->n[2]; }

#endif
