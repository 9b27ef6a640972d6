/* helmix/io.h — the output cube: one HDF5 file written collectively through MPI-IO in the
 * Grid Data Format layout (a single level-0 grid, field_ordering 1, periodic), attributes
 * under /helmix for provenance, and an XDMF sidecar so ParaView and VisIt see a vector field.
 *
 * The file is written as PATH.partial and renamed to PATH only by hx_io_close(commit = 1),
 * so a crashed or failed run never leaves a file that looks complete. */
#ifndef HELMIX_IO_H
#define HELMIX_IO_H

#include <mpi.h>
#include <stdint.h>

#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/recipe.h"

typedef struct hx_io hx_io;

/* Collective: HX_ERR_EXISTS (on every rank) when path exists and force is 0. */
hx_status hx_io_check_target(const char *path, int force, MPI_Comm comm);

/* Collective: create PATH.partial with the GDF skeleton and three empty velocity datasets of
 * shape (Nz, Ny, Nx) in the given precision. */
hx_status hx_io_create(hx_io **w, const char *path, const hx_grid *g, hx_precision prec, MPI_Comm comm);

/* Collective: write this rank's slab (nz * Ny * Nx values, x fastest, in the file's precision)
 * of component c with a collective MPI-IO transfer. Ranks with nz = 0 take part. */
hx_status hx_io_write_component(hx_io *w, int c, const void *slab);

/* Collective: attributes of group `group` (created on first use, e.g. "/helmix" or
 * "/helmix/diagnostics"). Every rank passes the same values. */
hx_status hx_io_attr_string(hx_io *w, const char *group, const char *name, const char *value);
hx_status hx_io_attr_doubles(hx_io *w, const char *group, const char *name, const double *v, int n);
hx_status hx_io_attr_int64s(hx_io *w, const char *group, const char *name, const int64_t *v, int n);
hx_status hx_io_attr_uint64(hx_io *w, const char *group, const char *name, uint64_t v);

/* Collective: a small 1-D double dataset `group/name` written by rank 0 (per-shell tables). */
hx_status hx_io_table(hx_io *w, const char *group, const char *name, const double *v, int n);

/* Collective: close the file. With commit = 1 rank 0 renames PATH.partial to PATH (replacing
 * it) and writes PATH.xmf; with commit = 0 the partial file is removed. Accepts NULL, sets
 * *w to NULL. Returns the first error met while closing. */
hx_status hx_io_close(hx_io **w, int commit);

#endif
