/* helmix/fft.h — how FFTW is set up for a run: threads per rank, planning effort, and wisdom
 * shared by all ranks (rank 0 reads the file and broadcasts it; after planning the ranks'
 * wisdom is gathered and rank 0 writes it back), so a cluster pays for planning once.
 * Covers both precisions (fftw_ and fftwf_). */
#ifndef HELMIX_FFT_H
#define HELMIX_FFT_H

#include <mpi.h>
#include <stddef.h>

#include "helmix/error.h"
#include "helmix/run.h"

/* Collective: threads (OMP_NUM_THREADS when o->threads is 0) and wisdom, before any grid or
 * plan is made. A wisdom file that does not exist yet is not an error (it is written by
 * hx_fft_end); one that is not FFTW wisdom is (HX_ERR_ARG). o may be NULL. */
hx_status hx_fft_begin(const hx_run_opts *o, MPI_Comm comm);

/* Collective: gather the wisdom of every rank and have rank 0 write it to o->wisdom (through
 * a temporary name and a rename). Nothing without a wisdom file. */
hx_status hx_fft_end(const hx_run_opts *o, MPI_Comm comm);

/* FFTW planner flags for o's effort (FFTW_ESTIMATE when o is NULL). */
unsigned hx_fft_flags(const hx_run_opts *o);

/* The threads per rank a run uses (resolved: >= 1). */
int hx_fft_threads(const hx_run_opts *o);

/* Where the ranks of comm run, agreed over all of them: the fewest CPUs any rank may run on
 * (its affinity mask; all online processors where there is none), the fewest online CPUs of a
 * node and the most ranks on one node. */
typedef struct hx_cpus {
    int cores;      /* per rank */
    int node_cpus;  /* per node */
    int node_ranks; /* ranks sharing a node */
} hx_cpus;

/* Collective. A launcher that binds each rank to one core (Open MPI's default for 2 ranks or
 * fewer) leaves threads nothing to gain; so do more ranks x threads than a node has CPUs. */
hx_status hx_fft_cpus(MPI_Comm comm, hx_cpus *c);

/* 1 and the warning text in msg when more than one thread per rank cannot all run at once (a
 * rank bound to fewer CPUs, or a node with fewer CPUs than its ranks' threads), else 0. Not
 * collective: every rank gets the same answer from the same hx_cpus. */
int hx_fft_threads_warning(int threads, const hx_cpus *c, char *msg, size_t len);

/* The name of an effort ("estimate", "measure", "patient") and the effort of a name (-1 if
 * none). */
const char *hx_fft_effort_name(hx_effort e);
int hx_fft_effort_parse(const char *s);

#endif
