/* helmix/recipe.h — what the user asked for: parsing, validation, overrides and rendering of
 * an INI recipe.
 *
 * One table of keys (section, name, kind, place in the struct, default, unit, help) in recipe.c
 * drives the parser, the validator, `helmix template` and the rendering stored in output files.
 * Parsing works on text, not on a file, so rank 0 can read the file once and broadcast it and
 * every rank reaches the same verdict. None of these functions is collective. */
#ifndef HELMIX_RECIPE_H
#define HELMIX_RECIPE_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#include "helmix/error.h"

typedef enum { HX_SHAPE_POWER = 0, HX_SHAPE_BAND, HX_SHAPE_TABLE } hx_shape;
typedef enum { HX_MIX_ZETA = 0, HX_MIX_FRACTION } hx_mix_mode;
typedef enum { HX_EXACT_NONE = 0, HX_EXACT_TOTAL, HX_EXACT_SHELL } hx_exact;
typedef enum { HX_AMP_GAUSSIAN = 0, HX_AMP_FIXED } hx_amplitudes;
typedef enum { HX_PREC_SINGLE = 0, HX_PREC_DOUBLE } hx_precision;
/* [output] compute: the precision of the synthesis (auto: that of the file, resolved by validation). */
enum { HX_COMPUTE_AUTO = 2 };
/* [output] draws: keep each mode's draws between passes, or regenerate them (auto: keep when the
 * plan says they fit in memory). */
typedef enum { HX_DRAWS_AUTO = 0, HX_DRAWS_KEEP, HX_DRAWS_REGENERATE } hx_draws;
typedef enum { HX_DENSITY_NONE = 0, HX_DENSITY_UNIFORM, HX_DENSITY_SPHERE, HX_DENSITY_BONNOR_EBERT,
               HX_DENSITY_LOGNORMAL } hx_density_model;
typedef enum { HX_WEIGHT_VOLUME = 0, HX_WEIGHT_MASS } hx_weight;
typedef enum { HX_AMPLITUDE_VRMS = 0, HX_AMPLITUDE_MACH, HX_AMPLITUDE_VIRIAL, HX_AMPLITUDE_LINEWIDTH } hx_amplitude_by;
typedef enum { HX_MAGNETIC_NONE = 0, HX_MAGNETIC_STRENGTH, HX_MAGNETIC_BETA, HX_MAGNETIC_ALFVEN,
               HX_MAGNETIC_RANDOM_ONLY } hx_magnetic_by;

#define HX_PATH_MAX 4096
#define HX_RECIPE_MAX_KEYS 80

/* A shell-integrated spectrum E(k), zero outside [kmin, kmax] (units of 2 pi / max L). */
typedef struct hx_spectrum_spec {
    hx_shape shape;
    double slope;            /* E(k) ~ k^-slope for shape = power                        */
    double kmin, kmax;       /* kmax < 0 means "N/2 - 1" until validated                  */
    char table[HX_PATH_MAX]; /* (k, E) file for shape = table, as resolved                */
} hx_spectrum_spec;

/* How the solenoidal and compressive parts of a vector field are weighted. */
typedef struct hx_mix_spec {
    hx_mix_mode mode;
    double zeta;                 /* when mode == HX_MIX_ZETA                              */
    double compressive_fraction; /* when mode == HX_MIX_FRACTION                          */
    hx_exact exact;              /* default: none with zeta, total with fraction          */
} hx_mix_spec;

/* A number a user may give with a unit ("2 pc"): value in cgs (K, gauss) when unit = 1, else
 * in code units; hx_recipe_validate converts it to code units and sets unit = 0. NAN: not given. */
typedef struct hx_quantity {
    double value;
    int unit;
    char text[48]; /* as the user wrote it, for the rendering */
} hx_quantity;

/* Derived by hx_recipe_validate: the code units in cgs and the constants the run needs in
 * code units. */
typedef struct hx_code_units {
    double length, velocity, density; /* cm, cm/s, g/cm^3 per code unit                   */
    double magnetic;                  /* gauss per code unit: sqrt(4 pi density) velocity, so
                                       * v_A = B / sqrt(rho) and beta = 2 P / B^2 in code units */
    double mass, time;                /* g and s per code unit (density * length^3, length / velocity) */
    double G;                         /* gravitational constant in code units             */
    double sound_speed;               /* c_s = sqrt(gamma k_B T / (mu m_H)), code velocity */
} hx_code_units;

/* A validated recipe. Plain data: copy it freely. Lengths, velocities, densities and masses
 * below are in code units after hx_recipe_validate (it converts what was given with a unit). */
typedef struct hx_recipe {
    /* [grid] */
    int64_t cells[3];  /* Nx, Ny, Nz; "cells = 256" means 256 256 256                */
    double box[3];     /* Lx, Ly, Lz in code length units; "box = 1" means 1 1 1       */
    /* [units] the code units, in cgs when given without a unit */
    hx_quantity unit_length, unit_velocity, unit_density, unit_mass;
    /* [spectrum] */
    hx_spectrum_spec spectrum;
    /* [mix] */
    hx_mix_spec mix;
    hx_weight weight;   /* share of v (volume) or of sqrt(rho) v (mass)                 */
    /* [amplitude]: exactly one of vrms, mach, virial, linewidth */
    hx_amplitude_by amplitude_by;
    double vrms;        /* 3D rms, code velocity; after validation the target of amplitude_by too */
    double mach;        /* sigma_3D / c_s                                                 */
    double virial;      /* 5 sigma_1D^2 R / (G M)                                          */
    int linewidth;      /* sigma_3D = linewidth_sigma (L / 1 pc)^linewidth_index              */
    hx_quantity linewidth_sigma;
    double linewidth_index;
    /* [velocity] */
    int window;          /* confine the turbulence to the cloud                             */
    int remove_bulk;     /* -1 auto (on when the density is not uniform), 0, 1               */
    int remove_rotation; /* remove the net angular momentum about the centre of mass         */
    /* [gas] */
    hx_quantity temperature; /* K */
    double mu, gamma;
    /* [density] */
    hx_density_model density_model;
    hx_quantity density_mean;    /* uniform, lognormal: volume mean; sphere: cloud density  */
    hx_quantity cloud_radius;    /* sphere                                               */
    hx_quantity cloud_mass;      /* sphere, bonnor-ebert: instead of a density              */
    hx_quantity central_density; /* bonnor-ebert                                         */
    hx_quantity edge;            /* width of the smooth cloud edge (0: sharp)              */
    double contrast;             /* cloud (edge) density over ambient density               */
    double xi_max;               /* bonnor-ebert; NAN: the critical value                    */
    double sigma_s;              /* lognormal width of ln rho; NAN: from b and Mach           */
    double b;                    /* forcing parameter; NAN: from the mix                      */
    int clumps;                  /* modulate sphere / bonnor-ebert by a lognormal field       */
    /* [density_spectrum] the spectrum of s = ln(rho / rho_0) */
    hx_spectrum_spec density_spectrum;
    /* [magnetic]: a uniform B0 (by strength, beta or alfven_mach) plus a random solenoidal part */
    hx_quantity b_strength;      /* |B0| in gauss (unit) or code magnetic units               */
    double beta;                 /* plasma beta of B0: 8 pi P / B0^2                           */
    double alfven_mach;          /* sigma_3D / v_A, v_A = B0 / sqrt(4 pi <rho>)                 */
    double direction[3];         /* unit vector of B0 (normalised by validation)               */
    double random_ratio;         /* rms of the random part over |B0|                           */
    hx_quantity random_rms;      /* or the rms of the random part itself                        */
    int faces;                   /* also write the face-centred field of a staggered grid        */
    hx_magnetic_by magnetic_by;  /* derived: how B0 was given (HX_MAGNETIC_NONE: no field)        */
    /* [magnetic_spectrum] the spectrum of the random part */
    hx_spectrum_spec magnetic_spectrum;
    /* [random] */
    uint64_t seed;
    hx_amplitudes amplitudes;
    int flip; /* 0 or 1 */
    /* [output] */
    char file[HX_PATH_MAX];
    hx_precision precision;
    int parts;         /* also write the solenoidal and compressive parts of the velocity */
    int compute;       /* hx_precision of the synthesis; HX_COMPUTE_AUTO until validated   */
    hx_draws draws;
    double alignment;  /* HDF5 alignment of datasets in bytes (0: HDF5's default packing)  */
    char io_hints[HX_PATH_MAX]; /* MPI-IO hints "key=value,key=value" or "none"            */
    /* derived by hx_recipe_validate */
    hx_code_units code;
    /* where each key (in key-table order) was last set: its line in the recipe text (> 0),
     * HX_RECIPE_LINE_SET for a --set, 0 for a default; cross-key messages name that origin */
    int line[HX_RECIPE_MAX_KEYS];
    char origin[256]; /* the name the latest hx_recipe_parse was given ("run.ini"), for messages */
} hx_recipe;

/* hx_recipe.line of a key given by hx_recipe_set (--set). */
#define HX_RECIPE_LINE_SET (-1)

/* The largest recipe text hx_recipe_parse_n accepts: a recipe is a small text file. */
#define HX_RECIPE_TEXT_MAX (1 << 20)

/* Fill r with every default (cells = 0 meaning "not given"). */
void hx_recipe_defaults(hx_recipe *r);

/* The text is a recipe or a table a user wrote, not a binary file: HX_ERR_ARG with
 * "origin:line: ..." at the first NUL byte, other control character (tab, and CR before LF
 * are allowed), lone CR or invalid UTF-8 (the recipe is stored in output files as UTF-8 text).
 * Not collective. */
hx_status hx_recipe_check_text(const char *text, size_t len, const char *origin);

/* Parse the `len` bytes of INI text (hx_recipe_check_text first: a NUL inside is an error,
 * never the end of the text). `origin` names the source in messages ("run.ini"); `basedir`
 * resolves a relative table path (NULL: current directory). Lines are "[section]",
 * "key = value" or comments: a line starting with '#' or ';', and the rest of a line from a
 * '#' or ';' that follows a blank. Each section and each key may appear once, and at most one
 * key of a set of alternatives (zeta or compressive_fraction, vrms|mach|virial|linewidth, ...);
 * HX_ERR_ARG names both lines otherwise. Unknown sections or keys (the nearest valid name
 * is suggested), malformed values and values out of range give HX_ERR_ARG with one line
 * "origin:line: [section] key = value: what is allowed". Cross-key rules are checked by
 * hx_recipe_validate. r changes only on success. */
hx_status hx_recipe_parse_n(hx_recipe *r, const char *text, size_t len, const char *origin, const char *basedir);

/* hx_recipe_parse_n of a NUL-terminated text. */
hx_status hx_recipe_parse(hx_recipe *r, const char *text, const char *origin, const char *basedir);

/* Apply one "section.key=value" override (from --set): it replaces the value from the text,
 * and a key that has alternatives replaces the alternative given (--set mix.zeta=0.3 drops a
 * compressive_fraction of the file). A value a recipe line could not hold (a control
 * character, " #" or " ;") is refused. Messages name "--set section.key=value". */
hx_status hx_recipe_set(hx_recipe *r, const char *assignment);

/* Cross-key checks, derived defaults (kmax default N/2-1, exact default by mix mode, the
 * amplitude, the b of the lognormal width) and the conversion of every quantity to code
 * units. HX_ERR_ARG with one clear line on failure, naming where each key it blames came
 * from: "origin:line: [section] key = value", "--set section.key=value", or the default. */
hx_status hx_recipe_validate(hx_recipe *r);

/* Where key section.name of r was set, short: "run.ini:7", "--set" or "default" (for messages
 * of checks made outside the recipe module, e.g. the I/O tuning). Not collective. */
void hx_recipe_origin(const hx_recipe *r, const char *section, const char *name, char *buf, size_t n);

/* The largest admissible kmax for these cells and box: min over axes of
 * (N_i/2 - 1) * max(L) / L_i, in units of 2 pi / max(L). */
double hx_recipe_kmax_limit(const hx_recipe *r);

/* Render the recipe as complete INI text (every key, current values), e.g. for provenance.
 * Returns a malloc'd string the caller frees, NULL on allocation failure. */
char *hx_recipe_render(const hx_recipe *r);

/* Print an annotated recipe with every key, its default, unit and meaning. */
void hx_recipe_template(FILE *out);

/* Print a compact key reference (one line per key) for --help. */
void hx_recipe_print_keys(FILE *out);

/* Names for enums as they appear in recipes ("power", "total", ...). */
const char *hx_shape_name(hx_shape s);
const char *hx_exact_name(hx_exact e);
const char *hx_density_model_name(hx_density_model m);
const char *hx_amplitude_by_name(hx_amplitude_by a);

/* 1 when a validated recipe asks for a magnetic field (uniform, random or both). */
int hx_recipe_has_magnetic(const hx_recipe *r);

/* The cloud of a validated recipe (sphere or bonnor-ebert), 1 if there is one. */
int hx_recipe_has_cloud(const hx_recipe *r);

#endif
