/* suite.c — `helmix suite`: the case list. Each cube is made by the library (make, or the writers of
 * suite_fields.c and suite_layout.c), its answer is inspect's analysis of the stored values on rank
 * 0 alone, and the manifest comes last. Invariant: every rank walks the same collectives, failures
 * are agreed before the next one, and scratch files are removed on every path. */
#include "helmix/suite.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "check.h"
#include "helmix/diag.h"
#include "helmix/inspect.h"
#include "helmix/io.h"
#include "helmix/make.h"
#include "helmix/schema.h"
#include "helmix/version.h"
#include "suite_impl.h"

/* Suggested tolerances: what a correct tool should reach on each kind of cube. */
typedef struct tol_t {
    double share, shells, parts;
    const char *reason;
} tol_t;

#define SHELLS_NOTE " shells_relative is relative to each shell's energy and applies to shells holding more than 1e-12 of the largest shell's; parts_rms_relative is the rms of the difference over the rms of the field the parts add up to (a part may be zero)."
static const tol_t TOL_EXACT = {1e-6, 1e-6, 1e-6,
                                "Double-precision data whose answer holds to round-off (about 1e-13): 1e-6 is far above "
                                "round-off and far below the error of any real method (common practice)." SHELLS_NOTE};
static const tol_t TOL_SINGLE = {1e-5, 1e-4, 1e-5,
                                 "Single-precision storage (relative spacing 6e-8): the answer is that of the stored values "
                                 "read as doubles; a tool computing in single precision reaches about 1e-6 on totals and "
                                 "less on weak shells." SHELLS_NOTE};
static const tol_t TOL_NOISE = {1e-5, 1e-4, 1e-5,
                                "The answer is that of the noisy field as stored, which a spectral projection reproduces to "
                                "round-off; the noise dominates the top shells, where gradient stencils err most, and this "
                                "bound asks a spectral-quality result there." SHELLS_NOTE};
static const tol_t TOL_BULK = {1e-5, 1e-4, 1e-5,
                               "Exact for a spectral projection of the stored values; the rotation jumps at the box faces "
                               "(a periodic sawtooth), so every shell holds some of it, and a tool that windows or detrends "
                               "the data misses this bound." SHELLS_NOTE};

static const char SRC_SYNTH[] = "helmix synthesis: a Gaussian random field split by projection on k (Helmholtz "
                                "decomposition, common practice); zeta weighting as in Federrath et al. 2010, A&A 512, A81";
static const char SRC_FRACTION[] = "helmix synthesis: compressive_fraction with exact = total, the two projections of one "
                                   "Gaussian draw scaled to the share (Helmholtz decomposition by projection, common practice)";

typedef struct suite_t {
    const hx_suite_opts *o;
    const hx_log *log;
    hx_log quiet;          /* for the make runs inside the suite                         */
    MPI_Comm comm, solo;   /* solo: rank 0 alone (MPI_COMM_NULL on the other ranks)      */
    int rank, n, P;
    char dir[HX_PATH_MAX];
    hx_suite_cube *cube;
    int ncube;
    char scratch[HX_PATH_MAX]; /* the scratch file in use, "" when none                 */
    double t0;
} suite_t;

/* ---- small helpers ---------------------------------------------------------------------------- */

static hx_status in_dir(const suite_t *S, const char *name, char *buf)
{
    if ((size_t)snprintf(buf, HX_PATH_MAX, "%s/%s", S->dir, name) >= HX_PATH_MAX)
        return hx_error_set(HX_ERR_ARG, "the path %s/%s is longer than %d characters", S->dir, name, HX_PATH_MAX - 1);
    return HX_OK;
}

/* Make DIR and its parents (rank 0). 0 or an errno value. */
static int make_dirs(const char *dir)
{
    char buf[HX_PATH_MAX];
    struct stat sb;
    snprintf(buf, sizeof buf, "%s", dir);
    for (char *p = buf + 1; *p; p++)
        if (*p == '/') {
            *p = '\0';
            if (mkdir(buf, 0777) != 0 && errno != EEXIST) return errno;
            *p = '/';
        }
    if (mkdir(buf, 0777) != 0 && errno != EEXIST) return errno;
    if (stat(buf, &sb) != 0) return errno;
    return S_ISDIR(sb.st_mode) ? 0 : ENOTDIR;
}

static hx_suite_cube *new_cube(suite_t *S, const char *name, const char *category, const char *source, const tol_t *tol)
{
    if (S->ncube == SUITE_MAX_CUBES) return NULL;
    hx_suite_cube *c = &S->cube[S->ncube++];
    memset(c, 0, sizeof *c);
    snprintf(c->name, sizeof c->name, "%s", name);
    snprintf(c->file, sizeof c->file, "%s.h5", name);
    c->category = category;
    c->source = source;
    c->order = HX_ORDER_ZYX;
    c->precision = HX_PREC_DOUBLE;
    c->ladder_level = -1;
    for (int i = 0; i < 3; i++) hx_schema_dataset(c->vector[i], SUITE_PATH, HX_FIELD_VELOCITY, 3, i);
    c->tol_share = tol->share, c->tol_shells = tol->shells, c->tol_parts = tol->parts, c->tol_reason = tol->reason;
    return c;
}

#define NEW_CUBE(c, ...)                                                                                     \
    do {                                                                                                   \
        if (!((c) = new_cube(__VA_ARGS__))) HX_FAIL(HX_ERR_ARG, "more than %d cubes in the suite", SUITE_MAX_CUBES); \
    } while (0)

static void describe(hx_suite_cube *c, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void describe(hx_suite_cube *c, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(c->description, sizeof c->description, fmt, ap);
    va_end(ap);
}

static void set_grid(hx_suite_cube *c, const int64_t cells[3], const double box[3], hx_precision p)
{
    memcpy(c->cells, cells, sizeof c->cells);
    memcpy(c->box, box, sizeof c->box);
    c->precision = p;
}

/* The parts written by make ([output] parts = true) or by the suite's writers. */
static void field_parts(hx_suite_cube *c)
{
    c->has_parts = 1;
    for (int i = 0; i < 3; i++) {
        hx_schema_dataset(c->sol[i], SUITE_PATH, HX_FIELD_SOLENOIDAL, 3, i);
        hx_schema_dataset(c->comp[i], SUITE_PATH, HX_FIELD_COMPRESSIVE, 3, i);
    }
}

static void join3(char *buf, size_t n, const char (*v)[SUITE_PATH])
{
    snprintf(buf, n, "%s,%s,%s", v[0], v[1], v[2]);
}

/* ---- make and analyse ------------------------------------------------------------------------- */

/* Collective: parse, validate and make a recipe given as printf-style text into path. */
static hx_status make_file(suite_t *S, const char *path, int force, hx_recipe *out, const char *fmt, ...)
    __attribute__((format(printf, 5, 6)));
static hx_status make_file(suite_t *S, const char *path, int force, hx_recipe *out, const char *fmt, ...)
{
    hx_status st = HX_OK;
    char text[4096];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(text, sizeof text, fmt, ap);
    va_end(ap);
    hx_recipe r;
    hx_recipe_defaults(&r);
    st = hx_recipe_parse(&r, text, "suite recipe", NULL);
    if (st == HX_OK && strlen(path) >= sizeof r.file) st = hx_error_set(HX_ERR_ARG, "output path %s is too long", path);
    if (st == HX_OK) {
        snprintf(r.file, sizeof r.file, "%s", path);
        st = hx_recipe_validate(&r);
    }
    HX_TRY(hx_error_agree(S->comm, st)); /* a function of the text: the same verdict everywhere */
    HX_TRY(hx_error_agree(S->comm, hx_make_run(&r, force, NULL, &S->quiet, S->comm, NULL)));
    if (out) *out = r;
fail:
    return st;
}

/* A Gaussian random field, E(k) ~ k^-2 for 1 <= k <= kmax (0: helmix's default N/2 - 1), rms 1. */
static hx_status spectral(suite_t *S, const char *path, int force, const char *cells, const char *box, const char *mix,
                          int kmax, int seed, int dbl, int parts, const char *extra, hx_recipe *out)
{
    char kline[32] = "";
    if (kmax > 0) snprintf(kline, sizeof kline, "kmax = %d\n", kmax);
    return make_file(S, path, force, out,
                     "[grid]\ncells = %s\nbox = %s\n[spectrum]\nshape = power\nslope = 2\nkmin = 1\n%s"
                     "[mix]\n%s\n[amplitude]\nvrms = 1\n[random]\nseed = %d\n[output]\nprecision = %s\nparts = %s\n%s",
                     cells, box, kline, mix, seed, dbl ? "double" : "single", parts ? "true" : "false", extra ? extra : "");
}

/* Rank 0: inspect's analysis of cube c (its datasets, or `vector`), as an answer object. */
static hx_status analyse_solo(suite_t *S, const hx_suite_cube *c, const char *vector, double remove_scale, cJSON **out,
                              double *share)
{
    hx_status st = HX_OK;
    char path[HX_PATH_MAX], joined[3 * SUITE_PATH + 3];
    hx_inspect_opts o;
    hx_diag d;
    hx_request q;
    int found = 0;
    memset(&o, 0, sizeof o);
    HX_TRY(in_dir(S, c->file, path));
    join3(joined, sizeof joined, c->vector);
    o.cube.file = path;
    o.cube.vector = vector ? vector : c->four_d ? c->vector[0] : joined;
    o.cube.order = c->order;
    o.cube.density = c->density[0] ? c->density : NULL;
    o.cube.has_box = 1;
    memcpy(o.cube.box, c->box, sizeof o.cube.box);
    o.remove_scale = remove_scale;
    HX_TRY(hx_inspect_run(&o, &S->quiet, S->solo, &d, &q, &found));
    *share = d.fraction;
    *out = hx_suite_answer_json(&d);
    hx_diag_clear(&d);
    if (!*out) HX_FAIL(HX_ERR_MEM, "out of memory for the answer of %s", c->name);
fail:
    return st;
}

/* Collective: the answer of cube c (or of a variant: another vector, a removal scale). The
 * analysis runs on rank 0 alone: sums reduced over several ranks would differ in the last digits
 * from one rank count to another, and the manifest is meant not to. */
static hx_status analyse(suite_t *S, const hx_suite_cube *c, const char *vector, double remove_scale, cJSON **out,
                         double *share)
{
    hx_status st = HX_OK;
    if (S->rank == 0) st = analyse_solo(S, c, vector, remove_scale, out, share);
    return hx_error_agree(S->comm, st);
}

/* Collective: the cube's answer and its progress line. */
static hx_status answer(suite_t *S, hx_suite_cube *c, double t)
{
    double share = NAN;
    hx_status st = analyse(S, c, NULL, 0.0, &c->answer, &share);
    if (st == HX_OK)
        hx_log_say(S->log, HX_LOG_INFO, "suite: %-21s %4lldx%lldx%lld %s, compressive share %.10f; %.2f s", c->name,
                   (long long)c->cells[0], (long long)c->cells[1], (long long)c->cells[2],
                   c->precision == HX_PREC_DOUBLE ? "double" : "single", share, MPI_Wtime() - t);
    return st;
}

static hx_status add_variant(suite_t *S, hx_suite_cube *c, const char *key, const char *vector, double remove_scale,
                             const char *description)
{
    if (c->nvariant == SUITE_MAX_VARIANTS) return hx_error_set(HX_ERR_ARG, "too many variants for %s", c->name);
    suite_variant *v = &c->variant[c->nvariant++];
    double share = NAN;
    v->key = key;
    v->remove_scale = remove_scale;
    snprintf(v->description, sizeof v->description, "%s", description);
    snprintf(v->vector, sizeof v->vector, "%s", vector ? vector : "");
    return analyse(S, c, vector, remove_scale, &v->answer, &share);
}

/* Collective: a scratch file for a field the suite derives from; removed by drop_scratch. */
static hx_status scratch(suite_t *S, const char *name, char *path)
{
    char base[96];
    snprintf(base, sizeof base, ".work-%s.h5", name);
    hx_status st = in_dir(S, base, path);
    if (st == HX_OK) snprintf(S->scratch, sizeof S->scratch, "%s", path);
    return st;
}

/* Collective: remove the scratch file and its XDMF sidecar (rank 0). */
static hx_status drop_scratch(suite_t *S)
{
    hx_status st = HX_OK;
    if (!S->scratch[0]) return HX_OK;
    if (S->rank == 0) {
        char xmf[HX_PATH_MAX + 8];
        snprintf(xmf, sizeof xmf, "%s.xmf", S->scratch);
        if ((unlink(S->scratch) != 0 && errno != ENOENT) || (unlink(xmf) != 0 && errno != ENOENT))
            st = hx_error_set(HX_ERR_IO, "cannot remove the scratch file %s: %s", S->scratch, strerror(errno));
    }
    S->scratch[0] = '\0';
    return hx_error_agree(S->comm, st);
}

static void cells_text(char *buf, size_t n, int64_t nx, int64_t ny, int64_t nz)
{
    snprintf(buf, n, "%lld %lld %lld", (long long)nx, (long long)ny, (long long)nz);
}

/* ---- the cases -------------------------------------------------------------------------------- */

/* 1. pure: zeta = 1 and zeta = 0. */
static hx_status case_pure(suite_t *S)
{
    hx_status st = HX_OK;
    static const struct { const char *name, *mix, *what; int seed; } pure[2] = {
        {"pure_solenoidal", "zeta = 1", "projected on the plane normal to k (zeta = 1): purely solenoidal, the compressive part is zero", 101},
        {"pure_compressive", "zeta = 0", "projected on k (zeta = 0): purely compressive (curl-free), the solenoidal part is zero", 102}};
    char path[HX_PATH_MAX], cells[64];
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    for (int i = 0; i < 2; i++) {
        hx_suite_cube *c;
        hx_recipe r;
        double t = MPI_Wtime();
        NEW_CUBE(c, S, pure[i].name, "pure", SRC_SYNTH, &TOL_EXACT);
        HX_TRY(in_dir(S, c->file, path));
        HX_TRY(spectral(S, path, S->o->force, cells, "1", pure[i].mix, 0, pure[i].seed, 1, 1, NULL, &r));
        set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
        field_parts(c);
        describe(c, "Gaussian random velocity, E(k) ~ k^-2 in shells 1 <= k <= %g (units of 2 pi / max L), rms 1, seed %d, "
                    "every mode %s to round-off. Parts written by helmix make ([output] parts = true).",
                 r.spectrum.kmax, pure[i].seed, pure[i].what);
        HX_TRY(answer(S, c, t));
    }
fail:
    return st;
}

/* 2. mix: exact shares 0.1, 0.5, 0.9 in the whole cube, and a share rising with k. */
static hx_status case_mix(suite_t *S)
{
    hx_status st = HX_OK;
    static const double shares[3] = {0.1, 0.5, 0.9};
    char path[HX_PATH_MAX], cells[64], name[48], mix[96], work[HX_PATH_MAX];
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    hx_suite_cube *c;
    hx_recipe r;
    double t;
    for (int i = 0; i < 3; i++) {
        int seed = 111 + 4 * i;
        t = MPI_Wtime();
        snprintf(name, sizeof name, "mix_%.1f", shares[i]);
        snprintf(mix, sizeof mix, "compressive_fraction = %g\nexact = total", shares[i]);
        NEW_CUBE(c, S, name, "mix", SRC_FRACTION, &TOL_EXACT);
        HX_TRY(in_dir(S, c->file, path));
        HX_TRY(spectral(S, path, S->o->force, cells, "1", mix, 0, seed, 1, 1, NULL, &r));
        set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
        field_parts(c);
        describe(c, "Gaussian random velocity, E(k) ~ k^-2 in shells 1 <= k <= %g (units of 2 pi / max L), rms 1, seed %d, "
                    "whose compressive share of the kinetic energy (k != 0) is exactly %g in the whole cube "
                    "(compressive_fraction = %g, exact = total); single shells scatter around it. Parts written by helmix "
                    "make ([output] parts = true).",
                 r.spectrum.kmax, seed, shares[i], shares[i]);
        HX_TRY(answer(S, c, t));
    }
    /* the rising share: the two parts of one field, rescaled shell by shell in k space */
    const int seed = 121;
    const double f0 = 0.1, f1 = 0.9;
    t = MPI_Wtime();
    NEW_CUBE(c, S, "mix_rising", "mix",
             "helmix synthesis: the parts of one helmix field rescaled per shell in k space (FFTW-MPI r2c/c2r); "
             "Helmholtz decomposition by projection, common practice", &TOL_EXACT);
    HX_TRY(in_dir(S, c->file, path));
    HX_TRY(hx_io_check_target(path, S->o->force, S->comm));
    HX_TRY(scratch(S, c->name, work));
    HX_TRY(spectral(S, work, 1, cells, "1", "zeta = 0.5\nexact = none", 0, seed, 1, 1, NULL, &r));
    int kmax = (int)r.spectrum.kmax;
    HX_TRY(hx_suite_rising(work, path, kmax, f0, f1, S->comm));
    HX_TRY(drop_scratch(S));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    field_parts(c);
    describe(c, "Compressive share rising with k: f(s) = %g + %g (s - 1) / (kmax - 1) in every shell s = 1 .. kmax = %d "
                "(%g in shell 1, %g in shell %d), so a tool that smooths over shells or reports one share for all is "
                "caught. Made from the two parts of one helmix field (zeta = 0.5, exact = none, E(k) ~ k^-2 for 1 <= k <= %d, "
                "rms 1, seed %d): their r2c transforms (FFTW-MPI) are scaled per shell, the solenoidal modes by "
                "sqrt((1 - f) E / E_sol) and the compressive ones by sqrt(f E / E_comp), so each shell keeps its energy E, "
                "then transformed back; the scaled parts are written beside the velocity. Shells above kmax hold round-off only.",
             f0, f1 - f0, kmax, f0, f1, kmax, kmax, seed);
    HX_TRY(answer(S, c, t));
fail:
    return st;
}

/* 3. analytic: ABC (k = 1, 2), Taylor-Green, the gradient of a potential, in a 2 pi box. */
static hx_status case_analytic(suite_t *S)
{
    hx_status st = HX_OK;
    static const struct {
        const char *name;
        hx_suite_flow flow;
        double k;
        int solenoidal;
        const char *source, *text;
    } flows[4] = {
        {"analytic_abc_k1", HX_SUITE_ABC, 1, 1, "Dombre et al. 1986, J. Fluid Mech. 167, 353",
         "Arnold-Beltrami-Childress flow, A = B = C = 1, k = 1: v = (sin kz + cos ky, sin kx + cos kz, sin ky + cos kx). "
         "Solenoidal and helical with v = curl v / k (a Beltrami field): compressive share 0, energy 3/2, all in the 6 "
         "modes of shell 1, rms vorticity k sqrt(3)."},
        {"analytic_abc_k2", HX_SUITE_ABC, 2, 1, "Dombre et al. 1986, J. Fluid Mech. 167, 353",
         "Arnold-Beltrami-Childress flow, A = B = C = 1, k = 2: v = (sin kz + cos ky, sin kx + cos kz, sin ky + cos kx). "
         "Solenoidal and helical with v = curl v / k (a Beltrami field): compressive share 0, energy 3/2, all in the 6 "
         "modes (+-2, 0, 0), ... of shell 2, rms vorticity k sqrt(3)."},
        {"analytic_taylor_green", HX_SUITE_TAYLOR_GREEN, 1, 1, "Taylor & Green 1937, Proc. R. Soc. A 158, 499",
         "Taylor-Green vortex v = (sin x cos y cos z, -cos x sin y cos z, 0): divergence-free, compressive share 0, energy "
         "1/8, all in the 8 modes (+-1, +-1, +-1) of shell 2 (|k| = sqrt 3), rms vorticity sqrt(3)/2."},
        {"analytic_gradient", HX_SUITE_GRADIENT, 1, 0,
         "helmix synthesis: the gradient of a smooth periodic potential is curl-free (Helmholtz decomposition, common practice)",
         "v = grad phi, phi = sin x sin 2y + cos(3z)/2, i.e. v = (cos x sin 2y, 2 sin x cos 2y, -(3/2) sin 3z): curl-free, "
         "compressive share 1, energy 19/16 (5/8 in shell 2 from the modes (+-1, +-2, 0), 9/16 in shell 3 from (0, 0, +-3)), "
         "rms divergence sqrt(131/8)."}};
    char path[HX_PATH_MAX];
    for (int i = 0; i < 4; i++) {
        hx_suite_cube *c;
        double t = MPI_Wtime();
        NEW_CUBE(c, S, flows[i].name, "analytic", flows[i].source, &TOL_EXACT);
        HX_TRY(in_dir(S, c->file, path));
        HX_TRY(hx_io_check_target(path, S->o->force, S->comm));
        HX_TRY(hx_suite_analytic(path, flows[i].flow, flows[i].k, S->n, S->comm));
        const int64_t cells[3] = {S->n, S->n, S->n};
        const double box[3] = {2 * M_PI, 2 * M_PI, 2 * M_PI};
        set_grid(c, cells, box, HX_PREC_DOUBLE);
        c->has_parts = 1; /* the field is one part, the other is zero */
        c->sol_zero = !flows[i].solenoidal;
        c->comp_zero = flows[i].solenoidal;
        for (int a = 0; a < 3; a++) {
            snprintf(c->sol[a], SUITE_PATH, "%s", c->vector[a]);
            snprintf(c->comp[a], SUITE_PATH, "%s", c->vector[a]);
        }
        describe(c, "%s Sampled at cell centres (i + 1/2) 2 pi / %d of a 2 pi box, double precision. The field is its own "
                    "%s part; the %s part is zero.",
                 flows[i].text, S->n, flows[i].solenoidal ? "solenoidal" : "compressive",
                 flows[i].solenoidal ? "compressive" : "solenoidal");
        HX_TRY(answer(S, c, t));
    }
fail:
    return st;
}

/* 4. bulk: a mixed field plus a solid-body rotation and a uniform flow. */
static hx_status case_bulk(suite_t *S)
{
    hx_status st = HX_OK;
    const int seed = 131;
    const double om[3] = {0.5, -0.25, 1.0}, u[3] = {0.4, -0.3, 0.2}, L = 0.1;
    char path[HX_PATH_MAX], work[HX_PATH_MAX], cells[64], clean[3 * SUITE_PATH + 3], text[768];
    hx_suite_cube *c;
    hx_recipe r;
    double t = MPI_Wtime();
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    NEW_CUBE(c, S, "bulk_0.3", "bulk",
             "helmix synthesis: a mixed field plus a solid-body rotation and a uniform flow; bulk removal by a Gaussian "
             "filter exp(-k^2 L^2 / 2) (common practice)", &TOL_BULK);
    HX_TRY(in_dir(S, c->file, path));
    HX_TRY(hx_io_check_target(path, S->o->force, S->comm));
    HX_TRY(scratch(S, c->name, work));
    HX_TRY(spectral(S, work, 1, cells, "1", "compressive_fraction = 0.3\nexact = total", 0, seed, 1, 1, NULL, &r));
    HX_TRY(hx_suite_bulk(work, path, om, u, S->comm));
    HX_TRY(drop_scratch(S));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    field_parts(c);
    describe(c, "A mixed Gaussian random velocity (compressive share exactly 0.3, exact = total, E(k) ~ k^-2 for 1 <= k <= %g, "
                "rms 1, seed %d; stored as " SUITE_FIELD_CLEAN "_x|y|z) plus a solid-body rotation Omega x (r - c) with "
                "Omega = (%g, %g, %g) and c the box centre, and a uniform flow U = (%g, %g, %g) (also in the /suite "
                "attributes omega, rotation_centre, uniform_flow). In the periodic box the rotation is a sawtooth that jumps at "
                "the faces; each of its components is constant along its own axis, so it is divergence-free and belongs to "
                "the solenoidal part. U is the mean (the k = 0 mode): it enters no energy and neither part, so the parts add "
                "up to the field less its mean, as in every cube of the suite. The answer counts the "
                "rotation as turbulence; the variants give the clean field and the analysis with bulk flow removed.",
             r.spectrum.kmax, seed, om[0], om[1], om[2], u[0], u[1], u[2]);
    HX_TRY(answer(S, c, t));
    char one[SUITE_PATH];
    size_t used = 0;
    for (int a = 0; a < 3; a++) {
        hx_schema_dataset(one, sizeof one, SUITE_FIELD_CLEAN, 3, a);
        used += (size_t)snprintf(clean + used, sizeof clean - used, "%s%s", a ? "," : "", one);
    }
    HX_TRY(add_variant(S, c, "clean", clean, 0.0,
                       "The mixed field alone, without rotation or uniform flow (" SUITE_FIELD_CLEAN "_x|y|z in the same "
                       "file): compressive share 0.3 exactly."));
    snprintf(text, sizeof text,
             "The stored velocity with the flow smoothed by a Gaussian of width L = %g (code length) subtracted first, as "
             "helmix inspect --remove-scale L does: v_hat multiplied by 1 - exp(-|k|^2 L^2 / 2), k in physical units.", L);
    HX_TRY(add_variant(S, c, "bulk_removed", NULL, L, text));
fail:
    return st;
}

/* 5. layout: a non-cubic grid and box; one field as zyx, xyz, 4-D (first, last) and single. */
static hx_status case_layout(suite_t *S)
{
    hx_status st = HX_OK;
    char path[HX_PATH_MAX], ref[HX_PATH_MAX], cells[64];
    hx_suite_cube *c;
    hx_recipe r;
    double t = MPI_Wtime();
    /* non-cubic: Nz a size the ranks hint does not divide when it can (P >= 3) */
    int64_t nz = S->n / 2;
    while (S->P >= 3 && nz % S->P == 0) nz += 2;
    cells_text(cells, sizeof cells, S->n, 3 * S->n / 4, nz);
    NEW_CUBE(c, S, "layout_noncubic", "layout", SRC_FRACTION, &TOL_EXACT);
    HX_TRY(in_dir(S, c->file, path));
    HX_TRY(spectral(S, path, S->o->force, cells, "1 0.75 0.5", "compressive_fraction = 0.4\nexact = total", 0, 141, 1, 1, NULL, &r));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    field_parts(c);
    describe(c, "Gaussian random velocity on a non-cubic grid of %lld x %lld x %lld cells in a box 1 x 0.75 x 0.5 (the cells "
                "are not cubes either), compressive share exactly 0.4 (exact = total), E(k) ~ k^-2 for 1 <= k <= %g in units of "
                "2 pi / max L, rms 1, seed 141; shells count |k| in units of 2 pi / max L. Nz = %lld is not a multiple of the "
                "ranks hint P = %d when P >= 3, so a slab decomposition over P ranks is uneven.",
             (long long)r.cells[0], (long long)r.cells[1], (long long)r.cells[2], r.spectrum.kmax, (long long)nz, S->P);
    HX_TRY(answer(S, c, t));

    t = MPI_Wtime();
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    NEW_CUBE(c, S, "layout_zyx", "layout", SRC_FRACTION, &TOL_EXACT);
    HX_TRY(in_dir(S, c->file, ref));
    HX_TRY(spectral(S, ref, S->o->force, cells, "1", "compressive_fraction = 0.6\nexact = total", 0, 142, 1, 1, NULL, &r));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    field_parts(c);
    describe(c, "Reference of the layout group: Gaussian random velocity, compressive share exactly 0.6 (exact = total), "
                "E(k) ~ k^-2 for 1 <= k <= %g, rms 1, seed 142, in the helmix layout: three datasets of shape (Nz, Ny, Nx), x "
                "fastest, double. layout_xyz, layout_4d_first and layout_4d_last hold the same values, layout_single the same "
                "rounded to float32.",
             r.spectrum.kmax);
    HX_TRY(answer(S, c, t));
    const hx_suite_cube base = *c;

    static const struct {
        const char *name;
        hx_suite_layout how;
        const char *text;
    } forms[4] = {
        {"layout_xyz", HX_SUITE_XYZ,
         "The field of layout_zyx, value for value, as three datasets of shape (Nx, Ny, Nz), z fastest: "
         SUITE_XYZ_VELOCITY "_x|y|z, with its parts " SUITE_XYZ_SOLENOIDAL "_x|y|z and " SUITE_XYZ_COMPRESSIVE "_x|y|z in the "
         "same order; root attributes box (Lx, Ly, Lz), order and component_axis. No Grid Data Format groups."},
        {"layout_4d_first", HX_SUITE_4D_FIRST,
         "The field of layout_zyx, value for value, as one dataset " SUITE_4D_VELOCITY " of shape (3, Nz, Ny, Nx), the "
         "component axis first; root attribute box (Lx, Ly, Lz). Its parts are those of layout_zyx."},
        {"layout_4d_last", HX_SUITE_4D_LAST,
         "The field of layout_zyx, value for value, as one dataset " SUITE_4D_VELOCITY " of shape (Nz, Ny, Nx, 3), the "
         "component axis last; root attribute box (Lx, Ly, Lz). Its parts are those of layout_zyx."},
        {"layout_single", HX_SUITE_SINGLE,
         "The field of layout_zyx and its parts rounded to single precision (float32) in the helmix layout; the answer is "
         "that of the stored values read as doubles, and the stored parts add up to the stored field to float32 rounding."}};
    for (int i = 0; i < 4; i++) {
        t = MPI_Wtime();
        NEW_CUBE(c, S, forms[i].name, "layout", SRC_FRACTION, forms[i].how == HX_SUITE_SINGLE ? &TOL_SINGLE : &TOL_EXACT);
        HX_TRY(in_dir(S, c->file, path));
        HX_TRY(hx_io_check_target(path, S->o->force, S->comm));
        HX_TRY(hx_suite_relayout(ref, path, forms[i].how, S->comm));
        set_grid(c, base.cells, base.box, forms[i].how == HX_SUITE_SINGLE ? HX_PREC_SINGLE : HX_PREC_DOUBLE);
        if (forms[i].how == HX_SUITE_XYZ) {
            c->order = HX_ORDER_XYZ;
            c->has_parts = 1;
            for (int a = 0; a < 3; a++) {
                snprintf(c->vector[a], SUITE_PATH, SUITE_XYZ_VELOCITY "_%c", "xyz"[a]);
                snprintf(c->sol[a], SUITE_PATH, SUITE_XYZ_SOLENOIDAL "_%c", "xyz"[a]);
                snprintf(c->comp[a], SUITE_PATH, SUITE_XYZ_COMPRESSIVE "_%c", "xyz"[a]);
            }
        } else if (forms[i].how == HX_SUITE_SINGLE)
            field_parts(c);
        else {
            c->four_d = 1;
            c->comp_first = forms[i].how == HX_SUITE_4D_FIRST;
            snprintf(c->vector[0], SUITE_PATH, "%s", SUITE_4D_VELOCITY);
        }
        describe(c, "%s", forms[i].text);
        HX_TRY(answer(S, c, t));
    }
fail:
    return st;
}

/* 6. noise: white noise of known variance added to a mixed field. */
static hx_status case_noise(suite_t *S)
{
    hx_status st = HX_OK;
    const int seed = 151;
    const double sigma = 0.2;
    char path[HX_PATH_MAX], work[HX_PATH_MAX], cells[64], clean[3 * SUITE_PATH + 3];
    hx_suite_cube *c;
    hx_recipe r;
    double t = MPI_Wtime();
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    NEW_CUBE(c, S, "noise_0.2", "noise",
             "helmix synthesis: a mixed field plus white Gaussian noise (Philox draws, Salmon et al. 2011, Proc. SC'11; "
             "Box-Muller transform, common practice)", &TOL_NOISE);
    HX_TRY(in_dir(S, c->file, path));
    HX_TRY(hx_io_check_target(path, S->o->force, S->comm));
    HX_TRY(scratch(S, c->name, work));
    HX_TRY(spectral(S, work, 1, cells, "1", "compressive_fraction = 0.2\nexact = total", 0, seed, 1, 0, NULL, &r));
    HX_TRY(hx_suite_noise(work, path, sigma, (uint64_t)seed, S->comm));
    HX_TRY(drop_scratch(S));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    describe(c, "A mixed Gaussian random velocity (compressive share exactly 0.2, exact = total, E(k) ~ k^-2 for 1 <= k <= %g, "
                "rms 1, seed %d; stored as " SUITE_FIELD_CLEAN "_x|y|z) plus white Gaussian noise, independent in every "
                "cell and component, of standard deviation sigma = %g per component (variance %g; expected noise energy "
                "3 sigma^2 / 2 = %g, a third of it compressive), drawn by Philox keyed on seed %d and the global cell index "
                "(/suite attributes noise_sigma, noise_seed). The answer is that of the noisy field as stored; the variant "
                "clean gives the field without noise. No exact parts are written for the noisy field.",
             r.spectrum.kmax, seed, sigma, sigma * sigma, 1.5 * sigma * sigma, seed);
    HX_TRY(answer(S, c, t));
    char one[SUITE_PATH];
    size_t used = 0;
    for (int a = 0; a < 3; a++) {
        hx_schema_dataset(one, sizeof one, SUITE_FIELD_CLEAN, 3, a);
        used += (size_t)snprintf(clean + used, sizeof clean - used, "%s%s", a ? "," : "", one);
    }
    HX_TRY(add_variant(S, c, "clean", clean, 0.0,
                       "The field without noise (" SUITE_FIELD_CLEAN "_x|y|z in the same file): compressive share 0.2 exactly."));
fail:
    return st;
}

/* 7. ladder: one field at N/4, N/2 and N. */
static hx_status case_ladder(suite_t *S)
{
    hx_status st = HX_OK;
    const int seed = 161, kmax = S->n / 8 - 1; /* the largest kmax the coarsest level allows */
    char path[HX_PATH_MAX], cells[64], name[48];
    for (int level = 0; level < 3; level++) {
        int64_t n = (int64_t)S->n >> (2 - level);
        hx_suite_cube *c;
        hx_recipe r;
        double t = MPI_Wtime();
        snprintf(name, sizeof name, "ladder_%lld", (long long)n);
        cells_text(cells, sizeof cells, n, n, n);
        NEW_CUBE(c, S, name, "ladder",
                 "helmix synthesis: one Fourier series sampled at cell centres on three grids (resolution nesting of helmix)",
                 &TOL_EXACT);
        HX_TRY(in_dir(S, c->file, path));
        HX_TRY(spectral(S, path, S->o->force, cells, "1", "compressive_fraction = 0.35\nexact = total", kmax, seed, 1, 1, NULL, &r));
        set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
        field_parts(c);
        c->ladder_level = level;
        c->ladder_cells = n;
        describe(c, "Level %d of a resolution ladder: one field (seed %d, E(k) ~ k^-2 for 1 <= k <= kmax = %d, rms 1, "
                    "compressive share exactly 0.35, exact = total) at %d^3, %d^3 and %d^3 cells (levels 0, 1, 2). helmix "
                    "samples the same Fourier series at cell centres, Nyquist modes empty, so the three cubes hold the same "
                    "Fourier coefficients and their answers agree shell by shell to round-off; a tool whose result moves with "
                    "the resolution is resolution-dependent. Parts written by helmix make.",
                 level, seed, kmax, S->n / 4, S->n / 2, S->n);
        HX_TRY(answer(S, c, t));
    }
fail:
    return st;
}

/* 8. density: a lognormal density and a velocity whose sqrt(rho) v has an exact share. */
static hx_status case_density(suite_t *S)
{
    hx_status st = HX_OK;
    const int seed = 171;
    char path[HX_PATH_MAX], cells[64];
    hx_suite_cube *c;
    hx_recipe r;
    double t = MPI_Wtime();
    cells_text(cells, sizeof cells, S->n, S->n, S->n);
    NEW_CUBE(c, S, "density_lognormal", "density",
             "helmix synthesis: lognormal density ([density] model = lognormal) and a mass-weighted mix ([mix] weight = "
             "mass); the kinetic energy density |sqrt(rho) v|^2 / 2 as the field decomposed (common practice)", &TOL_EXACT);
    HX_TRY(in_dir(S, c->file, path));
    HX_TRY(spectral(S, path, S->o->force, cells, "1", "compressive_fraction = 0.4\nexact = total\nweight = mass", 0, seed, 1, 0,
                    "[density]\nmodel = lognormal\nmean = 1\nsigma_s = 1\n"
                    "[density_spectrum]\nshape = power\nslope = 2\nkmin = 1\n", &r));
    set_grid(c, r.cells, r.box, HX_PREC_DOUBLE);
    hx_schema_dataset(c->density, SUITE_PATH, HX_FIELD_DENSITY, 1, 0);
    c->mass = 1;
    describe(c, "A lognormal density rho = <rho> e^s / <e^s> (mean 1, sigma of ln rho 1; s Gaussian with E_s(k) ~ k^-2 for "
                "1 <= k <= %g on its own random stream; helmix [density] model = lognormal) and a velocity v = w sqrt(<rho> / "
                "rho), w a Gaussian random field (E(k) ~ k^-2, seed %d), so that sqrt(rho) v = sqrt(<rho>) w holds a "
                "compressive share of exactly 0.4 (helmix [mix] weight = mass, compressive_fraction = 0.4, exact = total). "
                "The answer is that of sqrt(rho) v (weighting = mass, the density in layout.density); v itself holds another "
                "share. No parts are written.",
             r.density_spectrum.kmax, seed);
    HX_TRY(answer(S, c, t));
fail:
    return st;
}

/* ---- the run ---------------------------------------------------------------------------------- */

static hx_status check_opts(const hx_suite_opts *o, int *n)
{
    if (!o->dir || !o->dir[0]) return hx_error_set(HX_ERR_ARG, "no directory given");
    if (strlen(o->dir) > HX_PATH_MAX - 128)
        return hx_error_set(HX_ERR_ARG, "directory %s: the path is longer than %d characters", o->dir, HX_PATH_MAX - 128);
    *n = o->cells ? o->cells : o->quick ? 32 : 64;
    if (*n < 16 || *n % 8 || *n > 4096)
        return hx_error_set(HX_ERR_ARG, "--cells %d: must be a multiple of 8 between 16 and 4096 (the ladder needs N/4 even "
                                        "and a kmax = N/8 - 1 >= 1)", *n);
    if (o->ranks_hint < 1) return hx_error_set(HX_ERR_ARG, "--ranks-hint %d: must be >= 1", o->ranks_hint);
    return HX_OK;
}

hx_status hx_suite_run(const hx_suite_opts *o, const hx_log *log, MPI_Comm comm, hx_suite_result *res)
{
    hx_status st = HX_OK;
    suite_t S;
    char manifest[HX_PATH_MAX];
    memset(&S, 0, sizeof S);
    S.o = o, S.log = log, S.comm = comm, S.solo = MPI_COMM_NULL, S.P = o->ranks_hint, S.t0 = MPI_Wtime();
    S.quiet = *log;
    S.quiet.verbosity = log->verbosity >= HX_LOG_DEBUG ? HX_LOG_INFO : HX_LOG_QUIET;
    HX_TRY(check_opts(o, &S.n)); /* a function of the options: the same verdict on every rank */
    HX_MPI(MPI_Comm_rank(comm, &S.rank));
    snprintf(S.dir, sizeof S.dir, "%s", o->dir);
    size_t len = strlen(S.dir);
    while (len > 1 && S.dir[len - 1] == '/') S.dir[--len] = '\0';
    if (S.rank == 0) {
        int err = make_dirs(S.dir);
        if (err) st = hx_error_set(HX_ERR_ARG, "cannot create the directory %s: %s", S.dir, strerror(err));
    }
    HX_TRY(hx_error_agree(comm, st));
    HX_TRY(in_dir(&S, "manifest.json", manifest));
    st = hx_io_check_target(manifest, o->force, comm);
    if (st == HX_ERR_EXISTS)
        hx_error_set(st, "%s exists: the directory holds a suite already; pass --force to replace it", manifest);
    HX_TRY(st);
    HX_TRY(hx_error_agree(comm, (S.cube = calloc(SUITE_MAX_CUBES, sizeof *S.cube)) ? HX_OK
                                                                                  : hx_error_set(HX_ERR_MEM, "out of memory")));
    int rc = MPI_Comm_split(comm, S.rank == 0 ? 0 : MPI_UNDEFINED, 0, &S.solo);
    if (rc == MPI_SUCCESS && S.rank == 0) rc = MPI_Comm_set_errhandler(S.solo, MPI_ERRORS_RETURN);
    st = rc == MPI_SUCCESS ? HX_OK : hx_error_set(HX_ERR_MPI, "cannot make the one-rank communicator of the analysis");
    HX_TRY(hx_error_agree(comm, st));
    hx_log_say(log, HX_LOG_INFO, "helmix %s suite: %d^3 cells (ladder %d, %d, %d) into %s", HX_VERSION, S.n, S.n / 4,
               S.n / 2, S.n, S.dir);
    HX_TRY(case_pure(&S));
    HX_TRY(case_mix(&S));
    HX_TRY(case_analytic(&S));
    HX_TRY(case_bulk(&S));
    HX_TRY(case_layout(&S));
    HX_TRY(case_noise(&S));
    HX_TRY(case_ladder(&S));
    HX_TRY(case_density(&S));
    if (S.rank == 0) st = hx_suite_manifest_write(manifest, S.cube, S.ncube);
    HX_TRY(hx_error_agree(comm, st));
    hx_log_say(log, HX_LOG_INFO, "suite: wrote %d cubes and %s; %.2f s", S.ncube, manifest, MPI_Wtime() - S.t0);
    if (res) res->cubes = S.ncube, res->cells = S.n, res->seconds = MPI_Wtime() - S.t0;
fail:
    if (S.scratch[0]) { /* after a failure, which every rank has agreed on */
        if (S.rank == 0) {
            char xmf[HX_PATH_MAX + 8];
            snprintf(xmf, sizeof xmf, "%s.xmf", S.scratch);
            unlink(S.scratch);
            unlink(xmf);
        }
    }
    if (S.cube)
        for (int i = 0; i < S.ncube; i++) {
            cJSON_Delete(S.cube[i].answer);
            for (int v = 0; v < S.cube[i].nvariant; v++) cJSON_Delete(S.cube[i].variant[v].answer);
        }
    free(S.cube);
    if (S.solo != MPI_COMM_NULL) MPI_Comm_free(&S.solo);
    return st;
}
