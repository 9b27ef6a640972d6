/* helmix/io.h — the output cube: one HDF5 file written collectively through MPI-IO in the
 * Grid Data Format layout (a single level-0 grid, field_ordering 1, periodic), named fields of
 * one or three components with their units, the code units under /dataset_units, attributes
 * under /helmix for provenance, and an XDMF sidecar so ParaView and VisIt see every field.
 * Paths and names come from helmix/schema.h.
 *
 * The file is written as PATH.partial and renamed to PATH only by hx_io_close(commit = 1),
 * so a crashed or failed run never leaves a file that looks complete. While a run writes PATH,
 * its rank 0 holds PATH.lock (created exclusively, flock): a second run on the same PATH is
 * refused; a lock and partial file left by a killed run on this host are recognised as stale,
 * removed and named in hx_io_note. When PATH.partial is too long for the MPI-IO layer the data
 * go to a short hidden DIR/.hx-XXXXXX.partial (named in PATH.lock). Each written dataset
 * carries a checksum (HX_IO_ATTR_CHECKSUM) that hx_io_verify recomputes. Every write, close
 * and rename is agreed over the ranks; a failure removes the partial file on every path. */
#ifndef HELMIX_IO_H
#define HELMIX_IO_H

#include <mpi.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/recipe.h"

typedef struct hx_io hx_io;

/* Collective, before any work: HX_ERR_EXISTS (on every rank) when path exists and force is 0,
 * or another run is writing it (holds PATH.lock); HX_ERR_ARG when its directory is missing or
 * not writable, path is a directory or not a regular file, or its name is too long for the
 * names helmix derives from it (PATH.xmf.partial within the file system's name limit). */
hx_status hx_io_check_target(const char *path, int force, MPI_Comm comm);

#define HX_IO_MAX_FIELDS 8

/* How the file is laid out and opened ([output] alignment and io_hints of a recipe).
 * alignment > 0 places every object of at least one field component's size (the field
 * datasets, nothing smaller: headers, attributes and per-shell tables stay packed) at a file
 * address that is a multiple of alignment (H5Pset_alignment); hints are MPI-IO hints given to
 * the file open (H5Pset_fapl_mpio), names and values as the MPI library spells them. */
typedef struct hx_io_tuning {
    double alignment;  /* bytes, a whole number >= 0; 0: HDF5's packing          */
    const char *hints; /* "key=value,key=value"; NULL, "" or "none": no hints     */
} hx_io_tuning;

/* Not collective: HX_ERR_ARG with one line naming [output] alignment or [output] io_hints
 * when t is malformed (hints: key=value items, names of letters, digits, '_', '-', '.',
 * values without blanks, ',' or '=', no name twice). NULL is valid. Needs no MPI. */
hx_status hx_io_tuning_check(const hx_io_tuning *t);

/* Collective: create PATH.partial with the GDF skeleton; datasets of the given precision come
 * with hx_io_add_field. tuning: NULL for HDF5's defaults; it is checked (hx_io_tuning_check)
 * before anything is created, and every rank passes the same values. Field data always goes
 * through collective MPI-IO transfers. */
hx_status hx_io_create(hx_io **w, const char *path, const hx_grid *g, hx_precision prec, const hx_io_tuning *tuning,
                       MPI_Comm comm);

/* Attribute names hx_io_attr_tuning writes: the alignment and threshold in bytes (doubles,
 * 0 0 for HDF5's packing), the hints as given to MPI ("none" or canonical key=value text) and
 * two int64s: the field writes so far that HDF5 did as collective transfers, and those it
 * fell back to independent I/O for (expected 0). */
#define HX_IO_ATTR_ALIGNMENT "io_alignment"
#define HX_IO_ATTR_ALIGNMENT_THRESHOLD "io_alignment_threshold"
#define HX_IO_ATTR_HINTS "io_hints"
#define HX_IO_ATTR_TRANSFERS "io_transfers"

/* Collective: record the tuning the file was created with, and the transfers so far, as
 * attributes of `group` (make: "/helmix", after the last field write). */
hx_status hx_io_attr_tuning(hx_io *w, const char *group);

/* Collective: add field `name` with ncomp (1 or 3) datasets of shape (Nz, Ny, Nx), named by
 * hx_schema_component, whose values are in `unit` (yt's spelling, e.g. "code_length/code_time");
 * face = 1 marks a face-centred field (component c on the low-c face of each cell: the Grid
 * Data Format's staggering 1, and in the XDMF sidecar a grid shifted by half a cell along c).
 * *id identifies it for writing. */
hx_status hx_io_add_field(hx_io *w, const char *name, int ncomp, const char *unit, int face, int *id);

/* Collective: the code units, in cgs, as yt's Grid Data Format reader takes them. */
hx_status hx_io_units(hx_io *w, double length_cm, double mass_g, double time_s);

/* Collective: write this rank's slab (nz * Ny * Nx values, x fastest, in the file's precision)
 * of component c of field id with a collective MPI-IO transfer. Ranks with nz = 0 take part. */
hx_status hx_io_write_component(hx_io *w, int id, int c, const void *slab);

/* The same from double values, rounded to the file's precision on the way out (in bounded
 * runs of rows, each a collective transfer: HDF5 would fall back to independent I/O if it
 * converted the types itself). */
hx_status hx_io_write_doubles(hx_io *w, int id, int c, const double *slab);

/* Collective: close the partial file for a while (so it can be read back, e.g. by the
 * analysis of inspect) and open it again for attributes; datasets stay known by id. */
hx_status hx_io_pause(hx_io *w);
hx_status hx_io_resume(hx_io *w);

/* The name under which every rank opens the file being written through MPI-IO (PATH.partial,
 * or a short /proc/self/fd/N/... name of it when the path is long). */
const char *hx_io_partial(const hx_io *w);

/* What hx_io_create found and did on the way (a stale partial file of a killed run removed),
 * for a warning line; NULL when nothing. Meaningful on rank 0. */
const char *hx_io_note(const hx_io *w);

/* The attributes of every field dataset written: the checksum (uint64) of its values and the
 * text that defines it (src/io_digest.h: a sum over elements, so any rank count gives it). */
#define HX_IO_ATTR_CHECKSUM "helmix_checksum"
#define HX_IO_ATTR_CHECKSUM_METHOD "helmix_checksum_method"

/* What hx_io_verify found: datasets of the grid group, those whose checksum matches, differs,
 * or that carry none (an older file, or a partial file of a killed run). */
typedef struct hx_io_verify_counts {
    int datasets, ok, bad, missing;
} hx_io_verify_counts;

/* Collective: recompute the checksum of every 3-D float dataset in the grid group of the
 * helmix file `path` (read collectively in bounded pieces) and compare it with the stored one.
 * Rank 0 prints one line per dataset to `out` ("ok", "MISMATCH stored ... computed ...", "no
 * checksum"; NULL: silent). HX_OK when every dataset could be read, whatever the verdict
 * (counts says it); HX_ERR_ARG/HX_ERR_IO/HX_ERR_HDF5 when the file could not be read. */
hx_status hx_io_verify(const char *path, MPI_Comm comm, FILE *out, hx_io_verify_counts *counts);

/* Collective: a name under which every rank of comm can open `path` through MPI-IO (Open MPI
 * aborts on file names of about 240 characters): path itself when short, else a
 * /proc/self/fd/N/BASE name; *dirfd is then a descriptor the caller closes after the file
 * (else -1). HX_ERR_ARG when even the file's own name is too long. */
hx_status hx_io_mpi_name(const char *path, MPI_Comm comm, char *name, size_t len, int *dirfd);

/* Collective: attributes of group `group` (created on first use, e.g. "/helmix" or
 * "/helmix/diagnostics"). Every rank passes the same values. */
hx_status hx_io_attr_string(hx_io *w, const char *group, const char *name, const char *value);
hx_status hx_io_attr_doubles(hx_io *w, const char *group, const char *name, const double *v, int n);
hx_status hx_io_attr_int64s(hx_io *w, const char *group, const char *name, const int64_t *v, int n);
hx_status hx_io_attr_uint64(hx_io *w, const char *group, const char *name, uint64_t v);

/* Collective: a small 1-D double dataset `group/name` written by rank 0 (per-shell tables). */
hx_status hx_io_table(hx_io *w, const char *group, const char *name, const double *v, int n);

/* Collective: close the file. With commit = 1 the checksums are written, the file closed,
 * PATH.xmf written (as PATH.xmf.partial) and rank 0 renames both into place (replacing PATH);
 * every step is agreed, and a failure in any leaves neither. With commit = 0 (after a failure)
 * the file is abandoned: its space given back, closed, removed, and the message of the failure
 * being cleaned up is kept. The lock is released either way. Accepts NULL, sets *w to NULL.
 * Returns the first error met while closing. */
hx_status hx_io_close(hx_io **w, int commit);

#endif
