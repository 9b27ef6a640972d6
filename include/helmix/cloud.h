/* helmix/cloud.h — the physical state around the velocity: the density model of a recipe
 * (uniform, a uniform sphere, a Bonnor-Ebert sphere, a lognormal field) with its geometry, the
 * ambient medium in pressure equilibrium, the cloud's window, and the velocity dispersion an
 * amplitude rule (Mach number, virial parameter, linewidth-size relation) asks for.
 * Everything is in code units. Pure functions of a validated recipe: nothing is collective. */
#ifndef HELMIX_CLOUD_H
#define HELMIX_CLOUD_H

#include "helmix/bonnor.h"
#include "helmix/error.h"
#include "helmix/recipe.h"

typedef struct hx_cloud {
    hx_density_model model;
    int has_cloud;          /* sphere or bonnor-ebert                                        */
    double center[3];       /* the box centre                                                */
    double radius;          /* cloud radius R; without a cloud max(L)/2 (the virial convention) */
    double edge;            /* width of the tanh edge (0: sharp)                             */
    double rho_in;          /* sphere: cloud density; bonnor-ebert: central; else the mean     */
    double rho_edge;        /* density just inside the edge                                  */
    double rho_ambient;     /* rho_edge / contrast (0 without a cloud)                        */
    double t_ambient;       /* ambient temperature in K (pressure equilibrium), NAN without   */
    double xi_max, a_be;    /* bonnor-ebert: outer xi and length scale c_s / sqrt(4 pi G rho_c) */
    double mass_model;      /* mass of the cloud model inside R (analytic, before clumps)      */
    hx_bonnor *be;          /* bonnor-ebert profile, else NULL                                */
} hx_cloud;

/* Set up the cloud of validated recipe r. HX_ERR_ARG with one line when the cloud does not fit
 * the box (R + 2 edge beyond the nearest face) or the model cannot be built. Not collective. */
hx_status hx_cloud_init(hx_cloud *c, const hx_recipe *r);

/* Model density at distance d from the centre, before clumps (sphere, bonnor-ebert) or the
 * mean (uniform, lognormal). */
double hx_cloud_profile(const hx_cloud *c, double d);

/* The cloud's smooth window at distance d: (1 - tanh((d - R)/edge)) / 2, or the step 1 for
 * d <= R with a sharp edge; 1 everywhere without a cloud. */
double hx_cloud_window(const hx_cloud *c, double d);

/* 1 when a cell centre at distance d belongs to the cloud region over which mass-weighted
 * dispersions, the Mach number and the virial parameter are taken (d <= R; all of the box
 * without a cloud). */
int hx_cloud_inside(const hx_cloud *c, double d);

/* The 3D velocity dispersion (code velocity) that r's amplitude rule asks for, given the
 * mass of the cloud region (for the virial parameter). For vrms it returns r->vrms (then
 * volume-weighted over the box, not about a mean). */
double hx_cloud_target_sigma(const hx_cloud *c, const hx_recipe *r, double region_mass);

void hx_cloud_clear(hx_cloud *c);

#endif
