/* io_tuning.h — internal to io: how the output file is laid out and opened, from
 * [output] alignment and io_hints (HDF5 alignment of large objects, MPI-IO hints).
 * hx_io_tuning_check (public, io.h) is the text check; this part turns checked values into an
 * MPI_Info and a file-access property list. Nothing here is collective. */
#ifndef HX_IO_TUNING_H
#define HX_IO_TUNING_H

#include <hdf5.h>
#include <mpi.h>

#include "helmix/io.h"

typedef struct io_tuning {
    hsize_t alignment; /* 0: HDF5's packing                                          */
    hsize_t threshold; /* objects of at least this many bytes are aligned              */
    char hints[HX_PATH_MAX]; /* canonical "key=value,key=value", or "none"              */
    MPI_Info info;     /* valid when has_info (a zeroed struct holds no MPI_Info)      */
    int has_info;
} io_tuning;

/* Check `in` (NULL: defaults) and fill t; `threshold` is the size of the smallest object to
 * align (one field component). HX_ERR_ARG with one line naming the recipe key. */
hx_status io_tuning_init(io_tuning *t, const hx_io_tuning *in, hsize_t threshold);

/* A file-access property list for MPI-IO on comm with t's hints and alignment; -1 on failure
 * (the message is recorded). */
hid_t io_tuning_fapl(const io_tuning *t, MPI_Comm comm);

/* Free the MPI_Info; t may be zeroed or half-initialised. */
void io_tuning_free(io_tuning *t);

#endif
