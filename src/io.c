/* io.c — collective parallel-HDF5 output in the Grid Data Format layout, provenance
 * attributes, atomic rename and the XDMF sidecar.
 * Invariant: metadata calls (create, attributes) are made by every rank with identical
 * arguments; raw data goes through collective transfers where ranks without data select
 * nothing; only rank 0 touches the file system by name (exists, rename, unlink, .xmf). */
#include "helmix/io.h"

#include <hdf5.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "check.h"
#include "helmix/schema.h"
#include "io_tuning.h"
#include "helmix/version.h"

/* One named field of the file: its datasets (one per component) and units. */
typedef struct io_field {
    char name[32];
    int ncomp;
    int face; /* staggering: 0 cell centres, 1 low faces */
    char unit[64];
    hid_t dset[3];
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
    char path[HX_PATH_MAX];
    char partial[HX_PATH_MAX + 16];
};

hx_status hx_io_check_target(const char *path, int force, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int rank = 0, exists = 0;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    if (rank == 0) {
        struct stat sb;
        exists = stat(path, &sb) == 0;
    }
    HX_MPI(MPI_Bcast(&exists, 1, MPI_INT, 0, comm));
    if (exists && !force) HX_FAIL(HX_ERR_EXISTS, "output %s exists: choose another name or pass --force to replace it", path);
    return HX_OK;
fail:
    return st;
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
    HX_H5OK(H5Dwrite(dset, mtype, space, space, H5P_DEFAULT, buf));
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
    return st;
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
    return st;
}

hx_status hx_io_create(hx_io **out, const char *path, const hx_grid *g, hx_precision prec, const hx_io_tuning *tuning,
                       MPI_Comm comm)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    hx_io *w = NULL;
    HX_ALLOC(w, 1);
    w->file = -1;
    w->comm = comm;
    w->g = *g;
    w->prec = prec;
    HX_MPI(MPI_Comm_rank(comm, &w->rank));
    if (strlen(path) >= sizeof w->path) HX_FAIL(HX_ERR_ARG, "output path is longer than %d characters", HX_PATH_MAX - 1);
    snprintf(w->path, sizeof w->path, "%s", path);
    snprintf(w->partial, sizeof w->partial, "%s.partial", path);
    /* Align what is worth aligning: every field dataset (one component, N^3 values, is the
     * smallest of them) and nothing smaller, so headers, attributes and tables stay packed
     * instead of each taking a whole alignment unit. */
    hsize_t component = (hsize_t)g->n[0] * (hsize_t)g->n[1] * (hsize_t)g->n[2] * (prec == HX_PREC_DOUBLE ? 8u : 4u);
    HX_TRY(io_tuning_init(&w->tune, tuning, component));
    HX_H5(fapl, io_tuning_fapl(&w->tune, comm));
    w->file = H5Fcreate(w->partial, H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
    if (w->file < 0) HX_FAIL(HX_ERR_ARG, "cannot create %s (does the directory exist and is it writable?)", w->partial);
    w->created = 1;
    HX_TRY(write_gdf_skeleton(w));
    H5Pclose(fapl);
    *out = w;
    return HX_OK;
fail:
    if (fapl >= 0) H5Pclose(fapl);
    hx_io_close(&w, 0);
    return st;
}

/* One collective MPI-IO transfer of a selection; counts whether HDF5 really did it
 * collectively (it falls back to independent I/O on its own, e.g. when it converts types). */
static hx_status transfer(hx_io *w, hid_t dset, const char *comp, hid_t mtype, hid_t mspace, hid_t fspace, const void *buf)
{
    hx_status st = HX_OK;
    hid_t dxpl = -1;
    H5D_mpio_actual_io_mode_t mode = H5D_MPIO_NO_COLLECTIVE;
    HX_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    HX_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));
    if (H5Dwrite(dset, mtype, mspace, fspace, dxpl, buf) < 0)
        HX_FAIL(HX_ERR_HDF5, "collective write of %s to %s failed (disk full or quota?)", comp, w->partial);
    HX_H5OK(H5Pget_mpio_actual_io_mode(dxpl, &mode));
    w->transfers[mode == H5D_MPIO_NO_COLLECTIVE ? 1 : 0]++;
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

static hx_status write_rounded(hx_io *w, hid_t dset, const char *comp, const double *slab)
{
    hx_status st = HX_OK;
    hid_t fspace = -1, mspace = -1;
    float *buf = NULL;
    const hx_grid *g = &w->g;
    const hsize_t nx = (hsize_t)g->n[0], rows = (hsize_t)g->nz * (hsize_t)g->n[1];
    hsize_t per = CONVERT_BYTES / (nx * sizeof(float));
    if (per < 1) per = 1;
    long long runs = (long long)((rows + per - 1) / per), most = 0;
    buf = malloc((size_t)(per * nx) * sizeof *buf);
    HX_TRY(hx_error_agree(w->comm, buf ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for %zu MiB of rounding buffer",
                                                                 CONVERT_BYTES >> 20)));
    HX_MPI(MPI_Allreduce(&runs, &most, 1, MPI_LONG_LONG, MPI_MAX, w->comm));
    HX_H5(fspace, H5Dget_space(dset));
    for (long long i = 0; i < most; i++) {
        hsize_t a = (hsize_t)i * per < rows ? (hsize_t)i * per : rows, b = a + per < rows ? a + per : rows, n = (b - a) * nx;
        for (hsize_t j = 0; j < n; j++) buf[j] = (float)slab[a * nx + j];
        HX_TRY(select_rows(fspace, g, a, b));
        hsize_t mdim = n > 0 ? n : 1;
        HX_H5(mspace, H5Screate_simple(1, &mdim, NULL));
        if (n == 0) HX_H5OK(H5Sselect_none(mspace));
        HX_TRY(transfer(w, dset, comp, H5T_NATIVE_FLOAT, mspace, fspace, buf));
        H5Sclose(mspace);
        mspace = -1;
    }
fail:
    free(buf);
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    return st;
}

static hx_status write_slab(hx_io *w, int id, int c, const void *slab, hid_t mtype)
{
    hx_status st = HX_OK;
    hid_t fspace = -1, mspace = -1;
    const hx_grid *g = &w->g;
    hsize_t start[3] = {(hsize_t)g->z0, 0, 0}, count[3] = {(hsize_t)g->nz, (hsize_t)g->n[1], (hsize_t)g->n[0]};
    hsize_t one = 1;
    if (id < 0 || id >= w->nfield || c < 0 || c >= w->field[id].ncomp)
        HX_FAIL(HX_ERR_ARG, "no field %d component %d in %s", id, c, w->partial);
    hid_t dset = w->field[id].dset[c];
    char comp[64];
    hx_schema_component(comp, sizeof comp, w->field[id].name, w->field[id].ncomp, c);
    if (mtype == H5T_NATIVE_DOUBLE && w->prec != HX_PREC_DOUBLE) return write_rounded(w, dset, comp, slab);
    HX_H5(fspace, H5Dget_space(dset));
    if (g->nz > 0) {
        HX_H5OK(H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL));
        HX_H5(mspace, H5Screate_simple(3, count, NULL));
    } else {
        HX_H5OK(H5Sselect_none(fspace));
        HX_H5(mspace, H5Screate_simple(1, &one, NULL));
        HX_H5OK(H5Sselect_none(mspace));
    }
    HX_TRY(transfer(w, dset, comp, mtype, mspace, fspace, slab));
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

const char *hx_io_partial(const hx_io *w) { return w->partial; }

hx_status hx_io_pause(hx_io *w)
{
    hx_status st = HX_OK;
    for (int i = 0; i < w->nfield; i++)
        for (int c = 0; c < 3; c++) {
            if (w->field[i].dset[c] >= 0 && H5Dclose(w->field[i].dset[c]) < 0 && st == HX_OK)
                st = hx_error_set(HX_ERR_HDF5, "closing the datasets of %s failed", w->field[i].name);
            w->field[i].dset[c] = -1;
        }
    if (w->file >= 0 && H5Fclose(w->file) < 0 && st == HX_OK)
        st = hx_error_set(HX_ERR_HDF5, "closing %s failed (disk full?)", w->partial);
    w->file = -1;
    return hx_error_agree(w->comm, st);
}

hx_status hx_io_resume(hx_io *w)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    HX_H5(fapl, io_tuning_fapl(&w->tune, w->comm));
    w->file = H5Fopen(w->partial, H5F_ACC_RDWR, fapl);
    if (w->file < 0) HX_FAIL(HX_ERR_HDF5, "cannot reopen %s", w->partial);
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
    return st;
}

static hx_status numeric_attr(hx_io *w, const char *group, const char *name, hid_t ft, hid_t mt, const void *v, int n)
{
    hx_status st = HX_OK;
    hid_t grp = -1;
    HX_H5(grp, group_open(w, group));
    st = attr_write(grp, name, ft, mt, v, n);
fail:
    if (grp >= 0) H5Gclose(grp);
    return st;
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
    return st;
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
static hx_status write_xdmf(const hx_io *w)
{
    char xmf[HX_PATH_MAX + 8];
    snprintf(xmf, sizeof xmf, "%s.xmf", w->path);
    const char *base = strrchr(w->path, '/');
    base = base ? base + 1 : w->path;
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

hx_status hx_io_close(hx_io **wp, int commit)
{
    hx_status st = HX_OK;
    if (!wp || !*wp) return HX_OK;
    hx_io *w = *wp;
    for (int i = 0; i < w->nfield; i++)
        for (int c = 0; c < 3; c++)
            if (w->field[i].dset[c] >= 0 && H5Dclose(w->field[i].dset[c]) < 0 && st == HX_OK)
                st = hx_error_set(HX_ERR_HDF5, "closing the datasets of %s failed", w->field[i].name);
    if (w->file >= 0 && H5Fclose(w->file) < 0 && st == HX_OK)
        st = hx_error_set(HX_ERR_HDF5, "closing %s failed (data may be incomplete)", w->partial);
    if (w->created) {
        /* Everyone has closed before rank 0 renames; the verdict is shared. */
        hx_status agreed = hx_error_agree(w->comm, st);
        if (w->rank == 0) {
            if (commit && agreed == HX_OK) {
                if (rename(w->partial, w->path) != 0)
                    st = hx_error_set(HX_ERR_IO, "cannot rename %s to %s", w->partial, w->path);
                else st = write_xdmf(w);
            } else
                unlink(w->partial);
        }
        hx_status final = hx_error_agree(w->comm, st);
        if (st == HX_OK) st = final;
    }
    io_tuning_free(&w->tune);
    free(w);
    *wp = NULL;
    return st;
}
