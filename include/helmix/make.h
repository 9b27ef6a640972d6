/* helmix/make.h — the whole generator: recipe in, verified initial state out.
 *
 * Prolog (layout, cloud, field descriptors, plan); the density (a model, a lognormal field or
 * a clumpy cloud) kept in one real slab and written; then the velocity: one k-space pass (sums
 * and mix) and, for each component, synthesize, transform, write. A velocity shaped by the
 * cloud (window, bulk or rotation removal, mass-weighted amplitude) takes a measuring pass
 * first and is analysed as written afterwards. Then provenance and the atomic rename. Progress
 * goes through the rank-0 logger. */
#ifndef HELMIX_MAKE_H
#define HELMIX_MAKE_H

#include <mpi.h>

#include "helmix/error.h"
#include "helmix/log.h"
#include "helmix/recipe.h"
#include "helmix/run.h"

typedef struct hx_make_result {
    double fraction;       /* realized compressive share (k-space sums)                  */
    double vrms_k;         /* 3D rms from the k-space sums                               */
    double vrms_x;         /* 3D rms recomputed from the values written (real space)      */
    double mean[3];        /* mean of each written component                              */
    double slope_fit, slope_sigma; /* expected value and scatter of the compensated slope fit */
    double t_plan;         /* FFTW planning                                               */
    double t_draw;         /* filling k space: draws, projection, mix pass                */
    double t_fft;          /* the three c2r transforms                                    */
    double t_synth[3];     /* per component: fill + transform + compaction (+ moments)    */
    double t_write[3];     /* per component: collective write                             */
    double t_total;        /* from the start to the provenance write                      */
    long long peak_rss;    /* bytes, largest over ranks                                   */
    double kept_bytes;     /* bytes of kept draws on the rank that kept most (0: regenerated) */
    int as_written;        /* 1: share and diagnostics measured on the field as written     */
    /* the physical state as written (NAN where it does not apply) */
    double sigma_3d;       /* mass-weighted 3D dispersion over the cloud region            */
    double mach, virial;   /* sigma_3d / c_s; 5 (sigma_3d^2/3) R / (G M_region)              */
    double region_mass, radius;
    double momentum[3], angular[3];  /* net, over the box, code units                       */
    double momentum_rel, angular_rel;/* |P| / (M vrms), |L| / (M <|Delta|^2>^1/2 vrms)       */
    double density_mean, sigma_s_written; /* volume mean of rho; std of ln rho              */
    /* the magnetic field as written (code magnetic units; NAN without one) */
    double b0[3];          /* the uniform field                                            */
    double b_random_rms;   /* rms of the random part, cell-centred (k-space, exact)          */
    double b_rms, b_face_rms; /* rms of |B| over the box, cell-centred and face-centred       */
    double beta, alfven_mach; /* of the uniform field: 2 P / B0^2, sigma_3d sqrt(<rho>) / B0  */
} hx_make_result;

/* Collective: generate the cube of validated recipe r into r->file (replacing an existing
 * file only if force), executed as run says (NULL: hx_run_defaults). res may be NULL. On
 * failure nothing is left at r->file. */
hx_status hx_make_run(const hx_recipe *r, int force, const hx_run_opts *run, const hx_log *log, MPI_Comm comm,
                      hx_make_result *res);

/* 1 when the cloud shapes the velocity of validated recipe r (window, removal of bulk flow or
 * rotation, mass weighting, or a mass-weighted amplitude in a non-uniform density): then make
 * takes measuring passes and analyses the file as written. */
int hx_make_shaped(const hx_recipe *r);

/* 1 when make needs real-space values in double precision from the synthesis (a density, a
 * shaped velocity or a magnetic field), so the synthesis slab must hold Nx*Ny*nz doubles. */
int hx_make_needs_doubles(const hx_recipe *r);

#endif
