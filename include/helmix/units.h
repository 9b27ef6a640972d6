/* helmix/units.h — physical constants in cgs, defined once here with their sources, and the
 * parser of recipe values written as "NUMBER [UNIT]" (e.g. "2.5 pc", "1e-20 g/cm^3", "10 uG").
 *
 * Values are cgs throughout: cm, g, s, K, erg, and gauss for magnetic fields. Nothing here
 * uses MPI or keeps state besides a per-thread message buffer; every function is not collective. */
#ifndef HELMIX_UNITS_H
#define HELMIX_UNITS_H

#include <stddef.h>

/* pi to more digits than a double holds (C11 has no M_PI). */
#define HX_UNITS_PI 3.14159265358979323846

/* CODATA 2018 recommended values (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010). */
#define HX_CGS_G 6.67430e-8           /* Newtonian constant of gravitation, cm^3 g^-1 s^-2    */
#define HX_CGS_KB 1.380649e-16        /* Boltzmann constant, erg/K (exact in the 2019 SI)      */
#define HX_CGS_C 2.99792458e10        /* speed of light in vacuum, cm/s (exact)                */
#define HX_CGS_U 1.66053906660e-24    /* atomic mass constant u = m(12C)/12, g                 */
#define HX_CGS_MP 1.67262192369e-24   /* proton mass, g                                        */

/* Mass of the hydrogen atom: relative atomic mass of 1H from the Atomic Mass Evaluation 2020
 * (Wang et al. 2021, Chinese Phys. C 45, 030003) times u; = 1.6735328e-24 g. */
#define HX_AR_H1 1.00782503223
#define HX_CGS_MH (HX_AR_H1 * HX_CGS_U)

/* Lengths. The au is exact by IAU 2012 Resolution B2; the parsec is (648000/pi) au by IAU 2015
 * Resolution B2 (written in this order it gives the correctly rounded 3.0856775814913674e18). */
#define HX_CGS_AU 1.495978707e13
#define HX_CGS_PC ((648000.0 / HX_UNITS_PI) * HX_CGS_AU)

/* Nominal solar values (IAU 2015 Resolution B3). The solar mass is derived, M = (GM)/G with
 * the CODATA 2018 G (= 1.98841e33 g), since (GM) is known far better than G. */
#define HX_CGS_GM_SUN 1.3271244e26    /* nominal solar mass parameter, cm^3 s^-2               */
#define HX_CGS_RSUN 6.957e10          /* nominal solar radius, cm                              */
#define HX_CGS_LSUN 3.828e33          /* nominal solar luminosity, erg/s                       */
#define HX_CGS_MSUN (HX_CGS_GM_SUN / HX_CGS_G)

/* Time: the Julian year of 365.25 days of 86400 s (IAU common practice). */
#define HX_CGS_DAY 86400.0
#define HX_CGS_YR (365.25 * HX_CGS_DAY)
#define HX_CGS_KYR (1e3 * HX_CGS_YR)
#define HX_CGS_MYR (1e6 * HX_CGS_YR)

/* The kind of quantity a recipe key wants. HX_QTY_NONE is a plain (dimensionless) number. */
typedef enum {
    HX_QTY_NONE = 0,
    HX_QTY_LENGTH,
    HX_QTY_MASS,
    HX_QTY_TIME,
    HX_QTY_VELOCITY,
    HX_QTY_DENSITY,     /* mass density, g/cm^3 */
    HX_QTY_TEMPERATURE,
    HX_QTY_MAGNETIC     /* magnetic field strength, gauss = g^1/2 cm^-1/2 s^-1 */
} hx_qty;

/* Parse "NUMBER [UNIT]" as a quantity of the given kind.
 *
 * NUMBER is decimal ("2.5", "-1", ".5", "1e-20"); it must be finite in double precision (no
 * nan, inf or hex). UNIT, optionally set off by blanks, is a product of symbols separated by
 * blanks or '*', each optionally raised to a nonzero integer power with '^' or '**'; a '/'
 * divides by the next symbol only ("km/s/Mpc" = km s^-1 Mpc^-1). Symbols are case-sensitive
 * (G is gauss, g is gram): cm m km au pc kpc Mpc Rsun, g kg Msun, s yr kyr Myr, K,
 * G gauss mG uG muG microgauss nG.
 *
 * A bare number leaves *has_unit = 0 and *value = the number (the caller decides what a bare
 * number means, e.g. code units). With a unit, *value is in cgs (K for temperature, gauss for
 * magnetic fields) and *has_unit = 1. value and has_unit are written only on success.
 *
 * Returns NULL on success, or one line saying what is wrong and what is allowed, e.g.
 * "km/s is a velocity, this key wants a length (pc, au, km, m, cm, kpc, Mpc, Rsun)" or
 * "unknown unit 'parsek'; ...". The text is static or in a per-thread buffer that the next call
 * on the same thread overwrites. Not collective. */
const char *hx_units_quantity(const char *text, hx_qty kind, double *value, int *has_unit);

/* Name of a kind: "number", "length", "mass", "time", "velocity", "density", "temperature",
 * "magnetic field". Never NULL. Not collective. */
const char *hx_units_kind_name(hx_qty kind);

/* The unit spellings a user may write for a kind, as a comma-separated list for help texts
 * ("pc, au, km, ..."); "" for HX_QTY_NONE. Never NULL. Not collective. */
const char *hx_units_examples(hx_qty kind);

/* Render a cgs value in a readable unit of its kind, 4 significant digits, e.g. "2.5 pc",
 * "0.1882 km/s", "10 uG", "1e-20 g/cm^3". The text parses back with hx_units_quantity.
 * Truncated to n bytes (always terminated when n > 0). Not collective. */
void hx_units_format(char *buf, size_t n, double cgs, hx_qty kind);

/* Sound speed sqrt(gamma k_B T / (mu m_H)) in cm/s: gamma = 1 is isothermal, 5/3 adiabatic for
 * a monatomic gas; mu is the mean mass per particle in units of m_H (2.33 for molecular gas
 * with helium). NaN unless T >= 0, mu > 0 and gamma > 0. Not collective. */
double hx_units_sound_speed(double temperature_K, double mu, double gamma);

/* Virial parameter alpha = 5 sigma_1d^2 R / (G M) of a uniform sphere (Bertoldi & McKee 1992,
 * ApJ 395, 140), all cgs: sigma_1d the one-dimensional velocity dispersion, R the radius, M the
 * mass. NaN unless M > 0. Not collective. */
double hx_units_virial(double sigma_1d, double radius, double mass);

#endif
