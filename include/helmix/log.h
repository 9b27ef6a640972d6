/* helmix/log.h — the rank-0 progress logger.
 *
 * One predicate (rank 0 of the communicator and verbosity above the message level) decides
 * who prints; every line carries the elapsed wall time since hx_log_init. A plain value,
 * passed to whoever reports, so the library keeps no global logger. */
#ifndef HELMIX_LOG_H
#define HELMIX_LOG_H

#include <mpi.h>
#include <stdio.h>

enum { HX_LOG_QUIET = 0, HX_LOG_INFO = 1, HX_LOG_DEBUG = 2 };

typedef struct hx_log {
    int on_root;   /* 1 on rank 0 of the communicator                                */
    int verbosity; /* HX_LOG_QUIET, HX_LOG_INFO or HX_LOG_DEBUG                        */
    double t0;     /* MPI_Wtime() at init                                             */
    FILE *out;     /* stream for progress lines (stderr by default)                   */
} hx_log;

/* Not collective (reads the rank only). */
void hx_log_init(hx_log *log, MPI_Comm comm, int verbosity, FILE *out);

/* Print one progress line on rank 0 if level <= verbosity. Not collective. */
void hx_log_say(const hx_log *log, int level, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

/* Largest resident set so far over the ranks of comm, in bytes (collective). */
#include "helmix/error.h"
hx_status hx_log_peak_rss(MPI_Comm comm, long long *bytes);

#endif
