/* helmix/error.h — status codes and the last-error message of the calling thread.
 *
 * Every fallible helmix function returns an hx_status. On failure it also records one line
 * (what went wrong, where, what is allowed) that hx_error_message() returns until the next
 * failure on the same thread. This is the library's only mutable state, kept per thread like
 * errno; it never decides control flow, it only carries text to the front end. */
#ifndef HELMIX_ERROR_H
#define HELMIX_ERROR_H

#include <mpi.h>

typedef enum hx_status {
    HX_OK = 0,
    HX_ERR_ARG = 1,    /* bad user input: recipe, option, file contents          */
    HX_ERR_MEM = 2,    /* allocation failed                                      */
    HX_ERR_MPI = 3,    /* an MPI call failed                                     */
    HX_ERR_HDF5 = 4,   /* an HDF5 call failed                                    */
    HX_ERR_FFTW = 5,   /* FFTW could not make a plan                             */
    HX_ERR_IO = 6,     /* operating-system file error (open, rename, read)       */
    HX_ERR_EXISTS = 7, /* output file exists and overwriting was not allowed     */
    HX_ERR_REMOTE = 8  /* another rank failed; its message was not received      */
} hx_status;

/* One-line meaning of a status code. Never NULL. Not collective. */
const char *hx_status_string(hx_status st);

/* Record a printf-style message for this thread and return st (so callers can
 * `return hx_error_set(HX_ERR_ARG, "...")`). Not collective. */
hx_status hx_error_set(hx_status st, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* The last recorded message of this thread ("" if none). Not collective. */
const char *hx_error_message(void);

/* Clear the message of this thread. */
void hx_error_clear(void);

/* Collective over comm: agree on one status. Every rank passes its local status; every
 * rank gets back the status of the lowest-numbered failing rank (HX_OK if none failed),
 * and that rank's message becomes the message on every rank, so rank 0 can report it.
 * If the agreement itself fails, HX_ERR_MPI is returned. */
hx_status hx_error_agree(MPI_Comm comm, hx_status local);

#endif
