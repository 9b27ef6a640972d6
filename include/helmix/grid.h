/* helmix/grid.h — global sizes, box, wavenumbers and the FFTW-MPI slab layout of one rank.
 *
 * Real space is (Nz, Ny, Nx), x fastest, distributed in z slabs. k space uses FFTW's
 * transposed layout (Ny, Nz, Nx/2+1), distributed in y slabs, so a c2r/r2c pair needs no
 * extra global transpose. Both slab ranges come from fftw_mpi_local_size_3d_transposed and
 * feed the HDF5 hyperslabs directly. A rank may own zero planes.
 * Every size N >= 2 is a grid: an even N has a Nyquist index N/2 (its frequency counted as
 * -N/2, numpy's fftfreq convention), an odd N has none and every nonzero frequency is paired
 * with its negative. */
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
    ptrdiff_t nxc;       /* Nx/2 + 1 complex points along x (integer division)         */
    ptrdiff_t alloc;     /* complex elements this rank must allocate                   */
    ptrdiff_t z0, nz;    /* real-space planes [z0, z0+nz) owned here                   */
    ptrdiff_t y0, ny;    /* k-space planes ky index [y0, y0+ny) owned here             */
    int rank, size;
} hx_grid;

/* Most shells a grid may span: the largest |k| on it, in units of 2 pi / max(L), is at most
 * 2^24. Shell indices then fit an int exactly, and a per-shell table costs at most 128 MiB. */
#define HX_GRID_SHELLS_MAX 16777216.0

/* The largest |k| on an Nx*Ny*Nz grid in units of 2 pi / max(L): the corner of the highest
 * frequencies floor(N_a/2), sqrt(sum_a (floor(N_a/2) max(L)/L_a)^2). Not collective. */
double hx_grid_kcorner(const int64_t cells[3], const double box[3]);

/* Not collective (the same verdict on every rank): HX_ERR_ARG with one line unless every size
 * is >= 2 and the cell count fits an int64, every side of the box is finite and > 0 with a
 * finite nonzero volume, and hx_grid_kcorner is at most HX_GRID_SHELLS_MAX (a box too
 * elongated for its grid: the aspect ratio times N/2 of the short axis bounds the shells). */
hx_status hx_grid_check(const int64_t cells[3], const double box[3]);

/* Collective: compute the layout of an Nx*Ny*Nz grid on comm. Calls fftw_mpi_init (idempotent).
 * HX_ERR_ARG when hx_grid_check refuses the grid (the same on every rank: no agreement needed). */
hx_status hx_grid_init(hx_grid *g, const int64_t cells[3], const double box[3], MPI_Comm comm);

/* Signed integer frequency of array index i on an axis of n points: 0..(n-1)/2 then negative;
 * for even n the Nyquist index n/2 maps to -n/2. */
static inline ptrdiff_t hx_grid_freq(ptrdiff_t i, ptrdiff_t n) { return i <= n / 2 - (n % 2 == 0) ? i : i - n; }

/* Wavenumber factor of axis a: k_a = n_a * hx_grid_kunit(g, a) in units of 2 pi / lmax. */
static inline double hx_grid_kunit(const hx_grid *g, int a) { return g->lmax / g->box[a]; }

/* Total number of cells. */
static inline int64_t hx_grid_cells(const hx_grid *g) { return (int64_t)g->n[0] * g->n[1] * g->n[2]; }

#endif
