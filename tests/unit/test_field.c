/* test_field.c — the synthesis engine alone (no file), on any rank count:
 *  - a scalar held at its rms: the rms of the real-space values equals the asked one to
 *    round-off (Parseval's theorem, common practice), with zero mean (the k = 0 mode is empty);
 *  - a vector with an exact compressive share: the summary's share and rms are the asked ones;
 *  - kept and regenerated draws give the same bytes; single compute agrees with double to
 *    single-precision round-off (IEEE 754 binary32, common practice);
 *  - asking for a component before the mix, or double values of a single synthesis without
 *    room for them, is refused with HX_ERR_ARG. */
#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "helmix/field.h"
#include "helmix/grid.h"
#include "helmix/spectrum.h"
#include "hx_test.h"

static hx_desc desc(int ncomp, double rms, double fraction)
{
    hx_desc d;
    memset(&d, 0, sizeof d);
    d.name = "test";
    d.ncomp = ncomp;
    d.unit = "dimensionless";
    d.spectrum.shape = HX_SHAPE_POWER;
    d.spectrum.slope = 2.0;
    d.spectrum.kmin = 1.0;
    d.spectrum.kmax = 7.0;
    d.mix = (hx_mix_spec){HX_MIX_FRACTION, NAN, fraction, HX_EXACT_TOTAL};
    d.rms = rms;
    d.seed = 42;
    d.stream = HX_STREAM_VELOCITY;
    d.amplitudes = HX_AMP_GAUSSIAN;
    d.part = HX_PART_ALL;
    d.stagger = HX_STAGGER_CELL;
    return d;
}

/* Sum and sum of squares of n values (float or double) over the ranks. */
static void sums(const void *v, int single, int64_t n, MPI_Comm comm, double out[2])
{
    out[0] = out[1] = 0;
    for (int64_t i = 0; i < n; i++) {
        double x = single ? ((const float *)v)[i] : ((const double *)v)[i];
        out[0] += x, out[1] += x * x;
    }
    MPI_Allreduce(MPI_IN_PLACE, out, 2, MPI_DOUBLE, MPI_SUM, comm);
}

int main(int argc, char **argv)
{
    MPI_Init(&argc, &argv);
    MPI_Comm comm = MPI_COMM_WORLD;
    hx_grid g;
    const int64_t cells[3] = {16, 12, 10};
    const double box[3] = {1.0, 0.75, 0.625};
    CHECK(hx_grid_init(&g, cells, box, comm) == HX_OK);
    const int64_t n = g.nz * g.n[1] * g.n[0], N = hx_grid_cells(&g);
    hx_spectrum *sp = NULL;
    hx_desc ds = desc(1, 2.0, 0.0), dv = desc(3, 1.5, 0.3);
    CHECK(hx_spectrum_create(&sp, &dv.spectrum, comm) == HX_OK);

    /* a scalar at its rms, in double */
    hx_field *f = NULL;
    hx_field_opts o = {HX_PREC_DOUBLE, 1, 0, FFTW_ESTIMATE, 1, NULL};
    CHECK(hx_field_create(&f, &g, &o, comm) == HX_OK);
    const void *slab = NULL;
    CHECK(hx_field_component(f, 0, HX_PREC_DOUBLE, &slab, NULL) == HX_ERR_ARG); /* before any mix */
    CHECK(hx_field_mix(f, &ds, sp) == HX_OK);
    CHECK(hx_field_component(f, 0, HX_PREC_DOUBLE, &slab, NULL) == HX_OK);
    double s[2];
    sums(slab, 0, n, comm, s);
    CHECK_CLOSE(sqrt(s[1] / (double)N), 2.0, 1e-12);
    CHECK_CLOSE(s[0] / (double)N, 0.0, 1e-14);

    /* a vector with an exact share: the summary, and the rms of the three components */
    CHECK(hx_field_mix(f, &dv, sp) == HX_OK);
    const hx_field_summary *sum = hx_field_summary_get(f);
    CHECK(sum != NULL);
    if (sum) {
        CHECK_CLOSE(sum->fraction, 0.3, 1e-13);
        CHECK_CLOSE(sum->vrms_k, 1.5, 1e-12);
    }
    double e = 0;
    double *keep1 = malloc((size_t)(n ? n : 1) * sizeof *keep1);
    for (int c = 0; c < 3; c++) {
        CHECK(hx_field_component(f, c, HX_PREC_DOUBLE, &slab, NULL) == HX_OK);
        sums(slab, 0, n, comm, s);
        e += s[1];
        if (c == 1) memcpy(keep1, slab, (size_t)n * sizeof *keep1);
    }
    CHECK_CLOSE(sqrt(e / (double)N), 1.5, 1e-12);
    hx_field_destroy(&f);
    CHECK(f == NULL);

    /* kept draws: the same bytes as regenerated ones */
    o.keep_draws = 1;
    CHECK(hx_field_create(&f, &g, &o, comm) == HX_OK);
    CHECK(hx_field_mix(f, &dv, sp) == HX_OK);
    for (int c = 0; c < 2; c++) CHECK(hx_field_component(f, c, HX_PREC_DOUBLE, &slab, NULL) == HX_OK);
    CHECK(n == 0 || memcmp(slab, keep1, (size_t)n * sizeof *keep1) == 0);
    double kept = hx_field_kept_bytes(f);
    MPI_Allreduce(MPI_IN_PLACE, &kept, 1, MPI_DOUBLE, MPI_MAX, comm);
    CHECK(kept > 0);
    hx_field_destroy(&f);

    /* single compute: the same field to single-precision round-off; double values need room */
    hx_field_opts os = {HX_PREC_SINGLE, 0, 1, FFTW_ESTIMATE, 2, NULL};
    CHECK(hx_field_create(&f, &g, &os, comm) == HX_OK);
    CHECK(hx_field_slab_bytes(&g, &os) * 2 <= hx_field_slab_bytes(&g, &o) + 1);
    CHECK(hx_field_mix(f, &dv, sp) == HX_OK);
    CHECK(hx_field_component(f, 0, HX_PREC_SINGLE, &slab, NULL) == HX_OK);
    CHECK(hx_field_component(f, 1, HX_PREC_SINGLE, &slab, NULL) == HX_OK);
    double dmax = 0, vmax = 0;
    for (int64_t i = 0; i < n; i++) {
        dmax = fmax(dmax, fabs(((const float *)slab)[i] - keep1[i]));
        vmax = fmax(vmax, fabs(keep1[i]));
    }
    double m[2] = {dmax, vmax};
    MPI_Allreduce(MPI_IN_PLACE, m, 2, MPI_DOUBLE, MPI_MAX, comm);
    CHECK(m[0] <= 16 * 0x1p-24 * m[1]);
    CHECK(hx_field_component(f, 2, HX_PREC_DOUBLE, &slab, NULL) == HX_ERR_ARG);
    hx_field_destroy(&f);

    free(keep1);
    hx_spectrum_destroy(&sp);
    int fails = hx_test_fail, rank = 0;
    MPI_Allreduce(MPI_IN_PLACE, &fails, 1, MPI_INT, MPI_SUM, comm);
    MPI_Comm_rank(comm, &rank);
    int code = rank == 0 ? hx_test_finish() : 0;
    MPI_Finalize();
    return fails ? 1 : code;
}
