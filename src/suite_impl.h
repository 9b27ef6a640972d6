/* suite_impl.h — what the files of the suite module share (private to src/suite*.c): the record
 * of one cube as the manifest states it, and the writers of the fields make cannot write itself
 * (closed forms, fields derived from a made cube, foreign layouts). Every writer is collective,
 * goes through PATH.partial and a rename, and agrees on failures before its next collective. */
#ifndef HX_SUITE_IMPL_H
#define HX_SUITE_IMPL_H

#include <cjson/cJSON.h>
#include <mpi.h>
#include <stdint.h>

#include "helmix/cube.h"
#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/recipe.h"

#define SUITE_PATH 160     /* a dataset path inside a cube */
#define SUITE_MAX_CUBES 32
#define SUITE_MAX_VARIANTS 2

/* Field names written beside the velocity by the suite's own writers (helmix layout). */
#define SUITE_FIELD_CLEAN "velocity_clean" /* the field before noise or bulk flow was added */

/* One answer variant: the same file analysed another way (another field, bulk flow removed). */
typedef struct suite_variant {
    const char *key;          /* "clean" or "bulk_removed"                          */
    char description[768];
    double remove_scale;      /* > 0: inspect's --remove-scale; 0: none (null)       */
    char vector[3 * SUITE_PATH + 3]; /* the datasets analysed ("" = the cube's own)  */
    cJSON *answer;            /* rank 0 only                                        */
} suite_variant;

/* One cube of the manifest. */
typedef struct hx_suite_cube {
    char name[48];
    const char *category;     /* pure, mix, analytic, bulk, layout, noise, ladder, density */
    char description[2048];
    const char *source;
    char file[64];            /* relative to DIR                                     */
    /* layout: three 3-D datasets, or one 4-D dataset (four_d, vector[0]) */
    char vector[3][SUITE_PATH];
    int four_d, comp_first;
    hx_order order;
    int64_t cells[3];
    double box[3];
    hx_precision precision;
    char density[SUITE_PATH]; /* "" : none                                           */
    int mass;                 /* weighting = mass: sqrt(rho) v is decomposed          */
    /* parts: has_parts = 0 gives null; a zero part is stated as "zero" */
    int has_parts, sol_zero, comp_zero;
    char sol[3][SUITE_PATH], comp[3][SUITE_PATH];
    int ladder_level;         /* < 0: not a ladder cube                               */
    int64_t ladder_cells;
    double tol_share, tol_shells, tol_parts;
    const char *tol_reason;
    cJSON *answer;            /* rank 0 only                                          */
    int nvariant;
    suite_variant variant[SUITE_MAX_VARIANTS];
} hx_suite_cube;

/* The closed-form flows of the analytic cases, sampled at cell centres of a 2 pi box. */
typedef enum { HX_SUITE_ABC = 0, HX_SUITE_TAYLOR_GREEN, HX_SUITE_GRADIENT } hx_suite_flow;

/* Foreign layouts of one field (suite_layout.c). */
typedef enum { HX_SUITE_XYZ = 0, HX_SUITE_4D_FIRST, HX_SUITE_4D_LAST, HX_SUITE_SINGLE } hx_suite_layout;

/* suite_fields.c --------------------------------------------------------------------------- */

/* Collective: flow f with wavenumber k (ABC only) on n^3 cells of a (2 pi)^3 box, written as the
 * velocity of a helmix-layout double-precision file. */
hx_status hx_suite_analytic(const char *path, hx_suite_flow f, double k, int64_t n, MPI_Comm comm);

/* Collective: the velocity of src (with its parts) plus a solid-body rotation omega x (r - centre)
 * and a uniform flow u; writes velocity, velocity_solenoidal (src's + rotation), velocity_compressive
 * (src's) and velocity_clean (src's velocity): the parts add up to the field less its mean u. */
hx_status hx_suite_bulk(const char *src, const char *path, const double omega[3], const double u[3], MPI_Comm comm);

/* Collective: the velocity of src plus white Gaussian noise of standard deviation sigma per
 * component (Philox draws keyed on seed and the global cell index); writes velocity and
 * velocity_clean. */
hx_status hx_suite_noise(const char *src, const char *path, double sigma, uint64_t seed, MPI_Comm comm);

/* Collective: from the parts of src, a field whose compressive share in shell s = 1..kmax is
 * f(s) = f_first + (f_last - f_first)(s - 1)/(kmax - 1) while each shell keeps its energy:
 * per shell the solenoidal modes are scaled by sqrt((1 - f) E / E_sol), the compressive ones by
 * sqrt(f E / E_comp). Writes velocity and its two parts. */
hx_status hx_suite_rising(const char *src, const char *path, int kmax, double f_first, double f_last, MPI_Comm comm);

/* Collective: open field `name` (three components) of the helmix-layout file src for reading. */
hx_status hx_suite_open_field(const char *src, const char *name, hx_cube **cube, MPI_Comm comm);

/* suite_layout.c --------------------------------------------------------------------------- */

/* Collective: the velocity of src (and for xyz and single also its parts) in another layout:
 * z fastest, one 4-D dataset with the component axis first or last (double, plain HDF5), or
 * single precision in the helmix layout. */
hx_status hx_suite_relayout(const char *src, const char *path, hx_suite_layout how, MPI_Comm comm);

/* Dataset names of the foreign layouts, so the manifest and the writer agree. */
#define SUITE_XYZ_VELOCITY "/velocity_xyz"        /* + "_x" ... "_z"                      */
#define SUITE_XYZ_SOLENOIDAL "/solenoidal_xyz"
#define SUITE_XYZ_COMPRESSIVE "/compressive_xyz"
#define SUITE_4D_VELOCITY "/velocity"

/* suite_manifest.c ------------------------------------------------------------------------- */

/* Rank 0 only: write the manifest of the n cubes to PATH.partial and rename it to PATH. The
 * cubes' answer objects move into the document (they are NULL afterwards). */
hx_status hx_suite_manifest_write(const char *path, hx_suite_cube *cubes, int n);

/* The answer object of an analysis summary (NULL when out of memory). */
struct hx_diag;
cJSON *hx_suite_answer_json(const struct hx_diag *d);

#endif
