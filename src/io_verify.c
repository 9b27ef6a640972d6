/* io_verify.c — hx_io_verify: every field dataset of a helmix file read back collectively in
 * bounded runs of rows, its checksum (io_digest.h) recomputed and compared with the stored one.
 * Invariant: every rank opens the same datasets in the same order and takes part in the same
 * number of reads (selecting nothing when its rows are done); each read is agreed. */
#include <errno.h>
#include <hdf5.h>
#include <inttypes.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "check.h"
#include "helmix/fault.h"
#include "helmix/io.h"
#include "helmix/schema.h"
#include "io_claim.h"
#include "io_digest.h"

#define READ_BYTES ((size_t)16 << 20)

hx_status hx_io_mpi_name(const char *path, MPI_Comm comm, char *name, size_t len, int *dirfd)
{
    return io_mpi_name(path, comm, name, len, dirfd);
}

/* Select file rows [a, b) of a (nz, ny, nx) dataset, rows counted over z then y. */
static herr_t select_rows(hid_t fspace, hsize_t ny, hsize_t nx, hsize_t a, hsize_t b)
{
    H5S_seloper_t op = H5S_SELECT_SET;
    if (a >= b) return H5Sselect_none(fspace);
    while (a < b) {
        hsize_t start[3] = {a / ny, a % ny, 0}, count[3] = {1, 0, nx};
        if (start[1] == 0 && b - a >= ny) count[0] = (b - a) / ny, count[1] = ny;
        else count[1] = ny - start[1] < b - a ? ny - start[1] : b - a;
        if (H5Sselect_hyperslab(fspace, op, start, NULL, count, NULL) < 0) return -1;
        op = H5S_SELECT_OR;
        a += count[0] * count[1];
    }
    return 0;
}

/* Collective: the checksum of dataset d (3-D, elements of esize bytes) over all ranks. */
static hx_status digest_dataset(hid_t d, const hsize_t dims[3], size_t esize, const char *label, MPI_Comm comm,
                                uint64_t *out)
{
    hx_status st = HX_OK;
    int rank = 0, size = 1;
    hid_t fspace = -1, mspace = -1, dxpl = -1;
    void *buf = NULL;
    HX_MPI(MPI_Comm_rank(comm, &rank));
    HX_MPI(MPI_Comm_size(comm, &size));
    const hsize_t ny = dims[1], nx = dims[2], rows = dims[0] * dims[1];
    const hsize_t r0 = rows * (hsize_t)rank / (hsize_t)size, r1 = rows * (hsize_t)(rank + 1) / (hsize_t)size;
    hsize_t per = READ_BYTES / (nx * esize);
    if (per < 1) per = 1;
    long long runs = (long long)((r1 - r0 + per - 1) / per), most = 0;
    buf = malloc((size_t)(per * nx) * esize);
    hx_status prep = buf ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for %zu MiB of read buffer", READ_BYTES >> 20);
    if (prep == HX_OK && ((fspace = H5Dget_space(d)) < 0 || (dxpl = H5Pcreate(H5P_DATASET_XFER)) < 0 ||
                          H5Pset_dxpl_mpio(dxpl, H5FD_MPIO_COLLECTIVE) < 0))
        prep = hx_error_set(HX_ERR_HDF5, "cannot set up reading %s", label);
    HX_TRY(hx_error_agree(comm, prep));
    HX_MPI(MPI_Allreduce(&runs, &most, 1, MPI_LONG_LONG, MPI_MAX, comm));
    uint64_t sum = 0;
    hid_t mtype = esize == 8 ? H5T_NATIVE_DOUBLE : H5T_NATIVE_FLOAT;
    for (long long i = 0; i < most; i++) {
        hsize_t a = r0 + (hsize_t)i * per < r1 ? r0 + (hsize_t)i * per : r1, b = a + per < r1 ? a + per : r1;
        hsize_t n = (b - a) * nx, mdim = n > 0 ? n : 1;
        st = select_rows(fspace, ny, nx, a, b) >= 0 && (mspace = H5Screate_simple(1, &mdim, NULL)) >= 0 &&
                     (n > 0 || H5Sselect_none(mspace) >= 0)
                 ? HX_OK
                 : hx_error_set(HX_ERR_HDF5, "cannot select rows of %s", label);
        HX_TRY(hx_error_agree(comm, st));
        if (H5Dread(d, mtype, mspace, fspace, dxpl, buf) < 0) st = hx_error_set(HX_ERR_IO, "cannot read %s", label);
        if (st == HX_OK) st = hx_fault_point("verify", comm);
        HX_TRY(hx_error_agree(comm, st));
        sum += io_digest_add(buf, (size_t)n, esize, a * nx);
        H5Sclose(mspace);
        mspace = -1;
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &sum, 1, MPI_UINT64_T, MPI_SUM, comm));
    *out = sum;
fail:
    free(buf);
    if (mspace >= 0) H5Sclose(mspace);
    if (fspace >= 0) H5Sclose(fspace);
    if (dxpl >= 0) H5Pclose(dxpl);
    return st;
}

/* This rank's look at one member of the grid group (metadata only, the same on every rank):
 * *kind 0 not a field dataset, 1 one without checksum, 2 one with (stored, dims, esize). */
static hx_status inspect_member(hid_t grp, const char *name, hid_t *obj, int *kind, uint64_t *stored, hsize_t dims[3],
                                size_t *esize)
{
    hx_status st = HX_OK;
    hid_t space = -1, type = -1, attr = -1;
    *kind = 0;
    *obj = H5Oopen(grp, name, H5P_DEFAULT);
    if (*obj < 0) HX_FAIL(HX_ERR_HDF5, "cannot open %s/%s", HX_SCHEMA_GRID, name);
    if (H5Iget_type(*obj) != H5I_DATASET) goto fail;
    HX_H5(space, H5Dget_space(*obj));
    HX_H5(type, H5Dget_type(*obj));
    *esize = H5Tget_size(type);
    if (H5Sget_simple_extent_ndims(space) != 3 || H5Tget_class(type) != H5T_FLOAT || (*esize != 4 && *esize != 8)) goto fail;
    HX_H5OK(H5Sget_simple_extent_dims(space, dims, NULL));
    htri_t has = H5Aexists(*obj, HX_IO_ATTR_CHECKSUM);
    *kind = has > 0 ? 2 : 1;
    if (has > 0) {
        HX_H5(attr, H5Aopen(*obj, HX_IO_ATTR_CHECKSUM, H5P_DEFAULT));
        HX_H5OK(H5Aread(attr, H5T_NATIVE_UINT64, stored));
    }
fail:
    if (attr >= 0) H5Aclose(attr);
    if (type >= 0) H5Tclose(type);
    if (space >= 0) H5Sclose(space);
    return st;
}

/* Collective: one member of the grid group, counted and checked when it is a 3-D float dataset. */
static hx_status verify_member(hid_t grp, const char *name, MPI_Comm comm, int rank, FILE *out, hx_io_verify_counts *n)
{
    hx_status st = HX_OK;
    hid_t obj = -1;
    hsize_t dims[3] = {0, 0, 0};
    size_t esize = 0;
    int kind = 0;
    uint64_t stored = 0, computed = 0;
    HX_TRY(hx_error_agree(comm, inspect_member(grp, name, &obj, &kind, &stored, dims, &esize)));
    if (kind == 0) goto fail;
    n->datasets++;
    if (kind == 1) {
        n->missing++;
        if (rank == 0 && out)
            fprintf(out, "verify: %-24s no checksum (written by an older helmix, or by a run that never finished)\n", name);
        goto fail;
    }
    HX_TRY(digest_dataset(obj, dims, esize, name, comm, &computed));
    if (computed == stored) n->ok++;
    else n->bad++;
    if (rank == 0 && out) {
        if (computed == stored) fprintf(out, "verify: %-24s ok (checksum %016" PRIx64 ")\n", name, stored);
        else
            fprintf(out, "verify: %-24s MISMATCH: stored %016" PRIx64 ", computed %016" PRIx64
                         " (the values changed after they were written)\n", name, stored, computed);
    }
fail:
    if (obj >= 0) H5Oclose(obj);
    return st;
}

hx_status hx_io_verify(const char *path, MPI_Comm comm, FILE *out, hx_io_verify_counts *counts)
{
    hx_status st = HX_OK;
    int rank = 0, dirfd = -1;
    hid_t fapl = -1, file = -1, grp = -1;
    char name[HX_PATH_MAX + 32];
    hx_io_verify_counts n = {0, 0, 0, 0};
    HX_MPI(MPI_Comm_rank(comm, &rank));
    if (rank == 0) { /* the file system's word first: MPI-IO's own errors are pages long */
        struct stat sb;
        if (stat(path, &sb) != 0) st = hx_error_set(HX_ERR_ARG, "cannot verify %s: %s", path, strerror(errno));
        else if (!S_ISREG(sb.st_mode)) st = hx_error_set(HX_ERR_ARG, "cannot verify %s: not a regular file", path);
        else if (access(path, R_OK) != 0) st = hx_error_set(HX_ERR_ARG, "cannot verify %s: %s", path, strerror(errno));
    }
    HX_TRY(hx_error_agree(comm, st));
    HX_TRY(hx_io_mpi_name(path, comm, name, sizeof name, &dirfd));
    if ((fapl = H5Pcreate(H5P_FILE_ACCESS)) < 0 || H5Pset_fapl_mpio(fapl, comm, MPI_INFO_NULL) < 0)
        st = hx_error_set(HX_ERR_HDF5, "cannot set up MPI-IO access to %s", path);
    else if ((file = H5Fopen(name, H5F_ACC_RDONLY, fapl)) < 0)
        st = hx_error_set(HX_ERR_ARG, "cannot verify %s: not an HDF5 file", path);
    HX_TRY(hx_error_agree(comm, st));
    grp = H5Gopen2(file, HX_SCHEMA_GRID, H5P_DEFAULT);
    st = grp >= 0 ? HX_OK : hx_error_set(HX_ERR_ARG, "cannot verify %s: it has no %s group (not a helmix file)", path,
                                        HX_SCHEMA_GRID);
    HX_TRY(hx_error_agree(comm, st));
    H5G_info_t info;
    st = H5Gget_info(grp, &info) >= 0 ? HX_OK : hx_error_set(HX_ERR_HDF5, "cannot list %s in %s", HX_SCHEMA_GRID, path);
    HX_TRY(hx_error_agree(comm, st));
    for (hsize_t i = 0; i < info.nlinks; i++) {
        char member[256];
        if (H5Lget_name_by_idx(grp, ".", H5_INDEX_NAME, H5_ITER_INC, i, member, sizeof member, H5P_DEFAULT) < 0)
            st = hx_error_set(HX_ERR_HDF5, "cannot list %s in %s", HX_SCHEMA_GRID, path);
        HX_TRY(hx_error_agree(comm, st));
        HX_TRY(verify_member(grp, member, comm, rank, out, &n));
    }
    if (rank == 0 && out)
        fprintf(out, "verify: %d dataset%s: %d ok, %d differ, %d without checksum\n", n.datasets, n.datasets == 1 ? "" : "s",
                n.ok, n.bad, n.missing);
fail:
    if (grp >= 0) H5Gclose(grp);
    if (file >= 0) H5Fclose(file);
    if (fapl >= 0) H5Pclose(fapl);
    if (dirfd >= 0) close(dirfd);
    if (counts) *counts = n;
    return st;
}
