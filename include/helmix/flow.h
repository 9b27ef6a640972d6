/* helmix/flow.h — weighted sums of a velocity field in a density: the net momentum and angular
 * momentum, the mass-weighted dispersion over a cloud, the volume rms, and the bulk and rigid
 * rotation that remove net momentum and angular momentum.
 *
 * Positions are cell centres x = (i + 1/2) dx measured from `origin` (the centre of mass of the
 * mass weight): Delta = x - origin. Every sum is taken one component at a time, so the
 * generator can stream the components through one slab. With a window W the mass weight is
 * rho W: the correction that removes the momentum of W (u - v_b - Omega x Delta) is the bulk
 * and rotation of u under rho W, so the gas outside the window stays at rest. */
#ifndef HELMIX_FLOW_H
#define HELMIX_FLOW_H

#include <mpi.h>

#include "helmix/cloud.h"
#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/sum.h"

enum { HX_FLOW_SUMS = 1 + 3 + 9 + 3 + 3 + 9 };

/* Sums under one weight w (rho, rho inside the cloud, or 1). */
typedef struct hx_flow_w {
    double w0, w1[3], w2[3][3];    /* sum w, sum w Delta_a, sum w Delta_a Delta_b           */
    double v1[3], v2[3], vx[3][3]; /* sum w v_c, sum w v_c^2, sum w v_c Delta_a (vx[c][a])  */
} hx_flow_w;

typedef struct hx_flow {
    double origin[3];
    double cell_volume;
    int windowed;     /* the mass weight is rho W (the cloud's window)              */
    hx_flow_w mass;   /* w = rho (or rho W) over the box                           */
    hx_flow_w region; /* w = rho inside the cloud (the box without a cloud)         */
    hx_flow_w volume; /* w = 1 over the box                                        */
    /* the running sums behind the three weights, in the order w0, w1, w2, v1, v2, vx, kept
     * double-double so that the reduced sums are the same on any number of ranks */
    hx_sum acc[3][HX_FLOW_SUMS];
} hx_flow;

/* Collective: zero fl, find the centre of mass of rho (NULL: a uniform density), times the
 * cloud's window if windowed, and take the density moments of the three weights. rho holds
 * this rank's nz * Ny * Nx values. */
hx_status hx_flow_begin(hx_flow *fl, const hx_grid *g, const double *rho, const hx_cloud *cl, int windowed,
                        MPI_Comm comm);

/* Add component c of this rank's values v (nz * Ny * Nx, x fastest; float or double as prec
 * says) to the local sums. Not collective; hx_flow_reduce sums over ranks. */
void hx_flow_add(hx_flow *fl, const hx_grid *g, int c, const void *v, hx_precision prec, const double *rho,
                 const hx_cloud *cl);

/* Collective: sum the velocity sums of fl over comm (call once, after the three components). */
hx_status hx_flow_reduce(hx_flow *fl, MPI_Comm comm);

/* The correction that removes the net momentum (bulk) and the net angular momentum about the
 * centre of mass (rotation, a rigid rotation Omega = I^-1 L with I the inertia tensor), from
 * the mass sums: the corrected field is v_c - vb[c] - sum_a K[c][a] Delta_a. Zero where not
 * asked. HX_ERR_ARG when the inertia tensor is singular. */
hx_status hx_flow_correction(const hx_flow *fl, int bulk, int rotation, double vb[3], double K[3][3]);

/* What a field holds (after hx_flow_reduce): */
typedef struct hx_flow_report {
    double vrms;          /* sqrt(<|v|^2>) over the box, volume-weighted                   */
    double sigma_3d;      /* mass-weighted 3D dispersion over the region about its mean      */
    double region_mass;   /* mass of the region                                            */
    double momentum[3];   /* sum rho v dV over the box                                      */
    double angular[3];    /* sum rho Delta x v dV over the box                               */
    double momentum_scale;/* total mass times vrms: what momentum is small against          */
    double angular_scale; /* sum rho |Delta| dV times vrms                                  */
} hx_flow_report;

void hx_flow_summarize(const hx_flow *fl, hx_flow_report *rep);

#endif
