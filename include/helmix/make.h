/* helmix/make.h — the whole generator: recipe in, verified cube out.
 *
 * Prolog (layout, spectrum, plan), one k-space pass (sums and mix), then for each velocity
 * component: synthesize, transform, write; then provenance and the atomic rename. Progress
 * goes through the rank-0 logger. */
#ifndef HELMIX_MAKE_H
#define HELMIX_MAKE_H

#include <mpi.h>

#include "helmix/error.h"
#include "helmix/log.h"
#include "helmix/recipe.h"

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
} hx_make_result;

/* Collective: generate the cube of validated recipe r into r->file (replacing an existing
 * file only if force). res may be NULL. On failure nothing is left at r->file. */
hx_status hx_make_run(const hx_recipe *r, int force, const hx_log *log, MPI_Comm comm, hx_make_result *res);

/* Largest resident set so far over the ranks of comm, in bytes (collective). */
hx_status hx_make_peak_rss(MPI_Comm comm, long long *bytes);

#endif
