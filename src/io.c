/* io.c — collective parallel-HDF5 output in the Grid Data Format layout, provenance
 * attributes, checksums, atomic rename and the XDMF sidecar.
 * Invariant: metadata calls (create, attributes) are made by every rank with identical
 * arguments; raw data goes through collective transfers where ranks without data select
 * nothing; every result that can differ between ranks (a write, a close, a rename) is agreed
 * before the next collective; only rank 0 touches the file system by name (lock, rename,
 * unlink, .xmf). A failed file is closed after its space is given back, then removed. */
#define _GNU_SOURCE
#include "helmix/io.h"

#include <errno.h>
#include <fcntl.h>
#include <hdf5.h>
#include <math.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/statvfs.h>
#include <time.h>
#include <unistd.h>

#include "check.h"
#include "helmix/fault.h"
#include "helmix/schema.h"
#include "io_claim.h"
#include "io_digest.h"
#include "io_tuning.h"
#include "helmix/version.h"

/* One named field of the file: its datasets (one per component) and units. */
typedef struct io_field {
    char name[32];
    int ncomp;
    int face; /* staggering: 0 cell centres, 1 low faces */
    char unit[64];
    hid_t dset[3];
    uint64_t digest[3]; /* this rank's part of each component's checksum (io_digest.h) */
    int written[3];
} io_field;

struct hx_io {
    MPI_Comm comm;
    int rank;
    hx_grid g;
    hx_precision prec;
    hid_t file;
    io_field field[HX_IO_MAX_FIELDS];
    int nfield;
    int created; /* the partial file exists: close must remove or rename it */
    io_tuning tune; /* alignment and MPI-IO hints, for create and resume alike */
    int64_t transfers[2]; /* field writes HDF5 did collectively, and independently */
    double reserved;      /* rank 0: bytes of the partial file reserved in advance */
    int unreserved;       /* every rank: some space could not be reserved (no fallocate here) */
    io_claim claim;       /* the names, the lock and the partial file */
};

/* Rank 0: can FILE be written where it is named? One line when not. */
static hx_status target_local(const char *path, int force)
{
    hx_status st = HX_OK;
    struct stat sb;
    char dir[HX_PATH_MAX], msg[1024];
    HX_TRY(io_claim_check_name(path));
    const char *slash = strrchr(path, '/');
    if (!slash) snprintf(dir, sizeof dir, ".");
    else snprintf(dir, sizeof dir, "%.*s", slash == path ? 1 : (int)(slash - path), path);
    if (stat(dir, &sb) != 0)
        HX_FAIL(HX_ERR_ARG, "cannot write %s: directory %s: %s", path, dir, strerror(errno));
    if (!S_ISDIR(sb.st_mode)) HX_FAIL(HX_ERR_ARG, "cannot write %s: %s is not a directory", path, dir);
    if (access(dir, W_OK | X_OK) != 0)
        HX_FAIL(HX_ERR_ARG, "cannot write %s: directory %s is not writable (%s)", path, dir, strerror(errno));
    if (stat(path, &sb) == 0) {
        if (S_ISDIR(sb.st_mode)) HX_FAIL(HX_ERR_ARG, "output %s is a directory: give a file name", path);
        if (!S_ISREG(sb.st_mode)) HX_FAIL(HX_ERR_ARG, "output %s exists and is not a regular file", path);
        if (!force) HX_FAIL(HX_ERR_EXISTS, "output %s exists: choose another name or pass --force to replace it", path);
    }
    if (io_claim_busy(path, msg, sizeof msg)) HX_FAIL(HX_ERR_EXISTS, "%s", msg);
fail:
    return st;
}

hx_status hx_io_check_target(const char *path, int force, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    if (rank == 0) st = target_local(path, force);
fail:
    return hx_error_agree(comm, st);
}

/* Open group `path`, creating it (and its parents) on first use. Collective. */
static hid_t group_open(hx_io *w, const char *path)
{
    if (H5Lexists(w->file, path, H5P_DEFAULT) > 0) return H5Gopen2(w->file, path, H5P_DEFAULT);
    hid_t lcpl = H5Pcreate(H5P_LINK_CREATE);
    if (lcpl < 0) return -1;
    hid_t grp = -1;
    if (H5Pset_create_intermediate_group(lcpl, 1) >= 0) grp = H5Gcreate2(w->file, path, lcpl, H5P_DEFAULT, H5P_DEFAULT);
    H5Pclose(lcpl);
    return grp;
}

/* Write attribute `name` of type mtype (n values, n = 0 for a scalar) on object obj. */
static hx_status attr_write(hid_t obj, const char *name, hid_t ftype, hid_t mtype, const void *buf, int n)
{
    hx_status st = HX_OK;
    hid_t space = -1, attr = -1;
    hsize_t dim = (hsize_t)n;
    if (H5Aexists(obj, name) > 0) HX_H5OK(H5Adelete(obj, name));
    HX_H5(space, n > 0 ? H5Screate_simple(1, &dim, NULL) : H5Screate(H5S_SCALAR));
    HX_H5(attr, H5Acreate2(obj, name, ftype, space, H5P_DEFAULT, H5P_DEFAULT));
    HX_H5OK(H5Awrite(attr, mtype, buf));
fail:
    if (attr >= 0) H5Aclose(attr);
    if (space >= 0) H5Sclose(space);
    if (st != HX_OK) hx_error_set(st, "cannot write HDF5 attribute '%s': %s", name, hx_error_message());
    return st;
}

/* Variable-length UTF-8 string (read back by h5py as str): used under /helmix. */
static hx_status str_attr(hid_t obj, const char *name, const char *value)
{
    hx_status st = HX_OK;
    hid_t t = -1;
    HX_H5(t, H5Tcopy(H5T_C_S1));
    HX_H5OK(H5Tset_size(t, H5T_VARIABLE));
    HX_H5OK(H5Tset_cset(t, H5T_CSET_UTF8));
    st = attr_write(obj, name, t, t, &value, 0);
fail:
    if (t >= 0) H5Tclose(t);
    return st;
}

/* Fixed-length ASCII string: the Grid Data Format groups use these (yt decodes them as bytes). */
static hx_status fixed_str_attr(hid_t obj, const char *name, const char *value)
{
    hx_status st = HX_OK;
    hid_t t = -1;
    HX_H5(t, H5Tcopy(H5T_C_S1));
    HX_H5OK(H5Tset_size(t, strlen(value) + 1));
    HX_H5OK(H5Tset_strpad(t, H5T_STR_NULLTERM));
    st = attr_write(obj, name, t, t, value, 0);
fail:
    if (t >= 0) H5Tclose(t);
    return st;
}

/* A small dataset written by rank 0 (others select nothing). Collective. */
static hx_status small_dataset(hx_io *w, hid_t loc, const char *name, hid_t ftype, hid_t mtype, int rank_,
                               const hsize_t *dims, const void *buf)
{
    hx_status st = HX_OK;
    hid_t space = -1, dset = -1;
    HX_H5(space, H5Screate_simple(rank_, dims, NULL));
    HX_H5(dset, H5Dcreate2(loc, name, ftype, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    if (w->rank != 0) HX_H5OK(H5Sselect_none(space));
    if (H5Dwrite(dset, mtype, space, space, H5P_DEFAULT, buf) < 0)
        HX_FAIL(HX_ERR_IO, "writing %s to %s failed (disk full or quota?)", name, w->claim.partial);
fail:
    if (dset >= 0) H5Dclose(dset);
    if (space >= 0) H5Sclose(space);
    return st;
}

static hx_status write_gdf_skeleton(hx_io *w)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    const hx_grid *g = &w->g;
    int64_t dims[3] = {g->n[0], g->n[1], g->n[2]}, zero3[3] = {0, 0, 0};
    double left[3] = {0, 0, 0}, right[3] = {g->box[0], g->box[1], g->box[2]}, t0 = 0.0;
    int32_t bc[6] = {0, 0, 0, 0, 0, 0}, one = 1, three = 3, two = 2, zero = 0;
    char uid[96];
    snprintf(uid, sizeof uid, "helmix-%ld", (long)time(NULL));

    HX_H5(grp, H5Gcreate2(w->file, "/gridded_data_format", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    HX_TRY(fixed_str_attr(grp, "data_software", "helmix"));
    HX_TRY(fixed_str_attr(grp, "data_software_version", HX_VERSION));
    HX_TRY(fixed_str_attr(grp, "data_comment", "turbulent initial conditions (see /helmix)"));
    H5Gclose(grp);
    grp = -1;

    HX_H5(grp, H5Gcreate2(w->file, "/simulation_parameters", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    HX_TRY(attr_write(grp, "refine_by", H5T_STD_I32LE, H5T_NATIVE_INT32, &two, 0));
    HX_TRY(attr_write(grp, "dimensionality", H5T_STD_I32LE, H5T_NATIVE_INT32, &three, 0));
    HX_TRY(attr_write(grp, "domain_dimensions", H5T_STD_I64LE, H5T_NATIVE_INT64, dims, 3));
    HX_TRY(attr_write(grp, "domain_left_edge", H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, left, 3));
    HX_TRY(attr_write(grp, "domain_right_edge", H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, right, 3));
    HX_TRY(attr_write(grp, "current_time", H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, &t0, 0));
    HX_TRY(attr_write(grp, "cosmological_simulation", H5T_STD_I32LE, H5T_NATIVE_INT32, &zero, 0));
    HX_TRY(attr_write(grp, "num_ghost_zones", H5T_STD_I32LE, H5T_NATIVE_INT32, &zero, 0));
    HX_TRY(attr_write(grp, "field_ordering", H5T_STD_I32LE, H5T_NATIVE_INT32, &one, 0));
    HX_TRY(attr_write(grp, "geometry", H5T_STD_I32LE, H5T_NATIVE_INT32, &zero, 0));
    HX_TRY(attr_write(grp, "boundary_conditions", H5T_STD_I32LE, H5T_NATIVE_INT32, bc, 6));
    HX_TRY(fixed_str_attr(grp, "unique_identifier", uid));
    H5Gclose(grp);
    grp = -1;

    HX_H5(grp, H5Gcreate2(w->file, HX_SCHEMA_FIELD_TYPES, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    H5Gclose(grp);
    grp = -1;
    HX_H5(grp, H5Gcreate2(w->file, "/particle_types", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    H5Gclose(grp);
    grp = -1;

    hsize_t d13[2] = {1, 3}, d1 = 1, d11[2] = {1, 1};
    int64_t lvl = 0, pid = -1, npart = 0;
    HX_TRY(small_dataset(w, w->file, "grid_dimensions", H5T_STD_I64LE, H5T_NATIVE_INT64, 2, d13, dims));
    HX_TRY(small_dataset(w, w->file, "grid_left_index", H5T_STD_I64LE, H5T_NATIVE_INT64, 2, d13, zero3));
    HX_TRY(small_dataset(w, w->file, "grid_level", H5T_STD_I64LE, H5T_NATIVE_INT64, 1, &d1, &lvl));
    HX_TRY(small_dataset(w, w->file, "grid_parent_id", H5T_STD_I64LE, H5T_NATIVE_INT64, 1, &d1, &pid));
    HX_TRY(small_dataset(w, w->file, "grid_particle_count", H5T_STD_I64LE, H5T_NATIVE_INT64, 2, d11, &npart));
fail:
    if (grp >= 0) H5Gclose(grp);
    return st;
}

/* Room for the metadata that follows the datasets: attributes, tables, the recipe text. */
#define RESERVE_MARGIN ((double)(4u << 20))

/* Collective: reserve the file's space so far (its datasets are allocated when created, as
 * parallel HDF5 does) plus a margin, without changing its size, so that a full disk shows now,
 * and neither a field write nor HDF5's metadata flush at close meets it later. File systems
 * without fallocate reserve nothing; the writes are agreed either way. */
static hx_status reserve(hx_io *w)
{
    hx_status st = HX_OK;
    if (w->rank == 0 && w->claim.datafd >= 0 && !hx_fault_no_reserve()) {
        double size = 0; /* the end of the last field dataset (contiguous, allocated when created) */
        for (int i = 0; i < w->nfield; i++)
            for (int c = 0; c < w->field[i].ncomp; c++) {
                haddr_t at = w->field[i].dset[c] >= 0 ? H5Dget_offset(w->field[i].dset[c]) : HADDR_UNDEF;
                double end = (double)at + (double)H5Dget_storage_size(w->field[i].dset[c]);
                if (at != HADDR_UNDEF && end > size) size = end;
            }
        double want = (double)size + RESERVE_MARGIN;
        if (want > w->reserved) {
            int rc;
            do rc = fallocate(w->claim.datafd, FALLOC_FL_KEEP_SIZE, 0, (off_t)want);
            while (rc != 0 && errno == EINTR);
            if (rc == 0) w->reserved = want;
            else if (errno != ENOSPC && errno != EDQUOT && errno != EFBIG) w->unreserved = 1;
            else {
                int err = errno;
                struct statvfs fs;
                double avail = fstatvfs(w->claim.datafd, &fs) == 0 ? (double)fs.f_bavail * (double)fs.f_frsize : NAN;
                st = hx_error_set(HX_ERR_IO, "no room for %s: it needs %.1f MiB and the file system has %.1f MiB "
                                  "free (%s)", w->claim.partial, want / 1048576.0, avail / 1048576.0, strerror(err));
            } /* EOPNOTSUPP and the like: nothing reserved, so the file is read back before it is renamed */
        }
    }
    if (w->rank == 0 && hx_fault_no_reserve()) w->unreserved = 1;
    HX_TRY(hx_error_agree(w->comm, st));
    HX_MPI(MPI_Bcast(&w->unreserved, 1, MPI_INT, 0, w->comm));
fail:
    return st;
}

hx_status hx_io_add_field(hx_io *w, const char *name, int ncomp, const char *unit, int face, int *id)
{
    hx_status st = HX_OK;
    hid_t grp = -1, types = -1, space = -1, sg = -1;
    hsize_t dims[3] = {(hsize_t)w->g.n[2], (hsize_t)w->g.n[1], (hsize_t)w->g.n[0]};
    hid_t ftype = w->prec == HX_PREC_DOUBLE ? H5T_IEEE_F64LE : H5T_IEEE_F32LE;
    int32_t stag = face ? 1 : 0;
    if (w->nfield == HX_IO_MAX_FIELDS || (ncomp != 1 && ncomp != 3) || strlen(name) >= sizeof w->field[0].name ||
        strlen(unit) >= sizeof w->field[0].unit)
        HX_FAIL(HX_ERR_ARG, "cannot add field '%s' with %d components (at most %d fields)", name, ncomp,
                HX_IO_MAX_FIELDS);
    io_field *fd = &w->field[w->nfield];
    snprintf(fd->name, sizeof fd->name, "%s", name);
    snprintf(fd->unit, sizeof fd->unit, "%s", unit);
    fd->ncomp = ncomp;
    fd->face = face;
    for (int c = 0; c < 3; c++) fd->dset[c] = -1;
    w->nfield++; /* from here on hx_io_close closes whatever was created */
    HX_H5(grp, group_open(w, HX_SCHEMA_GRID));
    HX_H5(types, H5Gopen2(w->file, HX_SCHEMA_FIELD_TYPES, H5P_DEFAULT));
    HX_H5(space, H5Screate_simple(3, dims, NULL));
    for (int c = 0; c < ncomp; c++) {
        char comp[64];
        hx_schema_component(comp, sizeof comp, name, ncomp, c);
        HX_H5(fd->dset[c], H5Dcreate2(grp, comp, ftype, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
        HX_H5(sg, H5Gcreate2(types, comp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
        HX_TRY(fixed_str_attr(sg, "field_name", comp));
        HX_TRY(fixed_str_attr(sg, "field_units", unit));
        HX_TRY(attr_write(sg, "staggering", H5T_STD_I32LE, H5T_NATIVE_INT32, &stag, 0));
        H5Gclose(sg);
        sg = -1;
    }
    if (id) *id = w->nfield - 1;
fail:
    if (sg >= 0) H5Gclose(sg);
    if (space >= 0) H5Sclose(space);
    if (types >= 0) H5Gclose(types);
    if (grp >= 0) H5Gclose(grp);
    st = hx_error_agree(w->comm, st);
    return st == HX_OK ? reserve(w) : st;
}

/* A scalar dataset /dataset_units/NAME holding value, with its unit as an attribute: where
 * yt's Grid Data Format reader takes the code units from. */
static hx_status unit_dataset(hx_io *w, hid_t grp, const char *name, double value, const char *unit)
{
    hx_status st = HX_OK;
    hid_t space = -1, dset = -1;
    HX_H5(space, H5Screate(H5S_SCALAR));
    HX_H5(dset, H5Dcreate2(grp, name, H5T_IEEE_F64LE, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
    if (w->rank != 0) HX_H5OK(H5Sselect_none(space));
    HX_H5OK(H5Dwrite(dset, H5T_NATIVE_DOUBLE, space, space, H5P_DEFAULT, &value));
    HX_TRY(str_attr(dset, "unit", unit));
fail:
    if (dset >= 0) H5Dclose(dset);
    if (space >= 0) H5Sclose(space);
    return st;
}

hx_status hx_io_units(hx_io *w, double length_cm, double mass_g, double time_s)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    HX_H5(grp, group_open(w, HX_SCHEMA_UNITS));
    HX_TRY(unit_dataset(w, grp, "length_unit", length_cm, "cm"));
    HX_TRY(unit_dataset(w, grp, "mass_unit", mass_g, "g"));
    HX_TRY(unit_dataset(w, grp, "time_unit", time_s, "s"));
    HX_TRY(unit_dataset(w, grp, "velocity_unit", length_cm / time_s, "cm/s"));
    /* Gaussian code magnetic unit sqrt(4 pi rho_u) v_u: v_A = B / sqrt(rho) in code units */
    HX_TRY(unit_dataset(w, grp, "magnetic_unit", sqrt(4.0 * M_PI * mass_g / (length_cm * length_cm * length_cm)) * length_cm / time_s,
                        "gauss"));
fail:
    if (grp >= 0) H5Gclose(grp);
    return hx_error_agree(w->comm, st); /* rank 0 alone writes the values */
}

hx_status hx_io_create(hx_io **out, const char *path, const hx_grid *g, hx_precision prec, const hx_io_tuning *tuning,
                       MPI_Comm comm)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    hx_io *w = NULL;
    w = calloc(1, sizeof *w);
    HX_TRY(hx_error_agree(comm, w ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for the output handle")));
    w->file = -1;
    w->comm = comm;
    w->g = *g;
    w->prec = prec;
    w->claim.dirfd = w->claim.lockfd = w->claim.datafd = -1;
    HX_MPI(MPI_Comm_rank(comm, &w->rank));
    /* Align what is worth aligning: every field dataset (one component, N^3 values, is the
     * smallest of them) and nothing smaller, so headers, attributes and tables stay packed
     * instead of each taking a whole alignment unit. */
    hsize_t component = (hsize_t)g->n[0] * (hsize_t)g->n[1] * (hsize_t)g->n[2] * (prec == HX_PREC_DOUBLE ? 8u : 4u);
    HX_TRY(hx_error_agree(comm, io_tuning_init(&w->tune, tuning, component)));
    HX_TRY(io_claim_take(&w->claim, path, comm));
    w->created = 1; /* from here on hx_io_close removes the partial file and the lock */
    HX_TRY(hx_error_agree(comm, hx_fault_point("create", comm))); /* before the collective open */
    if ((fapl = io_tuning_fapl(&w->tune, comm)) < 0) st = HX_ERR_HDF5;
    if (st == HX_OK) {
        w->file = H5Fcreate(w->claim.mpiname, H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
        if (w->file < 0) st = hx_error_set(HX_ERR_IO, "cannot create %s through MPI-IO", w->claim.partial);
    }
    HX_TRY(hx_error_agree(comm, st));
    HX_TRY(hx_error_agree(comm, write_gdf_skeleton(w)));
    H5Pclose(fapl);
    *out = w;
    return HX_OK;
fail:
    if (fapl >= 0) H5Pclose(fapl);
    hx_io_close(&w, 0);
    return st;
}

/* One collective MPI-IO transfer of a selection, entered by every rank or by none (`prep`, this
 * rank's preparation, is agreed first) and agreed after: MPI-IO may report a failed write on
 * the aggregating ranks only. Counts whether HDF5 really did it collectively (it falls back to
 * independent I/O on its own, e.g. when it converts types). */
static hx_status transfer(hx_io *w, hx_status prep, hid_t dset, const char *comp, hid_t mtype, hid_t mspace,
                          hid_t fspace, const void *buf)
{
    hx_status st = prep;
    hid_t dxpl = -1;
    H5D_mpio_actual_io_mode_t mode = H5D_MPIO_NO_COLLECTIVE;
    if (st == HX_OK && ((dxpl = H5Pcreate(H5P_DATASET_XFER)) < 0 || H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE) < 0))
        st = hx_error_set(HX_ERR_HDF5, "cannot set up a collective transfer of %s", comp);
    HX_TRY(hx_error_agree(w->comm, st));
    if (H5Dwrite(dset, mtype, mspace, fspace, dxpl, buf) < 0)
        st = hx_error_set(HX_ERR_IO, "writing %s to %s failed (disk full or quota?)", comp, w->claim.partial);
    else if (H5Pget_mpio_actual_io_mode(dxpl, &mode) >= 0)
        w->transfers[mode == H5D_MPIO_NO_COLLECTIVE ? 1 : 0]++;
    if (st == HX_OK) st = hx_fault_point("write", w->comm);
    st = hx_error_agree(w->comm, st);
fail:
    if (dxpl >= 0) H5Pclose(dxpl);
    return st;
}

/* Select rows [a, b) of this rank's nz * Ny rows of x values in the file: a partial plane,
 * whole planes, a partial plane, in file order (which is the order of the rows in memory). */
static hx_status select_rows(hid_t fspace, const hx_grid *g, hsize_t a, hsize_t b)
{
    hx_status st = HX_OK;
    const hsize_t ny = (hsize_t)g->n[1];
    H5S_seloper_t op = H5S_SELECT_SET;
    if (a >= b) HX_H5OK(H5Sselect_none(fspace));
    while (a < b) {
        hsize_t z = a / ny, y = a % ny, start[3] = {(hsize_t)g->z0 + z, y, 0}, count[3] = {1, 0, (hsize_t)g->n[0]};
        if (y == 0 && b - a >= ny) count[0] = (b - a) / ny, count[1] = ny;
        else count[1] = ny - y < b - a ? ny - y : b - a;
        HX_H5OK(H5Sselect_hyperslab(fspace, op, start, NULL, count, NULL));
        op = H5S_SELECT_OR;
        a += count[0] * count[1];
    }
fail:
    return st;
}

/* HDF5 1.10 turns a transfer that converts types into independent I/O (no-collective cause
 * H5D_MPIO_DATATYPE_CONVERSION), so doubles bound for a single-precision file are rounded
 * here (as HDF5 would: the C conversion), a bounded run of rows at a time, and every run is
 * written collectively; a rank with fewer rows joins the remaining transfers selecting nothing. */
#define CONVERT_BYTES ((size_t)4 << 20)

static hx_status write_rounded(hx_io *w, io_field *fd, int c, const char *comp, const double *slab)
{
    hx_status st = HX_OK;
    hid_t fspace = -1, mspace = -1, dset = fd->dset[c];
    float *buf = NULL;
    const hx_grid *g = &w->g;
    const hsize_t nx = (hsize_t)g->n[0], rows = (hsize_t)g->nz * (hsize_t)g->n[1];
    hsize_t per = CONVERT_BYTES / (nx * sizeof(float));
    if (per < 1) per = 1;
    long long runs = (long long)((rows + per - 1) / per), most = 0;
    uint64_t digest = 0;
    buf = malloc((size_t)(per * nx) * sizeof *buf);
    HX_TRY(hx_error_agree(w->comm, buf ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for %zu MiB of rounding buffer",
                                                                 CONVERT_BYTES >> 20)));
    HX_MPI(MPI_Allreduce(&runs, &most, 1, MPI_LONG_LONG, MPI_MAX, w->comm));
    hx_status prep = (fspace = H5Dget_space(dset)) >= 0 ? HX_OK : hx_error_set(HX_ERR_HDF5, "H5Dget_space failed");
    for (long long i = 0; i < most; i++) {
        hsize_t a = (hsize_t)i * per < rows ? (hsize_t)i * per : rows, b = a + per < rows ? a + per : rows, n = (b - a) * nx;
        for (hsize_t j = 0; j < n; j++) buf[j] = (float)slab[a * nx + j];
        if (prep == HX_OK) prep = select_rows(fspace, g, a, b);
        hsize_t mdim = n > 0 ? n : 1;
        if (prep == HX_OK && (mspace = H5Screate_simple(1, &mdim, NULL)) < 0) prep = hx_error_set(HX_ERR_HDF5, "H5Screate_simple failed");
        if (prep == HX_OK && n == 0 && H5Sselect_none(mspace) < 0) prep = hx_error_set(HX_ERR_HDF5, "H5Sselect_none failed");
        HX_TRY(transfer(w, prep, dset, comp, H5T_NATIVE_FLOAT, mspace, fspace, buf));
        digest += io_digest_add(buf, (size_t)n, sizeof(float), ((uint64_t)g->z0 * (uint64_t)g->n[1] + a) * nx);
        H5Sclose(mspace);
        mspace = -1;
    }
    fd->digest[c] = digest;
    fd->written[c] = 1;
fail:
    free(buf);
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    return st;
}

/* This rank's preparation of a whole-slab transfer (local: its result is agreed by transfer). */
static hx_status select_slab(const hx_grid *g, hid_t dset, hid_t *fspace, hid_t *mspace)
{
    hx_status st = HX_OK;
    hsize_t start[3] = {(hsize_t)g->z0, 0, 0}, count[3] = {(hsize_t)g->nz, (hsize_t)g->n[1], (hsize_t)g->n[0]};
    hsize_t one = 1;
    HX_H5(*fspace, H5Dget_space(dset));
    if (g->nz > 0) {
        HX_H5OK(H5Sselect_hyperslab(*fspace, H5S_SELECT_SET, start, NULL, count, NULL));
        HX_H5(*mspace, H5Screate_simple(3, count, NULL));
    } else {
        HX_H5OK(H5Sselect_none(*fspace));
        HX_H5(*mspace, H5Screate_simple(1, &one, NULL));
        HX_H5OK(H5Sselect_none(*mspace));
    }
fail:
    return st;
}

static hx_status write_slab(hx_io *w, int id, int c, const void *slab, hid_t mtype)
{
    hx_status st = HX_OK;
    hid_t fspace = -1, mspace = -1;
    const hx_grid *g = &w->g;
    /* the same arguments on every rank: a refusal here is the same everywhere */
    if (id < 0 || id >= w->nfield || c < 0 || c >= w->field[id].ncomp)
        HX_FAIL(HX_ERR_ARG, "no field %d component %d in %s", id, c, w->claim.partial);
    io_field *fd = &w->field[id];
    char comp[64];
    hx_schema_component(comp, sizeof comp, fd->name, fd->ncomp, c);
    if (mtype == H5T_NATIVE_DOUBLE && w->prec != HX_PREC_DOUBLE) return write_rounded(w, fd, c, comp, slab);
    hx_status prep = select_slab(g, fd->dset[c], &fspace, &mspace);
    HX_TRY(transfer(w, prep, fd->dset[c], comp, mtype, mspace, fspace, slab));
    fd->digest[c] = io_digest_add(slab, (size_t)g->nz * (size_t)g->n[1] * (size_t)g->n[0],
                                  w->prec == HX_PREC_DOUBLE ? 8 : 4, (uint64_t)g->z0 * (uint64_t)g->n[1] * (uint64_t)g->n[0]);
    fd->written[c] = 1;
fail:
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    return st;
}

hx_status hx_io_write_component(hx_io *w, int id, int c, const void *slab)
{
    return write_slab(w, id, c, slab, w->prec == HX_PREC_DOUBLE ? H5T_NATIVE_DOUBLE : H5T_NATIVE_FLOAT);
}

hx_status hx_io_write_doubles(hx_io *w, int id, int c, const double *slab)
{
    return write_slab(w, id, c, slab, H5T_NATIVE_DOUBLE);
}

const char *hx_io_partial(const hx_io *w) { return w->claim.mpiname; }

const char *hx_io_note(const hx_io *w) { return w->claim.note[0] ? w->claim.note : NULL; }

/* Collective: close the datasets and the file, agreed. abandon = 1 (the file is to be removed):
 * rank 0 first gives the file's space back (truncating it to 0 bytes) and every rank waits for
 * that, so HDF5's flush of its metadata at close finds room even on a full disk and no rank
 * fails inside the collective close while the others wait in it. */
static hx_status file_close(hx_io *w, int abandon)
{
    hx_status st = HX_OK;
    if (abandon) {
        if (w->rank == 0 && w->claim.datafd >= 0 && ftruncate(w->claim.datafd, 0) != 0) { /* then close as it is */ }
        MPI_Barrier(w->comm);
    }
    for (int i = 0; i < w->nfield; i++)
        for (int c = 0; c < 3; c++) {
            if (w->field[i].dset[c] >= 0 && H5Dclose(w->field[i].dset[c]) < 0 && st == HX_OK)
                st = hx_error_set(HX_ERR_HDF5, "closing the datasets of %s failed", w->field[i].name);
            w->field[i].dset[c] = -1;
        }
    if (w->file >= 0 && H5Fclose(w->file) < 0 && st == HX_OK)
        st = hx_error_set(HX_ERR_IO, "closing %s failed (disk full or quota?)", w->claim.partial);
    w->file = -1;
    if (!abandon && st == HX_OK) st = hx_fault_point("close", w->comm);
    return hx_error_agree(w->comm, st);
}

hx_status hx_io_pause(hx_io *w) { return file_close(w, 0); }

hx_status hx_io_resume(hx_io *w)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    HX_H5(fapl, io_tuning_fapl(&w->tune, w->comm));
    w->file = H5Fopen(w->claim.mpiname, H5F_ACC_RDWR, fapl);
    if (w->file < 0) HX_FAIL(HX_ERR_HDF5, "cannot reopen %s", w->claim.partial);
    for (int i = 0; i < w->nfield; i++)
        for (int c = 0; c < w->field[i].ncomp; c++) {
            char path[128];
            hx_schema_dataset(path, sizeof path, w->field[i].name, w->field[i].ncomp, c);
            HX_H5(w->field[i].dset[c], H5Dopen2(w->file, path, H5P_DEFAULT));
        }
fail:
    if (fapl >= 0) H5Pclose(fapl);
    return hx_error_agree(w->comm, st);
}

hx_status hx_io_attr_string(hx_io *w, const char *group, const char *name, const char *value)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    HX_H5(grp, group_open(w, group));
    st = str_attr(grp, name, value);
fail:
    if (grp >= 0) H5Gclose(grp);
    return hx_error_agree(w->comm, st); /* a metadata flush may fail on one rank */
}

static hx_status numeric_attr(hx_io *w, const char *group, const char *name, hid_t ft, hid_t mt, const void *v, int n)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    HX_H5(grp, group_open(w, group));
    st = attr_write(grp, name, ft, mt, v, n);
fail:
    if (grp >= 0) H5Gclose(grp);
    return hx_error_agree(w->comm, st);
}

hx_status hx_io_attr_doubles(hx_io *w, const char *group, const char *name, const double *v, int n)
{
    return numeric_attr(w, group, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, v, n);
}

hx_status hx_io_attr_int64s(hx_io *w, const char *group, const char *name, const int64_t *v, int n)
{
    return numeric_attr(w, group, name, H5T_STD_I64LE, H5T_NATIVE_INT64, v, n);
}

hx_status hx_io_attr_uint64(hx_io *w, const char *group, const char *name, uint64_t v)
{
    return numeric_attr(w, group, name, H5T_STD_U64LE, H5T_NATIVE_UINT64, &v, 0);
}

hx_status hx_io_attr_tuning(hx_io *w, const char *group)
{
    hx_status st = HX_OK;
    int64_t most[2];
    double a = (double)w->tune.alignment, thr = w->tune.alignment > 0 ? (double)w->tune.threshold : 0.0;
    HX_TRY(hx_io_attr_doubles(w, group, HX_IO_ATTR_ALIGNMENT, &a, 0));
    HX_TRY(hx_io_attr_doubles(w, group, HX_IO_ATTR_ALIGNMENT_THRESHOLD, &thr, 0));
    HX_TRY(hx_io_attr_string(w, group, HX_IO_ATTR_HINTS, w->tune.hints));
    HX_MPI(MPI_Allreduce(w->transfers, most, 2, MPI_INT64_T, MPI_MAX, w->comm)); /* one value for every rank */
    HX_TRY(hx_io_attr_int64s(w, group, HX_IO_ATTR_TRANSFERS, most, 2));
fail:
    return st;
}

hx_status hx_io_table(hx_io *w, const char *group, const char *name, const double *v, int n)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    hsize_t dim = (hsize_t)n;
    HX_H5(grp, group_open(w, group));
    st = small_dataset(w, grp, name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, 1, &dim, v);
fail:
    if (grp >= 0) H5Gclose(grp);
    return hx_error_agree(w->comm, st); /* rank 0 alone writes the values */
}

/* One HDF5 data item of the sidecar. */
static void xdmf_item(FILE *fp, const hx_io *w, const char *base, const char *comp, const char *indent)
{
    const hx_grid *g = &w->g;
    fprintf(fp,
            "%s<DataItem Format=\"HDF\" NumberType=\"Float\" Precision=\"%d\" Dimensions=\"%td %td %td\">"
            "%s:" HX_SCHEMA_GRID "/%s</DataItem>\n",
            indent, w->prec == HX_PREC_DOUBLE ? 8 : 4, g->n[2], g->n[1], g->n[0], base, comp);
}

/* XDMF 3 sidecar: cell-centred fields on a uniform (co-rectilinear) mesh, each vector also as
 * its components. Rank 0 only. */
static hx_status write_xdmf(const hx_io *w, const char *xmf)
{
    const char *base = strrchr(w->claim.path, '/');
    base = base ? base + 1 : w->claim.path;
    const hx_grid *g = &w->g;
    FILE *fp = fopen(xmf, "w");
    if (!fp) return hx_error_set(HX_ERR_IO, "cannot write %s", xmf);
    fprintf(fp, "<?xml version=\"1.0\" ?>\n<!-- helmix %s: initial conditions %s -->\n", HX_VERSION, base);
    fprintf(fp, "<Xdmf Version=\"3.0\">\n <Domain>\n  <Grid Name=\"helmix\" GridType=\"Uniform\">\n");
    fprintf(fp, "   <Topology TopologyType=\"3DCoRectMesh\" Dimensions=\"%td %td %td\"/>\n", g->n[2] + 1, g->n[1] + 1,
            g->n[0] + 1);
    fprintf(fp, "   <Geometry GeometryType=\"ORIGIN_DXDYDZ\">\n");
    fprintf(fp, "    <DataItem Format=\"XML\" Dimensions=\"3\">0 0 0</DataItem>\n");
    fprintf(fp, "    <DataItem Format=\"XML\" Dimensions=\"3\">%.17g %.17g %.17g</DataItem>\n", g->box[2] / (double)g->n[2],
            g->box[1] / (double)g->n[1], g->box[0] / (double)g->n[0]);
    fprintf(fp, "   </Geometry>\n");
    for (int i = 0; i < w->nfield; i++) {
        const io_field *fd = &w->field[i];
        char comp[64];
        if (fd->face) continue; /* staggered fields get grids of their own, below */
        if (fd->ncomp == 3) {
            fprintf(fp, "   <Attribute Name=\"%s\" AttributeType=\"Vector\" Center=\"Cell\">\n", fd->name);
            fprintf(fp, "    <DataItem ItemType=\"Function\" Function=\"JOIN($0, $1, $2)\" Dimensions=\"%td %td %td 3\">\n",
                    g->n[2], g->n[1], g->n[0]);
            for (int c = 0; c < 3; c++) {
                hx_schema_component(comp, sizeof comp, fd->name, 3, c);
                xdmf_item(fp, w, base, comp, "     ");
            }
            fprintf(fp, "    </DataItem>\n   </Attribute>\n");
        }
        for (int c = 0; c < fd->ncomp; c++) {
            hx_schema_component(comp, sizeof comp, fd->name, fd->ncomp, c);
            fprintf(fp, "   <Attribute Name=\"%s\" AttributeType=\"Scalar\" Center=\"Cell\">\n", comp);
            xdmf_item(fp, w, base, comp, "    ");
            fprintf(fp, "   </Attribute>\n");
        }
    }
    fprintf(fp, "  </Grid>\n");
    /* A face-centred component c sits at cell centres of a grid shifted by -dx_c / 2 along c. */
    for (int i = 0; i < w->nfield; i++) {
        const io_field *fd = &w->field[i];
        if (!fd->face) continue;
        for (int c = 0; c < fd->ncomp; c++) {
            char comp[64];
            double origin[3] = {0, 0, 0}; /* x, y, z */
            origin[c] = -0.5 * g->box[c] / (double)g->n[c];
            hx_schema_component(comp, sizeof comp, fd->name, fd->ncomp, c);
            fprintf(fp, "  <Grid Name=\"%s\" GridType=\"Uniform\">\n", comp);
            fprintf(fp, "   <Topology TopologyType=\"3DCoRectMesh\" Dimensions=\"%td %td %td\"/>\n", g->n[2] + 1,
                    g->n[1] + 1, g->n[0] + 1);
            fprintf(fp, "   <Geometry GeometryType=\"ORIGIN_DXDYDZ\">\n");
            fprintf(fp, "    <DataItem Format=\"XML\" Dimensions=\"3\">%.17g %.17g %.17g</DataItem>\n", origin[2],
                    origin[1], origin[0]);
            fprintf(fp, "    <DataItem Format=\"XML\" Dimensions=\"3\">%.17g %.17g %.17g</DataItem>\n",
                    g->box[2] / (double)g->n[2], g->box[1] / (double)g->n[1], g->box[0] / (double)g->n[0]);
            fprintf(fp, "   </Geometry>\n");
            fprintf(fp, "   <Attribute Name=\"%s\" AttributeType=\"Scalar\" Center=\"Cell\">\n", comp);
            xdmf_item(fp, w, base, comp, "    ");
            fprintf(fp, "   </Attribute>\n  </Grid>\n");
        }
    }
    fprintf(fp, " </Domain>\n</Xdmf>\n");
    if (fclose(fp) != 0) return hx_error_set(HX_ERR_IO, "cannot finish writing %s", xmf);
    return HX_OK;
}

/* Collective: the checksum of every component written, reduced over ranks, as attributes of
 * its dataset. */
static hx_status write_checksums(hx_io *w)
{
    hx_status st = HX_OK;
    uint64_t sum[HX_IO_MAX_FIELDS * 3];
    for (int i = 0; i < HX_IO_MAX_FIELDS; i++)
        for (int c = 0; c < 3; c++) sum[3 * i + c] = i < w->nfield ? w->field[i].digest[c] : 0;
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, sum, HX_IO_MAX_FIELDS * 3, MPI_UINT64_T, MPI_SUM, w->comm));
    for (int i = 0; i < w->nfield; i++)
        for (int c = 0; c < w->field[i].ncomp; c++) {
            if (!w->field[i].written[c] || w->field[i].dset[c] < 0) continue;
            HX_TRY(attr_write(w->field[i].dset[c], HX_IO_ATTR_CHECKSUM, H5T_STD_U64LE, H5T_NATIVE_UINT64, &sum[3 * i + c], 0));
            HX_TRY(str_attr(w->field[i].dset[c], HX_IO_ATTR_CHECKSUM_METHOD, IO_DIGEST_METHOD));
        }
fail:
    return st;
}

/* Signals that would end the process between the two renames of publish. */
static void hold_signals(int on, sigset_t *old)
{
    sigset_t s;
    sigemptyset(&s);
    sigaddset(&s, SIGINT), sigaddset(&s, SIGTERM), sigaddset(&s, SIGHUP);
    if (on) sigprocmask(SIG_BLOCK, &s, old);
    else sigprocmask(SIG_SETMASK, old, NULL);
}

/* Collective, after a successful close: the sidecar (as FILE.xmf.partial), then both renamed
 * into place by rank 0, each step agreed; a failure leaves neither FILE nor FILE.xmf of this run. */
static hx_status publish(hx_io *w)
{
    hx_status st = hx_error_agree(w->comm, hx_fault_point("xdmf", w->comm));
    io_claim *c = &w->claim;
    if (st == HX_OK && w->rank == 0) {
        hx_fault_guard_add(c->xmf_partial);
        st = write_xdmf(w, c->xmf_partial);
        struct stat sb; /* give back what was reserved beyond the end of the file */
        if (st == HX_OK && c->datafd >= 0 && fstat(c->datafd, &sb) == 0 && w->reserved > (double)sb.st_size &&
            fallocate(c->datafd, FALLOC_FL_PUNCH_HOLE | FALLOC_FL_KEEP_SIZE, sb.st_size,
                      (off_t)(w->reserved - (double)sb.st_size)) != 0) { /* only space, never data */ }
    }
    HX_TRY(hx_error_agree(w->comm, st));
    HX_TRY(hx_error_agree(w->comm, hx_fault_point("rename", w->comm))); /* rank 0 acts for all: agree first */
    if (w->rank == 0) {
        sigset_t old;
        hold_signals(1, &old);
        if (rename(c->partial, c->path) != 0)
            st = hx_error_set(HX_ERR_IO, "cannot rename %s to %s: %s", c->partial, c->path, strerror(errno));
        else if (rename(c->xmf_partial, c->xmf) != 0) {
            st = hx_error_set(HX_ERR_IO, "cannot rename %s to %s: %s (the cube is removed too)", c->xmf_partial, c->xmf,
                              strerror(errno));
            unlink(c->path);
        }
        if (st == HX_OK) {
            hx_fault_guard_remove(c->partial);
            hx_fault_guard_remove(c->xmf_partial);
        }
        hold_signals(0, &old);
    }
    HX_TRY(hx_error_agree(w->comm, st));
fail:
    return st;
}

hx_status hx_io_close(hx_io **wp, int commit)
{
    if (!wp || !*wp) return HX_OK;
    hx_io *w = *wp;
    hx_status st = HX_OK;
    char before[1024]; /* cleaning up after a failure keeps that failure's message */
    snprintf(before, sizeof before, "%s", hx_error_message());
    if (w->file >= 0) {
        if (commit) st = hx_error_agree(w->comm, write_checksums(w));
        hx_status cl = file_close(w, !commit || st != HX_OK);
        if (st == HX_OK) st = cl;
    }
    if (w->created && commit && st == HX_OK && w->unreserved) {
        /* MPI-IO may lose a failed write on a full disk (Open MPI 4.1 does, on its aggregating
         * ranks): without reserved space the checksums must be found again in the file */
        hx_io_verify_counts n;
        st = hx_io_verify(w->claim.partial, w->comm, NULL, &n);
        if (st == HX_OK && (n.bad > 0 || n.missing > 0))
            st = hx_error_set(HX_ERR_IO, "%s does not hold what was written (%d of %d datasets differ when read "
                              "back): the file system lost data (disk full or quota?)", w->claim.partial, n.bad + n.missing,
                              n.datasets);
    }
    if (w->created) {
        int keep = commit && st == HX_OK;
        if (keep) st = publish(w);
        if (w->rank == 0 && !(keep && st == HX_OK)) {
            unlink(w->claim.partial);
            unlink(w->claim.xmf_partial);
        }
        io_claim_release(&w->claim);
    }
    io_tuning_free(&w->tune);
    free(w);
    *wp = NULL;
    if (!commit) hx_error_set(HX_OK, "%s", before);
    return st;
}
