/* inspect.c — the analysis pipeline: read a component, transform, accumulate, repeat.
 * Memory per rank: slab A (the component, real then complex, in place), slab B (k̂·v̂ summed
 * over components), optional density slab and optional mid-plane spectra.
 * Invariants: v̂ = FFT(v)/N; the r2c half is weighted 2 except the kx = 0 and Nyquist planes
 * (weight 1, their partners are stored); Nyquist frequencies are negative (numpy's fftfreq);
 * k = 0 (the mean flow) enters no energy, spectrum or gradient. */
#include "helmix/inspect.h"

#include <complex.h>
#include <fftw3-mpi.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"

enum { PV = 0, PW = 3, PDIV = 6, NPLANE = 7 }; /* plane slots: v xyz, vorticity xyz, divergence */

typedef struct {
    hx_grid g;
    MPI_Comm comm;
    fftw_complex *a, *b, *planes;
    fftw_complex *pny, *pnz; /* k'·v̂' of the unstored partners on the y and z Nyquist planes */
    double *kp[3], *ku[3];   /* per axis: physical wavenumber, wavenumber in units of 2 pi / lmax */
    int *shell_of;           /* cubic boxes: shell of each integer |k|^2 (units 2 pi / lmax)     */
    double *rho;
    fftw_plan r2c, c2r;
    double ell;        /* remove_scale */
    const char *file, *density; /* for messages */
    double grad2, div2; /* local sums of |k|^2 |v̂|^2 and |k·v̂|^2 (both halves) */
    int slices;
} work_t;

/* One mode of the local k-space slab. */
typedef struct {
    double w, kp[3], k2p;
    int shell, zsign;
    double complex *partner; /* accumulator of the unstored partner when it is not at -k, else NULL */
} kmode_t;

/* Per-axis wavenumbers (physical and in units of 2 pi / lmax) and, for cubic boxes where
 * |k|^2 in those units is an integer, the shell of every |k|^2: no square root per mode. */
static hx_status tables(work_t *W)
{
    const hx_grid *g = &W->g;
    int cubic = g->box[0] == g->box[1] && g->box[1] == g->box[2];
    for (int a = 0; a < 3; a++) {
        W->kp[a] = malloc((size_t)g->n[a] * sizeof(double));
        W->ku[a] = malloc((size_t)g->n[a] * sizeof(double));
        if (!W->kp[a] || !W->ku[a]) return hx_error_set(HX_ERR_MEM, "out of memory for wavenumber tables");
        for (ptrdiff_t i = 0; i < g->n[a]; i++) {
            ptrdiff_t n = hx_grid_freq(i, g->n[a]);
            W->kp[a][i] = 2.0 * M_PI * (double)n / g->box[a];
            W->ku[a][i] = (double)n * hx_grid_kunit(g, a);
        }
    }
    if (!cubic) return HX_OK;
    int64_t nq = 0;
    for (int a = 0; a < 3; a++) nq += (g->n[a] / 2) * (g->n[a] / 2);
    W->shell_of = malloc((size_t)(nq + 1) * sizeof(int));
    if (!W->shell_of) return hx_error_set(HX_ERR_MEM, "out of memory for the shell table");
    for (int64_t q = 0; q <= nq; q++) W->shell_of[q] = (int)(sqrt((double)q) + 0.5);
    return HX_OK;
}

static inline void kmode(const work_t *W, ptrdiff_t y, ptrdiff_t z, ptrdiff_t x, kmode_t *m)
{
    const hx_grid *g = &W->g;
    m->kp[0] = W->kp[0][x], m->kp[1] = W->kp[1][y], m->kp[2] = W->kp[2][z];
    m->k2p = m->kp[0] * m->kp[0] + m->kp[1] * m->kp[1] + m->kp[2] * m->kp[2];
    double ku2 = W->ku[0][x] * W->ku[0][x] + W->ku[1][y] * W->ku[1][y] + W->ku[2][z] * W->ku[2][z];
    m->shell = W->shell_of ? W->shell_of[(int64_t)(ku2 + 0.5)] : (int)(sqrt(ku2) + 0.5);
    m->w = (x == 0 || 2 * x == g->n[0]) ? 1.0 : 2.0;
    m->zsign = (z % 2) ? -1 : 1; /* e^{2 pi i z (Nz/2) / Nz} for the mid-plane z = Nz/2 */
    /* The unstored partner of a weight-2 mode is normally -k. On a y or z Nyquist plane its
     * Nyquist component stays -N/2 (numpy's fftfreq convention), so its direction differs
     * and its projection needs an accumulator of its own. */
    m->partner = NULL;
    if (m->w == 2.0 && 2 * y == g->n[1]) m->partner = (double complex *)W->pny + z * g->nxc + x;
    else if (m->w == 2.0 && 2 * z == g->n[2]) m->partner = (double complex *)W->pnz + (y - g->y0) * g->nxc + x;
}

/* Wavevector of the partner of m: -k with the Nyquist components kept at -N/2. */
static inline void partner_k(const work_t *W, ptrdiff_t y, ptrdiff_t z, const kmode_t *m, double kq[3])
{
    kq[0] = -m->kp[0];
    kq[1] = 2 * y == W->g.n[1] ? m->kp[1] : -m->kp[1];
    kq[2] = 2 * z == W->g.n[2] ? m->kp[2] : -m->kp[2];
}

static int shells_needed(const hx_grid *g)
{
    double k2 = 0;
    for (int a = 0; a < 3; a++) {
        double ku = (double)(g->n[a] / 2) * hx_grid_kunit(g, a);
        k2 += ku * ku;
    }
    return (int)(sqrt(k2) + 0.5) + 2;
}

/* Accumulate component c (its transform in slab A) into shells, B and the planes. */
static void accumulate(work_t *W, int c, hx_diag *d)
{
    const hx_grid *g = &W->g;
    const double inv_n = 1.0 / (double)hx_grid_cells(g), l2 = W->ell * W->ell;
    double complex *A = (double complex *)W->a, *B = (double complex *)W->b, *P = (double complex *)W->planes;
    ptrdiff_t plane = g->ny * g->nxc;
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++)
            for (ptrdiff_t x = 0; x < g->nxc; x++) {
                ptrdiff_t i = ((y - g->y0) * g->n[2] + z) * g->nxc + x;
                kmode_t m;
                kmode(W, y, z, x, &m);
                double complex X = A[i] * inv_n;
                if (W->ell > 0) X *= 1.0 - exp(-0.5 * m.k2p * l2);
                A[i] = X; /* kept for the inverse transform of --remove-scale */
                if (m.k2p == 0) continue;
                double e = creal(X * conj(X));
                d->shell_e[m.shell] += 0.5 * m.w * e;
                if (c == 0) d->shell_modes[m.shell] += m.w;
                W->grad2 += m.w * m.k2p * e;
                B[i] += m.kp[c] * X; /* k·v̂, divided by |k| only once at the end */
                if (m.partner) { /* the partner holds conj(X) at its own wavevector */
                    double kq[3];
                    partner_k(W, y, z, &m, kq);
                    *m.partner += kq[c] * conj(X);
                }
                if (!W->slices) continue;
                ptrdiff_t p = (y - g->y0) * g->nxc + x;
                double complex iX = I * X * m.zsign;
                /* vorticity i k x v̂: v_c adds +i k_{c+2} v_c to w_{c+1} and -i k_{c+1} v_c to w_{c+2} */
                int c1 = (c + 1) % 3, c2 = (c + 2) % 3;
                P[(PV + c) * plane + p] += X * m.zsign;
                P[(PW + c1) * plane + p] += m.kp[c2] * iX;
                P[(PW + c2) * plane + p] -= m.kp[c1] * iX;
            }
}

/* After the three components: compressive energy |k·v̂|^2/|k|^2 and divergence from B = k·v̂. */
static void accumulate_div(work_t *W, hx_diag *d)
{
    const hx_grid *g = &W->g;
    double complex *B = (double complex *)W->b, *P = (double complex *)W->planes;
    ptrdiff_t plane = g->ny * g->nxc;
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++)
            for (ptrdiff_t x = 0; x < g->nxc; x++) {
                kmode_t m;
                kmode(W, y, z, x, &m);
                if (m.k2p == 0) continue;
                double complex D = B[((y - g->y0) * g->n[2] + z) * g->nxc + x];
                double e = creal(D * conj(D)), wt = m.w, inv = 1.0 / m.k2p;
                if (m.partner) { /* count the stored mode once and its partner with its own projection */
                    double ep = creal(*m.partner * conj(*m.partner));
                    d->shell_comp[m.shell] += 0.5 * ep * inv;
                    W->div2 += ep;
                    wt = 1.0;
                }
                d->shell_comp[m.shell] += 0.5 * wt * e * inv;
                W->div2 += wt * e;
                if (W->slices) P[PDIV * plane + (y - g->y0) * g->nxc + x] += I * D * m.zsign;
            }
}

/* Gather the mid-plane spectra on rank 0 and turn them into speed, divergence and |vorticity|. */
static hx_status make_slices(work_t *W, hx_diag *d)
{
    hx_status st = HX_OK;
    const hx_grid *g = &W->g;
    int *counts = NULL, *displs = NULL;
    fftw_complex *all = NULL, *tmp = NULL;
    double *re = NULL;
    ptrdiff_t nx = g->n[0], ny = g->n[1], plane_all = ny * g->nxc;
    int mine = (int)(2 * g->ny * g->nxc);
    if (g->rank == 0) { /* no early exit here: the other ranks wait in the agreement below */
        counts = calloc((size_t)g->size, sizeof *counts);
        displs = calloc((size_t)g->size, sizeof *displs);
        all = fftw_alloc_complex((size_t)plane_all);
        tmp = fftw_alloc_complex((size_t)plane_all);
        re = fftw_alloc_real((size_t)(ny * nx));
        d->slice_speed = calloc((size_t)(nx * ny), sizeof(double));
        d->slice_div = calloc((size_t)(nx * ny), sizeof(double));
        d->slice_vort = calloc((size_t)(nx * ny), sizeof(double));
        if (!counts || !displs || !all || !tmp || !re || !d->slice_speed || !d->slice_div || !d->slice_vort)
            st = hx_error_set(HX_ERR_MEM, "out of memory for the mid-plane slices");
    }
    HX_TRY(hx_error_agree(W->comm, st));
    HX_MPI(MPI_Gather(&mine, 1, MPI_INT, counts, 1, MPI_INT, 0, W->comm));
    if (g->rank == 0)
        for (int r = 1; r < g->size; r++) displs[r] = displs[r - 1] + counts[r - 1];
    fftw_plan p2 = NULL;
    if (g->rank == 0) {
        p2 = fftw_plan_dft_c2r_2d((int)ny, (int)nx, tmp, re, FFTW_ESTIMATE);
        if (!p2) st = hx_error_set(HX_ERR_FFTW, "FFTW could not plan the %tdx%td slice transform", nx, ny);
    }
    HX_TRY(hx_error_agree(W->comm, st));
    for (int q = 0; q < NPLANE; q++) {
        HX_MPI(MPI_Gatherv((double *)(W->planes + q * g->ny * g->nxc), mine, MPI_DOUBLE, (double *)all, counts, displs,
                           MPI_DOUBLE, 0, W->comm));
        if (g->rank != 0) continue;
        memcpy(tmp, all, (size_t)plane_all * sizeof *tmp);
        fftw_execute(p2);
        double *dst = q == PDIV ? d->slice_div : q < PW ? d->slice_speed : d->slice_vort;
        for (ptrdiff_t i = 0; i < nx * ny; i++) dst[i] += q == PDIV ? re[i] : re[i] * re[i];
    }
    if (g->rank == 0) {
        fftw_destroy_plan(p2);
        for (ptrdiff_t i = 0; i < nx * ny; i++) {
            d->slice_speed[i] = sqrt(d->slice_speed[i]);
            d->slice_vort[i] = sqrt(d->slice_vort[i]);
        }
        d->slice_n[0] = nx;
        d->slice_n[1] = ny;
    }
fail:
    free(counts);
    free(displs);
    fftw_free(all);
    fftw_free(tmp);
    fftw_free(re);
    return st;
}

static hx_status setup(work_t *W, const hx_inspect_opts *o, hx_cube *cube, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int64_t cells[3];
    double box[3];
    hx_cube_shape(cube, cells, box);
    HX_TRY(hx_grid_init(&W->g, cells, box, comm));
    const hx_grid *g = &W->g;
    W->comm = comm;
    W->file = o->cube.file;
    W->density = o->cube.density;
    W->ell = o->remove_scale;
    W->slices = o->slices;
    W->a = fftw_alloc_complex((size_t)g->alloc);
    W->b = fftw_alloc_complex((size_t)g->alloc);
    if (W->slices) W->planes = fftw_alloc_complex((size_t)(NPLANE * (g->ny > 0 ? g->ny : 1) * g->nxc));
    HX_TRY(hx_error_agree(comm, tables(W)));
    W->pny = fftw_alloc_complex((size_t)(g->n[2] * g->nxc));
    W->pnz = fftw_alloc_complex((size_t)((g->ny > 0 ? g->ny : 1) * g->nxc));
    if (o->cube.density) W->rho = malloc((size_t)(g->nz > 0 ? g->nz : 1) * (size_t)g->n[1] * (size_t)g->n[0] * sizeof(double));
    if (!W->a || !W->b || !W->pny || !W->pnz || (W->slices && !W->planes) || (o->cube.density && !W->rho))
        st = hx_error_set(HX_ERR_MEM, "cannot allocate the analysis slabs (%.1f MiB each) on rank %d",
                          (double)g->alloc * 16.0 / 1048576.0, g->rank);
    HX_TRY(hx_error_agree(comm, st));
    memset(W->b, 0, (size_t)g->alloc * sizeof(fftw_complex));
    memset(W->pny, 0, (size_t)(g->n[2] * g->nxc) * sizeof(fftw_complex));
    memset(W->pnz, 0, (size_t)((g->ny > 0 ? g->ny : 1) * g->nxc) * sizeof(fftw_complex));
    if (W->slices) memset(W->planes, 0, (size_t)(NPLANE * (g->ny > 0 ? g->ny : 1) * g->nxc) * sizeof(fftw_complex));
    W->r2c = fftw_mpi_plan_dft_r2c_3d(g->n[2], g->n[1], g->n[0], (double *)W->a, W->a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_OUT);
    if (W->ell > 0)
        W->c2r = fftw_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], W->a, (double *)W->a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    st = W->r2c && (W->ell <= 0 || W->c2r) ? HX_OK : hx_error_set(HX_ERR_FFTW, "FFTW could not plan the analysis transforms");
    HX_TRY(hx_error_agree(comm, st));
fail:
    return st;
}

static void teardown(work_t *W)
{
    if (W->r2c) fftw_destroy_plan(W->r2c);
    if (W->c2r) fftw_destroy_plan(W->c2r);
    fftw_free(W->a);
    fftw_free(W->b);
    fftw_free(W->planes);
    fftw_free(W->pny);
    fftw_free(W->pnz);
    free(W->rho);
    for (int a = 0; a < 3; a++) {
        free(W->kp[a]);
        free(W->ku[a]);
    }
    free(W->shell_of);
}

/* Read component c into slab A (times sqrt(rho) if mass-weighted); collective. */
static hx_status load(work_t *W, hx_cube *cube, int c)
{
    const hx_grid *g = &W->g;
    int64_t stride = 2 * g->nxc;
    hx_status st = hx_error_agree(W->comm, hx_cube_read(cube, c, g, (double *)W->a, stride));
    if (st != HX_OK || !W->rho) return st;
    double *v = (double *)W->a;
    for (ptrdiff_t r = 0; r < g->nz * g->n[1]; r++)
        for (ptrdiff_t x = 0; x < g->n[0]; x++) v[r * stride + x] *= W->rho[r * g->n[0] + x];
    return HX_OK;
}

static hx_status read_density(work_t *W, hx_cube *cube)
{
    const hx_grid *g = &W->g;
    hx_status st = hx_error_agree(W->comm, hx_cube_read(cube, 3, g, W->rho, g->n[0]));
    if (st != HX_OK) return st;
    int bad = 0;
    for (ptrdiff_t i = 0; i < g->nz * g->n[1] * g->n[0]; i++) {
        if (!(W->rho[i] >= 0)) bad = 1;
        W->rho[i] = sqrt(W->rho[i]);
    }
    st = bad ? hx_error_set(HX_ERR_ARG, "density %s in %s holds negative or non-numeric values", W->density, W->file) : HX_OK;
    return hx_error_agree(W->comm, st);
}

static void default_fit(hx_diag *d, const hx_inspect_opts *o, const hx_request *q, int found)
{
    int64_t nmin = d->cells[0] < d->cells[1] ? d->cells[0] : d->cells[1];
    nmin = nmin < d->cells[2] ? nmin : d->cells[2];
    if (o->fit[1] > 0) d->fit_kmin = o->fit[0], d->fit_kmax = o->fit[1];
    else if (found && q->fit_kmax > 0) d->fit_kmin = q->fit_kmin, d->fit_kmax = q->fit_kmax;
    else d->fit_kmin = 2, d->fit_kmax = (double)(nmin / 4);
}

hx_status hx_inspect_run(const hx_inspect_opts *o, const hx_log *log, MPI_Comm comm, hx_diag *d, hx_request *q, int *found)
{
    hx_status st = HX_OK;
    hx_cube *cube = NULL;
    work_t W;
    memset(&W, 0, sizeof W);
    memset(d, 0, sizeof *d);
    double t0 = MPI_Wtime();
    HX_TRY(hx_error_agree(comm, hx_cube_open(&cube, &o->cube, comm)));
    HX_TRY(hx_error_agree(comm, hx_cube_request(cube, q, found)));
    if (!*found) hx_request_defaults(q, hx_cube_single(cube), 0);
    HX_TRY(setup(&W, o, cube, comm));
    const hx_grid *g = &W.g;
    for (int a = 0; a < 3; a++) d->cells[a] = g->n[a], d->box[a] = g->box[a];
    d->ranks = g->size;
    d->remove_scale = o->remove_scale;
    d->mass_weighted = o->cube.density != NULL;
    HX_TRY(hx_error_agree(comm, hx_diag_shells(d, shells_needed(g))));
    hx_log_say(log, HX_LOG_INFO, "inspect %s: %tdx%tdx%td cells on %d rank%s", o->cube.file, g->n[0], g->n[1], g->n[2],
               g->size, g->size > 1 ? "s" : "");
    if (W.rho) HX_TRY(read_density(&W, cube));
    int64_t stride = 2 * g->nxc, ntot = hx_grid_cells(g);
    for (int c = 0; c < 3; c++) {
        HX_TRY(load(&W, cube, c));
        if (W.ell <= 0) HX_TRY(hx_diag_moments(d, c, W.a, HX_PREC_DOUBLE, g->nz * g->n[1], g->n[0], stride, ntot, comm));
        fftw_execute(W.r2c);
        accumulate(&W, c, d);
        if (W.ell > 0) {
            fftw_execute(W.c2r);
            HX_TRY(hx_diag_moments(d, c, W.a, HX_PREC_DOUBLE, g->nz * g->n[1], g->n[0], stride, ntot, comm));
        }
        hx_log_say(log, HX_LOG_INFO, "component %c analysed", "xyz"[c]);
    }
    accumulate_div(&W, d);
    int ns = d->nshell;
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_e, ns, MPI_DOUBLE, MPI_SUM, comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_comp, ns, MPI_DOUBLE, MPI_SUM, comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_modes, ns, MPI_DOUBLE, MPI_SUM, comm));
    double sums[2] = {W.grad2, W.div2};
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, sums, 2, MPI_DOUBLE, MPI_SUM, comm));
    d->div_rms = sqrt(sums[1]);
    d->vort_rms = sqrt(fmax(sums[0] - sums[1], 0.0));
    d->div_ratio = sums[0] > 0 ? d->div_rms / sqrt(sums[0]) : NAN;
    d->vort_ratio = sums[0] > 0 ? d->vort_rms / sqrt(sums[0]) : NAN;
    default_fit(d, o, q, *found);
    hx_diag_finish(d);
    if (W.slices) HX_TRY(make_slices(&W, d));
    HX_TRY(hx_log_peak_rss(comm, &d->peak_rss));
    d->seconds = MPI_Wtime() - t0;
    hx_log_say(log, HX_LOG_INFO, "analysis done in %.2f s, peak %.1f MiB per rank", d->seconds,
               (double)d->peak_rss / 1048576.0);
fail:
    teardown(&W);
    hx_cube_close(&cube);
    if (st != HX_OK) hx_diag_clear(d);
    return st;
}
