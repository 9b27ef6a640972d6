/* helmix/cube.h — reading a velocity cube for analysis: a helmix file or any HDF5 file that
 * holds three 3-D datasets or one 4-D dataset with a component axis, in zyx (x fastest) or
 * xyz (z fastest) order, opened collectively through MPI-IO. Each rank reads its z slab
 * straight into the padded rows of an in-place r2c transform. */
#ifndef HELMIX_CUBE_H
#define HELMIX_CUBE_H

#include <mpi.h>
#include <stdint.h>

#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/verdict.h"

typedef enum { HX_ORDER_ZYX = 0, HX_ORDER_XYZ } hx_order;

typedef struct hx_cube_spec {
    const char *file;
    const char *vector;  /* "PX,PY,PZ" (three datasets) or "P" (one 4-D dataset); NULL: helmix layout */
    const char *density; /* 3-D density dataset for mass weighting, or NULL */
    hx_order order;
    int has_box;
    double box[3];
} hx_cube_spec;

typedef struct hx_cube hx_cube;

/* Collective: open the file, find the datasets, check shapes and read the box (from
 * --box, else the Grid Data Format domain edges, else 1 1 1). HX_ERR_ARG with one clear line
 * for a missing or unreadable file, missing datasets, mismatched shapes or a shape that is
 * not 3-D (or 4-D with one axis of length 3). */
hx_status hx_cube_open(hx_cube **cube, const hx_cube_spec *spec, MPI_Comm comm);

/* Grid size (Nx, Ny, Nz) and box of the cube. Not collective. */
void hx_cube_shape(const hx_cube *cube, int64_t cells[3], double box[3]);

/* 1 when the cube stores single-precision values. */
int hx_cube_single(const hx_cube *cube);

/* Collective: read component c (0..2; 3 = density) of this rank's z slab of grid g into dst
 * as double, rows of Nx values `stride` doubles apart (stride 2*(Nx/2+1) for in-place r2c). */
hx_status hx_cube_read(hx_cube *cube, int c, const hx_grid *g, double *dst, int64_t stride);

/* Collective: the request stored in a helmix file's /helmix group (found = 0 if none). */
hx_status hx_cube_request(hx_cube *cube, hx_request *q, int *found);

/* Collective: close. Accepts NULL, sets *cube to NULL. */
void hx_cube_close(hx_cube **cube);

#endif
