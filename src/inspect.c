/* inspect.c — the analysis pipeline: read a component, transform, accumulate, repeat; once
 * for the velocity and, when the cube holds one, once more for the magnetic field, through the
 * same analysis of a vector field (analyse_field), then the discrete divergence of the
 * face-centred magnetic field.
 * Memory per rank: slab A (the component, real then complex, in place), slab B (k̂·v̂ summed
 * over components; the face divergence's real accumulator afterwards), optional density slab,
 * optional mid-plane spectra, and one real z plane for the face divergence. With a density the
 * state (mass-weighted dispersion, Mach number, virial parameter, momentum, ln rho) is summed
 * in real space from each velocity component as it is read, before it is weighted or transformed.
 * Invariants: v̂ = FFT(v)/N; the r2c half is weighted 2 except the kx = 0 and Nyquist planes
 * (weight 1, their partners are stored; an odd Nx has no Nyquist plane); Nyquist frequencies
 * are negative (numpy's fftfreq);
 * k = 0 (the mean flow, the mean magnetic field) enters no energy, spectrum or gradient. */
#include "helmix/inspect.h"

#include <complex.h>
#include <fftw3-mpi.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/fft.h"
#include "helmix/schema.h"

enum { PV = 0, PW = 3, PDIV = 6, NPLANE = 7 }; /* plane slots: v xyz, vorticity xyz, divergence */

/* The vector field one pass of the component loop analyses, and what the pass does besides
 * the shell and gradient sums. */
typedef struct {
    int slot;         /* the cube slot of its x component (HX_SLOT_VELOCITY, HX_SLOT_MAGNETIC) */
    int state;        /* 1: add each component to the state's sums (the velocity in a density) */
    int weight;       /* 1: decompose sqrt(rho) times the field                               */
    double ell;       /* > 0: subtract the field smoothed on this scale first                 */
    int slices;       /* 1: accumulate the mid-plane spectra                                   */
    const char *what; /* for progress lines                                                    */
} field_t;

typedef struct {
    hx_grid g;
    MPI_Comm comm;
    fftw_complex *a, *b, *planes;
    fftw_complex *pny, *pnz; /* k'·v̂' of the unstored partners on the y and z Nyquist planes */
    double *kp[3], *ku[3];   /* per axis: physical wavenumber, wavenumber in units of 2 pi / lmax */
    double complex *zph;     /* per z index: e^{2 pi i kz zm / Nz}, the mid-plane zm = floor(Nz/2) */
    int *shell_of;           /* cubic boxes: shell of each integer |k|^2 (units 2 pi / lmax)     */
    double *rho;       /* this rank's density, nz * Ny * Nx (NULL without one)        */
    field_t f;         /* the field being analysed                                    */
    int cloud;         /* the region of the state: a sphere (1) or the box (0)         */
    double center[3], radius;
    hx_state_sums S;   /* the state's sums (reduced where hx_diag_set_state needs them) */
    fftw_plan r2c, c2r;
    const char *file, *density; /* for messages */
    hx_timer *T;       /* phase timings, or NULL */
    double grad2, div2; /* local sums of |k|^2 |v̂|^2 and |k·v̂|^2 (both halves) */
    int nthreads;      /* threads of the k-space passes (planes in groups, one per thread)  */
    int nshell;        /* shells of the per-plane sums                                      */
    double *ps;        /* per thread: a plane's shell sums (PS_* blocks of nshell) + 2 scalars */
} work_t;

/* One plane's sums in a thread's block of W->ps: energy, modes and compressive energy per
 * shell, then the gradient and divergence sums. */
enum { PS_E = 0, PS_MODES = 1, PS_COMP = 2, PS_NBLOCK = 3 };
static inline double *plane_sums(const work_t *W, int t) { return W->ps + (size_t)t * (PS_NBLOCK * (size_t)W->nshell + 2); }

/* One mode of the local k-space slab. */
typedef struct {
    double w, kp[3], k2p;
    int shell;
    double complex zph; /* e^{2 pi i kz zm / Nz}: the mode's phase on the mid-plane zm = floor(Nz/2) */
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
    /* the mid-plane phase: exactly +-1 for an even Nz (zm = Nz/2), a root of unity for an odd one */
    W->zph = malloc((size_t)g->n[2] * sizeof *W->zph);
    if (!W->zph) return hx_error_set(HX_ERR_MEM, "out of memory for wavenumber tables");
    for (ptrdiff_t z = 0; z < g->n[2]; z++) {
        ptrdiff_t q = (z * (g->n[2] / 2)) % g->n[2];
        W->zph[z] = q == 0 ? 1.0 : 2 * q == g->n[2] ? -1.0 : cexp(2.0 * M_PI * I * (double)q / (double)g->n[2]);
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
    m->zph = W->zph[z];
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

/* Accumulate plane y of component c (its transform in slab A) into the plane's sums ps, B
 * and the mid-plane spectra. Touches only plane y's part of A, B, the partners and P. */
static void accumulate_plane(work_t *W, int c, ptrdiff_t y, double *ps)
{
    const hx_grid *g = &W->g;
    const double inv_n = 1.0 / (double)hx_grid_cells(g), l2 = W->f.ell * W->f.ell;
    double complex *A = (double complex *)W->a, *B = (double complex *)W->b, *P = (double complex *)W->planes;
    double *shell_e = ps + PS_E * W->nshell, *shell_modes = ps + PS_MODES * W->nshell, grad2 = 0;
    ptrdiff_t plane = g->ny * g->nxc;
    for (ptrdiff_t z = 0; z < g->n[2]; z++)
        for (ptrdiff_t x = 0; x < g->nxc; x++) {
            ptrdiff_t i = ((y - g->y0) * g->n[2] + z) * g->nxc + x;
            kmode_t m;
            kmode(W, y, z, x, &m);
            double complex X = A[i] * inv_n;
            if (W->f.ell > 0) X *= 1.0 - exp(-0.5 * m.k2p * l2);
            A[i] = X; /* kept for the inverse transform of --remove-scale */
            if (m.k2p == 0) continue;
            double e = creal(X * conj(X));
            shell_e[m.shell] += 0.5 * m.w * e;
            if (c == 0) shell_modes[m.shell] += m.w;
            grad2 += m.w * m.k2p * e;
            B[i] += m.kp[c] * X; /* k·v̂, divided by |k| only once at the end */
            if (m.partner) { /* the partner holds conj(X) at its own wavevector */
                double kq[3];
                partner_k(W, y, z, &m, kq);
                *m.partner += kq[c] * conj(X);
            }
            if (!W->f.slices) continue;
            ptrdiff_t p = (y - g->y0) * g->nxc + x;
            double complex iX = I * X * m.zph;
            /* vorticity i k x v̂: v_c adds +i k_{c+2} v_c to w_{c+1} and -i k_{c+1} v_c to w_{c+2} */
            int c1 = (c + 1) % 3, c2 = (c + 2) % 3;
            P[(PV + c) * plane + p] += X * m.zph;
            P[(PW + c1) * plane + p] += m.kp[c2] * iX;
            P[(PW + c2) * plane + p] -= m.kp[c1] * iX;
        }
    ps[PS_NBLOCK * W->nshell] = grad2;
}

/* After the three components, plane y: compressive energy |k·v̂|^2/|k|^2 and divergence from
 * B = k·v̂ into the plane's sums ps, and the divergence's mid-plane spectrum. */
static void div_plane(work_t *W, ptrdiff_t y, double *ps)
{
    const hx_grid *g = &W->g;
    double complex *B = (double complex *)W->b, *P = (double complex *)W->planes;
    double *shell_comp = ps + PS_COMP * W->nshell, div2 = 0;
    ptrdiff_t plane = g->ny * g->nxc;
    for (ptrdiff_t z = 0; z < g->n[2]; z++)
        for (ptrdiff_t x = 0; x < g->nxc; x++) {
            kmode_t m;
            kmode(W, y, z, x, &m);
            if (m.k2p == 0) continue;
            double complex D = B[((y - g->y0) * g->n[2] + z) * g->nxc + x];
            double e = creal(D * conj(D)), wt = m.w, inv = 1.0 / m.k2p;
            if (m.partner) { /* count the stored mode once and its partner with its own projection */
                double ep = creal(*m.partner * conj(*m.partner));
                shell_comp[m.shell] += 0.5 * ep * inv;
                div2 += ep;
                wt = 1.0;
            }
            shell_comp[m.shell] += 0.5 * wt * e * inv;
            div2 += wt * e;
            if (W->f.slices) P[PDIV * plane + (y - g->y0) * g->nxc + x] += I * D * m.zph;
        }
    ps[PS_NBLOCK * W->nshell + 1] = div2;
}

/* One pass over the local k-space planes: component c's sums (c = 0..2) or, after the three,
 * the compressive ones (c < 0). Planes go to the threads in groups; each plane's sums are
 * added to d's in plane order after its group, so every thread count gives the same bits. */
static void each_plane(work_t *W, int c, hx_diag *d)
{
    const hx_grid *g = &W->g;
    const int ns = W->nshell;
    for (ptrdiff_t y0 = 0; y0 < g->ny; y0 += W->nthreads) {
        int m = g->ny - y0 < W->nthreads ? (int)(g->ny - y0) : W->nthreads;
#pragma omp parallel for num_threads(m) schedule(static, 1) if (m > 1)
        for (int j = 0; j < m; j++) {
            double *ps = plane_sums(W, j);
            memset(ps, 0, (PS_NBLOCK * (size_t)ns + 2) * sizeof *ps);
            if (c < 0) div_plane(W, g->y0 + y0 + j, ps);
            else accumulate_plane(W, c, g->y0 + y0 + j, ps);
        }
        for (int j = 0; j < m; j++) {
            const double *ps = plane_sums(W, j);
            for (int s = 0; s < ns; s++) {
                d->shell_e[s] += ps[PS_E * ns + s];
                d->shell_modes[s] += ps[PS_MODES * ns + s];
                d->shell_comp[s] += ps[PS_COMP * ns + s];
            }
            W->grad2 += ps[PS_NBLOCK * ns];
            W->div2 += ps[PS_NBLOCK * ns + 1];
        }
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
    int mine = (int)(2 * g->ny * g->nxc), ffts = 0; /* 2-D transforms, on rank 0 */
    hx_timer_begin(W->T, "slices");
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
        ffts++;
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
    hx_timer_end(W->T, "slices", 0, ffts);
    free(counts);
    free(displs);
    fftw_free(all);
    fftw_free(tmp);
    fftw_free(re);
    return st;
}

/* Centre of cell i on axis a, (i + 1/2) L / N, with the same arithmetic as make (flow.c). */
static inline double cell_centre(const hx_grid *g, int a, ptrdiff_t i)
{
    return ((double)i + 0.5) * g->box[a] / (double)g->n[a];
}

static inline int in_region(const work_t *W, ptrdiff_t x, double dy, double dz)
{
    double dx = cell_centre(&W->g, 0, x) - W->center[0];
    return sqrt(dx * dx + dy * dy + dz * dz) <= W->radius;
}

/* Columns [*x0, *x1) of local row (y, z) inside the region. The distance grows with |x - centre|,
 * so they are one run: estimated from the chord, then settled cell by cell with make's own test
 * so that boundary cells fall on the same side. */
static void region_span(const work_t *W, ptrdiff_t y, ptrdiff_t z, ptrdiff_t *x0, ptrdiff_t *x1)
{
    const hx_grid *g = &W->g;
    const ptrdiff_t n = g->n[0];
    if (!W->cloud) {
        *x0 = 0, *x1 = n;
        return;
    }
    double dy = cell_centre(g, 1, y) - W->center[1], dz = cell_centre(g, 2, g->z0 + z) - W->center[2];
    double h = sqrt(fmax(W->radius * W->radius - dy * dy - dz * dz, 0.0)), dx = g->box[0] / (double)n;
    ptrdiff_t a = (ptrdiff_t)fmin(fmax(ceil((W->center[0] - h) / dx - 0.5), 0.0), (double)n);
    ptrdiff_t b = (ptrdiff_t)fmin(fmax(floor((W->center[0] + h) / dx - 0.5), -1.0), (double)(n - 1));
    if (a > b) b = a - 1;
    while (a > 0 && in_region(W, a - 1, dy, dz)) a--;
    while (a <= b && !in_region(W, a, dy, dz)) a++;
    if (a > b) b = a - 1;
    while (b + 1 < n && in_region(W, b + 1, dy, dz)) b++;
    while (b >= a && !in_region(W, b, dy, dz)) b--;
    *x0 = a, *x1 = b + 1;
}

static hx_status setup(work_t *W, const hx_inspect_opts *o, hx_cube *cube, MPI_Comm comm)
{
    hx_status st = HX_OK;
    int64_t cells[3];
    double box[3];
    hx_cube_shape(cube, cells, box);
    st = hx_grid_init(&W->g, cells, box, comm);
    if (st == HX_ERR_ARG) { /* the same verdict on every rank: say where the box came from */
        char why[512];
        snprintf(why, sizeof why, "%s", hx_error_message());
        HX_FAIL(st, "%s: %s (the box %s)", o->cube.file, why,
                o->cube.has_box ? "given by --box" : "from the file's domain edges, else 1 1 1");
    }
    HX_TRY(st);
    const hx_grid *g = &W->g;
    W->comm = comm;
    W->file = o->cube.file;
    W->density = o->cube.density ? o->cube.density : HX_SCHEMA_GRID "/" HX_FIELD_DENSITY;
    W->a = fftw_alloc_complex((size_t)g->alloc);
    W->b = fftw_alloc_complex((size_t)g->alloc);
    if (o->slices) W->planes = fftw_alloc_complex((size_t)(NPLANE * (g->ny > 0 ? g->ny : 1) * g->nxc));
    HX_TRY(hx_error_agree(comm, tables(W)));
    W->nshell = shells_needed(g);
    W->ps = malloc((size_t)W->nthreads * (PS_NBLOCK * (size_t)W->nshell + 2) * sizeof *W->ps);
    W->pny = fftw_alloc_complex((size_t)(g->n[2] * g->nxc));
    W->pnz = fftw_alloc_complex((size_t)((g->ny > 0 ? g->ny : 1) * g->nxc));
    int has_rho = hx_cube_has_density(cube);
    if (has_rho) W->rho = malloc((size_t)(g->nz > 0 ? g->nz : 1) * (size_t)g->n[1] * (size_t)g->n[0] * sizeof(double));
    if (!W->a || !W->b || !W->ps || !W->pny || !W->pnz || (o->slices && !W->planes) || (has_rho && !W->rho))
        st = hx_error_set(HX_ERR_MEM, "cannot allocate the analysis slabs (%.1f MiB each) on rank %d",
                          (double)g->alloc * 16.0 / 1048576.0, g->rank);
    HX_TRY(hx_error_agree(comm, st));
    W->r2c = fftw_mpi_plan_dft_r2c_3d(g->n[2], g->n[1], g->n[0], (double *)W->a, W->a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_OUT);
    if (o->remove_scale > 0)
        W->c2r = fftw_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], W->a, (double *)W->a, comm, FFTW_ESTIMATE | FFTW_MPI_TRANSPOSED_IN);
    st = W->r2c && (o->remove_scale <= 0 || W->c2r) ? HX_OK : hx_error_set(HX_ERR_FFTW, "FFTW could not plan the analysis transforms");
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
    free(W->ps);
    for (int a = 0; a < 3; a++) {
        free(W->kp[a]);
        free(W->ku[a]);
    }
    free(W->shell_of);
    free(W->zph);
}

/* Collective: read slot c of this rank's slab into dst (rows `stride` apart), timed as "read"
 * with the bytes the file gave; agreed. NaN or infinite values are refused (exit 2: bad input). */
static hx_status read_slot(work_t *W, hx_cube *cube, int c, double *dst, int64_t stride)
{
    double b0 = hx_cube_bytes_read(cube);
    hx_timer_begin(W->T, "read");
    hx_status st = hx_error_agree(W->comm, hx_cube_read(cube, c, &W->g, dst, stride));
    if (st == HX_OK) st = hx_cube_check_finite(cube, c, &W->g, dst, stride); /* NaN would pass as a result */
    hx_timer_end(W->T, "read", hx_cube_bytes_read(cube) - b0, 0);
    return st;
}

/* In-place transform of slab A (r2c or the inverse), timed as one transform. */
static void transform(work_t *W, fftw_plan p)
{
    hx_timer_begin(W->T, "transform");
    fftw_execute(p);
    hx_timer_end(W->T, "transform", 0, 1);
}

/* The state's sums of component c (rows `stride` apart in slab A): first the plain sums, which
 * give the region's mass-weighted mean m_c once reduced, then the weighted squares about m_c,
 * reduced with the rest after the last component. Collective. */
static hx_status state_component(work_t *W, int c, const double *v, int64_t stride)
{
    hx_status st = HX_OK;
    const hx_grid *g = &W->g;
    const ptrdiff_t nx = g->n[0];
    double s[4] = {0, 0, 0, 0}, dev = 0; /* sum v, sum v^2, sum rho v, sum_R rho v */
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++) {
            const double *vr = v + (z * g->n[1] + y) * stride, *rr = W->rho + (z * g->n[1] + y) * nx;
            ptrdiff_t x0, x1;
            region_span(W, y, z, &x0, &x1);
            for (ptrdiff_t x = 0; x < nx; x++) s[0] += vr[x], s[1] += vr[x] * vr[x], s[2] += rr[x] * vr[x];
            for (ptrdiff_t x = x0; x < x1; x++) s[3] += rr[x] * vr[x];
        }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, s, 4, MPI_DOUBLE, MPI_SUM, W->comm));
    W->S.v[c] = s[0], W->S.v2[c] = s[1], W->S.rho_v[c] = s[2], W->S.rho_v_region[c] = s[3];
    const double m = W->S.rho_region > 0 ? s[3] / W->S.rho_region : 0.0;
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++) {
            const double *vr = v + (z * g->n[1] + y) * stride, *rr = W->rho + (z * g->n[1] + y) * nx;
            ptrdiff_t x0, x1;
            region_span(W, y, z, &x0, &x1);
            for (ptrdiff_t x = x0; x < x1; x++) dev += rr[x] * (vr[x] - m) * (vr[x] - m);
        }
    W->S.rho_dev2_region[c] = dev; /* local until state_finish */
fail:
    return st;
}

/* Collective: reduce the deviations and derive the state into d. */
static hx_status state_finish(work_t *W, hx_diag *d)
{
    hx_status st = HX_OK;
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, W->S.rho_dev2_region, 3, MPI_DOUBLE, MPI_SUM, W->comm));
    d->cloud = W->cloud;
    memcpy(d->cloud_center, W->center, sizeof W->center);
    d->radius = W->radius;
    hx_diag_set_state(d, &W->S);
fail:
    return st;
}

/* Read component c of the field into slab A, add it to the state's sums when the pass takes
 * the state, and weight it by sqrt(rho) when sqrt(rho) v is decomposed; collective. */
static hx_status load(work_t *W, hx_cube *cube, int c)
{
    const hx_grid *g = &W->g;
    int64_t stride = 2 * g->nxc;
    hx_status st = read_slot(W, cube, W->f.slot + c, (double *)W->a, stride);
    if (st != HX_OK || !W->rho || !W->f.state) return st;
    double *v = (double *)W->a;
    hx_timer_begin(W->T, "moments");
    if ((st = state_component(W, c, v, stride)) == HX_OK && W->f.weight)
        for (ptrdiff_t r = 0; r < g->nz * g->n[1]; r++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) v[r * stride + x] *= sqrt(W->rho[r * g->n[0] + x]);
    hx_timer_end(W->T, "moments", 0, 0);
    return st;
}

/* Read the density, refuse negative or non-numeric values, and take its sums: mass (box and
 * region), then ln rho about its mean. Collective. */
static hx_status read_density(work_t *W, hx_cube *cube)
{
    const hx_grid *g = &W->g;
    const ptrdiff_t nx = g->n[0];
    hx_status st = read_slot(W, cube, HX_SLOT_DENSITY, W->rho, nx);
    if (st != HX_OK) return st;
    hx_timer_begin(W->T, "moments");
    double s[5] = {0, 0, 0, 0, 0}; /* sum rho, sum_R rho, sum ln rho, cells with rho = 0, bad cells */
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++) {
            const double *rr = W->rho + (z * g->n[1] + y) * nx;
            ptrdiff_t x0, x1;
            region_span(W, y, z, &x0, &x1);
            for (ptrdiff_t x = 0; x < nx; x++) {
                if (!(rr[x] >= 0 && rr[x] < HUGE_VAL)) s[4] += 1;
                else if (rr[x] > 0) s[0] += rr[x], s[2] += log(rr[x]);
                else s[3] += 1;
            }
            for (ptrdiff_t x = x0; x < x1; x++) s[1] += rr[x];
        }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, s, 5, MPI_DOUBLE, MPI_SUM, W->comm));
    if (s[4] > 0) /* every rank knows from the reduction: they all leave together */
    {
        st = hx_error_set(HX_ERR_ARG, "density %s in %s holds negative or non-numeric values", W->density, W->file);
        goto fail;
    }
    const double n = (double)hx_grid_cells(g), ml = s[2] / n;
    double dev = 0;
    for (ptrdiff_t i = 0; i < g->nz * g->n[1] * nx; i++) {
        double l = W->rho[i] > 0 ? log(W->rho[i]) - ml : 0.0;
        dev += l * l;
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &dev, 1, MPI_DOUBLE, MPI_SUM, W->comm));
    W->S.cells = n;
    W->S.cell_volume = g->box[0] * g->box[1] * g->box[2] / n;
    W->S.rho = s[0], W->S.rho_region = s[1];
    /* ln rho of an empty cell is -infinity: its mean and spread are not defined */
    W->S.ln_rho = s[3] > 0 ? NAN : s[2];
    W->S.ln_rho_dev2 = s[3] > 0 ? NAN : dev;
fail:
    hx_timer_end(W->T, "moments", 0, 0);
    return st;
}

static void default_fit(hx_diag *d, const hx_inspect_opts *o, const hx_request *q, int found)
{
    int64_t nmin = d->cells[0] < d->cells[1] ? d->cells[0] : d->cells[1];
    nmin = nmin < d->cells[2] ? nmin : d->cells[2];
    if (o->fit[1] > 0) d->fit_kmin = o->fit[0], d->fit_kmax = o->fit[1];
    else if (found && q->fit_kmax > 0) d->fit_kmin = q->fit_kmin, d->fit_kmax = q->fit_kmax;
    else d->fit_kmin = 2, d->fit_kmax = (double)(nmin / 4);
}

/* --fit must name shells the cube holds, three or more of them carrying energy (a slope and its
 * standard error need three): otherwise the fit would print NaN. Decided from the reduced shell
 * sums, after the velocity's analysis. */
static hx_status check_fit(const hx_inspect_opts *o, const hx_diag *d)
{
    const double lo = o->fit[0], hi = o->fit[1];
    int top = 0, first = 0, last = 0;
    if (!(hi > 0)) return HX_OK; /* no --fit: the recorded band or the default */
    if (!(lo >= 1 && hi > lo)) return hx_error_set(HX_ERR_ARG, "--fit %g,%g: need 1 <= KMIN < KMAX (shells)", lo, hi);
    for (int s = 1; s < d->nshell; s++)
        if (d->shell_modes[s] > 0) top = s;
    if (hi > top) return hx_error_set(HX_ERR_ARG, "--fit %g,%g: the shells of %s run from 1 to %d", lo, hi, o->cube.file, top);
    int n = hx_diag_fit_count(d, lo, hi, &first, &last);
    if (n >= 3) return HX_OK;
    if (!first) return hx_error_set(HX_ERR_ARG, "--fit %g,%g: %s holds no energy in any shell: there is no slope to fit", lo, hi, o->cube.file);
    return hx_error_set(HX_ERR_ARG, "--fit %g,%g: %d shell%s in that range carr%s energy in %s (shells %d to %d do): a slope "
                        "and its error need 3", lo, hi, n, n == 1 ? "" : "s", n == 1 ? "ies" : "y", o->cube.file, first, last);
}

/* Zero the accumulators of a pass: slab B, the Nyquist partners, the planes, the gradient sums. */
static void clear_sums(work_t *W)
{
    const hx_grid *g = &W->g;
    memset(W->b, 0, (size_t)g->alloc * sizeof(fftw_complex));
    memset(W->pny, 0, (size_t)(g->n[2] * g->nxc) * sizeof(fftw_complex));
    memset(W->pnz, 0, (size_t)((g->ny > 0 ? g->ny : 1) * g->nxc) * sizeof(fftw_complex));
    if (W->planes) memset(W->planes, 0, (size_t)(NPLANE * (g->ny > 0 ? g->ny : 1) * g->nxc) * sizeof(fftw_complex));
    W->grad2 = W->div2 = 0;
}

/* Collective: the analysis of the vector field W->f into d — per component its moments,
 * shell sums, k̂·v̂ and (for the velocity) the state and the mid-plane spectra; then the
 * compressive shells, the divergence and the reductions. The slope fit and the energies are
 * left to the caller (hx_diag_finish after choosing the fit range). */
static hx_status analyse_field(work_t *W, hx_cube *cube, const hx_log *log, hx_diag *d)
{
    hx_status st = HX_OK;
    const hx_grid *g = &W->g;
    const MPI_Comm comm = W->comm;
    const int64_t stride = 2 * g->nxc, ntot = hx_grid_cells(g);
    clear_sums(W);
    for (int c = 0; c < 3; c++) {
        HX_TRY(load(W, cube, c));
        hx_timer_begin(W->T, "moments");
        if (W->f.ell <= 0) st = hx_diag_moments(d, c, W->a, HX_PREC_DOUBLE, g->nz * g->n[1], g->n[0], stride, ntot, W->nthreads, comm);
        hx_timer_end(W->T, "moments", 0, 0);
        HX_TRY(st);
        transform(W, W->r2c);
        hx_timer_begin(W->T, "accumulate");
        each_plane(W, c, d);
        hx_timer_end(W->T, "accumulate", 0, 0);
        if (W->f.ell > 0) {
            transform(W, W->c2r);
            hx_timer_begin(W->T, "moments");
            st = hx_diag_moments(d, c, W->a, HX_PREC_DOUBLE, g->nz * g->n[1], g->n[0], stride, ntot, W->nthreads, comm);
            hx_timer_end(W->T, "moments", 0, 0);
            HX_TRY(st);
        }
        hx_log_say(log, HX_LOG_INFO, "%s component %c analysed", W->f.what, "xyz"[c]);
    }
    hx_timer_begin(W->T, "accumulate");
    each_plane(W, -1, d);
    if (W->f.state) HX_TRY(state_finish(W, d));
    int ns = d->nshell;
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_e, ns, MPI_DOUBLE, MPI_SUM, comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_comp, ns, MPI_DOUBLE, MPI_SUM, comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, d->shell_modes, ns, MPI_DOUBLE, MPI_SUM, comm));
    double sums[2] = {W->grad2, W->div2};
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, sums, 2, MPI_DOUBLE, MPI_SUM, comm));
    d->div_rms = sqrt(sums[1]);
    d->vort_rms = sqrt(fmax(sums[0] - sums[1], 0.0));
    d->div_ratio = sums[0] > 0 ? d->div_rms / sqrt(sums[0]) : NAN;
    d->vort_ratio = sums[0] > 0 ? d->vort_rms / sqrt(sums[0]) : NAN;
fail:
    hx_timer_end(W->T, "accumulate", 0, 0); /* ends nothing when the loop failed before it began */
    return st;
}

/* The magnetic spectrum's fit range: --fit, else [2, N/4] ended at the last shell that holds
 * more than round-off (1e-10 of the largest shell): a band-limited field keeps no slope beyond
 * its band, and single-precision noise there would bend the fit. */
static void magnetic_fit(hx_diag *b, const hx_inspect_opts *o)
{
    int64_t nmin = b->cells[0] < b->cells[1] ? b->cells[0] : b->cells[1];
    nmin = nmin < b->cells[2] ? nmin : b->cells[2];
    if (o->fit[1] > 0) {
        b->fit_kmin = o->fit[0], b->fit_kmax = o->fit[1];
        return;
    }
    double emax = 0;
    int last = 0;
    for (int s = 1; s < b->nshell; s++) emax = fmax(emax, b->shell_e[s]);
    for (int s = 1; s < b->nshell; s++)
        if (b->shell_e[s] > 1e-10 * emax) last = s;
    b->fit_kmin = 2;
    b->fit_kmax = fmin((double)(nmin / 4), (double)last);
}

/* Collective: the discrete divergence of the face-centred field, Σ_c (B_c[i_c + 1] − B_c[i_c]) / dx_c
 * on the periodic grid, summed component by component into slab B (free after the cell-centred
 * pass) as real values; the z difference of the last plane of a slab needs the first plane of
 * the next one, read as one more plane. Gives face_rms, face_div_max and face_div. */
static hx_status face_divergence(work_t *W, hx_cube *cube, hx_magnetic *m)
{
    hx_status st = HX_OK;
    const hx_grid *g = &W->g;
    const ptrdiff_t nx = g->n[0], ny = g->n[1], nz = g->nz;
    const int64_t stride = 2 * g->nxc;
    double *div = (double *)W->b, *v = (double *)W->a, *next = malloc((size_t)(nx * ny) * sizeof(double));
    double dx[3], sums[2] = {0, 0}, worst = 0; /* sums: Σ |B|^2, cells whose divergence is not a number */
    HX_TRY(hx_error_agree(W->comm, next ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for one plane of %s",
                                                              HX_FIELD_MAGNETIC_FACE)));
    for (int a = 0; a < 3; a++) dx[a] = g->box[a] / (double)g->n[a];
    memset(div, 0, (size_t)(nz * ny * nx) * sizeof(double));
    for (int c = 0; c < 3; c++) {
        HX_TRY(read_slot(W, cube, HX_SLOT_MAGNETIC_FACE + c, v, stride));
        if (c == 2) { /* every rank takes part; a rank without planes reads none */
            double b0 = hx_cube_bytes_read(cube);
            hx_timer_begin(W->T, "read");
            st = hx_error_agree(W->comm, hx_cube_read_plane(cube, HX_SLOT_MAGNETIC_FACE + 2, g, (g->z0 + nz) % g->n[2], next));
            hx_timer_end(W->T, "read", hx_cube_bytes_read(cube) - b0, 0);
            HX_TRY(st);
        }
        hx_timer_begin(W->T, "moments");
        for (ptrdiff_t z = 0; z < nz; z++)
            for (ptrdiff_t y = 0; y < ny; y++) {
                const double *row = v + (z * ny + y) * stride, *up = row + 1; /* the high face of each cell */
                double *out = div + (z * ny + y) * nx;
                if (c == 1) up = v + (z * ny + (y + 1) % ny) * stride;
                if (c == 2) up = z + 1 < nz ? v + ((z + 1) * ny + y) * stride : next + y * nx;
                for (ptrdiff_t x = 0; x < nx; x++) sums[0] += row[x] * row[x];
                if (c == 0) {
                    for (ptrdiff_t x = 0; x + 1 < nx; x++) out[x] += (up[x] - row[x]) / dx[0];
                    out[nx - 1] += (row[0] - row[nx - 1]) / dx[0];
                } else
                    for (ptrdiff_t x = 0; x < nx; x++) out[x] += (up[x] - row[x]) / dx[c];
            }
        hx_timer_end(W->T, "moments", 0, 0);
    }
    hx_timer_begin(W->T, "moments");
    for (ptrdiff_t i = 0; i < nz * ny * nx; i++) {
        double a = fabs(div[i]);
        if (a > worst) worst = a;
        else if (!(a <= worst)) sums[1] += 1;
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &worst, 1, MPI_DOUBLE, MPI_MAX, W->comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, sums, 2, MPI_DOUBLE, MPI_SUM, W->comm));
    const double dmin = fmin(dx[0], fmin(dx[1], dx[2]));
    m->has_face = 1;
    m->face_rms = sqrt(sums[0] / (double)hx_grid_cells(g));
    m->face_div_max = sums[1] > 0 ? NAN : worst;
    m->face_div = sums[1] > 0 ? NAN : worst > 0 ? worst / (m->face_rms / dmin) : 0.0;
fail:
    hx_timer_end(W->T, "moments", 0, 0);
    free(next);
    return st;
}

/* Collective: the magnetic field through the same analysis as the velocity (its own summary in
 * d->magnetic, no state, no weighting, no smoothing, no slices), then beta and M_A of its mean
 * with the velocity's dispersion in d, and the face divergence when a face-centred field is open. */
static hx_status analyse_magnetic(work_t *W, hx_cube *cube, const hx_inspect_opts *o, const hx_cube_state *s,
                                  const hx_log *log, hx_diag *d)
{
    hx_status st = HX_OK;
    hx_magnetic *m = calloc(1, sizeof *m);
    HX_TRY(hx_error_agree(W->comm, m ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for the magnetic summary")));
    d->magnetic = m; /* freed with d */
    hx_diag *b = &m->field;
    memcpy(b->cells, d->cells, sizeof b->cells);
    memcpy(b->box, d->box, sizeof b->box);
    b->ranks = d->ranks;
    m->single = hx_cube_field_single(cube, HX_SLOT_MAGNETIC);
    HX_TRY(hx_error_agree(W->comm, hx_diag_shells(b, shells_needed(&W->g))));
    W->f = (field_t){HX_SLOT_MAGNETIC, 0, 0, 0.0, 0, "magnetic"};
    HX_TRY(analyse_field(W, cube, log, b));
    magnetic_fit(b, o);
    hx_diag_finish(b);
    /* without a density <rho> = 1 and the dispersion is the volume-weighted one of v */
    double var = 0;
    for (int c = 0; c < 3; c++) var += d->rms[c] * d->rms[c] - d->mean[c] * d->mean[c];
    m->density_mean = d->has_state ? d->rho_mean : 1.0;
    m->sigma_3d = d->has_state ? d->sigma_3d : sqrt(fmax(var, 0.0));
    m->sound_speed = d->sound_speed;
    m->gamma = o->gamma > 0 ? o->gamma : s->gamma > 0 ? s->gamma : 1.0;
    m->unit_gauss = s->unit_magnetic_gauss;
    m->unit_velocity_cm_s = s->unit_velocity_cm_s;
    hx_diag_set_magnetic(m);
    if (hx_cube_has_field(cube, HX_SLOT_MAGNETIC_FACE)) HX_TRY(face_divergence(W, cube, m));
fail:
    return st;
}

hx_status hx_inspect_run(const hx_inspect_opts *o, const hx_log *log, MPI_Comm comm, hx_diag *d, hx_request *q, int *found)
{
    hx_status st = HX_OK;
    hx_cube *cube = NULL;
    work_t W;
    memset(&W, 0, sizeof W);
    memset(d, 0, sizeof *d);
    double t0 = MPI_Wtime();
    W.T = o->timer;
    hx_timer_begin(W.T, "open");
    HX_TRY(hx_error_agree(comm, hx_cube_open(&cube, &o->cube, comm)));
    HX_TRY(hx_error_agree(comm, hx_cube_request(cube, q, found)));
    if (!*found) hx_request_defaults(q, hx_cube_single(cube), 0);
    hx_cube_state state;
    HX_TRY(hx_error_agree(comm, hx_cube_read_state(cube, &state)));
    /* the decomposition weights by sqrt(rho) when asked (--density) or when the file's mix was
     * asked for sqrt(rho) v; the state needs only a density */
    int weight = o->cube.density != NULL || state.mass_weight;
    if (weight && !hx_cube_has_density(cube)) /* the same verdict on every rank: no agreement needed */
        HX_FAIL(HX_ERR_ARG, "%s records a mix of sqrt(rho) v (mix_weight = mass) but holds no density dataset; "
                            "name one with --density", o->cube.file);
    if (hx_cube_has_density(cube)) hx_cube_request_state(&state, q);
    if (hx_cube_has_field(cube, HX_SLOT_MAGNETIC))
        hx_cube_request_magnetic(&state, hx_cube_field_single(cube, HX_SLOT_MAGNETIC), q);
    W.cloud = state.cloud;
    memcpy(W.center, state.center, sizeof W.center);
    W.radius = state.radius;
    hx_timer_end(W.T, "open", 0, 0); /* metadata only: the datasets are read (and counted) later */
    hx_timer_begin(W.T, "plan");
    hx_run_opts run = hx_run_defaults();
    run.threads = o->threads;
    W.nthreads = hx_fft_threads(&run);
    st = hx_fft_begin(&run, comm);
    if (st == HX_OK) st = setup(&W, o, cube, comm);
    hx_timer_end(W.T, "plan", 0, 0);
    HX_TRY(st);
    const hx_grid *g = &W.g;
    hx_timer_grid(W.T, (int64_t[3]){g->n[0], g->n[1], g->n[2]});
    for (int a = 0; a < 3; a++) d->cells[a] = g->n[a], d->box[a] = g->box[a];
    d->ranks = g->size;
    d->remove_scale = o->remove_scale;
    d->mass_weighted = weight;
    d->sound_speed = o->sound_speed > 0 ? o->sound_speed : state.sound_speed > 0 ? state.sound_speed : NAN;
    d->gravity = o->gravity > 0 ? o->gravity : state.G > 0 ? state.G : NAN;
    HX_TRY(hx_error_agree(comm, hx_diag_shells(d, shells_needed(g))));
    hx_log_say(log, HX_LOG_INFO, "inspect %s: %tdx%tdx%td cells on %d rank%s", o->cube.file, g->n[0], g->n[1], g->n[2],
               g->size, g->size > 1 ? "s" : "");
    if (W.rho) HX_TRY(read_density(&W, cube));
    W.f = (field_t){HX_SLOT_VELOCITY, W.rho != NULL, weight, o->remove_scale, o->slices, "velocity"};
    HX_TRY(analyse_field(&W, cube, log, d));
    HX_TRY(hx_error_agree(comm, check_fit(o, d)));
    hx_timer_begin(W.T, "finish");
    default_fit(d, o, q, *found);
    hx_diag_finish(d);
    hx_timer_end(W.T, "finish", 0, 0);
    if (W.f.slices) HX_TRY(make_slices(&W, d));
    if (hx_cube_has_field(cube, HX_SLOT_MAGNETIC)) HX_TRY(analyse_magnetic(&W, cube, o, &state, log, d));
    hx_timer_begin(W.T, "finish");
    st = hx_log_peak_rss(comm, &d->peak_rss);
    hx_timer_end(W.T, "finish", 0, 0);
    HX_TRY(st);
    d->seconds = MPI_Wtime() - t0;
    hx_log_say(log, HX_LOG_INFO, "analysis done in %.2f s, peak %.1f MiB per rank", d->seconds,
               (double)d->peak_rss / 1048576.0);
fail:
    teardown(&W);
    hx_cube_close(&cube);
    if (st != HX_OK) hx_diag_clear(d);
    return st;
}
