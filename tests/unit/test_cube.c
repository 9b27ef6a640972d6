/* test_cube.c — reading cubes (helmix/cube.h) from files this test writes itself with plain
 * HDF5 calls: foreign layouts (three 3-D datasets in zyx order with Grid Data Format edges,
 * one 4-D dataset in xyz order with the component axis last) land in the right cells of the
 * r2c slab; malformed files (not HDF5, a missing dataset, a 2-D dataset, text, shapes that
 * differ) are refused with one line; non-finite values are refused with their count and the
 * first position in the dataset's storage order; the /helmix request is read back, and each
 * malformed request attribute (a text vrms, two values for kmax, a NaN slope, no recipe, an
 * unknown mix_mode, a zeta outside [0, 1], a text state attribute) is an error naming it.
 * Runs on any number of ranks (every rank checks the same verdicts). */
#include <hdf5.h>
#include <math.h>
#include <mpi.h>
#include <stdlib.h>
#include <unistd.h>

#include "helmix/cube.h"
#include "helmix/grid.h"
#include "hx_test.h"

static MPI_Comm comm;
static int rank;
static char dir[256];

enum { NX = 6, NY = 5, NZ = 4 };

/* The value a test field holds at cell (i, j, k), component c: distinct everywhere. */
static double value(int c, int i, int j, int k) { return 1000.0 * c + 100.0 * k + 10.0 * j + i; }

static void path_of(char *buf, size_t len, const char *name) { snprintf(buf, len, "%s/%s", dir, name); }

/* Rank 0 writes, everyone waits: the files are small and written serially. */
static hid_t create(const char *name)
{
    char p[512];
    path_of(p, sizeof p, name);
    return H5Fcreate(p, H5F_ACC_TRUNC, H5P_DEFAULT, H5P_DEFAULT);
}

static void dataset(hid_t f, const char *name, int rankn, const hsize_t *dims, const double *data)
{
    hid_t sp = H5Screate_simple(rankn, dims, NULL);
    hid_t d = H5Dcreate2(f, name, H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, data);
    H5Dclose(d);
    H5Sclose(sp);
}

static void attr_doubles(hid_t obj, const char *name, const double *v, int n)
{
    if (H5Aexists(obj, name) > 0) H5Adelete(obj, name);
    hsize_t dn = (hsize_t)n;
    hid_t sp = n == 0 ? H5Screate(H5S_SCALAR) : H5Screate_simple(1, &dn, NULL);
    hid_t a = H5Acreate2(obj, name, H5T_IEEE_F64LE, sp, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, H5T_NATIVE_DOUBLE, v);
    H5Aclose(a);
    H5Sclose(sp);
}

static void attr_double(hid_t obj, const char *name, double v) { attr_doubles(obj, name, &v, 0); }

static void attr_text(hid_t obj, const char *name, const char *text)
{
    if (H5Aexists(obj, name) > 0) H5Adelete(obj, name);
    hid_t t = H5Tcopy(H5T_C_S1), sp = H5Screate(H5S_SCALAR);
    H5Tset_size(t, strlen(text) + 1);
    hid_t a = H5Acreate2(obj, name, t, sp, H5P_DEFAULT, H5P_DEFAULT);
    H5Awrite(a, t, text);
    H5Aclose(a);
    H5Sclose(sp);
    H5Tclose(t);
}

/* The test field as three (NZ, NY, NX) arrays, or one (NX, NY, NZ, 3) array. */
static void fill_zyx(double *v, int c)
{
    for (int k = 0; k < NZ; k++)
        for (int j = 0; j < NY; j++)
            for (int i = 0; i < NX; i++) v[(k * NY + j) * NX + i] = value(c, i, j, k);
}

static void fill_xyz4(double *v)
{
    for (int i = 0; i < NX; i++)
        for (int j = 0; j < NY; j++)
            for (int k = 0; k < NZ; k++)
                for (int c = 0; c < 3; c++) v[((i * NY + j) * NZ + k) * 3 + c] = value(c, i, j, k);
}

/* A /helmix group as make writes it: every attribute of the request. */
static void helmix_group(hid_t f)
{
    hid_t g = H5Gcreate2(f, "/helmix", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    attr_text(g, "recipe", "[grid]\ncells = 6\n");
    attr_text(g, "mix_mode", "zeta");
    attr_double(g, "zeta", 0.5);
    attr_text(g, "exact", "none");
    attr_double(g, "expected_compressive_fraction", 1.0 / 3.0);
    attr_double(g, "compressive_fraction_target", NAN);
    attr_double(g, "realized_compressive_fraction", 0.31);
    attr_double(g, "vrms", 1.5);
    attr_text(g, "spectrum_shape", "power");
    attr_double(g, "slope", 2.0);
    attr_double(g, "slope_fit_expected", 1.9);
    attr_double(g, "slope_fit_sigma", 0.02);
    attr_double(g, "kmin", 1.0);
    attr_double(g, "kmax", 2.0);
    attr_text(g, "amplitudes", "gaussian");
    attr_text(g, "fraction_of", "synthesis");
    attr_text(g, "mix_weight", "volume");
    hid_t s = H5Gcreate2(g, "state", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    attr_double(s, "mach_asked", NAN);
    attr_double(s, "sound_speed", 0.2);
    H5Gclose(s);
    H5Gclose(g);
}

static void write_files(void)
{
    double *v = malloc(3 * NX * NY * NZ * sizeof *v);
    hsize_t d3[3] = {NZ, NY, NX}, d4[4] = {NX, NY, NZ, 3}, d2[2] = {NY, NX}, dbad[3] = {NZ, NY, NX - 1};
    hid_t f = create("zyx.h5");
    for (int c = 0; c < 3; c++) {
        fill_zyx(v, c);
        dataset(f, c == 0 ? "/u" : c == 1 ? "/v" : "/w", 3, d3, v);
    }
    hid_t g = H5Gcreate2(f, "/simulation_parameters", H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    double l[3] = {-1, -1, -1}, r[3] = {2, 1.5, 1};
    attr_doubles(g, "domain_left_edge", l, 3);
    attr_doubles(g, "domain_right_edge", r, 3);
    H5Gclose(g);
    dataset(f, "/flat", 2, d2, v);
    dataset(f, "/narrow", 3, dbad, v);
    hid_t t = H5Tcopy(H5T_C_S1), sp = H5Screate_simple(3, d3, NULL);
    H5Tset_size(t, 4);
    hid_t ds = H5Dcreate2(f, "/text", t, sp, H5P_DEFAULT, H5P_DEFAULT, H5P_DEFAULT);
    H5Dclose(ds);
    H5Sclose(sp);
    H5Tclose(t);
    /* one NaN at cell (2, 3, 1) and an infinity at (0, 0, 3) of /w2 */
    fill_zyx(v, 2);
    v[(1 * NY + 3) * NX + 2] = NAN;
    v[(3 * NY + 0) * NX + 0] = -INFINITY;
    dataset(f, "/w2", 3, d3, v);
    H5Fclose(f);
    f = create("xyz4.h5");
    fill_xyz4(v);
    dataset(f, "/vel", 4, d4, v);
    H5Fclose(f);
    f = create("helmix.h5");
    for (int c = 0; c < 3; c++) {
        char name[64];
        fill_zyx(v, c);
        snprintf(name, sizeof name, "/data/grid_0000000000/velocity_%c", "xyz"[c]);
        hid_t lcpl = H5Pcreate(H5P_LINK_CREATE);
        H5Pset_create_intermediate_group(lcpl, 1);
        hid_t s3 = H5Screate_simple(3, d3, NULL);
        hid_t d = H5Dcreate2(f, name, H5T_IEEE_F64LE, s3, lcpl, H5P_DEFAULT, H5P_DEFAULT);
        H5Dwrite(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, v);
        H5Dclose(d);
        H5Sclose(s3);
        H5Pclose(lcpl);
    }
    helmix_group(f);
    H5Fclose(f);
    char p[512];
    path_of(p, sizeof p, "notes.h5");
    FILE *fp = fopen(p, "w");
    if (fp) {
        fputs("not an HDF5 file\n", fp);
        fclose(fp);
    }
    free(v);
}

static hx_cube_spec spec(const char *name, const char *vector, hx_order order)
{
    static char p[4][512];
    static int n;
    char *buf = p[n++ % 4];
    path_of(buf, 512, name);
    hx_cube_spec s = {0};
    s.file = buf;
    s.vector = vector;
    s.order = order;
    return s;
}

/* Read every component of an open cube into the r2c slab and compare with value(). */
static int slab_matches(hx_cube *cu)
{
    hx_grid g;
    int64_t cells[3];
    double box[3];
    hx_cube_shape(cu, cells, box);
    if (hx_grid_init(&g, cells, box, comm) != HX_OK) return 0;
    const int64_t stride = 2 * g.nxc;
    double *a = calloc((size_t)(2 * (g.alloc > 0 ? g.alloc : 1)), sizeof *a);
    int ok = a != NULL;
    for (int c = 0; c < 3 && ok; c++) {
        ok &= hx_cube_read(cu, c, &g, a, stride) == HX_OK;
        for (ptrdiff_t z = 0; z < g.nz; z++)
            for (ptrdiff_t y = 0; y < NY; y++)
                for (ptrdiff_t x = 0; x < NX; x++) ok &= a[(z * NY + y) * stride + x] == value(c, (int)x, (int)y, (int)(g.z0 + z));
        ok &= hx_cube_check_finite(cu, c, &g, a, stride) == HX_OK;
    }
    free(a);
    int all = 0;
    MPI_Allreduce(&ok, &all, 1, MPI_INT, MPI_LAND, comm);
    return all;
}

static void test_layouts(void)
{
    hx_cube *cu = NULL;
    int64_t cells[3];
    double box[3];
    /* three 3-D datasets, zyx: the box from the Grid Data Format edges (right - left) */
    hx_cube_spec s = spec("zyx.h5", "/u,/v,/w", HX_ORDER_ZYX);
    CHECK(hx_cube_open(&cu, &s, comm) == HX_OK);
    if (cu) {
        hx_cube_shape(cu, cells, box);
        CHECK(cells[0] == NX && cells[1] == NY && cells[2] == NZ);
        CHECK(box[0] == 3.0 && box[1] == 2.5 && box[2] == 2.0);
        CHECK(!hx_cube_single(cu));
        CHECK(slab_matches(cu));
        int found = -1;
        hx_request q;
        CHECK(hx_cube_request(cu, &q, &found) == HX_OK && found == 0); /* a foreign file records no request */
        hx_cube_close(&cu);
        CHECK(cu == NULL);
    }
    /* one 4-D dataset (x, y, z, component): xyz order, component axis last, --box given */
    s = spec("xyz4.h5", "/vel", HX_ORDER_XYZ);
    s.has_box = 1, s.box[0] = 1, s.box[1] = 1, s.box[2] = 4;
    CHECK(hx_cube_open(&cu, &s, comm) == HX_OK);
    if (cu) {
        hx_cube_shape(cu, cells, box);
        CHECK(cells[0] == NX && cells[1] == NY && cells[2] == NZ && box[2] == 4.0);
        CHECK(slab_matches(cu));
        hx_cube_close(&cu);
    }
    hx_cube_close(&cu); /* NULL is accepted */
}

static void refused(const char *file, const char *vector, const char *words)
{
    hx_cube *cu = NULL;
    hx_cube_spec s = spec(file, vector, HX_ORDER_ZYX);
    hx_status st = hx_cube_open(&cu, &s, comm);
    CHECK(st == HX_ERR_ARG && cu == NULL);
    CHECK_STR_CONTAINS(hx_error_message(), words);
    hx_cube_close(&cu);
}

static void test_malformed_files(void)
{
    refused("notes.h5", NULL, "cannot open");
    refused("absent.h5", NULL, "absent.h5");
    refused("zyx.h5", NULL, "velocity_x"); /* not the helmix layout: the dataset it looked for */
    refused("zyx.h5", "/u,/v,/missing", "/missing");
    refused("zyx.h5", "/u,/v,/flat", "need a 3-D dataset");
    refused("zyx.h5", "/u,/v,/narrow", "differ in shape");
    refused("zyx.h5", "/u,/v,/text", "does not hold numbers");
    refused("zyx.h5", "/u,/v", "three dataset paths");
    refused("zyx.h5", "/u", "4-D");
}

/* NaN at (2, 3, 1) and -inf at (0, 0, 3) of /w2: refused with the count and the first value in
 * storage order (k slowest): (2, 3, 1), whichever rank holds it. */
static void test_nonfinite(void)
{
    hx_cube *cu = NULL;
    hx_cube_spec s = spec("zyx.h5", "/u,/v,/w2", HX_ORDER_ZYX);
    CHECK(hx_cube_open(&cu, &s, comm) == HX_OK);
    if (!cu) return;
    hx_grid g;
    int64_t cells[3];
    double box[3];
    hx_cube_shape(cu, cells, box);
    CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
    double *a = calloc((size_t)(2 * (g.alloc > 0 ? g.alloc : 1)), sizeof *a);
    CHECK(hx_cube_read(cu, 2, &g, a, 2 * g.nxc) == HX_OK);
    CHECK(hx_cube_check_finite(cu, 2, &g, a, 2 * g.nxc) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "/w2 in ");
    CHECK_STR_CONTAINS(hx_error_message(), "2 non-finite values (1 NaN, 1 infinite)");
    CHECK_STR_CONTAINS(hx_error_message(), "(i, j, k) = (2, 3, 1), dataset index [1][3][2]");
    CHECK(hx_cube_read(cu, 0, &g, a, 2 * g.nxc) == HX_OK && hx_cube_check_finite(cu, 0, &g, a, 2 * g.nxc) == HX_OK);
    free(a);
    hx_cube_close(&cu);
}

/* Open helmix.h5 after `alter` changed one attribute (NULL: none); the request's status. */
static hx_status request_after(void (*alter)(hid_t), hx_request *q, int *found)
{
    char p[512];
    path_of(p, sizeof p, "helmix.h5");
    if (rank == 0) {
        hid_t f = H5Fopen(p, H5F_ACC_RDWR, H5P_DEFAULT);
        H5Gunlink(f, "/helmix"); /* a fresh group each time */
        helmix_group(f);
        if (alter) {
            hid_t g = H5Gopen2(f, "/helmix", H5P_DEFAULT);
            alter(g);
            H5Gclose(g);
        }
        H5Fclose(f);
    }
    MPI_Barrier(comm);
    hx_cube *cu = NULL;
    hx_cube_spec s = spec("helmix.h5", NULL, HX_ORDER_ZYX);
    hx_status st = hx_cube_open(&cu, &s, comm);
    if (st == HX_OK) {
        st = hx_cube_request(cu, q, found);
        hx_cube_state state;
        if (st == HX_OK) st = hx_cube_read_state(cu, &state);
    }
    hx_cube_close(&cu);
    MPI_Barrier(comm);
    return st;
}

static void text_vrms(hid_t g) { attr_text(g, "vrms", "1.5"); }
static void two_kmax(hid_t g) { double k[2] = {1, 2}; attr_doubles(g, "kmax", k, 2); }
static void nan_slope(hid_t g) { attr_double(g, "slope", NAN); }
static void no_recipe(hid_t g) { H5Adelete(g, "recipe"); }
static void odd_mode(hid_t g) { attr_text(g, "mix_mode", "half"); }
static void big_zeta(hid_t g) { attr_double(g, "zeta", 1.5); }
static void inf_vrms(hid_t g) { attr_double(g, "vrms", INFINITY); }
static void band_nan_slope(hid_t g) { attr_text(g, "spectrum_shape", "band"), attr_double(g, "slope", NAN); }
static void text_state(hid_t g)
{
    hid_t s = H5Gopen2(g, "state", H5P_DEFAULT);
    attr_text(s, "mach_asked", "2");
    H5Gclose(s);
}
static void exact_total_nan(hid_t g) { attr_text(g, "exact", "total"); }

static void test_request(void)
{
    hx_request q;
    int found = 0;
    CHECK(request_after(NULL, &q, &found) == HX_OK && found == 1);
    CHECK(q.has_vrms && q.vrms == 1.5 && q.has_recorded && q.recorded_fraction == 0.31 && !q.has_fraction);
    CHECK(q.expected_fraction == 1.0 / 3.0 && q.has_slope && q.slope == 1.9 && q.slope_recipe == 2.0);
    CHECK_CLOSE(q.tol_slope, 0.1, 1e-15); /* 5 sigma of the recorded scatter */
    CHECK(q.fit_kmin == 1.0 && q.fit_kmax == 2.0 && q.zero_mean);
    /* a band shape promises no slope: its NaN slope is allowed and judged by nobody */
    CHECK(request_after(band_nan_slope, &q, &found) == HX_OK && !q.has_slope);
    const struct {
        void (*alter)(hid_t);
        const char *words[2];
    } bad[] = {
        {text_vrms, {"/helmix vrms is text", "one number"}},
        {two_kmax, {"/helmix kmax holds 2 values", "one number"}},
        {nan_slope, {"/helmix slope is NaN", "a finite number"}},
        {no_recipe, {"/helmix recipe is missing", "helmix.h5"}},
        {odd_mode, {"/helmix mix_mode is 'half'", "one of zeta, compressive_fraction"}},
        {big_zeta, {"/helmix zeta is 1.5", "[0, 1]"}},
        {inf_vrms, {"/helmix vrms is infinite", "finite"}},
        {text_state, {"/helmix/state mach_asked is text", "one number"}},
        {exact_total_nan, {"/helmix compressive_fraction_target is NaN", "exact is total or shell"}},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        hx_status st = request_after(bad[i].alter, &q, &found);
        CHECK(st == HX_ERR_ARG);
        for (int w = 0; w < 2; w++) CHECK_STR_CONTAINS(hx_error_message(), bad[i].words[w]);
    }
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm_dup(MPI_COMM_WORLD, &comm);
    MPI_Comm_rank(comm, &rank);
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL);
    if (rank == 0) {
        snprintf(dir, sizeof dir, "/tmp/helmix_test_cube_XXXXXX");
        if (!mkdtemp(dir)) dir[0] = '\0';
    }
    MPI_Bcast(dir, sizeof dir, MPI_CHAR, 0, comm);
    if (rank == 0) write_files();
    MPI_Barrier(comm);
    test_layouts();
    test_malformed_files();
    test_nonfinite();
    test_request();
    MPI_Barrier(comm);
    if (rank == 0) {
        const char *names[] = {"zyx.h5", "xyz4.h5", "helmix.h5", "notes.h5"};
        for (int i = 0; i < 4; i++) {
            char p[512];
            path_of(p, sizeof p, names[i]);
            unlink(p);
        }
        rmdir(dir);
    }
    int failed = 0, local = hx_test_fail;
    MPI_Allreduce(&local, &failed, 1, MPI_INT, MPI_SUM, comm);
    int code = rank == 0 ? hx_test_finish() : (hx_test_fail ? 1 : 0);
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return failed ? 1 : code;
}
