/* sum.c — the reduction of double-double sums over ranks: a commutative MPI operation that adds
 * pairs with TwoSum and renormalises, so the order in which ranks are combined does not show. */
#include "helmix/sum.h"

#include "check.h"

static void add_pairs(void *in, void *inout, int *len, MPI_Datatype *type)
{
    (void)type;
    const hx_sum *a = in;
    hx_sum *b = inout;
    for (int i = 0; i < *len; i++) {
        hx_sum s = {b[i].hi, b[i].lo + a[i].lo};
        hx_sum_add(&s, a[i].hi);
        double hi = s.hi + s.lo; /* renormalise: |lo| below half an ulp of hi */
        b[i].lo = s.lo - (hi - s.hi);
        b[i].hi = hi;
    }
}

hx_status hx_sum_allreduce(hx_sum *v, int n, MPI_Comm comm)
{
    hx_status st = HX_OK;
    MPI_Datatype pair = MPI_DATATYPE_NULL;
    MPI_Op op = MPI_OP_NULL;
    /* created and freed per call: the library keeps no global MPI objects */
    HX_MPI(MPI_Type_contiguous(2, MPI_DOUBLE, &pair));
    HX_MPI(MPI_Type_commit(&pair));
    HX_MPI(MPI_Op_create(add_pairs, 1, &op));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, v, n, pair, op, comm));
fail:
    if (op != MPI_OP_NULL) MPI_Op_free(&op);
    if (pair != MPI_DATATYPE_NULL) MPI_Type_free(&pair);
    return st;
}
