/* suite_fields.c — fields make cannot write itself: closed-form flows, a made field plus bulk flow
 * or noise, and a share rising shell by shell. Invariants: a value depends on its global cell or
 * mode index and on sums added in plane order, never on the rank count; failures are agreed
 * before the next collective, and a failed file is removed (hx_io_close with commit 0). */
#include <complex.h>
#include <fftw3-mpi.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/io.h"
#include "helmix/rng.h"
#include "helmix/schema.h"
#include "helmix/version.h"
#include "suite_impl.h"

#define UNIT_VELOCITY "code_length/code_time"
#define SUITE_GROUP "/suite"     /* what the suite records of a cube it wrote itself */
#define NOISE_STREAM 16          /* a Philox key word no helmix field uses (velocity 0 .. magnetic 2) */

/* Centre of cell i on axis a, (i + 1/2) L / N, with make's arithmetic. */
static inline double centre(const hx_grid *g, int a, ptrdiff_t i) { return ((double)i + 0.5) * g->box[a] / (double)g->n[a]; }

static inline int64_t local_cells(const hx_grid *g) { return (int64_t)g->nz * g->n[1] * g->n[0]; }

/* Allocate a slab of this rank's real cells; the verdict is agreed. */
static hx_status slab(double **p, const hx_grid *g, MPI_Comm comm)
{
    int64_t n = local_cells(g);
    *p = malloc((size_t)(n > 0 ? n : 1) * sizeof **p);
    return hx_error_agree(comm, *p ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for a slab of %lld values", (long long)n));
}

hx_status hx_suite_open_field(const char *src, const char *name, hx_cube **cube, MPI_Comm comm)
{
    char paths[3 * SUITE_PATH + 3], one[SUITE_PATH];
    size_t used = 0;
    for (int c = 0; c < 3; c++) {
        hx_schema_dataset(one, sizeof one, name, 3, c);
        used += (size_t)snprintf(paths + used, sizeof paths - used, "%s%s", c ? "," : "", one);
    }
    hx_cube_spec spec;
    memset(&spec, 0, sizeof spec);
    spec.file = src;
    spec.vector = paths;
    spec.order = HX_ORDER_ZYX;
    return hx_error_agree(comm, hx_cube_open(cube, &spec, comm));
}

/* The grid of an open cube, on comm. */
static hx_status cube_grid(hx_cube *cube, hx_grid *g, MPI_Comm comm)
{
    int64_t cells[3];
    double box[3];
    hx_cube_shape(cube, cells, box);
    return hx_error_agree(comm, hx_grid_init(g, cells, box, comm));
}

static hx_status read_component(hx_cube *cube, int c, const hx_grid *g, double *dst, int64_t stride, MPI_Comm comm)
{
    return hx_error_agree(comm, hx_cube_read(cube, c, g, dst, stride));
}

/* Create PATH.partial with the given double-precision vector fields (ids in order). */
static hx_status create_out(hx_io **io, const char *path, const hx_grid *g, const char *const *fields, int nf, int *ids,
                            const char *what, MPI_Comm comm)
{
    hx_status st = HX_OK;
    HX_TRY(hx_error_agree(comm, hx_io_create(io, path, g, HX_PREC_DOUBLE, NULL, comm)));
    for (int i = 0; i < nf; i++) HX_TRY(hx_error_agree(comm, hx_io_add_field(*io, fields[i], 3, UNIT_VELOCITY, 0, &ids[i])));
    HX_TRY(hx_error_agree(comm, hx_io_attr_string(*io, SUITE_GROUP, "helmix_version", HX_VERSION)));
    HX_TRY(hx_error_agree(comm, hx_io_attr_string(*io, SUITE_GROUP, "content", what)));
fail:
    return st;
}

static hx_status write_out(hx_io *io, int id, int c, const double *v, MPI_Comm comm)
{
    return hx_error_agree(comm, hx_io_write_doubles(io, id, c, v));
}

/* ---- closed forms ----------------------------------------------------------------------------- */

/* Component c of the flow at (x, y, z). ABC with A = B = C = 1 (Dombre et al. 1986, J. Fluid Mech.
 * 167, 353); Taylor-Green (Taylor & Green 1937, Proc. R. Soc. A 158, 499); the gradient of
 * phi = sin x sin 2y + cos(3z) / 2. */
static double flow(hx_suite_flow f, double k, int c, double x, double y, double z)
{
    switch (f) {
    case HX_SUITE_ABC:
        return c == 0 ? sin(k * z) + cos(k * y) : c == 1 ? sin(k * x) + cos(k * z) : sin(k * y) + cos(k * x);
    case HX_SUITE_TAYLOR_GREEN:
        return c == 0 ? sin(x) * cos(y) * cos(z) : c == 1 ? -cos(x) * sin(y) * cos(z) : 0.0;
    case HX_SUITE_GRADIENT:
        return c == 0 ? cos(x) * sin(2 * y) : c == 1 ? 2 * sin(x) * cos(2 * y) : -1.5 * sin(3 * z);
    }
    return 0.0;
}

hx_status hx_suite_analytic(const char *path, hx_suite_flow f, double k, int64_t n, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_grid g;
    hx_io *io = NULL;
    double *v = NULL;
    const int64_t cells[3] = {n, n, n};
    const double box[3] = {2 * M_PI, 2 * M_PI, 2 * M_PI};
    static const char *const fields[1] = {HX_FIELD_VELOCITY};
    static const char *const what[3] = {"Arnold-Beltrami-Childress flow, A = B = C = 1", "Taylor-Green vortex",
                                        "gradient of phi = sin x sin 2y + cos(3z)/2"};
    int id = -1;
    HX_TRY(hx_error_agree(comm, hx_grid_init(&g, cells, box, comm)));
    HX_TRY(slab(&v, &g, comm));
    HX_TRY(create_out(&io, path, &g, fields, 1, &id, what[f], comm));
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "wavenumber", &k, 0)));
    for (int c = 0; c < 3; c++) {
        for (ptrdiff_t z = 0; z < g.nz; z++)
            for (ptrdiff_t y = 0; y < g.n[1]; y++)
                for (ptrdiff_t x = 0; x < g.n[0]; x++)
                    v[(z * g.n[1] + y) * g.n[0] + x] = flow(f, k, c, centre(&g, 0, x), centre(&g, 1, y), centre(&g, 2, g.z0 + z));
        HX_TRY(write_out(io, id, c, v, comm));
    }
    st = hx_io_close(&io, 1);
fail:
    if (io) hx_io_close(&io, 0);
    free(v);
    return st;
}

/* ---- a made field plus bulk flow or noise ----------------------------------------------------- */

hx_status hx_suite_bulk(const char *src, const char *path, const double om[3], const double u[3], MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_cube *cv = NULL, *cs = NULL, *cc = NULL;
    hx_io *io = NULL;
    hx_grid g;
    double *v = NULL, *s = NULL, *p = NULL;
    static const char *const fields[4] = {HX_FIELD_VELOCITY, HX_FIELD_SOLENOIDAL, HX_FIELD_COMPRESSIVE, SUITE_FIELD_CLEAN};
    int id[4];
    HX_TRY(hx_suite_open_field(src, HX_FIELD_VELOCITY, &cv, comm));
    HX_TRY(hx_suite_open_field(src, HX_FIELD_SOLENOIDAL, &cs, comm));
    HX_TRY(hx_suite_open_field(src, HX_FIELD_COMPRESSIVE, &cc, comm));
    HX_TRY(cube_grid(cv, &g, comm));
    HX_TRY(slab(&v, &g, comm));
    HX_TRY(slab(&s, &g, comm));
    HX_TRY(slab(&p, &g, comm));
    HX_TRY(create_out(&io, path, &g, fields, 4, id, "a mixed field plus a solid-body rotation and a uniform flow", comm));
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "omega", om, 3)));
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "uniform_flow", u, 3)));
    const double mid[3] = {0.5 * g.box[0], 0.5 * g.box[1], 0.5 * g.box[2]};
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "rotation_centre", mid, 3)));
    for (int c = 0; c < 3; c++) {
        int64_t stride = g.n[0];
        HX_TRY(read_component(cv, c, &g, v, stride, comm));
        HX_TRY(read_component(cs, c, &g, s, stride, comm));
        HX_TRY(read_component(cc, c, &g, p, stride, comm));
        HX_TRY(write_out(io, id[3], c, v, comm));
        HX_TRY(write_out(io, id[2], c, p, comm));
        int a1 = (c + 1) % 3, a2 = (c + 2) % 3; /* (omega x d)_c = om_a1 d_a2 - om_a2 d_a1 */
        for (ptrdiff_t z = 0; z < g.nz; z++)
            for (ptrdiff_t y = 0; y < g.n[1]; y++)
                for (ptrdiff_t x = 0; x < g.n[0]; x++) {
                    const ptrdiff_t idx[3] = {x, y, g.z0 + z}, i = (z * g.n[1] + y) * g.n[0] + x;
                    double d1 = centre(&g, a1, idx[a1]) - mid[a1], d2 = centre(&g, a2, idx[a2]) - mid[a2];
                    double r = om[a1] * d2 - om[a2] * d1;
                    v[i] += r + u[c];
                    s[i] += r; /* the rotation is divergence-free; u is the mean, in neither part */
                }
        HX_TRY(write_out(io, id[0], c, v, comm));
        HX_TRY(write_out(io, id[1], c, s, comm));
    }
    st = hx_io_close(&io, 1);
fail:
    if (io) hx_io_close(&io, 0);
    hx_cube_close(&cv);
    hx_cube_close(&cs);
    hx_cube_close(&cc);
    free(v);
    free(s);
    free(p);
    return st;
}

/* Three independent standard Gaussians of cell (x, y, z): Box-Muller on the four 64-bit words of
 * one Philox draw (53-bit uniforms in (0, 1]). */
static void cell_gaussians(uint64_t seed, int64_t x, int64_t y, int64_t z, double gz[3])
{
    uint64_t b[4];
    double u[4];
    hx_rng_bits(seed, NOISE_STREAM, x, y, z, 0, b);
    for (int i = 0; i < 4; i++) u[i] = ((double)(b[i] >> 11) + 1.0) * 0x1.0p-53;
    double r0 = sqrt(-2.0 * log(u[0])), r1 = sqrt(-2.0 * log(u[2]));
    gz[0] = r0 * cos(2 * M_PI * u[1]);
    gz[1] = r0 * sin(2 * M_PI * u[1]);
    gz[2] = r1 * cos(2 * M_PI * u[3]);
}

hx_status hx_suite_noise(const char *src, const char *path, double sigma, uint64_t seed, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_cube *cv = NULL;
    hx_io *io = NULL;
    hx_grid g;
    double *v = NULL, *w = NULL;
    static const char *const fields[2] = {HX_FIELD_VELOCITY, SUITE_FIELD_CLEAN};
    int id[2];
    HX_TRY(hx_suite_open_field(src, HX_FIELD_VELOCITY, &cv, comm));
    HX_TRY(cube_grid(cv, &g, comm));
    HX_TRY(slab(&v, &g, comm));
    HX_TRY(slab(&w, &g, comm));
    HX_TRY(create_out(&io, path, &g, fields, 2, id, "a mixed field plus white Gaussian noise", comm));
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "noise_sigma", &sigma, 0)));
    HX_TRY(hx_error_agree(comm, hx_io_attr_uint64(io, SUITE_GROUP, "noise_seed", seed)));
    for (int c = 0; c < 3; c++) {
        HX_TRY(read_component(cv, c, &g, v, g.n[0], comm));
        HX_TRY(write_out(io, id[1], c, v, comm));
        for (ptrdiff_t z = 0; z < g.nz; z++)
            for (ptrdiff_t y = 0; y < g.n[1]; y++)
                for (ptrdiff_t x = 0; x < g.n[0]; x++) {
                    double gz[3];
                    cell_gaussians(seed, x, y, g.z0 + z, gz); /* regenerated per component: memory stays two slabs */
                    w[(z * g.n[1] + y) * g.n[0] + x] = v[(z * g.n[1] + y) * g.n[0] + x] + sigma * gz[c];
                }
        HX_TRY(write_out(io, id[0], c, w, comm));
    }
    st = hx_io_close(&io, 1);
fail:
    if (io) hx_io_close(&io, 0);
    hx_cube_close(&cv);
    free(v);
    free(w);
    return st;
}

/* ---- a share rising with k ------------------------------------------------------------------ */

typedef struct rising_t {
    hx_grid g;
    MPI_Comm comm;
    int nshell;
    fftw_complex *a, *b;   /* the solenoidal and compressive part of one component     */
    fftw_plan r2c, c2r;    /* planned on a, executed on b through the new-array interface */
} rising_t;

static inline int mode_shell(const hx_grid *g, ptrdiff_t y, ptrdiff_t z, ptrdiff_t x, double *w)
{
    double k2 = 0;
    const ptrdiff_t idx[3] = {x, y, z};
    for (int a = 0; a < 3; a++) {
        double k = (double)hx_grid_freq(idx[a], g->n[a]) * hx_grid_kunit(g, a);
        k2 += k * k;
    }
    *w = (x == 0 || 2 * x == g->n[0]) ? 1.0 : 2.0; /* the unstored conjugate half */
    return (int)(sqrt(k2) + 0.5);
}

/* Read component c of both parts into the padded rows of a and b and transform them (r2c). */
static hx_status load_parts(rising_t *R, hx_cube *cs, hx_cube *cc, int c)
{
    hx_status st = HX_OK;
    int64_t stride = 2 * R->g.nxc;
    HX_TRY(read_component(cs, c, &R->g, (double *)R->a, stride, R->comm));
    HX_TRY(read_component(cc, c, &R->g, (double *)R->b, stride, R->comm));
    fftw_mpi_execute_dft_r2c(R->r2c, (double *)R->a, R->a);
    fftw_mpi_execute_dft_r2c(R->r2c, (double *)R->b, R->b);
fail:
    return st;
}

/* Per-shell energies of the two parts, summed over the three components. Each rank sums its own
 * ky planes, the planes are gathered and added in plane order: the same sums on every rank count. */
static hx_status shell_energies(rising_t *R, hx_cube *cs, hx_cube *cc, double *es, double *ec)
{
    hx_status st = HX_OK;
    const hx_grid *g = &R->g;
    const int ns = R->nshell;
    double *loc = NULL, *all = NULL;
    int *counts = NULL, *displs = NULL;
    int nyl = (int)g->ny;
    st = (loc = calloc((size_t)(nyl > 0 ? nyl : 1) * ns * 2, sizeof *loc)) && (all = calloc((size_t)g->n[1] * ns * 2, sizeof *all)) &&
                 (counts = calloc((size_t)g->size, sizeof *counts)) && (displs = calloc((size_t)g->size, sizeof *displs))
             ? HX_OK
             : hx_error_set(HX_ERR_MEM, "out of memory for the shell sums");
    HX_TRY(hx_error_agree(R->comm, st));
    for (int c = 0; c < 3; c++) {
        HX_TRY(load_parts(R, cs, cc, c));
        for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
            for (ptrdiff_t z = 0; z < g->n[2]; z++)
                for (ptrdiff_t x = 0; x < g->nxc; x++) {
                    double w;
                    int s = mode_shell(g, y, z, x, &w);
                    ptrdiff_t i = ((y - g->y0) * g->n[2] + z) * g->nxc + x;
                    double complex A = ((double complex *)R->a)[i], B = ((double complex *)R->b)[i];
                    double *row = loc + ((y - g->y0) * ns + s) * 2;
                    row[0] += w * creal(A * conj(A));
                    row[1] += w * creal(B * conj(B));
                }
    }
    int mine = nyl * ns * 2;
    HX_MPI(MPI_Allgather(&mine, 1, MPI_INT, counts, 1, MPI_INT, R->comm));
    for (int r = 1; r < g->size; r++) displs[r] = displs[r - 1] + counts[r - 1];
    HX_MPI(MPI_Allgatherv(loc, mine, MPI_DOUBLE, all, counts, displs, MPI_DOUBLE, R->comm));
    /* ranks hold consecutive y planes in rank order, so `all` is in plane order */
    for (ptrdiff_t y = 0; y < g->n[1]; y++)
        for (int s = 0; s < ns; s++) {
            es[s] += all[(y * ns + s) * 2];
            ec[s] += all[(y * ns + s) * 2 + 1];
        }
fail:
    free(loc);
    free(all);
    free(counts);
    free(displs);
    return st;
}

/* Scale the modes of x by f[shell] / N, transform back (c2r) and pack the rows to Nx values. */
static void scale_back(rising_t *R, fftw_complex *x, const double *f)
{
    const hx_grid *g = &R->g;
    const double inv_n = 1.0 / (double)hx_grid_cells(g);
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++)
            for (ptrdiff_t xx = 0; xx < g->nxc; xx++) {
                double w;
                int s = mode_shell(g, y, z, xx, &w);
                ((double complex *)x)[((y - g->y0) * g->n[2] + z) * g->nxc + xx] *= f[s] * inv_n;
            }
    fftw_mpi_execute_dft_c2r(R->c2r, x, (double *)x);
    double *r = (double *)x;
    for (ptrdiff_t row = 0; row < g->nz * g->n[1]; row++) memmove(r + row * g->n[0], r + row * 2 * g->nxc, (size_t)g->n[0] * sizeof *r);
}

hx_status hx_suite_rising(const char *src, const char *path, int kmax, double f_first, double f_last, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_cube *cs = NULL, *cc = NULL;
    hx_io *io = NULL;
    rising_t R;
    double *es = NULL, *ec = NULL, *fa = NULL, *fb = NULL;
    static const char *const fields[3] = {HX_FIELD_VELOCITY, HX_FIELD_SOLENOIDAL, HX_FIELD_COMPRESSIVE};
    int id[3];
    memset(&R, 0, sizeof R);
    R.comm = comm;
    HX_TRY(hx_suite_open_field(src, HX_FIELD_SOLENOIDAL, &cs, comm));
    HX_TRY(hx_suite_open_field(src, HX_FIELD_COMPRESSIVE, &cc, comm));
    HX_TRY(cube_grid(cs, &R.g, comm));
    const hx_grid *g = &R.g;
    double k2 = 0;
    for (int a = 0; a < 3; a++) k2 += pow((double)(g->n[a] / 2) * hx_grid_kunit(g, a), 2);
    R.nshell = (int)(sqrt(k2) + 0.5) + 2;
    if (kmax < 2 || kmax >= R.nshell) /* the same verdict on every rank */
        HX_FAIL(HX_ERR_ARG, "a rising share needs 2 <= kmax < %d shells, not %d", R.nshell, kmax);
    R.a = fftw_alloc_complex((size_t)g->alloc);
    R.b = fftw_alloc_complex((size_t)g->alloc);
    es = calloc((size_t)R.nshell, sizeof *es), ec = calloc((size_t)R.nshell, sizeof *ec);
    fa = calloc((size_t)R.nshell, sizeof *fa), fb = calloc((size_t)R.nshell, sizeof *fb);
    st = R.a && R.b && es && ec && fa && fb ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for two complex slabs");
    HX_TRY(hx_error_agree(comm, st));
    R.r2c = fftw_mpi_plan_dft_r2c_3d(g->n[2], g->n[1], g->n[0], (double *)R.a, R.a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_OUT);
    R.c2r = fftw_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], R.a, (double *)R.a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    st = R.r2c && R.c2r ? HX_OK : hx_error_set(HX_ERR_FFTW, "FFTW could not plan the transforms of a %tdx%tdx%td grid", g->n[0], g->n[1], g->n[2]);
    HX_TRY(hx_error_agree(comm, st));
    HX_TRY(shell_energies(&R, cs, cc, es, ec));
    for (int s = 0; s < R.nshell; s++) {
        fa[s] = fb[s] = 1.0; /* outside the band: only round-off, left as it is */
        if (s < 1 || s > kmax) continue;
        if (!(es[s] > 0 && ec[s] > 0)) /* reduced sums: the same verdict on every rank */
            HX_FAIL(HX_ERR_ARG, "shell %d of %s holds no solenoidal or no compressive energy to rescale", s, src);
        double f = f_first + (f_last - f_first) * (double)(s - 1) / (double)(kmax - 1), e = es[s] + ec[s];
        fa[s] = sqrt((1.0 - f) * e / es[s]);
        fb[s] = sqrt(f * e / ec[s]);
    }
    char what[160];
    snprintf(what, sizeof what, "compressive share f(s) = %g + %g (s - 1) / %d in shells 1..%d, each shell keeping its energy",
             f_first, f_last - f_first, kmax - 1, kmax);
    HX_TRY(create_out(&io, path, g, fields, 3, id, what, comm));
    const double fl[2] = {f_first, f_last};
    HX_TRY(hx_error_agree(comm, hx_io_attr_doubles(io, SUITE_GROUP, "share_first_last", fl, 2)));
    for (int c = 0; c < 3; c++) {
        HX_TRY(load_parts(&R, cs, cc, c));
        scale_back(&R, R.a, fa);
        scale_back(&R, R.b, fb);
        double *s = (double *)R.a, *p = (double *)R.b;
        HX_TRY(write_out(io, id[1], c, s, comm));
        HX_TRY(write_out(io, id[2], c, p, comm));
        for (int64_t i = 0; i < local_cells(g); i++) s[i] += p[i];
        HX_TRY(write_out(io, id[0], c, s, comm));
    }
    st = hx_io_close(&io, 1);
fail:
    if (io) hx_io_close(&io, 0);
    if (R.r2c) fftw_destroy_plan(R.r2c);
    if (R.c2r) fftw_destroy_plan(R.c2r);
    fftw_free(R.a);
    fftw_free(R.b);
    hx_cube_close(&cs);
    hx_cube_close(&cc);
    free(es);
    free(ec);
    free(fa);
    free(fb);
    return st;
}
