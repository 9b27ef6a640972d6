/* helmix/sum.h — sums whose result does not depend on how their terms are split over ranks.
 *
 * A running sum is kept as an unevaluated pair hi + lo (double-double: each addition is exact,
 * its rounding error goes into lo by Knuth's TwoSum; Knuth 1969, The Art of Computer Programming
 * vol. 2, 4.2.2), carrying about 106 bits. Partial sums over any partition of the terms (1, 2, 3,
 * ... ranks, in any order) then agree to about 1e-30 relative and round to the same double
 * unless the exact sum lies that close to a rounding boundary. This is what makes a field's
 * scale factors, and so the field, the same to the last bit on any number of ranks. */
#ifndef HELMIX_SUM_H
#define HELMIX_SUM_H

#include <mpi.h>

#include "helmix/error.h"

typedef struct hx_sum {
    double hi, lo;
} hx_sum;

/* s += x. Not collective. */
static inline void hx_sum_add(hx_sum *s, double x)
{
    double t = s->hi + x, b = t - s->hi;
    s->lo += (s->hi - (t - b)) + (x - b);
    s->hi = t;
}

/* The sum rounded to double. */
static inline double hx_sum_value(const hx_sum *s) { return s->hi + s->lo; }

/* Collective: replace v[0..n) on every rank by its sum over comm. */
hx_status hx_sum_allreduce(hx_sum *v, int n, MPI_Comm comm);

#endif
