/* log.c — rank-0 progress lines with elapsed wall time. */
#include "helmix/log.h"

#include <stdarg.h>
#include <sys/resource.h>

#include "check.h"

void hx_log_init(hx_log *log, MPI_Comm comm, int verbosity, FILE *out)
{
    int rank = 0;
    if (MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) rank = -1; /* unknown rank: stay silent */
    log->on_root = rank == 0;
    log->verbosity = verbosity;
    log->t0 = MPI_Wtime();
    log->out = out ? out : stderr;
}

void hx_log_say(const hx_log *log, int level, const char *fmt, ...)
{
    if (!log || !log->on_root || level > log->verbosity) return;
    va_list ap;
    va_start(ap, fmt);
    fprintf(log->out, "helmix [%8.2f s] ", MPI_Wtime() - log->t0);
    vfprintf(log->out, fmt, ap);
    fputc('\n', log->out);
    fflush(log->out);
    va_end(ap);
}

hx_status hx_log_peak_rss(MPI_Comm comm, long long *bytes)
{
    hx_status st = HX_OK;
    struct rusage ru;
    long long mine = getrusage(RUSAGE_SELF, &ru) == 0 ? (long long)ru.ru_maxrss * 1024LL : 0;
    HX_MPI(MPI_Allreduce(&mine, bytes, 1, MPI_LONG_LONG, MPI_MAX, comm));
fail:
    return st;
}

