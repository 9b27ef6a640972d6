/* helmix/scaling.h — merge the timing files of many runs (`--timings` of make or inspect, the
 * schema docs/timings.schema.json) into a scaling study: per run its cells, ranks, threads,
 * total time and time per phase, and its speed-up and parallel efficiency against a reference
 * run; a Markdown table and a one-page plot. Serial (rank 0 of `helmix scaling`).
 *
 * Strong scaling (same cells, more cores): the reference of a run is the run of the same
 * command and cells with the fewest cores P1; speed-up T1/T, efficiency T1 P1 / (T P).
 * Weak scaling (same cells per core): runs of one command whose cells per core lie within a
 * factor 1.5 of the series' first run form a series; the reference is its run with the fewest
 * cores; efficiency (T1 / (C1/P1)) / (T / (C/P)), the time per cells-per-core, which is T1/T
 * when C/P is exactly the same (it is not quite, once N is rounded to an even size).
 * Cores are ranks x threads; every time is the slowest rank's (the max over ranks). */
#ifndef HELMIX_SCALING_H
#define HELMIX_SCALING_H

#include <stdint.h>
#include <stdio.h>

#include "helmix/error.h"

typedef enum { HX_SCALING_AUTO = 0, HX_SCALING_STRONG, HX_SCALING_WEAK } hx_scaling_kind;

enum { HX_SCALING_NAME = 48 };

typedef struct hx_scaling_run {
    char file[512];
    char command[HX_SCALING_NAME];
    int64_t grid[3];  /* 0 0 0 when the run recorded none                                    */
    double cells;     /* Nx Ny Nz, 0 without a grid                                          */
    int ranks, threads, cores;
    double total;     /* total wall time, slowest rank [s]                                   */
    double *phase;    /* seconds per phase of the study's phase list (slowest rank); NAN when
                       * the run has no such phase                                           */
    double peak_rss;  /* largest peak resident memory of a rank [bytes]                      */
    int group;        /* strong: runs of one command and cells; weak: one series             */
    int ref;          /* index of the reference run of its group                             */
    double speedup, efficiency;
} hx_scaling_run;

typedef struct hx_scaling {
    hx_scaling_kind kind; /* strong or weak once loaded (auto resolved)                        */
    int n;
    hx_scaling_run *runs; /* sorted by command, group, cores                                   */
    int nphase;
    char (*phase)[HX_SCALING_NAME]; /* every phase name, in the order the runs first name them */
    int ngroup;
} hx_scaling;

/* Read and check the timing files (one line naming the file for an unreadable file, text that
 * is not JSON, a document of another schema or version, or a missing or mistyped member:
 * HX_ERR_ARG), resolve `kind` (auto: strong when some command and cells were run on two or
 * more core counts, else weak) and compute speed-up and efficiency. Not collective. */
hx_status hx_scaling_load(hx_scaling *s, const char *const *files, int nfiles, hx_scaling_kind kind);

/* The Markdown table (one per command) with a line saying how efficiency is defined. */
void hx_scaling_table(FILE *out, const hx_scaling *s);

/* The table to a file; HX_ERR_IO when it cannot be written. */
hx_status hx_scaling_table_write(const char *path, const hx_scaling *s);

/* The page (PNG or PDF by extension): parallel efficiency against cores, and time per phase
 * against cores for the group with the most runs. src/scaling_plot.c. */
hx_status hx_scaling_plot(const hx_scaling *s, const char *path);

void hx_scaling_clear(hx_scaling *s);

#endif
