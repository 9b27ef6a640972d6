/* helmix/bonnor.h — the isothermal Lane-Emden equation and Bonnor-Ebert spheres.
 *
 * An isothermal self-gravitating gas sphere in hydrostatic equilibrium has density
 * rho(r) = rho_c exp(-psi(xi)), r = xi a, a = c_s / sqrt(4 pi G rho_c), where psi solves
 *     (1/xi^2) d/dxi (xi^2 dpsi/dxi) = exp(-psi),   psi(0) = 0, psi'(0) = 0
 * (Chandrasekhar 1939, An Introduction to the Study of Stellar Structure, ch. IV). Cut at
 * xi_max and held by an external pressure P = rho_edge c_s^2 it is a Bonnor-Ebert sphere; it is
 * stable up to the xi_max that maximises its mass at fixed P, xi_crit ~ 6.451 (Ebert 1955,
 * Z. Astrophys. 37, 217; Bonnor 1956, MNRAS 116, 351). helmix uses the profile to lay down
 * the density of a cloud. Everything here is serial and pure: nothing is collective. */
#ifndef HELMIX_BONNOR_H
#define HELMIX_BONNOR_H

#include "helmix/error.h"

typedef struct hx_bonnor hx_bonnor;

/* Solve the isothermal Lane-Emden equation on 0 <= xi <= xi_max and keep a table of psi and
 * dpsi/dxi for cubic Hermite interpolation (psi and psi' accurate to ~1e-10).
 * xi_max: outer edge, 0 < xi_max <= 1e4. Not collective.
 * Errors: HX_ERR_ARG for xi_max outside (0, 1e4] or not a number; HX_ERR_MEM. On failure
 * *be is left NULL. */
hx_status hx_bonnor_create(hx_bonnor **be, double xi_max);

/* psi(xi) and dpsi/dxi for 0 <= xi <= xi_max. xi > xi_max gives the value at xi_max and
 * xi < 0 the value at 0 (the sphere has no inside beyond its edge or before its centre);
 * NaN gives NaN. Not collective. */
double hx_bonnor_psi(const hx_bonnor *be, double xi);
double hx_bonnor_dpsi(const hx_bonnor *be, double xi);

/* The xi_max the table was created with. */
double hx_bonnor_xi_max(const hx_bonnor *be);

/* Centre-to-edge density contrast rho_c / rho_edge = exp(psi(xi_max)). */
double hx_bonnor_contrast(const hx_bonnor *be);

/* Dimensionless mass inside xi_max, mu = xi^2 psi'(xi), so that M = 4 pi rho_c a^3 mu. */
double hx_bonnor_mass_factor(const hx_bonnor *be);

/* Dimensionless mass at fixed external pressure,
 * m = M G^(3/2) P^(1/2) / c_s^4 = (4 pi)^(-1/2) xi^2 psi' exp(-psi/2), at xi_max. */
double hx_bonnor_pressure_mass(const hx_bonnor *be);

/* Free the table; accepts NULL and *be == NULL, sets *be to NULL. */
void hx_bonnor_destroy(hx_bonnor **be);

/* The critical xi_max, where the pressure-bounded mass m is largest (~6.451): integrated and
 * root-found on every call (well under a millisecond), so the library keeps no cached state. */
double hx_bonnor_critical_xi(void);

/* Scaling to physical units (any consistent set, e.g. cgs; the caller passes G, in cgs
 * 6.67430e-8). All three return NaN unless c_s, rho_c or mass, and G are finite and > 0.
 *   radius:          R = xi_max a, a = c_s / sqrt(4 pi G rho_c);
 *   mass:            M = 4 pi rho_c a^3 mu;
 *   central_density: the rho_c for which the sphere holds `mass` (the inverse of mass). */
double hx_bonnor_radius(const hx_bonnor *be, double c_s, double rho_c, double G);
double hx_bonnor_mass(const hx_bonnor *be, double c_s, double rho_c, double G);
double hx_bonnor_central_density(const hx_bonnor *be, double c_s, double mass, double G);

#endif
