/* check.h — internal macros that check every MPI, HDF5 and FFTW call.
 *
 * Each macro records file, line and the failing call in the thread's error message and
 * jumps to the function's `fail:` label with `st` set, or returns, as named. They keep the
 * error path of every module the same shape: set st, goto fail, free, return st. */
#ifndef HX_CHECK_H
#define HX_CHECK_H

#include "helmix/error.h"

/* Internal: record "where: what" and the status. */
hx_status hx_error_at(hx_status st, const char *file, int line, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));
/* Internal: text of an MPI error code. */
const char *hx_mpi_errstr(int code, char *buf, int len);

#define HX_FAIL(code, ...)                                                             \
    do {                                                                               \
        st = hx_error_at((code), __FILE__, __LINE__, __VA_ARGS__);                     \
        goto fail;                                                                     \
    } while (0)

/* MPI calls: the communicator's error handler must be MPI_ERRORS_RETURN (the CLI sets it). */
#define HX_MPI(call)                                                                   \
    do {                                                                               \
        int hx_mpi_rc_ = (call);                                                       \
        if (hx_mpi_rc_ != MPI_SUCCESS) {                                               \
            char hx_mpi_buf_[MPI_MAX_ERROR_STRING];                                    \
            HX_FAIL(HX_ERR_MPI, "%s failed: %s", #call,                                \
                    hx_mpi_errstr(hx_mpi_rc_, hx_mpi_buf_, (int)sizeof hx_mpi_buf_));  \
        }                                                                              \
    } while (0)

/* HDF5 calls returning hid_t or herr_t: negative means failure. */
#define HX_H5(var, call)                                                               \
    do {                                                                               \
        if (((var) = (call)) < 0) HX_FAIL(HX_ERR_HDF5, "%s failed", #call);            \
    } while (0)
#define HX_H5OK(call)                                                                  \
    do {                                                                               \
        if ((call) < 0) HX_FAIL(HX_ERR_HDF5, "%s failed", #call);                      \
    } while (0)

/* Allocation. */
#define HX_ALLOC(ptr, count)                                                           \
    do {                                                                               \
        (ptr) = calloc((size_t)(count) != 0 ? (size_t)(count) : 1, sizeof *(ptr));          \
        if (!(ptr)) HX_FAIL(HX_ERR_MEM, "out of memory allocating %s (%zu elements)",  \
                            #ptr, (size_t)(count));                                    \
    } while (0)

/* Propagate a helmix status from a callee whose message is already recorded. */
#define HX_TRY(call)                                                                   \
    do {                                                                               \
        if ((st = (call)) != HX_OK) goto fail;                                         \
    } while (0)

#endif
