/* error.c — status strings, the per-thread last-error message and the collective agreement
 * that turns a failure on any rank into the same status and message on every rank. */
#include "helmix/error.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#include "check.h"

#define HX_MSG_LEN 1024
static _Thread_local char last_msg[HX_MSG_LEN];

const char *hx_status_string(hx_status st)
{
    switch (st) {
    case HX_OK: return "success";
    case HX_ERR_ARG: return "invalid input";
    case HX_ERR_MEM: return "out of memory";
    case HX_ERR_MPI: return "MPI error";
    case HX_ERR_HDF5: return "HDF5 error";
    case HX_ERR_FFTW: return "FFTW planning failed";
    case HX_ERR_IO: return "file system error";
    case HX_ERR_EXISTS: return "output exists";
    case HX_ERR_REMOTE: return "another rank failed";
    }
    return "unknown status";
}

hx_status hx_error_set(hx_status st, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(last_msg, sizeof last_msg, fmt, ap);
    va_end(ap);
    return st;
}

hx_status hx_error_at(hx_status st, const char *file, int line, const char *fmt, ...)
{
    char what[HX_MSG_LEN - 128];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    const char *base = strrchr(file, '/');
    if (st == HX_ERR_ARG || st == HX_ERR_EXISTS) /* the user's mistake: say what, not where in helmix */
        snprintf(last_msg, sizeof last_msg, "%s", what);
    else /* helmix's or the system's: the source location helps a bug report */
        snprintf(last_msg, sizeof last_msg, "%s (%.64s:%d)", what, base ? base + 1 : file, line);
    return st;
}

const char *hx_mpi_errstr(int code, char *buf, int len)
{
    int n = 0;
    if (MPI_Error_string(code, buf, &n) != MPI_SUCCESS) snprintf(buf, (size_t)len, "code %d", code);
    return buf;
}

const char *hx_error_message(void) { return last_msg; }

void hx_error_clear(void) { last_msg[0] = '\0'; }

hx_status hx_error_agree(MPI_Comm comm, hx_status local)
{
    int rank = 0, size = 1;
    if (MPI_Comm_rank(comm, &rank) != MPI_SUCCESS || MPI_Comm_size(comm, &size) != MPI_SUCCESS)
        return hx_error_set(HX_ERR_MPI, "MPI_Comm_rank/size failed while agreeing on a status");
    /* Lowest failing rank wins: reduce (failed ? rank : size) with MIN. */
    int mine = local != HX_OK ? rank : size, first = size;
    if (MPI_Allreduce(&mine, &first, 1, MPI_INT, MPI_MIN, comm) != MPI_SUCCESS)
        return hx_error_set(HX_ERR_MPI, "MPI_Allreduce failed while agreeing on a status");
    if (first == size) return HX_OK;
    int code = (int)local;
    char msg[HX_MSG_LEN];
    memcpy(msg, last_msg, sizeof msg);
    if (MPI_Bcast(&code, 1, MPI_INT, first, comm) != MPI_SUCCESS ||
        MPI_Bcast(msg, HX_MSG_LEN, MPI_CHAR, first, comm) != MPI_SUCCESS)
        return hx_error_set(HX_ERR_REMOTE, "rank %d failed and its message was lost", first);
    msg[HX_MSG_LEN - 1] = '\0';
    memcpy(last_msg, msg, sizeof msg);
    return (hx_status)code;
}
