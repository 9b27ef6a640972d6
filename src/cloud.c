/* cloud.c — density models and the amplitude rules of a cloud initial condition, in code units.
 * Invariants: the ambient medium of a cloud has pressure rho_amb T_amb = rho_edge T (same mu,
 * ideal gas), so T_amb = contrast T; profiles are non-negative and continuous except at a
 * sharp edge. */
#include "helmix/cloud.h"

#include <math.h>
#include <string.h>

#include "helmix/units.h"

hx_status hx_cloud_init(hx_cloud *c, const hx_recipe *r)
{
    hx_status st = HX_OK;
    memset(c, 0, sizeof *c);
    c->model = r->density_model;
    c->has_cloud = hx_recipe_has_cloud(r);
    double lmin = fmin(r->box[0], fmin(r->box[1], r->box[2]));
    for (int a = 0; a < 3; a++) c->center[a] = 0.5 * r->box[a];
    c->radius = 0.5 * fmax(r->box[0], fmax(r->box[1], r->box[2]));
    c->rho_in = c->rho_edge = r->density_mean.value;
    c->t_ambient = NAN;
    c->xi_max = NAN;
    if (!c->has_cloud) {
        c->mass_model = isnan(c->rho_in) ? NAN : c->rho_in * r->box[0] * r->box[1] * r->box[2];
        return HX_OK;
    }
    c->edge = r->edge.value;
    const double G = r->code.G, cs = r->code.sound_speed;
    if (c->model == HX_DENSITY_SPHERE) {
        c->radius = r->cloud_radius.value;
        double vol = 4.0 / 3.0 * M_PI * c->radius * c->radius * c->radius;
        c->rho_in = c->rho_edge = isnan(r->cloud_mass.value) ? r->density_mean.value : r->cloud_mass.value / vol;
        c->mass_model = c->rho_in * vol;
    } else {
        c->xi_max = isnan(r->xi_max) ? hx_bonnor_critical_xi() : r->xi_max;
        st = hx_bonnor_create(&c->be, c->xi_max);
        if (st != HX_OK) return st;
        c->rho_in = isnan(r->central_density.value) ? hx_bonnor_central_density(c->be, cs, r->cloud_mass.value, G)
                                                    : r->central_density.value;
        c->a_be = cs / sqrt(4.0 * M_PI * G * c->rho_in);
        c->radius = c->xi_max * c->a_be;
        c->rho_edge = c->rho_in / hx_bonnor_contrast(c->be);
        c->mass_model = hx_bonnor_mass(c->be, cs, c->rho_in, G);
    }
    c->rho_ambient = c->rho_edge / r->contrast;
    c->t_ambient = r->temperature.value * r->contrast;
    if (!(isfinite(c->rho_in) && c->rho_in > 0 && isfinite(c->radius) && c->radius > 0)) {
        hx_cloud_clear(c);
        return hx_error_set(HX_ERR_ARG, "[density] the %s cloud has no finite size or density in these units",
                            hx_density_model_name(c->model));
    }
    if (c->radius + 2.0 * c->edge > 0.5 * lmin) {
        double R = c->radius, l = r->code.length;
        hx_cloud_clear(c);
        return hx_error_set(HX_ERR_ARG,
                            "[density] the cloud (radius %.4g code lengths = %.4g pc, plus twice the edge %.4g) does "
                            "not fit in the box: it must stay inside half the smallest side, %.4g; enlarge [grid] box "
                            "or shrink the cloud",
                            R, R * l / HX_CGS_PC, c->edge, 0.5 * lmin);
    }
    return HX_OK;
}

double hx_cloud_window(const hx_cloud *c, double d)
{
    if (!c->has_cloud) return 1.0;
    if (c->edge > 0) return 0.5 * (1.0 - tanh((d - c->radius) / c->edge));
    return d <= c->radius ? 1.0 : 0.0;
}

int hx_cloud_inside(const hx_cloud *c, double d) { return !c->has_cloud || d <= c->radius; }

double hx_cloud_profile(const hx_cloud *c, double d)
{
    if (!c->has_cloud) return c->rho_in;
    double in = c->rho_in;
    if (c->model == HX_DENSITY_BONNOR_EBERT) /* beyond R the profile stays at its edge value */
        in = c->rho_in * exp(-hx_bonnor_psi(c->be, fmin(d, c->radius) / c->a_be));
    return c->rho_ambient + (in - c->rho_ambient) * hx_cloud_window(c, d);
}

double hx_cloud_target_sigma(const hx_cloud *c, const hx_recipe *r, double region_mass)
{
    switch (r->amplitude_by) {
    case HX_AMPLITUDE_VRMS: return r->vrms;
    case HX_AMPLITUDE_MACH: return r->mach * r->code.sound_speed;
    case HX_AMPLITUDE_VIRIAL: /* alpha = 5 sigma_1D^2 R / (G M), sigma_3D^2 = 3 sigma_1D^2 */
        return sqrt(3.0 * r->virial * r->code.G * region_mass / (5.0 * c->radius));
    case HX_AMPLITUDE_LINEWIDTH: {
        double size_pc = 2.0 * c->radius * r->code.length / HX_CGS_PC; /* diameter, or the largest side */
        return r->linewidth_sigma.value * pow(size_pc, r->linewidth_index);
    }
    }
    return NAN;
}

void hx_cloud_clear(hx_cloud *c)
{
    if (!c) return;
    hx_bonnor_destroy(&c->be);
}
