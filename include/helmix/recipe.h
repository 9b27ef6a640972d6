/* helmix/recipe.h — what the user asked for: parsing, validation, overrides and rendering of
 * an INI recipe.
 *
 * One table of keys (section, name, type, default, unit, help, validator) in recipe.c drives
 * the parser, the validator, `helmix template` and the rendering stored in output files.
 * Parsing works on text, not on a file, so rank 0 can read the file once and broadcast it and
 * every rank reaches the same verdict. None of these functions is collective. */
#ifndef HELMIX_RECIPE_H
#define HELMIX_RECIPE_H

#include <stdint.h>
#include <stdio.h>

#include "helmix/error.h"

typedef enum { HX_SHAPE_POWER = 0, HX_SHAPE_BAND, HX_SHAPE_TABLE } hx_shape;
typedef enum { HX_MIX_ZETA = 0, HX_MIX_FRACTION } hx_mix_mode;
typedef enum { HX_EXACT_NONE = 0, HX_EXACT_TOTAL, HX_EXACT_SHELL } hx_exact;
typedef enum { HX_AMP_GAUSSIAN = 0, HX_AMP_FIXED } hx_amplitudes;
typedef enum { HX_PREC_SINGLE = 0, HX_PREC_DOUBLE } hx_precision;

#define HX_PATH_MAX 4096
#define HX_RECIPE_MAX_KEYS 32

/* A validated recipe. Plain data: copy it freely. */
typedef struct hx_recipe {
    /* [grid] */
    int64_t cells[3];  /* Nx, Ny, Nz; "cells = 256" means 256 256 256                */
    double box[3];     /* Lx, Ly, Lz in code length units; "box = 1" means 1 1 1       */
    /* [spectrum] */
    hx_shape shape;
    double slope;      /* E(k) ~ k^-slope, shell-integrated                             */
    double kmin, kmax; /* in units of 2 pi / max(L); kmax < 0 means "N/2 - 1" default   */
    char table[HX_PATH_MAX]; /* (k, E) file for shape = table, as resolved              */
    /* [mix] */
    hx_mix_mode mix_mode;
    double zeta;                 /* when mix_mode == HX_MIX_ZETA                        */
    double compressive_fraction; /* when mix_mode == HX_MIX_FRACTION                    */
    hx_exact exact;              /* default: none with zeta, total with fraction        */
    /* [amplitude] */
    double vrms;
    /* [random] */
    uint64_t seed;
    hx_amplitudes amplitudes;
    int flip; /* 0 or 1 */
    /* [output] */
    char file[HX_PATH_MAX];
    hx_precision precision;
    /* where each key (in key-table order) was last set: its line in the recipe text, or 0
     * for a default or a --set; lets cross-key messages point at the line */
    int line[HX_RECIPE_MAX_KEYS];
} hx_recipe;

/* Fill r with every default (cells = 0 meaning "not given"). */
void hx_recipe_defaults(hx_recipe *r);

/* Parse INI text. `origin` names the source in messages ("run.ini"); `basedir` resolves a
 * relative table path (NULL: current directory). Later keys override earlier ones. On an
 * unknown section or key, a malformed value or a value out of range, returns HX_ERR_ARG
 * with a message "origin:line: [section] key = value: what is allowed" (unknown keys name
 * the nearest valid key). Cross-key rules are checked by hx_recipe_validate. */
hx_status hx_recipe_parse(hx_recipe *r, const char *text, const char *origin, const char *basedir);

/* Apply one "section.key=value" override (from --set). Messages name "--set". */
hx_status hx_recipe_set(hx_recipe *r, const char *assignment);

/* Cross-key checks and derived defaults (kmax default N/2-1, exact default by mix mode):
 * cells given and >= 4 and even; box > 0; 0 < kmin <= kmax <= largest wavenumber below
 * Nyquist on every axis; exactly one of zeta / compressive_fraction; both in [0, 1];
 * exact = shell only meaningful as documented. HX_ERR_ARG with one clear line on failure. */
hx_status hx_recipe_validate(hx_recipe *r);

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

#endif
