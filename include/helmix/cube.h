/* helmix/cube.h — reading a velocity cube for analysis: a helmix file or any HDF5 file that
 * holds three 3-D datasets or one 4-D dataset with a component axis, in zyx (x fastest) or
 * xyz (z fastest) order, and optionally a density and a magnetic field (cell-centred, and
 * face-centred on a staggered grid), opened collectively through MPI-IO. Each rank reads its
 * z slab straight into the padded rows of an in-place r2c transform. A helmix file also gives
 * back its request (/helmix) and its physical state (/helmix/state). */
#ifndef HELMIX_CUBE_H
#define HELMIX_CUBE_H

#include <mpi.h>
#include <stdint.h>

#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/verdict.h"

typedef enum { HX_ORDER_ZYX = 0, HX_ORDER_XYZ } hx_order;

/* Slots of the datasets a cube may hold: component c of a vector field is at its first slot + c. */
enum { HX_SLOT_VELOCITY = 0, HX_SLOT_DENSITY = 3, HX_SLOT_MAGNETIC = 4, HX_SLOT_MAGNETIC_FACE = 7, HX_SLOT_COUNT = 10 };

typedef struct hx_cube_spec {
    const char *file;
    const char *vector;  /* "PX,PY,PZ" (three datasets) or "P" (one 4-D dataset); NULL: helmix layout */
    const char *density; /* 3-D density dataset (--density), or NULL: the helmix layout's own
                          * density when the file records its state (/helmix/state), else none */
    const char *magnetic;      /* cell-centred B as for vector (--magnetic), or NULL: see find_magnetic */
    const char *magnetic_face; /* face-centred B (--magnetic-face): component c on the low-c faces,
                                * x_c = i dx_c, the other coordinates at cell centres; needs magnetic */
    int find_magnetic;   /* 1: without magnetic, open the helmix layout's magnetic (and magnetic_face)
                          * datasets when the file holds them and vector is NULL */
    hx_order order;
    int has_box;
    double box[3];
} hx_cube_spec;

typedef struct hx_cube hx_cube;

/* What a helmix file records of its physical state (/helmix/state, and the weighting of the
 * mix in /helmix), in code units. NAN where not recorded or not asked. */
typedef struct hx_cube_state {
    int found;                   /* 1: the file has /helmix/state                           */
    int mass_weight;             /* 1: the mix was asked as the share of sqrt(rho) v          */
    int written;                 /* 1: the share is that of the field as written (shaped)    */
    char amplitude_by[16], density_model[32];
    double sound_speed, G;
    int cloud;                   /* 1: the region is the cloud sphere, 0: the box            */
    double center[3], radius;    /* cloud centre and radius; the box centre and max(L)/2 without */
    double vrms_asked, mach_asked, virial_asked, sigma_3d_asked, sigma_s_asked;
    double vrms, sigma_3d, mach, virial, momentum[3], momentum_rel; /* as make measured them */
    double density_mean, sigma_s, region_mass;
    int flags[3];                /* window, remove_bulk, remove_rotation                      */
    double gamma;                /* adiabatic index: P = rho c_s^2 / gamma                    */
    /* the magnetic field (NAN without one): the uniform field, the asked rms of the random part,
     * beta and Alfven Mach number of the uniform field as made and as asked */
    double b0[3], b_random_rms, b_rms, b_face_rms, beta, alfven_mach, beta_asked, alfven_mach_asked;
    /* code units in cgs from /dataset_units (any Grid Data Format file), NAN when absent */
    double unit_magnetic_gauss, unit_velocity_cm_s;
} hx_cube_state;

/* Collective: open the file, find the datasets, check shapes and read the box (from
 * --box, else the Grid Data Format domain edges, else 1 1 1). HX_ERR_ARG with one clear line
 * for a missing or unreadable file, missing datasets, mismatched shapes or a shape that is
 * not 3-D (or 4-D with one axis of length 3). */
hx_status hx_cube_open(hx_cube **cube, const hx_cube_spec *spec, MPI_Comm comm);

/* Grid size (Nx, Ny, Nz) and box of the cube. Not collective. */
void hx_cube_shape(const hx_cube *cube, int64_t cells[3], double box[3]);

/* 1 when the cube stores single-precision values (of the velocity). */
int hx_cube_single(const hx_cube *cube);

/* 1 when the vector field whose first slot is `slot` stores single-precision values. */
int hx_cube_field_single(const hx_cube *cube, int slot);

/* Collective: read slot c (HX_SLOT_*: 0..2 the velocity, 3 the density, 4..6 the magnetic
 * field, 7..9 its face-centred form) of this rank's z slab of grid g into dst as double, rows
 * of Nx values `stride` doubles apart (stride 2*(Nx/2+1) for in-place r2c). */
hx_status hx_cube_read(hx_cube *cube, int c, const hx_grid *g, double *dst, int64_t stride);

/* Collective: refuse values inspect cannot analyse. dst holds what hx_cube_read put there for
 * slot c (this rank's z slab of g, rows `stride` apart). HX_ERR_ARG on every rank when any rank
 * holds NaN or an infinity, with the dataset, the count (NaN and infinite) and the first such
 * value in the dataset's own storage order: its cell (i, j, k) along (x, y, z) and its index in
 * the dataset. One reduction; every rank returns the same status. */
hx_status hx_cube_check_finite(const hx_cube *cube, int c, const hx_grid *g, const double *dst, int64_t stride);

/* Collective: read the single z plane `z` (global index) of slot c into dst (Ny rows of Nx
 * values, x fastest) on every rank that owns planes of g; a rank without planes reads nothing
 * but takes part. Each rank may ask for a different plane (the neighbour of its slab). */
hx_status hx_cube_read_plane(hx_cube *cube, int c, const hx_grid *g, int64_t z, double *dst);

/* Bytes this rank has read from the file's datasets so far (elements times their size in the
 * file), for the timings. Not collective. */
double hx_cube_bytes_read(const hx_cube *cube);

/* 1 when a density dataset is open: --density, or the helmix layout's own. */
int hx_cube_has_density(const hx_cube *cube);

/* 1 when the vector field whose first slot is `slot` (HX_SLOT_MAGNETIC, HX_SLOT_MAGNETIC_FACE)
 * is open. */
int hx_cube_has_field(const hx_cube *cube, int slot);

/* Collective: the request stored in a helmix file's /helmix group (found = 0 if none). Every
 * attribute of the request is checked: the recipe, mix_mode, zeta, exact, vrms, the
 * spectrum's shape, slope, kmin and kmax must be present, and each one present must have its
 * type and count, a number where one is required (NaN only where make writes NaN: zeta of a
 * compressive_fraction mix, the target of free draws, the slope of a non-power shape) and a
 * known word where a word is; HX_ERR_ARG naming the first attribute that is not. */
hx_status hx_cube_request(hx_cube *cube, hx_request *q, int *found);

/* Collective: the state a helmix file records (s->found = 0 and NANs if it has none; the
 * region then defaults to the whole box). HX_ERR_ARG if /helmix/state cannot be opened or an
 * attribute present in it has the wrong type or count (NaN stands for "not recorded"). */
hx_status hx_cube_read_state(hx_cube *cube, hx_cube_state *s);

/* What --check judges of the state: the asked value where one was asked, else the recorded
 * one; the net momentum against 0 when make removed the bulk flow. A windowed velocity keeps
 * no spectral slope: the slope line becomes information (tolerance NAN). Not collective. */
void hx_cube_request_state(const hx_cube_state *s, hx_request *q);

/* What --check judges of a magnetic field that make recorded (nothing when s records none):
 * the uniform field and the rms of the random part, beta and the Alfven Mach number (asked,
 * else as made), and divergence-free cell- and face-centred fields, with tolerances for data
 * of that precision (single = 1). Not collective. */
void hx_cube_request_magnetic(const hx_cube_state *s, int single, hx_request *q);

/* Collective: close. Accepts NULL, sets *cube to NULL. */
void hx_cube_close(hx_cube **cube);

#endif
