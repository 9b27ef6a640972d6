/* mix.c — scale factors for the solenoidal and compressive parts of every shell.
 * Invariant: sum_s (a_s^2 sol_s + b_s^2 comp_s) = vrms^2 whenever HX_OK is returned. */
#include "helmix/mix.h"

#include <math.h>

double hx_mix_expected_fraction(double zeta)
{
    double c = (1.0 - zeta) * (1.0 - zeta);
    return c / (c + 2.0 * zeta * zeta);
}

double hx_mix_realized_fraction(const double *sol, const double *comp, const double *a, const double *b, int nshell)
{
    double es = 0, ec = 0;
    for (int s = 0; s < nshell; s++) {
        es += a[s] * a[s] * sol[s];
        ec += b[s] * b[s] * comp[s];
    }
    return es + ec > 0 ? ec / (es + ec) : 0.0;
}

void hx_mix_weights(const hx_mix_spec *r, double *alpha, double *beta)
{
    if (r->mode == HX_MIX_FRACTION) {
        *alpha = sqrt(1.0 - r->compressive_fraction);
        *beta = sqrt(2.0 * r->compressive_fraction);
    } else {
        *alpha = r->zeta;
        *beta = 1.0 - r->zeta;
    }
}

static double target_fraction(const hx_mix_spec *r)
{
    return r->mode == HX_MIX_FRACTION ? r->compressive_fraction : hx_mix_expected_fraction(r->zeta);
}

/* Scale factors that give one shell (or the whole field) share f and energy t. */
static hx_status split(double f, double t, double sol, double comp, double *a, double *b, int shell)
{
    *a = *b = 0.0;
    if (t <= 0) return HX_OK;
    if (f < 1 && !(sol > 0))
        return hx_error_set(HX_ERR_ARG, "cannot reach compressive share %g%s: the draw has no solenoidal power there", f,
                            shell >= 0 ? " in every shell" : "");
    if (f > 0 && !(comp > 0))
        return hx_error_set(HX_ERR_ARG, "cannot reach compressive share %g%s: the draw has no compressive power there", f,
                            shell >= 0 ? " in every shell" : "");
    if (f < 1) *a = sqrt((1.0 - f) * t / sol);
    if (f > 0) *b = sqrt(f * t / comp);
    return HX_OK;
}

hx_status hx_mix_solve(const hx_mix_spec *r, double vrms, const double *sol, const double *comp, int nshell, double *a, double *b)
{
    double v2 = vrms * vrms, ssum = 0, csum = 0;
    for (int s = 0; s < nshell; s++) {
        ssum += sol[s];
        csum += comp[s];
    }
    if (!(ssum + csum > 0))
        return hx_error_set(HX_ERR_ARG, "the spectrum puts no power on any mode of this grid: check kmin, kmax and the shape");
    if (r->exact == HX_EXACT_NONE) {
        double al, be;
        hx_mix_weights(r, &al, &be);
        double e = al * al * ssum + be * be * csum;
        if (!(e > 0)) return hx_error_set(HX_ERR_ARG, "the requested mix leaves no power on this draw");
        double c = sqrt(v2 / e);
        for (int s = 0; s < nshell; s++) {
            a[s] = al * c;
            b[s] = be * c;
        }
        return HX_OK;
    }
    double f = target_fraction(r);
    if (r->exact == HX_EXACT_TOTAL) {
        double a0, b0;
        hx_status st = split(f, v2, ssum, csum, &a0, &b0, -1);
        for (int s = 0; s < nshell; s++) {
            a[s] = a0;
            b[s] = b0;
        }
        return st;
    }
    double g = v2 / (ssum + csum); /* each shell keeps its unmixed share of the energy */
    for (int s = 0; s < nshell; s++) {
        hx_status st = split(f, g * (sol[s] + comp[s]), sol[s], comp[s], &a[s], &b[s], s);
        if (st != HX_OK) return st;
    }
    return HX_OK;
}
