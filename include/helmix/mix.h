/* helmix/mix.h — from k-space energy sums to the scale factors that set the mode mix and rms.
 *
 * The generator splits every mode's draw w into its solenoidal part P_perp w and its
 * compressive part P_par w (orthogonal per mode), sums A(k)^2 |P_perp w|^2 and
 * A(k)^2 |P_par w|^2 over each shell (Parseval, before any transform), and asks this module
 * for factors a_s, b_s so that the field A (a_s P_perp w + b_s P_par w) has rms vrms and the
 * requested compressive share (m, from the field's descriptor). Pure functions, not collective. */
#ifndef HELMIX_MIX_H
#define HELMIX_MIX_H

#include "helmix/error.h"
#include "helmix/recipe.h"

/* Expected compressive share of zeta P_perp w + (1-zeta) P_par w for an isotropic 3D w:
 * (1-zeta)^2 / (1 - 2 zeta + 3 zeta^2) (Federrath et al. 2010, A&A 512, A81). */
double hx_mix_expected_fraction(double zeta);

/* Weights (alpha, beta) of the solenoidal and compressive parts for a free draw (exact = none):
 * zeta gives (zeta, 1 - zeta); a compressive fraction f gives (sqrt(1 - f), sqrt(2 f)), whose
 * expected share is f because an isotropic draw holds twice as much power across k as along it. */
void hx_mix_weights(const hx_mix_spec *m, double *alpha, double *beta);

/* Solve for a[s], b[s], s = 0..nshell-1, given per-shell sums sol[s], comp[s] of the
 * unscaled parts. Rules:
 *  exact = none       : a = alpha c, b = beta c (hx_mix_weights), one c for all shells
 *                       giving rms vrms;
 *  exact = total      : target share f (the fraction, or the expected share of zeta) of the
 *                       whole field; a, b the same in every shell;
 *  exact = shell      : share f in every shell, each shell keeping its unmixed energy
 *                       sol[s] + comp[s] up to the global factor.
 * HX_ERR_ARG when the request cannot be met (for example no compressive power at all while
 * f > 0), with a message saying why. */
hx_status hx_mix_solve(const hx_mix_spec *m, double vrms, const double *sol, const double *comp, int nshell,
                       double *a, double *b);

/* Compressive share realized by factors a, b on the sums: sum b^2 comp / sum (a^2 sol + b^2 comp). */
double hx_mix_realized_fraction(const double *sol, const double *comp, const double *a, const double *b, int nshell);

#endif
