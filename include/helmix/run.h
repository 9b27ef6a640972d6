/* helmix/run.h — how a run executes, apart from what it computes: threads per rank, FFTW's
 * planning effort and wisdom, the memory a rank may use, and where timings go. The same
 * options serve make, inspect and plan; none of them changes a single bit of the output. */
#ifndef HELMIX_RUN_H
#define HELMIX_RUN_H

#include "helmix/timer.h"

typedef enum { HX_EFFORT_ESTIMATE = 0, HX_EFFORT_MEASURE, HX_EFFORT_PATIENT } hx_effort;

typedef struct hx_run_opts {
    int threads;          /* threads per rank; 0: OMP_NUM_THREADS, else 1                     */
    hx_effort effort;     /* FFTW planning effort                                              */
    const char *wisdom;   /* FFTW wisdom file: read (rank 0, broadcast) before planning and
                           * written back after it; NULL for none                              */
    double mem_per_rank;  /* bytes a rank may use; 0: the node's memory shared by its ranks    */
    hx_timer *timer;      /* phase timings, or NULL                                            */
} hx_run_opts;

/* The defaults: threads from the environment, estimate, no wisdom, no budget, no timer. */
static inline hx_run_opts hx_run_defaults(void) { return (hx_run_opts){0, HX_EFFORT_ESTIMATE, NULL, 0.0, NULL}; }

#endif
