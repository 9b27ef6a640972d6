/* helmix/field.h — the streaming synthesis pipeline of one field (a descriptor, hx_desc):
 * k-space sums, mix factors, and one component at a time through an in-place c2r FFTW-MPI
 * transform. A vector field is split into solenoidal and compressive parts and mixed; a
 * scalar field (ncomp = 1) uses the first draw of each mode and is scaled to its rms.
 *
 * Memory: one complex slab per rank (the transform is in place and the result is compacted
 * and converted to the output precision inside the same buffer), so peak memory does not
 * grow with the number of components. The slab and the transform are in the compute
 * precision (single: half the memory and time). Draws are either kept from the first pass
 * over a descriptor's modes (6 values per in-band mode, in the compute precision) or
 * regenerated in every pass; both give the same bits.
 * The field is the Fourier series of the periodic box evaluated at cell centres
 * x = (i + 1/2) dx, with Nyquist modes and k = 0 empty, so coefficients depend only on
 * (seed, integer wavevector, component): the same at every resolution and rank count. */
#ifndef HELMIX_FIELD_H
#define HELMIX_FIELD_H

#include <mpi.h>

#include "helmix/desc.h"
#include "helmix/diag.h"
#include "helmix/error.h"
#include "helmix/grid.h"
#include "helmix/spectrum.h"
#include "helmix/timer.h"

typedef struct hx_field hx_field;

/* How a synthesis object is built. */
typedef struct hx_field_opts {
    hx_precision compute; /* precision of the slab and the transform                            */
    int real_doubles;     /* components will be asked for in double: the slab holds nz*Ny*Nx
                           * doubles even in single compute                                      */
    int keep_draws;       /* keep the draws of the first pass over a descriptor's modes; a rank
                           * that cannot allocate them regenerates (same bits, no agreement needed) */
    unsigned plan_flags;  /* FFTW planner flags (FFTW_ESTIMATE, FFTW_MEASURE, ...)                 */
    int threads;          /* threads for the k-space passes (the same bits for any count)        */
    hx_timer *timer;      /* phases "draw" and "transform", or NULL                               */
} hx_field_opts;

/* What the k-space pass measured and the mix solved (global, identical on every rank). */
typedef struct hx_field_summary {
    int nshell;             /* shells s = 0 .. nshell-1, s = round(|k|) in units of 2 pi / lmax */
    const double *sol;      /* per shell: solenoidal kinetic energy of the final field, sum |u_perp|^2 / 2 */
    const double *comp;     /* per shell: compressive kinetic energy, sum |u_par|^2 / 2               */
    const double *modes;    /* per shell: number of Fourier modes with power (both halves counted)    */
    double fraction;        /* compressive share of kinetic energy, from the k-space sums             */
    double vrms_k;          /* 3D rms velocity from the k-space sums (Parseval)                      */
    double div_rms;         /* rms of div v, (sum |k . u|^2)^(1/2), physical k = 2 pi n / L          */
    double grad_rms;        /* (sum |k|^2 |u|^2)^(1/2): the rms velocity gradient                    */
    const double *power;    /* per shell: sum of A(k)^2 over stored modes (weight 2 for kx > 0): the
                             * expected shell energy of the draw, up to one constant factor          */
    const double *power_sq; /* per shell: sum of (weight A(k)^2)^2, for the scatter of shell energies  */
} hx_field_summary;

/* Collective: allocate the slab of grid g and plan the in-place c2r transform as o says.
 * HX_ERR_FFTW when FFTW returns no plan, HX_ERR_MEM when the slab cannot be allocated
 * (agreed on all ranks). */
hx_status hx_field_create(hx_field **f, const hx_grid *g, const hx_field_opts *o, MPI_Comm comm);

/* Bytes of the synthesis slab hx_field_create allocates for g and o on this rank. */
double hx_field_slab_bytes(const hx_grid *g, const hx_field_opts *o);

/* Bytes of kept draws this rank holds now (0 when regenerating). */
double hx_field_kept_bytes(const hx_field *f);

/* Collective: draw every mode of field d once, sum the solenoidal and compressive energies per
 * shell, reduce them over comm and solve the mix (hx_mix_solve) for the rms d->rms. d and sp
 * (the spectrum of d->spectrum) must outlive f or the next hx_field_mix.
 * With exact = none the mix needs no look-ahead, so this pass is folded into the synthesis of
 * component 0 (which must then come first) and the summary is ready only after it. */
hx_status hx_field_mix(hx_field *f, const hx_desc *d, const hx_spectrum *sp);

/* The summary of the mix, or NULL while it is not known yet. Not collective. */
const hx_field_summary *hx_field_summary_get(const hx_field *f);

/* Collective: synthesize component c (0 = x, 1 = y, 2 = z; 0 for a scalar) in real space. On return *slab
 * points to this rank's nz * Ny * Nx values (x fastest) as float (single) or double, valid
 * until the next call, and mom (may be NULL) holds the global moment sums of the values
 * written (centre 0, scale the component's rms from its k-space power), gathered while
 * compacting: an rms and PDF check of the data independent of the k-space sums. */
hx_status hx_field_component(hx_field *f, int c, hx_precision prec, const void **slab, hx_moments *mom);

/* Seconds spent so far (this rank) filling k space (draws) and in the FFTW transforms. */
void hx_field_timings(const hx_field *f, double *draw, double *transform);

void hx_field_destroy(hx_field **f);

#endif
