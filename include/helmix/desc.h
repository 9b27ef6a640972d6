/* helmix/desc.h — a field descriptor: everything the synthesis engine and the writer need to
 * know of one named field (velocity, the log-density of a lognormal cloud, ...) and nothing of
 * the recipe it came from. make builds the list of descriptors from the recipe; field.c
 * synthesises from a descriptor; io names datasets after it. Plain data. */
#ifndef HELMIX_DESC_H
#define HELMIX_DESC_H

#include <stdint.h>

#include "helmix/recipe.h"

/* Random streams: a word of the Philox key, so the draws of different fields are independent
 * for the same seed. The velocity stream is 0, which keeps the key every earlier file used. */
typedef enum { HX_STREAM_VELOCITY = 0, HX_STREAM_DENSITY = 1, HX_STREAM_MAGNETIC = 2 } hx_stream;

/* Which part of a mixed vector field to synthesise: all of it, or only its solenoidal or
 * compressive part (the two add up to the whole, mode by mode). */
typedef enum { HX_PART_ALL = 0, HX_PART_SOLENOIDAL, HX_PART_COMPRESSIVE } hx_part;

/* Where the values sit: cell centres, or the faces of a staggered grid (component c on the
 * low-c face of each cell: at x_c = i dx_c, the other two coordinates at cell centres), as the
 * discrete curl of a vector potential on cell edges, so that the discrete divergence
 * sum_c (B_c(i+1) - B_c(i)) / dx_c vanishes to round-off whatever the spectrum. */
typedef enum { HX_STAGGER_CELL = 0, HX_STAGGER_FACE } hx_stagger;

typedef struct hx_desc {
    const char *name;          /* dataset base name: "velocity" gives velocity_x|y|z, "density" */
    int ncomp;                 /* 1 (scalar) or 3 (vector)                                    */
    const char *unit;          /* field units as yt reads them, e.g. "code_length/code_time"   */
    hx_spectrum_spec spectrum; /* shell-integrated power E(k), zero outside [kmin, kmax]      */
    hx_mix_spec mix;           /* vectors: solenoidal / compressive weighting                 */
    double rms;                /* target rms: sqrt(<|v|^2>) of a vector, of the scalar itself */
    uint64_t seed;
    hx_stream stream;
    hx_amplitudes amplitudes;
    int flip;
    hx_part part;              /* default all                                                  */
    hx_stagger stagger;        /* default cell centres; faces for solenoidal vectors only        */
} hx_desc;

#endif
