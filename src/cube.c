/* cube.c — collective reading of velocity cubes (helmix files and foreign HDF5 layouts), with
 * an optional density and magnetic field, into the z slabs of an in-place r2c transform, and
 * of the request and the physical state a helmix file records.
 * Invariant: every rank opens, selects and reads with identical metadata calls; a rank that
 * owns no planes selects nothing but still takes part in each collective read. */
#include "helmix/cube.h"

#include <hdf5.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "check.h"
#include "helmix/io.h"
#include "helmix/schema.h"

#define NAME_LEN 512

/* The vector fields: velocity, magnetic, magnetic_face, by their first slot. */
enum { NVEC = 3 };
static const int VEC_SLOT[NVEC] = {HX_SLOT_VELOCITY, HX_SLOT_MAGNETIC, HX_SLOT_MAGNETIC_FACE};

struct hx_cube {
    MPI_Comm comm;
    int dirfd;              /* the directory of a long path, open while the file is (else -1) */
    char path[HX_PATH_MAX];
    hid_t file;
    hid_t dset[HX_SLOT_COUNT];  /* by slot; a 4-D vector set sits in its first slot only */
    char name[HX_SLOT_COUNT][NAME_LEN];
    int four_d[NVEC], comp_first[NVEC]; /* 4-D layout: component axis first (1) or last (0) */
    int single_vec[NVEC];
    hx_order order;
    int64_t n[3];           /* Nx, Ny, Nz */
    double box[3];
    int single;             /* the velocity */
    double bytes_read;      /* bytes this rank has read from the datasets (file element sizes) */
};

/* The vector field of a slot (0..NVEC-1), or -1 for the density. */
static int vec_of(int slot)
{
    for (int v = NVEC - 1; v >= 0; v--)
        if (slot >= VEC_SLOT[v] && slot < VEC_SLOT[v] + 3) return v;
    return -1;
}


/* Open dataset `name`; on failure say which file lacks which dataset. */
static hx_status open_set(hx_cube *cu, int slot, const char *name, const char *hint)
{
    snprintf(cu->name[slot], NAME_LEN, "%s", name);
    if (H5Lexists(cu->file, name, H5P_DEFAULT) <= 0 || (cu->dset[slot] = H5Dopen2(cu->file, name, H5P_DEFAULT)) < 0) {
        cu->dset[slot] = -1;
        return hx_error_set(HX_ERR_ARG, "%s has no dataset %s%s", cu->path, name, hint);
    }
    return HX_OK;
}

/* Rank and dims of a dataset, and whether it holds floating-point values of 4 bytes. */
static hx_status set_shape(const hx_cube *cu, int slot, int *rank, hsize_t dims[4], int *single)
{
    hx_status st = HX_OK;
    hid_t space = -1, type = -1;
    HX_H5(space, H5Dget_space(cu->dset[slot]));
    *rank = H5Sget_simple_extent_ndims(space);
    if (*rank < 1 || *rank > 4) HX_FAIL(HX_ERR_ARG, "%s in %s has %d dimensions: need 3 (or 4 with a component axis)",
                                        cu->name[slot], cu->path, *rank);
    H5Sget_simple_extent_dims(space, dims, NULL);
    HX_H5(type, H5Dget_type(cu->dset[slot]));
    if (H5Tget_class(type) != H5T_FLOAT && H5Tget_class(type) != H5T_INTEGER)
        HX_FAIL(HX_ERR_ARG, "%s in %s does not hold numbers", cu->name[slot], cu->path);
    *single = H5Tget_class(type) == H5T_FLOAT && H5Tget_size(type) <= 4;
fail:
    if (type >= 0) H5Tclose(type);
    if (space >= 0) H5Sclose(space);
    return st;
}

static void dims_text(char *buf, size_t len, int rank, const hsize_t *d)
{
    int k = snprintf(buf, len, "(");
    for (int i = 0; i < rank && k < (int)len; i++)
        k += snprintf(buf + k, len - (size_t)k, "%s%llu", i ? ", " : "", (unsigned long long)d[i]);
    if (k < (int)len) snprintf(buf + k, len - (size_t)k, ")");
}

/* Spatial dims in file order (3 values) of slot, checking the layout. */
static hx_status spatial_dims(hx_cube *cu, int slot, int want4, hsize_t sp[3])
{
    int rank = 0, single = 0, v = vec_of(slot);
    hsize_t d[4] = {0, 0, 0, 0};
    char txt[96];
    hx_status st = set_shape(cu, slot, &rank, d, &single);
    if (st != HX_OK) return st;
    if (v >= 0) cu->single_vec[v] |= single;
    cu->single |= single && slot < 3;
    dims_text(txt, sizeof txt, rank, d);
    if (want4) {
        if (rank != 4 || (d[0] != 3 && d[3] != 3))
            return hx_error_set(HX_ERR_ARG, "%s in %s has shape %s: a single vector dataset must be 4-D with one axis of length 3 (first or last)",
                                cu->name[slot], cu->path, txt);
        cu->comp_first[v] = d[0] == 3;
        memcpy(sp, cu->comp_first[v] ? d + 1 : d, 3 * sizeof *sp);
        return HX_OK;
    }
    if (rank != 3) return hx_error_set(HX_ERR_ARG, "%s in %s has shape %s: need a 3-D dataset", cu->name[slot], cu->path, txt);
    memcpy(sp, d, 3 * sizeof *sp);
    return HX_OK;
}

/* Open vector field v from `text` ("PX,PY,PZ" or one 4-D "P", given by `option`), or from the
 * helmix layout's `field` when text is NULL, and check that its components agree in shape;
 * sp receives the spatial dims in file order. */
static hx_status open_vector(hx_cube *cu, int v, const char *text, const char *field, const char *option,
                             const char *hint, hsize_t sp[3])
{
    hx_status st = HX_OK;
    const int s0 = VEC_SLOT[v];
    hsize_t other[3];
    if (!text) {
        for (int c = 0; c < 3; c++) {
            char name[NAME_LEN];
            hx_schema_dataset(name, sizeof name, field, 3, c);
            HX_TRY(open_set(cu, s0 + c, name, hint));
        }
    } else if (strchr(text, ',')) {
        char buf[3 * NAME_LEN], *save = NULL, *tok;
        snprintf(buf, sizeof buf, "%s", text);
        int c = 0;
        for (tok = strtok_r(buf, ",", &save); tok && c < 3; tok = strtok_r(NULL, ",", &save)) HX_TRY(open_set(cu, s0 + c++, tok, ""));
        if (c != 3 || tok) HX_FAIL(HX_ERR_ARG, "%s %s: give three dataset paths PX,PY,PZ or one 4-D dataset", option, text);
    } else {
        cu->four_d[v] = 1;
        HX_TRY(open_set(cu, s0, text, ""));
        cu->dset[s0 + 1] = cu->dset[s0 + 2] = -1;
        snprintf(cu->name[s0 + 1], NAME_LEN, "%s", text);
        snprintf(cu->name[s0 + 2], NAME_LEN, "%s", text);
    }
    int nsets = cu->four_d[v] ? 1 : 3;
    HX_TRY(spatial_dims(cu, s0, cu->four_d[v], sp));
    for (int c = 1; c < nsets; c++) {
        HX_TRY(spatial_dims(cu, s0 + c, 0, other));
        if (memcmp(other, sp, sizeof other))
            HX_FAIL(HX_ERR_ARG, "%s and %s in %s differ in shape", cu->name[s0], cu->name[s0 + c], cu->path);
    }
fail:
    return st;
}

/* The magnetic fields: --magnetic / --magnetic-face, else the helmix layout's own when asked
 * to look for them; each must have the velocity's shape (vel: its dims in file order). */
static hx_status find_magnetic(hx_cube *cu, const hx_cube_spec *spec, const hsize_t vel[3])
{
    hx_status st = HX_OK;
    const char *field[2] = {HX_FIELD_MAGNETIC, HX_FIELD_MAGNETIC_FACE}, *text[2] = {spec->magnetic, spec->magnetic_face};
    const char *option[2] = {"--magnetic", "--magnetic-face"};
    int open[2] = {0, 0};
    for (int i = 0; i < 2; i++) {
        char first[NAME_LEN];
        hx_schema_dataset(first, sizeof first, field[i], 3, 0);
        int own = !text[i] && !spec->magnetic && spec->find_magnetic && !spec->vector &&
                  H5Lexists(cu->file, first, H5P_DEFAULT) > 0;
        if (i == 1 && !open[0]) { /* a face field is analysed beside its cell-centred one */
            if (text[i]) HX_FAIL(HX_ERR_ARG, "--magnetic-face %s: name the cell-centred field with --magnetic too", text[i]);
            own = 0;
        }
        if (!text[i] && !own) continue;
        hsize_t sp[3];
        HX_TRY(open_vector(cu, 1 + i, text[i], field[i], option[i], "", sp));
        if (memcmp(sp, vel, sizeof sp))
            HX_FAIL(HX_ERR_ARG, "%s %s and velocity %s in %s differ in shape", field[i], cu->name[VEC_SLOT[1 + i]],
                    cu->name[0], cu->path);
        open[i] = 1;
    }
fail:
    return st;
}

static hx_status find_sets(hx_cube *cu, const hx_cube_spec *spec)
{
    hx_status st = HX_OK;
    hsize_t sp[4][3];
    const char *hint = spec->vector ? "" : " (not a helmix cube? name the datasets with --vector PX,PY,PZ)";
    HX_TRY(open_vector(cu, 0, spec->vector, HX_FIELD_VELOCITY, "--vector", hint, sp[0]));
    char own[NAME_LEN]; /* the helmix layout's density, found without --density */
    hx_schema_dataset(own, sizeof own, HX_FIELD_DENSITY, 1, 0);
    /* a helmix file (one that records its state) is analysed in its own density */
    int helmix = !spec->vector && H5Lexists(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT) > 0 &&
                 H5Lexists(cu->file, HX_SCHEMA_STATE, H5P_DEFAULT) > 0;
    const char *density = spec->density;
    if (!density && helmix && H5Lexists(cu->file, own, H5P_DEFAULT) > 0) density = own;
    if (density) {
        HX_TRY(open_set(cu, HX_SLOT_DENSITY, density, ""));
        HX_TRY(spatial_dims(cu, HX_SLOT_DENSITY, 0, sp[3]));
        if (memcmp(sp[3], sp[0], sizeof sp[0]))
            HX_FAIL(HX_ERR_ARG, "density %s and velocity %s in %s differ in shape", cu->name[3], cu->name[0], cu->path);
    }
    HX_TRY(find_magnetic(cu, spec, sp[0]));
    for (int a = 0; a < 3; a++) cu->n[a] = (int64_t)(cu->order == HX_ORDER_ZYX ? sp[0][2 - a] : sp[0][a]);
fail:
    return st;
}

/* Box from the Grid Data Format domain edges, if the file has them; edges that are not finite
 * give a side that is not either, for hx_grid_check to refuse. */
static hx_status gdf_box(hx_cube *cu);

hx_status hx_cube_open(hx_cube **out, const hx_cube_spec *spec, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hid_t fapl = -1;
    hx_cube *cu = NULL;
    HX_ALLOC(cu, 1);
    cu->comm = comm;
    cu->file = -1;
    cu->dirfd = -1;
    for (int i = 0; i < HX_SLOT_COUNT; i++) cu->dset[i] = -1;
    cu->order = spec->order;
    snprintf(cu->path, sizeof cu->path, "%s", spec->file);
    for (int a = 0; a < 3; a++) cu->box[a] = 1.0;
    HX_H5(fapl, H5Pcreate(H5P_FILE_ACCESS));
    HX_H5OK(H5Pset_fapl_mpio(fapl, comm, MPI_INFO_NULL));
    /* a long path goes to MPI-IO through /proc/self/fd (Open MPI's I/O layer aborts on names of
     * about 240 characters); the directory stays open until the file is closed */
    char mname[HX_PATH_MAX];
    HX_TRY(hx_error_agree(comm, hx_io_mpi_name(spec->file, comm, mname, sizeof mname, &cu->dirfd)));
    cu->file = H5Fopen(mname, H5F_ACC_RDONLY, fapl);
    if (cu->file < 0) HX_FAIL(HX_ERR_ARG, "cannot open %s as HDF5 (missing, unreadable, truncated or not HDF5)", spec->file);
    HX_TRY(find_sets(cu, spec));
    if (spec->has_box) memcpy(cu->box, spec->box, sizeof cu->box);
    else HX_TRY(gdf_box(cu));
    H5Pclose(fapl);
    *out = cu;
    return HX_OK;
fail:
    if (fapl >= 0) H5Pclose(fapl);
    hx_cube_close(&cu);
    return st;
}

void hx_cube_shape(const hx_cube *cu, int64_t cells[3], double box[3])
{
    for (int a = 0; a < 3; a++) {
        if (cells) cells[a] = cu->n[a];
        if (box) box[a] = cu->box[a];
    }
}

int hx_cube_single(const hx_cube *cu) { return cu->single; }

double hx_cube_bytes_read(const hx_cube *cu) { return cu ? cu->bytes_read : 0.0; }

int hx_cube_has_density(const hx_cube *cu) { return cu->dset[HX_SLOT_DENSITY] >= 0; }

int hx_cube_has_field(const hx_cube *cu, int slot) { return slot >= 0 && slot < HX_SLOT_COUNT && cu->dset[slot] >= 0; }

int hx_cube_field_single(const hx_cube *cu, int slot)
{
    int v = vec_of(slot);
    return v >= 0 ? cu->single_vec[v] : cu->single;
}

/* File selection of planes [z0, z0 + nz) of slot c. */
static hx_status select_file(const hx_cube *cu, int c, hid_t space, const hx_grid *g, int64_t z0, int64_t nz)
{
    hx_status st = HX_OK;
    hsize_t start[4] = {0, 0, 0, 0}, count[4] = {1, 1, 1, 1};
    int v = vec_of(c), four = v >= 0 && cu->four_d[v], off = four && cu->comp_first[v] ? 1 : 0;
    hsize_t sp_start[3], sp_count[3];
    if (cu->order == HX_ORDER_ZYX) {
        sp_start[0] = (hsize_t)z0, sp_count[0] = (hsize_t)nz;
        sp_start[1] = 0, sp_count[1] = (hsize_t)g->n[1];
        sp_start[2] = 0, sp_count[2] = (hsize_t)g->n[0];
    } else {
        sp_start[0] = 0, sp_count[0] = (hsize_t)g->n[0];
        sp_start[1] = 0, sp_count[1] = (hsize_t)g->n[1];
        sp_start[2] = (hsize_t)z0, sp_count[2] = (hsize_t)nz;
    }
    for (int i = 0; i < 3; i++) start[i + off] = sp_start[i], count[i + off] = sp_count[i];
    if (four) start[cu->comp_first[v] ? 0 : 3] = (hsize_t)(c - VEC_SLOT[v]);
    if (nz == 0) HX_H5OK(H5Sselect_none(space));
    else HX_H5OK(H5Sselect_hyperslab(space, H5S_SELECT_SET, start, NULL, count, NULL));
fail:
    return st;
}

/* Collective: planes [z0, z0 + nz) of slot c into dst, rows of Nx values `stride` apart. */
static hx_status read_planes(hx_cube *cu, int c, const hx_grid *g, int64_t z0, int64_t nz, double *dst, int64_t stride)
{
    hx_status st = HX_OK;
    int v = vec_of(c);
    hid_t set = v >= 0 && cu->four_d[v] ? cu->dset[VEC_SLOT[v]] : cu->dset[c];
    hid_t fspace = -1, mspace = -1, dxpl = -1;
    double *tmp = NULL;
    int64_t nx = g->n[0], ny = g->n[1];
    if (set < 0) return hx_error_set(HX_ERR_ARG, "%s: no dataset open for slot %d", cu->path, c);
    HX_H5(fspace, H5Dget_space(set));
    HX_TRY(select_file(cu, c, fspace, g, z0, nz));
    HX_H5(dxpl, H5Pcreate(H5P_DATASET_XFER));
    HX_H5OK(H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE));
    void *buf = dst;
    if (nz == 0) {
        hsize_t one = 1;
        HX_H5(mspace, H5Screate_simple(1, &one, NULL));
        HX_H5OK(H5Sselect_none(mspace));
    } else if (cu->order == HX_ORDER_ZYX) {
        hsize_t md[3] = {(hsize_t)nz, (hsize_t)ny, (hsize_t)stride}, z[3] = {0, 0, 0}, cnt[3] = {(hsize_t)nz, (hsize_t)ny, (hsize_t)nx};
        HX_H5(mspace, H5Screate_simple(3, md, NULL));
        HX_H5OK(H5Sselect_hyperslab(mspace, H5S_SELECT_SET, z, NULL, cnt, NULL));
    } else {
        hsize_t md[3] = {(hsize_t)nx, (hsize_t)ny, (hsize_t)nz};
        HX_ALLOC(tmp, nx * ny * nz);
        HX_H5(mspace, H5Screate_simple(3, md, NULL));
        buf = tmp;
    }
    if (H5Dread(set, H5T_NATIVE_DOUBLE, mspace, fspace, dxpl, buf) < 0)
        HX_FAIL(HX_ERR_ARG, "reading %s from %s failed (truncated or damaged file?)", cu->name[c], cu->path);
    hid_t ftype = H5Dget_type(set); /* what the file holds, not the doubles it becomes */
    if (ftype >= 0) {
        cu->bytes_read += (double)nz * (double)ny * (double)nx * (double)H5Tget_size(ftype);
        H5Tclose(ftype);
    }
    if (tmp) /* xyz order: z fastest in the file, x fastest in the slab */
        for (int64_t x = 0; x < nx; x++)
            for (int64_t y = 0; y < ny; y++)
                for (int64_t z = 0; z < nz; z++) dst[(z * ny + y) * stride + x] = tmp[(x * ny + y) * nz + z];
fail:
    free(tmp);
    if (dxpl >= 0) H5Pclose(dxpl);
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    return st;
}

hx_status hx_cube_read(hx_cube *cu, int c, const hx_grid *g, double *dst, int64_t stride)
{
    return read_planes(cu, c, g, g->z0, g->nz, dst, stride);
}

hx_status hx_cube_read_plane(hx_cube *cu, int c, const hx_grid *g, int64_t z, double *dst)
{
    return read_planes(cu, c, g, z, g->nz > 0 ? 1 : 0, dst, g->n[0]);
}

hx_status hx_cube_check_finite(const hx_cube *cu, int c, const hx_grid *g, const double *dst, int64_t stride)
{
    hx_status st = HX_OK;
    const int64_t nx = g->n[0], ny = g->n[1], nz = g->n[2];
    double bad[2] = {0, 0}; /* NaN, infinite: counts in double are exact below 2^53 */
    int64_t first = INT64_MAX; /* the smallest linear index in the dataset's storage order */
    for (int64_t z = 0; z < g->nz; z++)
        for (int64_t y = 0; y < ny; y++) {
            const double *row = dst + (z * ny + y) * stride;
            for (int64_t x = 0; x < nx; x++) {
                if (isfinite(row[x])) continue;
                const int64_t k = g->z0 + z, at = cu->order == HX_ORDER_ZYX ? (k * ny + y) * nx + x : (x * ny + y) * nz + k;
                bad[isnan(row[x]) ? 0 : 1] += 1;
                if (at < first) first = at;
            }
        }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, bad, 2, MPI_DOUBLE, MPI_SUM, cu->comm));
    if (bad[0] + bad[1] == 0) return HX_OK; /* the same exact sum on every rank */
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &first, 1, MPI_INT64_T, MPI_MIN, cu->comm));
    int64_t i, j, k;
    char index[96];
    if (cu->order == HX_ORDER_ZYX) {
        i = first % nx, j = first / nx % ny, k = first / (nx * ny);
        snprintf(index, sizeof index, "[%lld][%lld][%lld]", (long long)k, (long long)j, (long long)i);
    } else {
        k = first % nz, j = first / nz % ny, i = first / (nz * ny);
        snprintf(index, sizeof index, "[%lld][%lld][%lld]", (long long)i, (long long)j, (long long)k);
    }
    int v = vec_of(c), comp = c - (v >= 0 ? VEC_SLOT[v] : c);
    char where[160];
    if (v >= 0 && cu->four_d[v]) /* one 4-D dataset: the component axis first or last */
        snprintf(where, sizeof where, "%s (component %d)", cu->name[c], comp);
    else snprintf(where, sizeof where, "%s", cu->name[c]);
    if (v >= 0 && cu->four_d[v]) {
        char inner[96];
        snprintf(inner, sizeof inner, "%s", index);
        if (cu->comp_first[v]) snprintf(index, sizeof index, "[%d]%s", comp, inner);
        else snprintf(index, sizeof index, "%s[%d]", inner, comp);
    }
    st = hx_error_set(HX_ERR_ARG,
                      "%s in %s holds %.0f non-finite value%s (%.0f NaN, %.0f infinite); the first at cell (i, j, k) = "
                      "(%lld, %lld, %lld), dataset index %s: inspect analyses finite data only",
                      where, cu->path, bad[0] + bad[1], bad[0] + bad[1] > 1 ? "s" : "", bad[0], bad[1], (long long)i,
                      (long long)j, (long long)k, index);
fail:
    return st;
}

/* A string attribute, variable or fixed length, into buf. */
static int read_string(hid_t obj, const char *name, char *buf, size_t len)
{
    buf[0] = '\0';
    if (H5Aexists(obj, name) <= 0) return 0;
    hid_t a = H5Aopen(obj, name, H5P_DEFAULT), ft = a >= 0 ? H5Aget_type(a) : -1, mt = -1;
    int ok = 0;
    if (ft >= 0 && H5Tget_class(ft) == H5T_STRING) {
        mt = H5Tcopy(H5T_C_S1);
        H5Tset_cset(mt, H5Tget_cset(ft)); /* HDF5 does not convert between ASCII and UTF-8 */
        if (H5Tis_variable_str(ft) > 0) {
            char *s = NULL;
            H5Tset_size(mt, H5T_VARIABLE);
            if (H5Aread(a, mt, &s) >= 0 && s) {
                snprintf(buf, len, "%s", s);
                H5free_memory(s);
                ok = 1;
            }
        } else {
            size_t n = H5Tget_size(ft);
            char *s = calloc(n + 1, 1);
            H5Tset_size(mt, n + 1);
            if (s && H5Aread(a, mt, s) >= 0) {
                snprintf(buf, len, "%s", s);
                ok = 1;
            }
            free(s);
        }
    }
    if (mt >= 0) H5Tclose(mt);
    if (ft >= 0) H5Tclose(ft);
    if (a >= 0) H5Aclose(a);
    return ok;
}

/* ---- attributes, read strictly ----
 * The /helmix and /helmix/state attributes of a helmix file are the request --check judges
 * against. One that is present with the wrong type or count, or that is not a number where a
 * number is required, is an error naming it, never a line quietly left out of the verdict. */

typedef struct {
    const hx_cube *cu;
    const char *group;
    hx_status st; /* the first problem found; its message is the error line */
} attr_ctx;

static void attr_bad(attr_ctx *A, const char *name, const char *what, const char *need)
{
    if (A->st != HX_OK) return;
    A->st = hx_error_set(HX_ERR_ARG, "%s: attribute %s %s %s: need %s (a damaged file, or not one helmix wrote)",
                         A->cu->path, A->group, name, what, need);
}

/* Whether attribute `name` exists, with its type class and number of values. */
static int attr_info(hid_t obj, const char *name, H5T_class_t *cls, hssize_t *n)
{
    if (H5Aexists(obj, name) <= 0) return 0;
    hid_t a = H5Aopen(obj, name, H5P_DEFAULT), sp = a >= 0 ? H5Aget_space(a) : -1, t = a >= 0 ? H5Aget_type(a) : -1;
    *cls = t >= 0 ? H5Tget_class(t) : H5T_NO_CLASS;
    *n = sp >= 0 ? H5Sget_simple_extent_npoints(sp) : -1;
    if (t >= 0) H5Tclose(t);
    if (sp >= 0) H5Sclose(sp);
    if (a >= 0) H5Aclose(a);
    return 1;
}

/* n numbers of attribute `name` into v (integers converted). Absent: 0, and an error when
 * required; present with another type or count: an error. NaN is left to the caller. */
static int attr_numbers(attr_ctx *A, hid_t obj, const char *name, double *v, int n, int required)
{
    H5T_class_t cls = H5T_NO_CLASS;
    hssize_t cnt = 0;
    char need[32], what[48];
    snprintf(need, sizeof need, n == 1 ? "one number" : "%d numbers", n);
    if (!attr_info(obj, name, &cls, &cnt)) {
        if (required) attr_bad(A, name, "is missing", need);
        return 0;
    }
    if (cls != H5T_FLOAT && cls != H5T_INTEGER) {
        attr_bad(A, name, cls == H5T_STRING ? "is text" : "is not numeric", need);
        return 0;
    }
    if (cnt != n) {
        snprintf(what, sizeof what, "holds %lld values", (long long)cnt);
        attr_bad(A, name, what, need);
        return 0;
    }
    hid_t a = H5Aopen(obj, name, H5P_DEFAULT);
    int ok = a >= 0 && H5Aread(a, H5T_NATIVE_DOUBLE, v) >= 0;
    if (a >= 0) H5Aclose(a);
    if (!ok) attr_bad(A, name, "cannot be read", need);
    return ok;
}

/* Box from the Grid Data Format domain edges, if the file has them: both edges must be three
 * numbers each (the sides they give are judged with the grid, hx_grid_check). */
static hx_status gdf_box(hx_cube *cu)
{
    double l[3], r[3];
    if (H5Lexists(cu->file, "/simulation_parameters", H5P_DEFAULT) <= 0 ||
        H5Aexists_by_name(cu->file, "/simulation_parameters", "domain_right_edge", H5P_DEFAULT) <= 0)
        return HX_OK;
    hid_t g = H5Gopen2(cu->file, "/simulation_parameters", H5P_DEFAULT);
    if (g < 0) return hx_error_set(HX_ERR_ARG, "%s: /simulation_parameters cannot be opened", cu->path);
    attr_ctx A = {cu, "/simulation_parameters", HX_OK};
    if (attr_numbers(&A, g, "domain_right_edge", r, 3, 1) && attr_numbers(&A, g, "domain_left_edge", l, 3, 1))
        for (int a = 0; a < 3; a++) cu->box[a] = r[a] - l[a];
    H5Gclose(g);
    return A.st;
}

/* One number in [lo, hi]; NaN stands for "not recorded" only where allow_nan. Returns 1 when
 * *v was set (to a number in range, or to NaN where allowed). */
static int attr_number(attr_ctx *A, hid_t obj, const char *name, double *v, int required, int allow_nan, double lo,
                       double hi)
{
    double x = NAN;
    char what[48], need[64];
    if (!attr_numbers(A, obj, name, &x, 1, required)) return 0;
    if (isnan(x) && allow_nan) {
        *v = x;
        return 1;
    }
    if (!isfinite(x)) {
        attr_bad(A, name, isnan(x) ? "is NaN" : "is infinite", "a finite number");
        return 0;
    }
    if (x < lo || x > hi) {
        snprintf(what, sizeof what, "is %g", x);
        if (isfinite(hi)) snprintf(need, sizeof need, "a number in [%g, %g]", lo, hi);
        else snprintf(need, sizeof need, "a number >= %g", lo);
        attr_bad(A, name, what, need);
        return 0;
    }
    *v = x;
    return 1;
}

/* A recorded number that may be NaN ("not asked", "not known"); NaN when absent. */
static double attr_maybe(attr_ctx *A, hid_t obj, const char *name)
{
    double v = NAN;
    attr_number(A, obj, name, &v, 0, 1, -INFINITY, INFINITY);
    return v;
}

/* 1 when `word` is one of the comma-separated words of `list`. */
static int word_in(const char *word, const char *list)
{
    size_t n = strlen(word);
    for (const char *p = list; *p;) {
        size_t k = strcspn(p, ",");
        if (k == n && !strncmp(p, word, n)) return 1;
        p += k;
        while (*p == ',' || *p == ' ') p++;
    }
    return 0;
}

/* A text attribute into buf ("" when absent; an error when required). With `allowed`
 * ("a, b, c") the text must be one of those words. */
static int attr_text(attr_ctx *A, hid_t obj, const char *name, char *buf, size_t len, int required, const char *allowed)
{
    H5T_class_t cls = H5T_NO_CLASS;
    hssize_t cnt = 0;
    char need[96], what[96];
    buf[0] = '\0';
    snprintf(need, sizeof need, allowed ? "one of %s" : "%s", allowed ? allowed : "text");
    if (!attr_info(obj, name, &cls, &cnt)) {
        if (required) attr_bad(A, name, "is missing", need);
        return 0;
    }
    if (cls != H5T_STRING || cnt != 1) {
        if (cls == H5T_STRING) snprintf(what, sizeof what, "holds %lld strings", (long long)cnt);
        else snprintf(what, sizeof what, "is %s", cls == H5T_FLOAT || cls == H5T_INTEGER ? "a number" : "not text");
        attr_bad(A, name, what, need);
        return 0;
    }
    if (!read_string(obj, name, buf, len)) {
        attr_bad(A, name, "cannot be read", need);
        return 0;
    }
    if (allowed && !word_in(buf, allowed)) {
        snprintf(what, sizeof what, "is '%.40s'", buf);
        attr_bad(A, name, what, need);
        buf[0] = '\0';
        return 0;
    }
    return 1;
}

hx_status hx_cube_request(hx_cube *cu, hx_request *q, int *found)
{
    char text[32], exact[32], shape[32], amps[32], of[32], mode[32], weight[32];
    double target = NAN, realized = NAN, expected = NAN, zeta = NAN, vrms = NAN, slope = NAN, fit = NAN, sigma = NAN;
    double kmin = NAN, kmax = NAN;
    *found = 0;
    if (H5Lexists(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT) <= 0) return HX_OK;
    hid_t g = H5Gopen2(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT);
    if (g < 0) return hx_error_set(HX_ERR_ARG, "cannot open " HX_SCHEMA_PROVENANCE " in %s", cu->path);
    attr_ctx A = {cu, HX_SCHEMA_PROVENANCE, HX_OK};
    /* what make always writes; the order is that of the checks a reader would make */
    attr_text(&A, g, HX_ATTR_RECIPE, text, sizeof text, 1, NULL);
    attr_text(&A, g, HX_ATTR_AMPLITUDES, amps, sizeof amps, 0, "gaussian, fixed");
    attr_text(&A, g, HX_ATTR_MIX_MODE, mode, sizeof mode, 1, "zeta, compressive_fraction");
    /* zeta is NaN in a file whose mix was asked as a compressive_fraction */
    attr_number(&A, g, HX_ATTR_ZETA, &zeta, 1, strcmp(mode, "zeta") != 0, 0.0, 1.0);
    attr_text(&A, g, HX_ATTR_EXACT, exact, sizeof exact, 1, "none, total, shell");
    attr_text(&A, g, HX_ATTR_FRACTION_OF, of, sizeof of, 0, "synthesis, written");
    attr_text(&A, g, HX_ATTR_WEIGHT, weight, sizeof weight, 0, "volume, mass");
    attr_number(&A, g, HX_ATTR_FRACTION_EXPECTED, &expected, 1, 0, 0.0, 1.0);
    /* the target is NaN when the share is free (exact = none) or judged as written */
    attr_number(&A, g, HX_ATTR_FRACTION_TARGET, &target, 1, 1, 0.0, 1.0);
    if (A.st == HX_OK && strcmp(exact, "none") && strcmp(of, "written") && isnan(target))
        attr_bad(&A, HX_ATTR_FRACTION_TARGET, "is NaN", "a share in [0, 1] when exact is total or shell");
    attr_number(&A, g, HX_ATTR_FRACTION_REALIZED, &realized, 1, 1, 0.0, 1.0);
    if (attr_number(&A, g, HX_ATTR_VRMS, &vrms, 1, 0, 0.0, INFINITY) && !(vrms > 0))
        attr_bad(&A, HX_ATTR_VRMS, "is 0", "a number > 0");
    attr_text(&A, g, HX_ATTR_SHAPE, shape, sizeof shape, 1, "power, band, table");
    /* the slope is a promise of a power law only */
    attr_number(&A, g, HX_ATTR_SLOPE, &slope, 1, strcmp(shape, "power") != 0, -INFINITY, INFINITY);
    attr_number(&A, g, HX_ATTR_SLOPE_FIT, &fit, 0, 1, -INFINITY, INFINITY);
    attr_number(&A, g, HX_ATTR_SLOPE_SIGMA, &sigma, 0, 1, 0.0, INFINITY);
    attr_number(&A, g, HX_ATTR_KMIN, &kmin, 1, 0, 0.0, INFINITY);
    if (attr_number(&A, g, HX_ATTR_KMAX, &kmax, 1, 0, 0.0, INFINITY) && A.st == HX_OK && kmax < kmin)
        attr_bad(&A, HX_ATTR_KMAX, "is below kmin", "kmax >= kmin");
    H5Gclose(g);
    if (A.st != HX_OK) return A.st;

    hx_request_defaults(q, cu->single, !strcmp(amps, "fixed"));
    q->has_vrms = 1;
    q->vrms = vrms;
    /* a field shaped after the synthesis (window, bulk removal, weighting) keeps no zero mean */
    q->zero_mean = strcmp(of, "written") != 0;
    q->expected_fraction = expected;
    if (strcmp(exact, "none") && isfinite(target)) {
        q->has_fraction = 1;
        q->fraction = target;
        q->has_shell_fraction = !strcmp(exact, "shell");
    } else if (isfinite(realized)) {
        q->has_recorded = 1;
        q->recorded_fraction = realized;
    }
    if (!strcmp(shape, "power")) {
        q->has_slope = 1;
        q->slope = q->slope_recipe = slope;
    }
    if (q->has_slope && isfinite(fit) && isfinite(sigma)) {
        /* judge the fit against what it should give on this grid and band, within 5 sigma of
         * its scatter for this draw (make computes both from its own mode set) */
        q->slope = fit;
        q->tol_slope = fmax(5.0 * sigma, 0.01);
    }
    q->fit_kmin = kmin;
    q->fit_kmax = kmax;
    *found = 1;
    return HX_OK;
}

/* The value of /dataset_units/NAME when its "unit" attribute says `unit`, else NAN. */
static double unit_value(hx_cube *cu, const char *name, const char *unit)
{
    char path[128], text[32];
    double v = NAN;
    snprintf(path, sizeof path, HX_SCHEMA_UNITS "/%s", name);
    if (H5Lexists(cu->file, HX_SCHEMA_UNITS, H5P_DEFAULT) <= 0 || H5Lexists(cu->file, path, H5P_DEFAULT) <= 0) return NAN;
    hid_t d = H5Dopen2(cu->file, path, H5P_DEFAULT), sp = d >= 0 ? H5Dget_space(d) : -1;
    int ok = sp >= 0 && H5Sget_simple_extent_npoints(sp) == 1 && read_string(d, "unit", text, sizeof text) &&
             !strcmp(text, unit) && H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, &v) >= 0;
    if (sp >= 0) H5Sclose(sp);
    if (d >= 0) H5Dclose(d);
    return ok && v > 0 && isfinite(v) ? v : NAN;
}

hx_status hx_cube_read_state(hx_cube *cu, hx_cube_state *s)
{
    char text[32];
    memset(s, 0, sizeof *s);
    double *nan_fields[] = {&s->sound_speed,  &s->G,          &s->vrms_asked, &s->mach_asked,   &s->virial_asked,
                            &s->sigma_3d_asked, &s->sigma_s_asked, &s->vrms,   &s->sigma_3d,     &s->mach,
                            &s->virial,       &s->momentum_rel, &s->density_mean, &s->sigma_s, &s->region_mass,
                            &s->gamma,        &s->b_random_rms, &s->b_rms,    &s->b_face_rms,   &s->beta,
                            &s->alfven_mach,  &s->beta_asked, &s->alfven_mach_asked};
    for (size_t i = 0; i < sizeof nan_fields / sizeof *nan_fields; i++) *nan_fields[i] = NAN;
    for (int a = 0; a < 3; a++) {
        s->momentum[a] = NAN;
        s->b0[a] = NAN;
        s->center[a] = 0.5 * cu->box[a];
    }
    s->unit_velocity_cm_s = unit_value(cu, HX_UNITS_VELOCITY, "cm/s");
    s->unit_magnetic_gauss = unit_value(cu, HX_UNITS_MAGNETIC, "gauss");
    s->radius = 0.5 * fmax(cu->box[0], fmax(cu->box[1], cu->box[2])); /* the virial convention of a box */
    if (H5Lexists(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT) > 0) {
        hid_t p = H5Gopen2(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT);
        if (p < 0) return hx_error_set(HX_ERR_ARG, "cannot open " HX_SCHEMA_PROVENANCE " in %s", cu->path);
        attr_ctx P = {cu, HX_SCHEMA_PROVENANCE, HX_OK};
        if (attr_text(&P, p, HX_ATTR_WEIGHT, text, sizeof text, 0, "volume, mass")) s->mass_weight = !strcmp(text, "mass");
        if (attr_text(&P, p, HX_ATTR_FRACTION_OF, text, sizeof text, 0, "synthesis, written"))
            s->written = !strcmp(text, "written");
        H5Gclose(p);
        if (P.st != HX_OK) return P.st;
    }
    if (H5Lexists(cu->file, HX_SCHEMA_PROVENANCE, H5P_DEFAULT) <= 0 ||
        H5Lexists(cu->file, HX_SCHEMA_STATE, H5P_DEFAULT) <= 0)
        return HX_OK;
    hid_t g = H5Gopen2(cu->file, HX_SCHEMA_STATE, H5P_DEFAULT);
    if (g < 0) return hx_error_set(HX_ERR_ARG, "cannot open " HX_SCHEMA_STATE " in %s", cu->path);
    attr_ctx A = {cu, HX_SCHEMA_STATE, HX_OK};
    s->found = 1;
    attr_text(&A, g, HX_STATE_AMPLITUDE_BY, s->amplitude_by, sizeof s->amplitude_by, 0, NULL);
    attr_text(&A, g, HX_STATE_DENSITY_MODEL, s->density_model, sizeof s->density_model, 0, NULL);
    s->sound_speed = attr_maybe(&A, g, HX_STATE_SOUND_SPEED);
    s->G = attr_maybe(&A, g, HX_STATE_G);
    s->vrms_asked = attr_maybe(&A, g, HX_STATE_VRMS_ASKED);
    s->mach_asked = attr_maybe(&A, g, HX_STATE_MACH_ASKED);
    s->virial_asked = attr_maybe(&A, g, HX_STATE_VIRIAL_ASKED);
    s->sigma_3d_asked = attr_maybe(&A, g, HX_STATE_SIGMA_3D_ASKED);
    s->sigma_s_asked = attr_maybe(&A, g, HX_STATE_SIGMA_S_ASKED);
    s->vrms = attr_maybe(&A, g, HX_STATE_VRMS);
    s->sigma_3d = attr_maybe(&A, g, HX_STATE_SIGMA_3D);
    s->mach = attr_maybe(&A, g, HX_STATE_MACH);
    s->virial = attr_maybe(&A, g, HX_STATE_VIRIAL);
    s->momentum_rel = attr_maybe(&A, g, HX_STATE_MOMENTUM_RELATIVE);
    s->density_mean = attr_maybe(&A, g, HX_STATE_DENSITY_MEAN);
    s->sigma_s = attr_maybe(&A, g, HX_STATE_SIGMA_S);
    s->region_mass = attr_maybe(&A, g, HX_STATE_REGION_MASS);
    s->gamma = attr_maybe(&A, g, HX_STATE_GAMMA);
    if (!attr_numbers(&A, g, HX_STATE_MAGNETIC_B0, s->b0, 3, 0))
        for (int a = 0; a < 3; a++) s->b0[a] = NAN;
    s->b_random_rms = attr_maybe(&A, g, HX_STATE_MAGNETIC_RANDOM_RMS);
    s->b_rms = attr_maybe(&A, g, HX_STATE_MAGNETIC_RMS);
    s->b_face_rms = attr_maybe(&A, g, HX_STATE_MAGNETIC_FACE_RMS);
    s->beta = attr_maybe(&A, g, HX_STATE_BETA);
    s->alfven_mach = attr_maybe(&A, g, HX_STATE_ALFVEN_MACH);
    s->beta_asked = attr_maybe(&A, g, HX_STATE_BETA_ASKED);
    s->alfven_mach_asked = attr_maybe(&A, g, HX_STATE_ALFVEN_MACH_ASKED);
    if (!isfinite(s->unit_magnetic_gauss)) s->unit_magnetic_gauss = attr_maybe(&A, g, HX_STATE_UNIT_MAGNETIC);
    double m[3], flags[3], cloud = 0, center[3], radius = NAN;
    if (attr_numbers(&A, g, HX_STATE_MOMENTUM, m, 3, 0)) memcpy(s->momentum, m, sizeof m);
    if (attr_numbers(&A, g, HX_STATE_FLAGS, flags, 3, 0))
        for (int a = 0; a < 3; a++) s->flags[a] = flags[a] != 0;
    /* the region: the recorded sphere when there is a cloud, else the whole box */
    radius = attr_maybe(&A, g, HX_STATE_CLOUD_RADIUS);
    if (attr_number(&A, g, HX_STATE_CLOUD, &cloud, 0, 1, -INFINITY, INFINITY) && cloud != 0 && !isnan(cloud) &&
        attr_numbers(&A, g, HX_STATE_CLOUD_CENTER, center, 3, 1) && radius > 0) {
        s->cloud = 1;
        memcpy(s->center, center, sizeof center);
        s->radius = radius;
    } else if (radius > 0)
        s->radius = radius;
    H5Gclose(g);
    return A.st;
}

/* The asked value where one was asked, else the recorded one. */
static double pick(double asked, double recorded, int *is_asked)
{
    *is_asked = isfinite(asked);
    return *is_asked ? asked : recorded;
}

void hx_cube_request_state(const hx_cube_state *s, hx_request *q)
{
    if (!s->found) return;
    q->sigma_3d = pick(s->sigma_3d_asked, s->sigma_3d, &q->asked_sigma_3d);
    q->mach = pick(s->mach_asked, s->mach, &q->asked_mach);
    q->virial = pick(s->virial_asked, s->virial, &q->asked_virial);
    q->sigma_s = pick(s->sigma_s_asked, s->sigma_s, &q->asked_sigma_s);
    q->density_mean = s->density_mean;
    q->momentum_removed = s->flags[1];
    q->momentum_rel = s->momentum_rel;
    /* the window multiplies in real space, so it spreads every mode over its neighbours in k:
     * the written spectrum has no promised slope, which is then shown for information only */
    if (s->flags[0]) q->tol_slope = NAN;
}

void hx_cube_request_magnetic(const hx_cube_state *s, int single, hx_request *q)
{
    if (!s->found || !(isfinite(s->b0[0]) && isfinite(s->b0[1]) && isfinite(s->b0[2]))) return;
    q->has_magnetic = 1;
    memcpy(q->b0, s->b0, sizeof q->b0);
    q->b_random_rms = isfinite(s->b_random_rms) ? s->b_random_rms : 0.0;
    /* beta and M_A of a zero uniform field are infinite: nothing then to judge */
    q->beta = pick(s->beta_asked, s->beta, &q->asked_beta);
    q->alfven_mach = pick(s->alfven_mach_asked, s->alfven_mach, &q->asked_alfven_mach);
    if (!isfinite(q->beta)) q->beta = NAN;
    if (!isfinite(q->alfven_mach)) q->alfven_mach = NAN;
    /* sums over stored values keep ~7 digits in single and ~15 in double precision; a
     * divergence of round-off size is ~1e-7 and ~1e-16 of the gradient scale */
    q->tol_magnetic = single ? 1e-5 : 1e-9;
    q->tol_divergence = single ? 1e-5 : 1e-12;
}

void hx_cube_close(hx_cube **cube)
{
    if (!cube || !*cube) return;
    hx_cube *cu = *cube;
    for (int i = 0; i < HX_SLOT_COUNT; i++) /* a 4-D set is held by its first slot only */
        if (cu->dset[i] >= 0) H5Dclose(cu->dset[i]);
    if (cu->file >= 0) H5Fclose(cu->file);
    if (cu->dirfd >= 0) close(cu->dirfd);
    free(cu);
    *cube = NULL;
}
