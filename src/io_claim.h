/* io_claim.h — internal to io: the names around an output FILE and the claim on them.
 * FILE.lock (created exclusively by rank 0 and held with flock for the whole run) says that a
 * run is writing FILE; the data go to FILE.partial, or to a short hidden DIR/.hx-XXXXXX.partial
 * when FILE.partial is too long for the MPI-IO layer; the sidecar is written as FILE.xmf.partial.
 * Every name is registered with the signal guard while it exists. Collective where it says so. */
#ifndef HX_IO_CLAIM_H
#define HX_IO_CLAIM_H

#include <mpi.h>
#include <stddef.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

/* The longest name helmix hands to MPI-IO: Open MPI 4.1 overflows a fixed buffer (an abort)
 * for file names of about 240 characters and more. */
#define IO_MPI_NAME_MAX 200

typedef struct io_claim {
    char path[HX_PATH_MAX];            /* FILE                                                 */
    char partial[HX_PATH_MAX + 32];    /* where the data go                                    */
    char lock[HX_PATH_MAX + 32];       /* FILE.lock                                            */
    char xmf[HX_PATH_MAX + 32];        /* FILE.xmf                                             */
    char xmf_partial[HX_PATH_MAX + 32];
    char mpiname[HX_PATH_MAX + 32];    /* the partial's name for MPI-IO (same on every rank)   */
    int dirfd;                         /* every rank: the directory, when mpiname goes through it */
    int lockfd, datafd;                /* rank 0                                               */
    int rank;
    char note[1536];                   /* rank 0: a stale partial that was found and removed  */
} io_claim;

/* Not collective: HX_ERR_ARG with one line when FILE's name cannot be written (too long for
 * the names derived from it, or for the file system). */
hx_status io_claim_check_name(const char *path);

/* Collective (agreed): take the claim on `path` and create its partial file (0 bytes, rank 0),
 * or refuse (HX_ERR_EXISTS) when another run holds it. On failure nothing is left behind. */
hx_status io_claim_take(io_claim *c, const char *path, MPI_Comm comm);

/* Not collective: is a live run writing `path`? 1 yes (msg says which), 0 no. Rank 0 only. */
int io_claim_busy(const char *path, char *msg, size_t len);

/* Drop the claim: rank 0 removes the lock (the caller has removed or renamed the partial
 * first); every rank forgets the guarded names and closes its descriptors. Not collective. */
void io_claim_release(io_claim *c);

/* Collective (agreed): a name no longer than IO_MPI_NAME_MAX under which every rank opens
 * `path` through MPI-IO: path itself when short, else /proc/self/fd/N/BASE with N the same
 * descriptor of the directory on every rank (*dirfd, to be closed after the file). */
hx_status io_mpi_name(const char *path, MPI_Comm comm, char *out, size_t len, int *dirfd);

#endif
