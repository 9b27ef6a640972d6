/* helmix/fault.h — faults on purpose and faults from outside.
 *
 * Injection (tests only): HELMIX_FAULT="RANK:PHASE[:N]" makes rank RANK of the communicator
 * fail the N-th time (default 1) it passes the fault point PHASE, as if the operation there had
 * failed; every other rank goes on, so the test sees whether the failure is agreed. Phases:
 *   alloc   the synthesis slab (field)      plan    the FFTW plan (field)
 *   create  creating the partial file (io)  write   a field write (io; N counts the writes)
 *   close   closing the partial file (io)   rename  the partial to its name (io)
 *   xdmf    the XDMF sidecar (io)           verify  reading a file back (hx_io_verify)
 * Without HELMIX_FAULT nothing is ever injected. A malformed value is refused at the first
 * fault point with one line (HX_ERR_ARG), on every rank alike.
 *
 * Stalls (tests only): HELMIX_STALL="PHASE:SECONDS" makes every rank pause SECONDS (0-3600] the
 * first time it passes the fault point PHASE, as a slow file system would; tests use it to have
 * a signal, a second run or a removed directory land at a known phase, whatever the machine's
 * speed. A malformed value is refused like HELMIX_FAULT's.
 *
 * Signals: the files a run is writing are registered here (hx_fault_guard_add); the handlers
 * hx_fault_install_handlers sets for SIGINT, SIGTERM, SIGHUP and SIGXCPU unlink them (unlink is
 * async-signal-safe; the names are copied in advance), then re-raise the signal with its default
 * action, so the process ends as killed by it (exit status 128 + signal in a shell). */
#ifndef HELMIX_FAULT_H
#define HELMIX_FAULT_H

#include <mpi.h>

#include "helmix/error.h"

/* Not collective: HX_OK, or the injected failure (HX_ERR_IO, one line naming the phase, the
 * rank and HELMIX_FAULT) when this rank of comm is the chosen one at its chosen pass of phase.
 * Callers agree on the result (hx_error_agree) like on the real operation's. */
hx_status hx_fault_point(const char *phase, MPI_Comm comm);

/* Not collective: 1 when HELMIX_NO_RESERVE=1 asks io not to reserve file space in advance
 * (tests use it to meet a full disk in the middle of the writes instead of at the start). */
int hx_fault_no_reserve(void);

/* Register / forget a file to be removed if a signal ends the process. At most
 * HX_FAULT_GUARDS names at once; 0 on success, -1 when full or too long. Not collective.
 * A name takes the lowest free slot and the handler removes the highest slot first, so a lock
 * registered before the files it covers is removed after them. */
#define HX_FAULT_GUARDS 8
int hx_fault_guard_add(const char *path);
void hx_fault_guard_remove(const char *path);

/* Install the handlers (main, after MPI_Init so they replace nothing MPI needs). */
void hx_fault_install_handlers(void);

#endif
