/* suite_layout.c — one made field in the layouts other codes use: z fastest or one 4-D dataset
 * (plain parallel HDF5), and single precision (io.c). Invariants: identical metadata calls on every
 * rank, collective raw transfers (a rank without planes selects nothing), PATH.partial renamed by
 * rank 0 only after every rank has closed it and agreed. */
#include <hdf5.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "helmix/io.h"
#include "helmix/schema.h"
#include "helmix/version.h"
#include "suite_impl.h"

/* A plain HDF5 file being written collectively. */
typedef struct h5out {
    MPI_Comm comm;
    int rank;
    int active; /* create was attempted: close must rename or remove PATH.partial */
    hid_t file;
    char path[HX_PATH_MAX], partial[HX_PATH_MAX + 16];
} h5out;

static hx_status h5out_create(h5out *o, const char *path, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    o->comm = comm;
    o->file = -1;
    o->active = 1;
    HX_MPI(MPI_Comm_rank(comm, &o->rank));
    if (strlen(path) >= sizeof o->path) HX_FAIL(HX_ERR_ARG, "output path %s is too long", path);
    snprintf(o->path, sizeof o->path, "%s", path);
    snprintf(o->partial, sizeof o->partial, "%s.partial", path);
    HX_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    HX_H5OK(H5Pset_fapl_mpio(fapl, comm, MPI_INFO_NULL));
    o->file = H5Fcreate(o->partial, H5F_ACC_TRUNC, H5P_DEFAULT, fapl);
    if (o->file < 0) HX_FAIL(HX_ERR_IO, "cannot create %s (is the directory writable?)", o->partial);
fail:
    if (fapl >= 0) H5Pclose(fapl);
    return hx_error_agree(comm, st);
}

/* Collective: close; with commit and no failure anywhere rank 0 renames, else removes. Does
 * nothing for a file never created. */
static hx_status h5out_close(h5out *o, int commit)
{
    hx_status st = HX_OK;
    if (!o->active) return HX_OK;
    o->active = 0;
    if (o->file >= 0 && H5Fclose(o->file) < 0) st = hx_error_set(HX_ERR_HDF5, "closing %s failed (disk full?)", o->partial);
    o->file = -1;
    hx_status agreed = hx_error_agree(o->comm, st);
    if (o->rank == 0) {
        if (commit && agreed == HX_OK) {
            if (rename(o->partial, o->path) != 0) st = hx_error_set(HX_ERR_IO, "cannot rename %s to %s", o->partial, o->path);
        } else
            unlink(o->partial);
    }
    hx_status final = hx_error_agree(o->comm, st);
    return agreed != HX_OK ? agreed : final;
}

static hx_status h5out_dataset(h5out *o, const char *name, int rank, const hsize_t *dims, hid_t *dset)
{
    hx_status st = HX_OK;
    hid_t space = -1;
    HX_H5(space, H5Screate_simple(rank, dims, NULL));
    HX_H5(*dset, H5Dcreate2(o->file, name, H5T_IEEE_F64LE, space, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT));
fail:
    if (space >= 0) H5Sclose(space);
    return hx_error_agree(o->comm, st);
}

/* Collective: write buf (count values in C order) at start of dset; empty ranks select nothing. */
static hx_status h5out_write(h5out *o, hid_t dset, int rank, const hsize_t *start, const hsize_t *count, int empty,
                             const double *buf)
{
    hx_status st = HX_OK;
    hid_t fspace = -1, mspace = -1, dxpl = -1;
    hsize_t one = 1;
    HX_H5(fspace, H5Dget_space(dset));
    if (empty) {
        HX_H5OK(H5Sselect_none(fspace));
        HX_H5(mspace, H5Screate_simple(1, &one, NULL));
        HX_H5OK(H5Sselect_none(mspace));
    } else {
        HX_H5OK(H5Sselect_hyperslab(fspace, H5S_SELECT_SET, start, NULL, count, NULL));
        HX_H5(mspace, H5Screate_simple(rank, count, NULL));
    }
    HX_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    HX_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));
    if (H5Dwrite(dset, H5T_NATIVE_DOUBLE, mspace, fspace, dxpl, buf) < 0)
        HX_FAIL(HX_ERR_HDF5, "collective write to %s failed (disk full or quota?)", o->partial);
fail:
    if (dxpl >= 0) H5Pclose(dxpl);
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    return hx_error_agree(o->comm, st);
}

/* Root attributes a reader needs: the box (x, y, z), the axis order and the component axis. */
static hx_status h5out_describe(h5out *o, const double box[3], const char *order, const char *axis)
{
    hx_status st = HX_OK;
    hid_t space = -1, attr = -1, str = -1;
    hsize_t three = 3;
    HX_H5(space, H5Screate_simple(1, &three, NULL));
    HX_H5(attr, H5Acreate2(o->file, "box", H5T_IEEE_F64LE, space, H5P_DEFAULT, H5P_DEFAULT));
    HX_H5OK(H5Awrite(attr, H5T_NATIVE_DOUBLE, box));
    H5Aclose(attr);
    attr = -1;
    H5Sclose(space);
    space = -1;
    HX_H5(str, H5Tcopy(H5T_C_S1));
    HX_H5OK(H5Tset_size(str, H5T_VARIABLE));
    HX_H5OK(H5Tset_cset(str, H5T_CSET_UTF8));
    const char *names[3] = {"order", "component_axis", "written_by"}, *values[3] = {order, axis, "helmix " HX_VERSION " suite"};
    for (int i = 0; i < 3; i++) {
        HX_H5(space, H5Screate(H5S_SCALAR));
        HX_H5(attr, H5Acreate2(o->file, names[i], str, space, H5P_DEFAULT, H5P_DEFAULT));
        HX_H5OK(H5Awrite(attr, str, &values[i]));
        H5Aclose(attr);
        attr = -1;
        H5Sclose(space);
        space = -1;
    }
fail:
    if (str >= 0) H5Tclose(str);
    if (attr >= 0) H5Aclose(attr);
    if (space >= 0) H5Sclose(space);
    return hx_error_agree(o->comm, st);
}

/* Single precision in the helmix layout: io.c converts the doubles on the way out. */
static hx_status write_single(const char *src, const char *path, MPI_Comm comm)
{
    hx_status st = HX_OK;
    static const char *const fields[3] = {HX_FIELD_VELOCITY, HX_FIELD_SOLENOIDAL, HX_FIELD_COMPRESSIVE};
    hx_cube *cube[3] = {NULL, NULL, NULL};
    hx_io *io = NULL;
    hx_grid g;
    double *v = NULL;
    int64_t cells[3];
    double box[3];
    int id[3];
    for (int f = 0; f < 3; f++) HX_TRY(hx_suite_open_field(src, fields[f], &cube[f], comm));
    hx_cube_shape(cube[0], cells, box);
    HX_TRY(hx_error_agree(comm, hx_grid_init(&g, cells, box, comm)));
    int64_t n = (int64_t)g.nz * g.n[1] * g.n[0];
    HX_TRY(hx_error_agree(comm, (v = malloc((size_t)(n ? n : 1) * sizeof *v)) ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for a slab")));
    HX_TRY(hx_error_agree(comm, hx_io_create(&io, path, &g, HX_PREC_SINGLE, NULL, comm)));
    for (int f = 0; f < 3; f++) HX_TRY(hx_error_agree(comm, hx_io_add_field(io, fields[f], 3, "code_length/code_time", 0, &id[f])));
    HX_TRY(hx_error_agree(comm, hx_io_attr_string(io, "/suite", "content", "the field of layout_zyx rounded to single precision")));
    for (int f = 0; f < 3; f++)
        for (int c = 0; c < 3; c++) {
            HX_TRY(hx_error_agree(comm, hx_cube_read(cube[f], c, &g, v, g.n[0])));
            HX_TRY(hx_error_agree(comm, hx_io_write_doubles(io, id[f], c, v)));
        }
    st = hx_io_close(&io, 1);
fail:
    if (io) hx_io_close(&io, 0);
    for (int f = 0; f < 3; f++) hx_cube_close(&cube[f]);
    free(v);
    return st;
}

hx_status hx_suite_relayout(const char *src, const char *path, hx_suite_layout how, MPI_Comm comm)
{
    if (how == HX_SUITE_SINGLE) return write_single(src, path, comm);
    hx_status st = HX_OK;
    static const char *const fields[3] = {HX_FIELD_VELOCITY, HX_FIELD_SOLENOIDAL, HX_FIELD_COMPRESSIVE};
    static const char *const xyz_names[3] = {SUITE_XYZ_VELOCITY, SUITE_XYZ_SOLENOIDAL, SUITE_XYZ_COMPRESSIVE};
    const int nfield = how == HX_SUITE_XYZ ? 3 : 1; /* a 4-D layout holds the velocity alone */
    hx_cube *cube[3] = {NULL, NULL, NULL};
    hid_t dset[3][3];
    h5out o;
    hx_grid g;
    double *v = NULL, *t = NULL;
    int64_t cells[3];
    double box[3];
    memset(&o, 0, sizeof o);
    o.file = -1;
    for (int f = 0; f < 3; f++)
        for (int c = 0; c < 3; c++) dset[f][c] = -1;
    for (int f = 0; f < nfield; f++) HX_TRY(hx_suite_open_field(src, fields[f], &cube[f], comm));
    hx_cube_shape(cube[0], cells, box);
    HX_TRY(hx_error_agree(comm, hx_grid_init(&g, cells, box, comm)));
    const hsize_t nx = (hsize_t)g.n[0], ny = (hsize_t)g.n[1], nz = (hsize_t)g.n[2], lz = (hsize_t)g.nz;
    int64_t n = (int64_t)g.nz * g.n[1] * g.n[0];
    const int64_t nt = how == HX_SUITE_4D_LAST ? 3 * n : n; /* components interleaved: one contiguous write */
    v = malloc((size_t)(n ? n : 1) * sizeof *v);
    t = malloc((size_t)(nt ? nt : 1) * sizeof *t);
    HX_TRY(hx_error_agree(comm, v && t ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for the slabs")));
    HX_TRY(h5out_create(&o, path, comm));
    HX_TRY(h5out_describe(&o, box, how == HX_SUITE_XYZ ? "xyz" : "zyx",
                          how == HX_SUITE_XYZ ? "none" : how == HX_SUITE_4D_FIRST ? "first" : "last"));
    if (how == HX_SUITE_XYZ) {
        const hsize_t dims[3] = {nx, ny, nz};
        for (int f = 0; f < nfield; f++)
            for (int c = 0; c < 3; c++) {
                char name[64];
                snprintf(name, sizeof name, "%s_%c", xyz_names[f], "xyz"[c]);
                HX_TRY(h5out_dataset(&o, name, 3, dims, &dset[f][c]));
            }
    } else {
        const hsize_t first[4] = {3, nz, ny, nx}, last[4] = {nz, ny, nx, 3};
        HX_TRY(h5out_dataset(&o, SUITE_4D_VELOCITY, 4, how == HX_SUITE_4D_FIRST ? first : last, &dset[0][0]));
    }
    for (int f = 0; f < nfield; f++)
        for (int c = 0; c < 3; c++) {
            HX_TRY(hx_error_agree(comm, hx_cube_read(cube[f], c, &g, v, g.n[0])));
            if (how == HX_SUITE_XYZ) { /* this rank's planes z0..z0+nz-1 are the last index of (Nx, Ny, Nz) */
                for (hsize_t z = 0; z < lz; z++)
                    for (hsize_t y = 0; y < ny; y++)
                        for (hsize_t x = 0; x < nx; x++) t[(x * ny + y) * lz + z] = v[(z * ny + y) * nx + x];
                const hsize_t start[3] = {0, 0, (hsize_t)g.z0}, count[3] = {nx, ny, lz};
                HX_TRY(h5out_write(&o, dset[f][c], 3, start, count, lz == 0, t));
            } else if (how == HX_SUITE_4D_FIRST) {
                const hsize_t start[4] = {(hsize_t)c, (hsize_t)g.z0, 0, 0}, count[4] = {1, lz, ny, nx};
                HX_TRY(h5out_write(&o, dset[0][0], 4, start, count, lz == 0, v));
            } else {
                for (int64_t i = 0; i < n; i++) t[3 * i + c] = v[i];
                if (c < 2) continue;
                const hsize_t start[4] = {(hsize_t)g.z0, 0, 0, 0}, count[4] = {lz, ny, nx, 3};
                HX_TRY(h5out_write(&o, dset[0][0], 4, start, count, lz == 0, t));
            }
        }
    for (int f = 0; f < 3; f++)
        for (int c = 0; c < 3; c++)
            if (dset[f][c] >= 0 && H5Dclose(dset[f][c]) < 0 && st == HX_OK) st = hx_error_set(HX_ERR_HDF5, "closing a dataset of %s failed", o.partial);
    for (int f = 0; f < 3; f++)
        for (int c = 0; c < 3; c++) dset[f][c] = -1;
    HX_TRY(hx_error_agree(comm, st));
    st = h5out_close(&o, 1);
fail:
    for (int f = 0; f < 3; f++)
        for (int c = 0; c < 3; c++)
            if (dset[f][c] >= 0) H5Dclose(dset[f][c]);
    h5out_close(&o, 0); /* after a failure: removes the partial file */
    for (int f = 0; f < 3; f++) hx_cube_close(&cube[f]);
    free(v);
    free(t);
    return st;
}
