/* helmix/inspect.h — measure what a velocity cube holds: Helmholtz decomposition, shell
 * spectra, gradients, one-point statistics and mid-plane slices, with a density its state
 * (mass-weighted dispersion, Mach number, virial parameter, momentum, ln rho), and with a
 * magnetic field its mean, rms, spectrum, beta, Alfven Mach number and divergence (spectral,
 * and discrete on a face-centred field), streaming one component at a time through an
 * in-place r2c FFTW-MPI transform with at most two complex slabs per rank (and the density
 * slab). The velocity and the magnetic field go through the same analysis of a vector field. */
#ifndef HELMIX_INSPECT_H
#define HELMIX_INSPECT_H

#include <mpi.h>

#include "helmix/cube.h"
#include "helmix/diag.h"
#include "helmix/log.h"
#include "helmix/timer.h"
#include "helmix/verdict.h"

typedef struct hx_inspect_opts {
    hx_cube_spec cube;
    double remove_scale; /* > 0: subtract the Gaussian-smoothed flow on this scale (code length) */
    double fit[2];       /* slope fit range in shells; {0, 0}: the request's band or [2, N/4] */
    int slices;          /* 1: compute mid-plane slices (rank 0) for the report picture       */
    double sound_speed;  /* > 0: sound speed for the Mach number (code velocity); 0: the file's */
    double gravity;      /* > 0: G in code units for the virial parameter; 0: the file's       */
    double gamma;        /* > 0: adiabatic index for beta (P = rho c_s^2 / gamma); 0: the file's,
                          * else 1 (c_s is then the isothermal sound speed)                   */
    hx_timer *timer;     /* phase timings (open, plan, read, moments, transform, accumulate,
                          * slices, finish), or NULL for none                                   */
    int threads;         /* threads per rank for FFTW and the k-space passes; 0: OMP_NUM_THREADS,
                          * else 1. Every count gives the same bits                            */
} hx_inspect_opts;

/* Collective: analyse the cube of o into d (arrays allocated here; hx_diag_clear frees); with
 * a magnetic field open (o->cube.magnetic, or find_magnetic and a helmix file holding one)
 * also d->magnetic, and q then holds what make recorded of it.
 * q receives the request recorded in a helmix file (*found = 1) or defaults for the data's
 * precision (*found = 0). Errors are agreed on every rank. */
hx_status hx_inspect_run(const hx_inspect_opts *o, const hx_log *log, MPI_Comm comm, hx_diag *d, hx_request *q,
                         int *found);

#endif
