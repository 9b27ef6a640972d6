/* helmix/spectrum.h — the shell-integrated kinetic energy spectrum E(k) of a recipe.
 *
 * Shapes: power (E ~ k^-slope), band (E ~ (k - kmin)(kmax - k), a smooth hump vanishing at
 * both ends) and table (user (k, E) pairs, interpolated linearly in log k - log E). E(k) is
 * zero outside [kmin, kmax]. Normalisation is irrelevant: the field is scaled to vrms later.
 * To add a shape: a new enum value in recipe.h, its recipe spelling, and one case below. */
#ifndef HELMIX_SPECTRUM_H
#define HELMIX_SPECTRUM_H

#include <mpi.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

typedef struct hx_spectrum hx_spectrum;

/* Collective: build spectrum s (of any field). For shape = table rank 0 reads the file and
 * broadcasts it. HX_ERR_ARG for an unreadable or malformed table. */
hx_status hx_spectrum_create(hx_spectrum **sp, const hx_spectrum_spec *s, MPI_Comm comm);

/* E(k) for k in units of 2 pi / lmax (0 outside the band). Not collective. */
double hx_spectrum_energy(const hx_spectrum *sp, double k);

/* Squared amplitude per mode, E(k) / k^2: what an isotropic 3D field needs so that its
 * shell sums follow E(k) (shell area grows as k^2). 0 outside the band. */
double hx_spectrum_mode_power(const hx_spectrum *sp, double k);

/* The largest table file helmix reads (a device or a pipe could be endless). */
#define HX_SPECTRUM_TABLE_MAX (16 << 20)

/* Parse the `len` bytes of (k, E) text: two numbers per line (blanks or a comma between
 * them), '#' comments; text, not binary (hx_recipe_check_text: a NUL is an error, not the
 * end). Returns count via *n, arrays malloc'd. HX_ERR_ARG (message names origin and line)
 * when malformed. Not collective. */
hx_status hx_spectrum_parse_table_n(const char *text, size_t len, const char *origin, double **k, double **e,
                                    int *n);

/* hx_spectrum_parse_table_n of a NUL-terminated text. */
hx_status hx_spectrum_parse_table(const char *text, const char *origin, double **k, double **e, int *n);

void hx_spectrum_destroy(hx_spectrum **sp);

#endif
