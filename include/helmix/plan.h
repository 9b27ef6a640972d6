/* helmix/plan.h — what a make run will need before it runs: the slab decomposition on P ranks,
 * the peak memory of a rank with kept and with regenerated draws, the file it writes and the
 * transforms it executes; the keep/regenerate choice for [output] draws = auto and the refusal
 * of a job that cannot fit its memory budget.
 *
 * Pure arithmetic: no MPI, FFTW or HDF5 call, so a login node plans 4096^3 on 8192 ranks at
 * once. The slab rule is FFTW-MPI's default block (block = ceil(N/P), rank r owns
 * min(block, max(0, N - r block)) planes), checked against fftw_mpi_local_size_3d_transposed
 * by tests/unit/test_plan.c. The memory model follows make's phases (DEVELOPERS.md, "How a
 * make run flows"); the constants that are not arithmetic (process baseline, the MPI-IO
 * aggregator and HDF5 conversion buffers, file metadata) were measured with Open MPI 4.1
 * (OMPIO) and HDF5 1.10 and are named in plan.c beside their measurement. */
#ifndef HELMIX_PLAN_H
#define HELMIX_PLAN_H

#include <stdint.h>
#include <stdio.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

/* Planes of one slab decomposition (real-space z or k-space y) of N planes over P ranks. */
typedef struct hx_plan_slabs {
    int64_t planes;   /* N                                                           */
    int64_t block;    /* FFTW's default block, ceil(N / P)                            */
    int64_t max, min; /* planes of the largest and the smallest rank                  */
    int64_t idle;     /* ranks owning no plane                                        */
    double imbalance; /* largest over mean planes: 1 when P divides N                 */
} hx_plan_slabs;

/* The memory of one rank in bytes, by phase. peak_* is the largest phase. */
typedef struct hx_plan_memory {
    double baseline;  /* the process after MPI, HDF5 and FFTW are up (measured)      */
    double fixed;     /* make's own small allocations, the open file, the FFTW plan   */
    double slab;      /* the synthesis slab                                          */
    double density;   /* the density slab (0 without a density)                      */
    double draws;     /* kept draws of the field with the most (0 when regenerated)   */
    double transpose; /* FFTW-MPI's transpose buffer during a transform (P > 1)      */
    double io;        /* MPI-IO aggregation or HDF5 conversion buffer during a write  */
    double synthesis; /* peak of the synthesis phases                                */
    double analysis;  /* peak of inspect's analysis of a shaped velocity (0: none)    */
    double peak;      /* max(synthesis, analysis)                                    */
} hx_plan_memory;

typedef struct hx_plan {
    int64_t cells[3];
    int ranks, threads;
    hx_plan_slabs z, y;          /* real-space z slabs, k-space y slabs              */
    int64_t max_ranks;           /* min(Nz, Ny): more ranks own no planes             */
    int layout_ranks, layout_threads; /* ranks x threads for ranks * threads cores: at
                                       * most max_ranks ranks, the rest as threads    */
    int64_t balanced_ranks;      /* the largest count <= ranks dividing Nz and Ny     */
    int64_t alloc_complex;       /* FFTW's local complex count on the largest rank    */
    int compute_single;          /* synthesis precision                               */
    int needs_doubles;           /* make holds real-space doubles in the slab          */
    int shaped;                  /* measuring passes and an analysis of the file        */
    int64_t band_modes;          /* in-band modes of the velocity, all ranks           */
    int64_t band_modes_rank;     /* of the rank with the most, over every field kept   */
    hx_plan_memory keep, regenerate;
    double budget;               /* bytes per rank; 0: none                            */
    hx_draws asked;              /* [output] draws as the recipe says                  */
    hx_draws choice;             /* HX_DRAWS_KEEP or HX_DRAWS_REGENERATE               */
    int fits;                    /* the chosen peak fits the budget (1 without one)    */
    int64_t fit_ranks;           /* smallest rank count whose regenerated peak fits (0: none up to max_ranks) */
    int single_fits;             /* compute = single would fit where double does not   */
    int datasets;                /* grid datasets written                              */
    int value_bytes;             /* 4 or 8: [output] precision                         */
    double data_bytes, meta_bytes, file_bytes;
    double write_bytes_rank;     /* bytes the largest rank writes                      */
    int transforms_velocity;     /* c2r transforms of the velocity (all passes)         */
    int transforms_density, transforms_parts, transforms_magnetic;
    int transforms_analysis;     /* r2c transforms of inspect's analysis (shaped runs)  */
    int transforms;              /* their sum                                          */
} hx_plan;

/* The plan of validated recipe r on `ranks` ranks of `threads` threads each. budget_bytes: a
 * rank's memory (0: none, report only); baseline_bytes: the resident memory of a helmix process
 * of this run after MPI, HDF5 and FFTW are initialised, taken as it is: a process that measured
 * it on another rank count passes it through hx_plan_baseline first. Not
 * collective; no MPI, FFTW or HDF5 call. HX_ERR_ARG for ranks or threads < 1 or a grid make
 * refuses. A plan that does not fit its budget is still HX_OK (see hx_plan_verdict). */
hx_status hx_plan_compute(const hx_recipe *r, int ranks, int threads, double budget_bytes, double baseline_bytes,
                          hx_plan *p);

/* HX_OK when p fits its budget, else HX_ERR_ARG with one line: the peak, the budget and what
 * to change (more ranks, compute = single, draws = regenerate). Not collective. */
hx_status hx_plan_verdict(const hx_plan *p);

/* In-band Fourier modes (integer wavevector, kx in 0..Nx/2, ky and kz signed; no k = 0, no index
 * N/2 on any axis; kmin <= |k| <= kmax, |k| in units of 2 pi / max L, with the hair of slack
 * field.c allows) on the k-space planes [y0, y0 + ny) of the transposed layout. Each (y, z) row
 * is one interval of kx, so the cost is O(ny Nz). Not collective. */
int64_t hx_plan_band_modes(const int64_t cells[3], const double box[3], double kmin, double kmax, int64_t y0, int64_t ny);

/* Planes of rank `rank` of P under FFTW's default block rule, and its first plane. */
int64_t hx_plan_rank_planes(int64_t n, int ranks, int rank, int64_t *first);

/* The resident memory of this process now (VmRSS of /proc/self/status) and the node's
 * MemAvailable (/proc/meminfo), in bytes; 0 where the system does not tell. Not collective. */
double hx_plan_rss_bytes(void);
double hx_plan_mem_available(void);

/* The baseline to plan `ranks` ranks with, from the VmRSS `measured` in a process of
 * `measured_ranks` ranks: Open MPI maps its shared-memory transport once three or more
 * ranks run, which a one-process plan cannot see (the constant is in plan.c). */
double hx_plan_baseline(double measured, int measured_ranks, int ranks);

/* Parse a size "3.5G", "1800MiB", "512M", "1e9" (bytes): suffixes K, M, G, T (powers of 1000
 * with an optional B) and Ki, Mi, Gi, Ti (powers of 1024, optional B), case-insensitive.
 * HX_ERR_ARG with a message naming `what` on anything else or a value <= 0. */
hx_status hx_plan_parse_size(const char *text, const char *what, double *bytes);

/* One line for make's log: "plan: 256x256x256 cells on 4 ranks (64 z planes, 64 y planes per
 * rank), peak 412.3 MiB per rank with kept draws, 280.1 MiB regenerated: keep; file 201.3 MiB". */
void hx_plan_summary(const hx_plan *p, char *buf, size_t size);

/* The full readable report (decomposition, memory by phase, file, transforms, verdict). */
void hx_plan_print(const hx_plan *p, FILE *out);

/* The plan as JSON text (cJSON); malloc'd, the caller frees; NULL on allocation failure. */
char *hx_plan_json(const hx_plan *p);

#endif
