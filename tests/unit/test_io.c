/* test_io.c — run on 1 and 4 ranks: [output] alignment and io_hints are accepted or refused
 * with one line naming the key; doubles written into a single-precision file are the C
 * rounding of every value (HDF5's own conversion gives the same), in runs of rows that cross
 * plane boundaries and on ranks with unequal slabs or none, and HDF5 reports every one of
 * those transfers as collective; aligned field datasets start at multiples of the alignment;
 * the tuning is recorded as attributes. The checksum of every dataset is the sum its
 * definition in io_digest.h gives (recomputed here from the values read back), hx_io_verify
 * finds all of them intact and exactly the one dataset whose byte was flipped afterwards; a
 * second writer of the same output is refused while the first holds it (flock is per open file,
 * so it holds within one process too); an abandoned file, and a run on a path far beyond Open
 * MPI's ~240 characters, leave nothing behind or a complete file (reading back a file whose
 * own name is longer than 168 characters is refused with one line). `test_io verify FILE` runs
 * hx_io_verify on FILE (exit 0 intact, 1 not) for tests/py/test_faults.py. */
#include <errno.h>
#include <hdf5.h>
#include <inttypes.h>
#include <math.h>
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "helmix/grid.h"
#include "helmix/io.h"
#include "hx_test.h"

/* The checksum as io_digest.h defines it, written out again from its words. */
static uint64_t splitmix_finaliser(uint64_t z)
{
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
    return z ^ (z >> 31);
}

static uint64_t checksum_of_floats(const float *v, int64_t n)
{
    uint64_t s = 0;
    for (int64_t i = 0; i < n; i++) {
        uint32_t bits;
        memcpy(&bits, &v[i], 4);
        s += splitmix_finaliser((uint64_t)bits ^ ((uint64_t)i * 0x9E3779B97F4A7C15ULL));
    }
    return s;
}

static int exists(const char *path)
{
    struct stat sb;
    return stat(path, &sb) == 0;
}

static void accept(double alignment, const char *hints)
{
    hx_io_tuning t = {alignment, hints};
    hx_status st = hx_io_tuning_check(&t);
    CHECK(st == HX_OK);
    if (st != HX_OK) fprintf(stderr, "  refused alignment %g hints '%s': %s\n", alignment, hints ? hints : "(null)", hx_error_message());
}

static void refuse(double alignment, const char *hints, const char *key)
{
    hx_io_tuning t = {alignment, hints};
    hx_error_clear();
    CHECK(hx_io_tuning_check(&t) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), key);
    CHECK(strchr(hx_error_message(), '\n') == NULL); /* one line */
}

static void test_check(void)
{
    CHECK(hx_io_tuning_check(NULL) == HX_OK);
    accept(0, NULL);
    accept(0, "");
    accept(0, "none");
    accept(0, " none ");
    accept(4096, "cb_nodes=1");
    accept(1048576, "cb_nodes=1, romio_cb_write=enable");
    accept(65536, "cb_config_list=*:1,striping_unit=1048576,romio_ds_write=disable");
    const char *H = "[output] io_hints", *A = "[output] alignment";
    refuse(0, "cb_nodes", H);             /* no '=' */
    refuse(0, "=1", H);                   /* no name */
    refuse(0, "cb_nodes=", H);            /* no value */
    refuse(0, "cb_nodes=1,", H);          /* empty last item */
    refuse(0, "cb_nodes=1,,cb_buffer_size=4", H);
    refuse(0, "cb_nodes=1,cb_nodes=2", H); /* twice */
    refuse(0, "cb nodes=1", H);           /* blank inside a name */
    refuse(0, "cb_nodes=1 2", H);         /* blank inside a value */
    refuse(0, "cb_nodes=1=2", H);
    refuse(0, "nonesuch", H);
    refuse(-1, NULL, A);
    refuse(1.5, NULL, A);
    refuse(NAN, NULL, A);
    refuse(INFINITY, NULL, A);
    refuse(2199023255552.0, NULL, A); /* 2^41 */
}

/* A value whose float rounding is not trivial, different in every cell. */
static double value(int64_t i) { return sin(0.001 * (double)i) + 1e-9 * (double)i + 1.0 / 3.0; }

static void test_write(MPI_Comm comm, int rank, int size)
{
    /* rows of 65536 floats (256 KiB): 16 rows per 4 MiB run, so the runs end inside planes of
     * 6 rows; 10 planes over 4 ranks are 3, 3, 3, 1 */
    const int64_t cells[3] = {65536, 6, 10};
    const double box[3] = {1, 1, 1};
    char path[64], xmf[80];
    snprintf(path, sizeof path, "test_io_%d.h5", size);
    snprintf(xmf, sizeof xmf, "%s.xmf", path);
    hx_grid g;
    CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
    int64_t n = (int64_t)g.nz * g.n[1] * g.n[0], first = (int64_t)g.z0 * g.n[1] * g.n[0];
    double *v = malloc((size_t)(n > 0 ? n : 1) * sizeof *v);
    for (int64_t i = 0; i < n; i++) v[i] = value(first + i);
    hx_io *w = NULL;
    hx_io_tuning t = {1048576, " cb_nodes = 1 , romio_cb_write=enable "};
    int id = -1;
    CHECK(hx_io_create(&w, path, &g, HX_PREC_SINGLE, &t, comm) == HX_OK);
    CHECK(hx_io_add_field(w, "velocity", 3, "code_length/code_time", 0, &id) == HX_OK);
    for (int c = 0; c < 3; c++) CHECK(hx_error_agree(comm, hx_io_write_doubles(w, id, c, v)) == HX_OK);
    CHECK(hx_io_attr_tuning(w, "/helmix") == HX_OK);
    CHECK(hx_io_close(&w, 1) == HX_OK);
    free(v);
    MPI_Barrier(comm);
    if (rank == 0) {
        hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT);
        CHECK(f >= 0);
        int64_t total = cells[0] * cells[1] * cells[2], bad = 0;
        float *got = malloc((size_t)total * sizeof *got);
        static const char *names[3] = {"velocity_x", "velocity_y", "velocity_z"};
        for (int c = 0; c < 3; c++) {
            char dpath[64];
            snprintf(dpath, sizeof dpath, "/data/grid_0000000000/%s", names[c]);
            hid_t d = H5Dopen2(f, dpath, H5P_DEFAULT);
            CHECK(d >= 0);
            CHECK(H5Dget_offset(d) % 1048576 == 0);
            CHECK(H5Dread(d, H5T_NATIVE_FLOAT, H5S_ALL, H5S_ALL, H5P_DEFAULT, got) >= 0);
            for (int64_t i = 0; i < total; i++) bad += got[i] != (float)value(i);
            uint64_t stored = 0;
            hid_t ca = H5Aopen(d, HX_IO_ATTR_CHECKSUM, H5P_DEFAULT);
            CHECK(ca >= 0 && H5Aread(ca, H5T_NATIVE_UINT64, &stored) >= 0);
            if (ca >= 0) H5Aclose(ca);
            CHECK(stored == checksum_of_floats(got, total));
            H5Dclose(d);
        }
        CHECK(bad == 0);
        if (bad) fprintf(stderr, "  %lld values differ from their float rounding\n", (long long)bad);
        free(got);
        hid_t grp = H5Gopen2(f, "/helmix", H5P_DEFAULT);
        double a = 0, thr = 0;
        int64_t tr[2] = {-1, -1};
        hid_t at = H5Aopen(grp, HX_IO_ATTR_ALIGNMENT, H5P_DEFAULT);
        H5Aread(at, H5T_NATIVE_DOUBLE, &a);
        H5Aclose(at);
        at = H5Aopen(grp, HX_IO_ATTR_ALIGNMENT_THRESHOLD, H5P_DEFAULT);
        H5Aread(at, H5T_NATIVE_DOUBLE, &thr);
        H5Aclose(at);
        at = H5Aopen(grp, HX_IO_ATTR_TRANSFERS, H5P_DEFAULT);
        H5Aread(at, H5T_NATIVE_INT64, tr);
        H5Aclose(at);
        CHECK(a == 1048576.0);
        CHECK(thr == (double)(total * 4)); /* one float component */
        /* 1 rank: 60 rows in 4 runs; 4 ranks: at most 18 rows, 2 runs; 3 components each */
        CHECK(tr[0] == (size == 1 ? 12 : 6));
        CHECK(tr[1] == 0);
        hid_t ht = H5Aopen(grp, HX_IO_ATTR_HINTS, H5P_DEFAULT), ty = H5Aget_type(ht);
        char *hints = NULL;
        H5Aread(ht, ty, &hints);
        CHECK(hints && !strcmp(hints, "cb_nodes=1,romio_cb_write=enable"));
        free(hints);
        H5Tclose(ty);
        H5Aclose(ht);
        H5Gclose(grp);
        H5Fclose(f);
    }
    /* intact, then one byte of velocity_y flipped: exactly that dataset differs */
    hx_io_verify_counts k;
    CHECK(hx_io_verify(path, comm, NULL, &k) == HX_OK);
    CHECK(k.datasets == 3 && k.ok == 3 && k.bad == 0 && k.missing == 0);
    if (rank == 0) {
        hid_t f = H5Fopen(path, H5F_ACC_RDONLY, H5P_DEFAULT), d = H5Dopen2(f, "/data/grid_0000000000/velocity_y", H5P_DEFAULT);
        haddr_t at = H5Dget_offset(d) + 12345;
        H5Dclose(d);
        H5Fclose(f);
        FILE *fp = fopen(path, "r+b");
        unsigned char byte = 0;
        CHECK(fp && fseek(fp, (long)at, SEEK_SET) == 0 && fread(&byte, 1, 1, fp) == 1);
        byte ^= 0x10;
        CHECK(fp && fseek(fp, (long)at, SEEK_SET) == 0 && fwrite(&byte, 1, 1, fp) == 1);
        if (fp) fclose(fp);
    }
    MPI_Barrier(comm);
    CHECK(hx_io_verify(path, comm, NULL, &k) == HX_OK);
    CHECK(k.datasets == 3 && k.ok == 2 && k.bad == 1 && k.missing == 0);
    MPI_Barrier(comm);
    if (rank == 0) {
        remove(path);
        remove(xmf);
    }
}

/* One writer per output: a second create on the same path is refused while the first holds
 * it and leaves the first's files alone; an abandoned file (commit 0) leaves nothing. */
static void test_claim(MPI_Comm comm, int rank, int size)
{
    const int64_t cells[3] = {8, 8, 8};
    const double box[3] = {1, 1, 1};
    char path[64], partial[80], lock[80], xmf[80];
    snprintf(path, sizeof path, "test_io_claim_%d.h5", size);
    snprintf(partial, sizeof partial, "%s.partial", path);
    snprintf(lock, sizeof lock, "%s.lock", path);
    snprintf(xmf, sizeof xmf, "%s.xmf", path);
    hx_grid g;
    CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
    hx_io *a = NULL, *b = NULL;
    int id = -1;
    CHECK(hx_io_create(&a, path, &g, HX_PREC_DOUBLE, NULL, comm) == HX_OK);
    CHECK(hx_io_check_target(path, 0, comm) == HX_ERR_EXISTS);
    CHECK_STR_CONTAINS(hx_error_message(), "another helmix run is writing");
    CHECK(hx_io_create(&b, path, &g, HX_PREC_DOUBLE, NULL, comm) == HX_ERR_EXISTS);
    CHECK(b == NULL);
    MPI_Barrier(comm);
    if (rank == 0) CHECK(exists(partial) && exists(lock)); /* the refused one took nothing away */
    CHECK(hx_io_add_field(a, "density", 1, "code_mass/code_length**3", 0, &id) == HX_OK);
    CHECK(hx_io_close(&a, 0) == HX_OK);
    MPI_Barrier(comm);
    if (rank == 0) CHECK(!exists(path) && !exists(partial) && !exists(lock) && !exists(xmf));
}

/* A path of 600 characters (Open MPI 4.1 overflows a buffer at about 240) with file names of
 * 10 and 230 characters: written completely, nothing else left in the directory. */
static void test_long(MPI_Comm comm, int rank, int size)
{
    const int64_t cells[3] = {8, 8, 8};
    const double box[3] = {1, 1, 1};
    char dir[700] = "", path[1000], seg[201];
    memset(seg, 'd', 200);
    seg[200] = '\0';
    snprintf(dir, sizeof dir, "test_io_long_%d", size);
    if (rank == 0) mkdir(dir, 0755);
    for (int i = 0; i < 3; i++) {
        size_t n = strlen(dir);
        snprintf(dir + n, sizeof dir - n, "/%s", seg);
        if (rank == 0) mkdir(dir, 0755);
    }
    MPI_Barrier(comm);
    for (int k = 0; k < 2; k++) {
        char base[240];
        memset(base, 'n', sizeof base);
        snprintf(base + (k ? 226 : 6), 5, ".h5");
        snprintf(path, sizeof path, "%s/%s", dir, base);
        hx_grid g;
        CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
        hx_io *w = NULL;
        int id = -1;
        double v[512];
        for (int i = 0; i < 512; i++) v[i] = i;
        hx_status st = hx_io_create(&w, path, &g, HX_PREC_DOUBLE, NULL, comm);
        CHECK(st == HX_OK);
        if (st != HX_OK) fprintf(stderr, "  %s\n", hx_error_message());
        if (st != HX_OK) continue;
        CHECK(hx_io_add_field(w, "density", 1, "code_mass/code_length**3", 0, &id) == HX_OK);
        CHECK(hx_io_write_doubles(w, id, 0, v + (size_t)g.z0 * 64) == HX_OK);
        CHECK(hx_io_close(&w, 1) == HX_OK);
        MPI_Barrier(comm);
        hx_io_verify_counts c; /* reading goes through /proc/self/fd/N/NAME: a 230-character NAME is refused */
        if (k == 0) CHECK(hx_io_verify(path, comm, NULL, &c) == HX_OK && c.ok == 1);
        else {
            CHECK(hx_io_verify(path, comm, NULL, &c) == HX_ERR_ARG);
            CHECK_STR_CONTAINS(hx_error_message(), "too long for the MPI-IO layer");
        }
        if (rank == 0) {
            char xmf[1100];
            snprintf(xmf, sizeof xmf, "%s.xmf", path);
            CHECK(exists(path) && exists(xmf));
            remove(path);
            remove(xmf);
        }
    }
    MPI_Barrier(comm);
    if (rank == 0) /* empty, so every level goes: nothing (no hidden partial) was left */
        for (int i = 0; i < 4; i++) {
            CHECK(rmdir(dir) == 0);
            char *slash = strrchr(dir, '/');
            if (slash) *slash = '\0';
        }
}

/* test_io verify FILE: hx_io_verify's report, exit 0 when every dataset is intact. */
static int verify_main(const char *path, MPI_Comm comm, int rank)
{
    hx_io_verify_counts c;
    hx_status st = hx_io_verify(path, comm, stdout, &c);
    if (st != HX_OK && rank == 0) fprintf(stderr, "test_io: error: %s\n", hx_error_message());
    return st != HX_OK ? 3 : (c.bad || c.missing || c.datasets == 0) ? 1 : 0;
}

/* A malformed hint text is refused before anything is created, on every rank alike. */
static void test_refused(MPI_Comm comm, int size)
{
    const int64_t cells[3] = {8, 8, 8};
    const double box[3] = {1, 1, 1};
    char path[64], partial[80];
    snprintf(path, sizeof path, "test_io_refused_%d.h5", size);
    snprintf(partial, sizeof partial, "%s.partial", path);
    hx_grid g;
    CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
    hx_io *w = NULL;
    hx_io_tuning t = {0, "cb_nodes"};
    CHECK(hx_error_agree(comm, hx_io_create(&w, path, &g, HX_PREC_SINGLE, &t, comm)) == HX_ERR_ARG);
    CHECK(w == NULL);
    MPI_Barrier(comm);
    FILE *fp = fopen(partial, "r");
    CHECK(fp == NULL);
    if (fp) fclose(fp);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm;
    MPI_Comm_dup(MPI_COMM_WORLD, &comm);
    MPI_Comm_set_errhandler(comm, MPI_ERRORS_RETURN);
    int rank, size;
    MPI_Comm_rank(comm, &rank);
    MPI_Comm_size(comm, &size);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* as the CLI does: failures are reported by helmix */
    if (argc == 3 && !strcmp(argv[1], "verify")) {
        int code = verify_main(argv[2], comm, rank);
        MPI_Comm_free(&comm);
        MPI_Finalize();
        return code;
    }
    test_check();
    test_write(comm, rank, size);
    test_refused(comm, size);
    test_claim(comm, rank, size);
    test_long(comm, rank, size);
    int fails = hx_test_fail, total_fail = 0;
    MPI_Allreduce(&fails, &total_fail, 1, MPI_INT, MPI_SUM, comm);
    int rc = 0;
    if (rank == 0) rc = total_fail ? (printf("%d passed, %d failed\n", hx_test_pass, total_fail), 1) : hx_test_finish();
    MPI_Bcast(&rc, 1, MPI_INT, 0, comm);
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return rc;
}
