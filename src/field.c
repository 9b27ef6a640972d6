/* field.c — k-space sums, mix and one-component-at-a-time synthesis through in-place c2r.
 * Invariants: the complex slab holds an exactly Hermitian spectrum (draws are keyed on the
 * canonical half); the DC and Nyquist entries are zero; the per-shell factors a_s, b_s of
 * hx_mix_solve are applied identically in the sums and in the synthesis. */
#include "helmix/field.h"

#include <complex.h>
#include <fftw3-mpi.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/mix.h"
#include "helmix/rng.h"
#include "helmix/sum.h"

/* One local mode: everything the passes need. */
typedef struct mode_s {
    double k;            /* |k| in units of 2 pi / lmax */
    double khat[3];      /* unit wavevector (physical direction) */
    double amp;          /* sqrt(E(k) / k^2) */
    int shell;
    int64_t n[3];
    double weight;       /* 2 for x > 0 (the conjugate partner is not stored), 1 for x = 0 */
} mode_t_;

struct hx_field {
    hx_grid g;
    MPI_Comm comm;
    fftw_complex *data;
    fftw_plan plan;
    double *ph[3];          /* per axis: half-cell phase exp(i pi n / N) as (re, im) pairs */
    double *kv[3];          /* per axis: wavenumber component n * lmax / L (NAN at Nyquist)  */
    double *kd[3];          /* per axis: (2 N / L) sin(pi n / N), the staggered difference's k  */
    double kmin2, kmax2;    /* band limits, squared                                       */
    double *tab_amp, *tab_k; /* cubic boxes: amplitude and |k| by integer k^2 (else NULL)   */
    int64_t ntab;
    const hx_desc *d;
    const hx_spectrum *sp;
    int nshell;
    double *sol, *comp, *modes, *a, *b; /* per shell */
    double *plane;          /* per shell: sums over the current k-space plane y (NSUM of them,
                             * see accumulate); a plane lies on one rank whole, so these are the
                             * same whatever the rank count                                */
    hx_sum *loc;            /* the planes' sums added up double-double, so that the reduced sums
                             * do not depend on how the planes are split over ranks        */
    double *tot;            /* the same sums reduced over the ranks                        */
    int deferred;           /* sums still to be taken during component 0 (exact = none)    */
    double alpha, beta;     /* exact = none: provisional weights of the deferred pass      */
    int ready;              /* summary valid                                              */
    hx_field_summary sum;
    double t_draw, t_fft;
    /* one row of modes with power, their wavevectors and draws (nxc each) */
    mode_t_ *rm;
    int64_t (*rn)[3];
    double (*rw)[6];
    ptrdiff_t *rx;
};

hx_status hx_field_create(hx_field **out, const hx_grid *g, unsigned plan_flags, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_field *f = calloc(1, sizeof *f);
    if (!f) st = hx_error_set(HX_ERR_MEM, "out of memory allocating the field handle");
    if (f) {
        f->g = *g;
        f->comm = comm;
        f->data = fftw_alloc_complex((size_t)g->alloc);
        if (!f->data)
            st = hx_error_set(HX_ERR_MEM, "cannot allocate the complex slab (%.1f MiB on rank %d)",
                              (double)g->alloc * sizeof(fftw_complex) / 1048576.0, g->rank);
        for (int a = 0; a < 3 && st == HX_OK; a++) {
            f->ph[a] = malloc(2 * (size_t)g->n[a] * sizeof(double));
            if (!f->ph[a]) st = hx_error_set(HX_ERR_MEM, "out of memory allocating phase tables");
            else
                for (ptrdiff_t i = 0; i < g->n[a]; i++) {
                    double t = M_PI * (double)hx_grid_freq(i, g->n[a]) / (double)g->n[a];
                    f->ph[a][2 * i] = cos(t);
                    f->ph[a][2 * i + 1] = sin(t);
                }
            f->kd[a] = st == HX_OK ? malloc((size_t)g->n[a] * sizeof(double)) : NULL;
            if (st == HX_OK && !f->kd[a]) st = hx_error_set(HX_ERR_MEM, "out of memory allocating wavenumber tables");
            else if (st == HX_OK)
                for (ptrdiff_t i = 0; i < g->n[a]; i++)
                    f->kd[a][i] = 2.0 * (double)g->n[a] / g->box[a] * sin(M_PI * (double)hx_grid_freq(i, g->n[a]) / (double)g->n[a]);
            f->kv[a] = st == HX_OK ? malloc((size_t)g->n[a] * sizeof(double)) : NULL;
            if (st == HX_OK && !f->kv[a]) st = hx_error_set(HX_ERR_MEM, "out of memory allocating wavenumber tables");
            else if (st == HX_OK)
                for (ptrdiff_t i = 0; i < g->n[a]; i++)
                    f->kv[a][i] = i == g->n[a] / 2 ? NAN : (double)hx_grid_freq(i, g->n[a]) * hx_grid_kunit(g, a);
        }
    }
    if (st == HX_OK) {
        f->rm = malloc((size_t)g->nxc * sizeof *f->rm);
        f->rn = malloc((size_t)g->nxc * sizeof *f->rn);
        f->rw = malloc((size_t)g->nxc * sizeof *f->rw);
        f->rx = malloc((size_t)g->nxc * sizeof *f->rx);
        if (!f->rm || !f->rn || !f->rw || !f->rx) st = hx_error_set(HX_ERR_MEM, "out of memory for the row buffers");
    }
    HX_TRY(hx_error_agree(comm, st));
    f->plan = fftw_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], f->data, (double *)f->data, comm,
                                       plan_flags | FFTW_MPI_TRANSPOSED_IN);
    st = f->plan ? HX_OK : hx_error_set(HX_ERR_FFTW, "FFTW could not plan a %tdx%tdx%td c2r transform on rank %d",
                                        g->n[0], g->n[1], g->n[2], g->rank);
    HX_TRY(hx_error_agree(comm, st));
    *out = f;
    return HX_OK;
fail:
    hx_field_destroy(&f);
    return st;
}

enum { NSUM = 7 }; /* per-shell sums: sol, comp, modes, k^2 sol, k^2 comp, w A^2, (w A^2)^2 */


/* Amplitude and |k| of a mode with squared wavenumber k2 (in the band). Cubic boxes have
 * integer k2 and use the table built by hx_field_mix; other boxes evaluate the spectrum. */
static inline void amp_of(const hx_field *f, double k2, double *amp, double *k)
{
    if (f->tab_amp) {
        int64_t q = (int64_t)(k2 + 0.5);
        *amp = f->tab_amp[q];
        *k = f->tab_k[q];
    } else {
        *k = sqrt(k2);
        *amp = sqrt(hx_spectrum_mode_power(f->sp, *k));
    }
}

/* Fill m for the local array position (y, z, x); returns 0 for modes without power
 * (outside the band, k = 0, or a Nyquist index: its kv entry is NAN and fails every test). */
static inline int mode_at(const hx_field *f, ptrdiff_t y, ptrdiff_t z, ptrdiff_t x, mode_t_ *m)
{
    const hx_grid *g = &f->g;
    double kv[3] = {f->kv[0][x], f->kv[1][y], f->kv[2][z]};
    double k2 = kv[0] * kv[0] + kv[1] * kv[1] + kv[2] * kv[2];
    if (!(k2 >= f->kmin2 && k2 <= f->kmax2) || k2 == 0) return 0;
    amp_of(f, k2, &m->amp, &m->k);
    if (!(m->amp > 0)) return 0;
    m->n[0] = x;
    m->n[1] = hx_grid_freq(y, g->n[1]);
    m->n[2] = hx_grid_freq(z, g->n[2]);
    double inv = 1.0 / m->k;
    for (int a = 0; a < 3; a++) m->khat[a] = kv[a] * inv;
    m->shell = (int)(m->k + 0.5);
    m->weight = x > 0 ? 2.0 : 1.0;
    return 1;
}

/* Band limits and, for cubic boxes (every k^2 an integer), the amplitude table. */
static hx_status prepare_band(hx_field *f)
{
    hx_status st = HX_OK;
    const hx_grid *g = &f->g;
    /* a hair of slack so modes exactly on kmin or kmax are kept despite rounding of k^2 */
    f->kmin2 = f->d->spectrum.kmin * f->d->spectrum.kmin * (1 - 1e-12);
    f->kmax2 = f->d->spectrum.kmax * f->d->spectrum.kmax * (1 + 1e-12);
    free(f->tab_amp);
    free(f->tab_k);
    f->tab_amp = f->tab_k = NULL;
    int cubic = g->box[0] == g->box[1] && g->box[1] == g->box[2];
    f->ntab = (int64_t)f->kmax2 + 2;
    if (!cubic || f->ntab > (1 << 24)) return HX_OK; /* general path: evaluate per mode */
    HX_ALLOC(f->tab_amp, f->ntab);
    HX_ALLOC(f->tab_k, f->ntab);
    for (int64_t q = 0; q < f->ntab; q++) {
        f->tab_k[q] = sqrt((double)q);
        f->tab_amp[q] = q ? sqrt(hx_spectrum_mode_power(f->sp, f->tab_k[q])) : 0.0;
    }
    return HX_OK;
fail:
    return st;
}

/* The modes with power of row (y, z), their draws (one batched call) and, per mode, the
 * complex draws w and k_hat . w. Returns how many; rx[i] is the x index of mode i. */
static int row_modes(hx_field *f, ptrdiff_t y, ptrdiff_t z)
{
    int n = 0;
    for (ptrdiff_t x = 0; x < f->g.nxc; x++)
        if (mode_at(f, y, z, x, &f->rm[n])) {
            for (int a = 0; a < 3; a++) f->rn[n][a] = f->rm[n].n[a];
            f->rx[n++] = x;
        }
    hx_rng_vectors(f->d->seed, (uint64_t)f->d->stream, (const int64_t(*)[3])f->rn, n, f->d->amplitudes, f->d->flip,
                   f->rw);
    return n;
}

/* The draws of mode i as three complex numbers and k_hat . w. A scalar keeps only the first
 * draw, with no compressive part: then every sum and fill below serves it unchanged. */
static inline void draws_of(const hx_field *f, int i, double complex w[3], double complex *kw)
{
    const double *v = f->rw[i];
    const mode_t_ *m = &f->rm[i];
    *kw = 0;
    if (f->d->ncomp == 1) {
        w[0] = v[0] + I * v[1];
        w[1] = w[2] = 0;
        return;
    }
    for (int c = 0; c < 3; c++) {
        w[c] = v[2 * c] + I * v[2 * c + 1];
        *kw += m->khat[c] * w[c];
    }
}

static void free_shells(hx_field *f)
{
    free(f->sol);
    free(f->comp);
    free(f->modes);
    free(f->a);
    free(f->b);
    free(f->loc);
    free(f->plane);
    free(f->tot);
    f->sol = f->comp = f->modes = f->a = f->b = f->tot = NULL;
    f->loc = NULL;
    f->plane = NULL;
}

/* Add one mode's unscaled solenoidal and compressive energy and its count to shell sums. */
static inline void accumulate(double *loc, int ns, const mode_t_ *m, const double complex w[3], double complex kw)
{
    double p = m->amp * m->amp * m->weight, wpar2 = creal(kw * conj(kw)), w2 = 0;
    for (int c = 0; c < 3; c++) w2 += creal(w[c] * conj(w[c]));
    loc[m->shell] += p * (w2 - wpar2);
    loc[ns + m->shell] += p * wpar2;
    loc[3 * ns + m->shell] += p * m->k * m->k * (w2 - wpar2); /* for the rms vorticity */
    loc[4 * ns + m->shell] += p * m->k * m->k * wpar2;        /* for the rms divergence */
    loc[5 * ns + m->shell] += p;                              /* expected shell energy, up to a constant */
    loc[6 * ns + m->shell] += p * p;                          /* and its scatter */
}

/* Add the current plane's sums to the running double-double sums and clear them. */
static void flush_plane(hx_field *f)
{
    for (int i = 0; i < NSUM * f->nshell; i++)
        if (f->plane[i] != 0) {
            hx_sum_add(&f->loc[i], f->plane[i]);
            f->plane[i] = 0;
        }
}

/* Count the Fourier modes of every shell below ns, whether or not they carry power, with the
 * conventions of inspect (Nyquist at -N/2, weight 1 on the kx = 0 and kx = Nx/2 planes), so a
 * mode-count-compensated spectrum means the same in both. */
static void count_modes(hx_field *f, double *modes, int ns)
{
    const hx_grid *g = &f->g;
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++) {
            double ky = (double)hx_grid_freq(y, g->n[1]) * hx_grid_kunit(g, 1);
            double kz = (double)hx_grid_freq(z, g->n[2]) * hx_grid_kunit(g, 2), b2 = ky * ky + kz * kz;
            for (ptrdiff_t x = 0; x < g->nxc; x++) {
                double kx = (double)hx_grid_freq(x, g->n[0]) * hx_grid_kunit(g, 0), k2 = b2 + kx * kx;
                int s = (int)(sqrt(k2) + 0.5);
                if (k2 > 0 && s < ns) modes[s] += (x == 0 || 2 * x == g->n[0]) ? 1.0 : 2.0;
            }
            if (z == g->n[2] - 1) flush_plane(f);
        }
}

/* The mix rule of a field: a scalar is "all solenoidal" (its draws have no k_hat part), held
 * exactly at its rms. */
static const hx_mix_spec *mix_of(const hx_desc *d)
{
    static const hx_mix_spec scalar = {HX_MIX_FRACTION, NAN, 0.0, HX_EXACT_TOTAL};
    return d->ncomp == 1 ? &scalar : &d->mix;
}

/* Reduce the local shell sums, solve the mix and keep the final field's energies.
 * Collective. */
static hx_status finish_mix(hx_field *f)
{
    hx_status st = HX_OK;
    int ns = f->nshell;
    count_modes(f, f->plane + 2 * ns, ns);
    HX_TRY(hx_sum_allreduce(f->loc, NSUM * ns, f->comm));
    for (int i = 0; i < NSUM * ns; i++) f->tot[i] = hx_sum_value(&f->loc[i]);
    memcpy(f->sol, f->tot, (size_t)ns * sizeof *f->sol);
    memcpy(f->comp, f->tot + ns, (size_t)ns * sizeof *f->comp);
    memcpy(f->modes, f->tot + 2 * ns, (size_t)ns * sizeof *f->modes);
    HX_TRY(hx_mix_solve(mix_of(f->d), f->d->rms, f->sol, f->comp, ns, f->a, f->b));
    /* From here on sol and comp hold the kinetic energy (|u|^2 / 2) of the final field. */
    double es = 0, ec = 0, ks = 0, kc = 0;
    for (int s = 0; s < ns; s++) {
        f->sol[s] *= 0.5 * f->a[s] * f->a[s];
        f->comp[s] *= 0.5 * f->b[s] * f->b[s];
        es += f->sol[s];
        ec += f->comp[s];
        ks += f->a[s] * f->a[s] * f->tot[3 * ns + s];
        kc += f->b[s] * f->b[s] * f->tot[4 * ns + s];
    }
    const double kphys = 2.0 * M_PI / f->g.lmax; /* |k| above is in units of 2 pi / lmax */
    f->sum = (hx_field_summary){ns, f->sol, f->comp, f->modes, es + ec > 0 ? ec / (es + ec) : 0.0, sqrt(2.0 * (es + ec)),
                                kphys * sqrt(kc), kphys * sqrt(ks + kc), f->tot + 5 * ns, f->tot + 6 * ns};
    f->ready = 1;
fail:
    return st;
}

hx_status hx_field_mix(hx_field *f, const hx_desc *d, const hx_spectrum *sp)
{
    hx_status st = HX_OK;
    const hx_grid *g = &f->g;
    f->d = d;
    f->sp = sp;
    f->ready = 0;
    free_shells(f);
    HX_TRY(prepare_band(f));
    f->nshell = (int)(d->spectrum.kmax + 0.5) + 2;
    int ns = f->nshell;
    HX_ALLOC(f->sol, ns);
    HX_ALLOC(f->comp, ns);
    HX_ALLOC(f->modes, ns);
    HX_ALLOC(f->a, ns);
    HX_ALLOC(f->b, ns);
    HX_ALLOC(f->loc, NSUM * (size_t)ns);
    HX_ALLOC(f->plane, NSUM * (size_t)ns);
    HX_ALLOC(f->tot, NSUM * (size_t)ns);
    /* exact = none needs no look-ahead: the factors are fixed weights up to one global
     * scale, so the sums ride along with the first component and the scale is applied to it
     * after the transform (linearity), saving a whole pass of draws. */
    f->deferred = mix_of(d)->exact == HX_EXACT_NONE;
    if (f->deferred) {
        hx_mix_weights(mix_of(d), &f->alpha, &f->beta);
        for (int s = 0; s < ns; s++) f->a[s] = f->alpha, f->b[s] = f->beta;
        return HX_OK;
    }
    double t0 = MPI_Wtime();
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++) {
            int n = row_modes(f, y, z);
            for (int i = 0; i < n; i++) {
                double complex w[3], kw;
                draws_of(f, i, w, &kw);
                accumulate(f->plane, ns, &f->rm[i], w, kw);
            }
            if (z == g->n[2] - 1) flush_plane(f);
        }
    f->t_draw += MPI_Wtime() - t0;
    st = finish_mix(f);
fail:
    if (st != HX_OK) free_shells(f);
    return hx_error_agree(f->comm, st);
}

const hx_field_summary *hx_field_summary_get(const hx_field *f) { return f->ready ? &f->sum : NULL; }

/* Component c of the whole field's coefficient of mode m, A (a P_perp w + b P_par w), from the
 * draws w, k_hat . w and the shell factors; this order of operations keeps earlier files bit
 * for bit. */
static inline double complex whole(const mode_t_ *m, int c, const double complex w[3], double complex kw, double a,
                                   double b)
{
    return m->amp * (a * w[c] + (b - a) * m->khat[c] * kw);
}

/* The same for a part or a face-centred field: a part keeps one of the two terms. A face-centred
 * component is that of the discrete curl of the potential A_hat = i k x u / k^2 on cell edges:
 * i K x A_hat = (u (K . k) - k (K . u)) / k^2, with K_a = (2/dx_a) sin(k_a dx_a / 2) the
 * wavenumber of the staggered difference (u solenoidal, so K = k gives u back). */
static inline double complex coefficient(const hx_field *f, const mode_t_ *m, int c, const double complex w[3],
                                         double complex kw, double a, double b)
{
    const hx_desc *d = f->d;
    if (d->stagger == HX_STAGGER_CELL) /* a part (the whole field takes whole()) */
        return d->part == HX_PART_SOLENOIDAL ? m->amp * (a * (w[c] - m->khat[c] * kw)) : m->amp * (b * m->khat[c] * kw);
    const hx_grid *g = &f->g;
    double K[3] = {f->kd[0][m->n[0]], f->kd[1][m->n[1] < 0 ? m->n[1] + g->n[1] : m->n[1]],
                   f->kd[2][m->n[2] < 0 ? m->n[2] + g->n[2] : m->n[2]]};
    double kp = m->k * 2.0 * M_PI / g->lmax, kk = 0; /* physical |k|, K . k_hat */
    double complex u[3], ku = 0;
    for (int j = 0; j < 3; j++) {
        u[j] = whole(m, j, w, kw, a, b);
        kk += K[j] * m->khat[j];
        ku += K[j] * u[j];
    }
    return (u[c] * kk - m->khat[c] * ku) / kp;
}

/* Write component c of every local mode into the slab (transposed layout y, z, x); with
 * sums, also add every mode's energies to the local shell sums. Cell-centred values get the
 * half-cell phase on every axis; a face-centred component c on every axis but c. */
static double fill(hx_field *f, int c, int sums)
{
    const hx_grid *g = &f->g;
    int face = f->d->stagger == HX_STAGGER_FACE;
    int plain = !face && f->d->part == HX_PART_ALL; /* the common case: the whole field at cell centres */
    double power = 0; /* sum over both halves of |u_c|^2: the variance of component c */
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++) {
            double complex *row = (double complex *)f->data + ((y - g->y0) * g->n[2] + z) * g->nxc;
            double complex py = face && c == 1 ? 1.0 : f->ph[1][2 * y] + I * f->ph[1][2 * y + 1];
            double complex pz = face && c == 2 ? 1.0 : f->ph[2][2 * z] + I * f->ph[2][2 * z + 1];
            double complex pyz = py * pz;
            memset(row, 0, (size_t)g->nxc * sizeof *row);
            int n = row_modes(f, y, z);
            for (int i = 0; i < n; i++) {
                const mode_t_ *m = &f->rm[i];
                ptrdiff_t x = f->rx[i];
                double complex w[3], kw;
                draws_of(f, i, w, &kw);
                if (sums) accumulate(f->plane, f->nshell, m, w, kw);
                double a = f->a[m->shell], b = f->b[m->shell];
                double complex u = plain ? whole(m, c, w, kw, a, b) : coefficient(f, m, c, w, kw, a, b);
                double complex px = face && c == 0 ? 1.0 : f->ph[0][2 * x] + I * f->ph[0][2 * x + 1];
                row[x] = u * pyz * px;
                power += m->weight * creal(u * conj(u));
            }
            if (sums && z == g->n[2] - 1) flush_plane(f);
        }
    return power;
}

/* Remove the c2r row padding and convert to the output type, in place, front to back
 * (every destination byte lies at or before the source it replaces), adding every value
 * written to the moment sums. */
static void compact(hx_field *f, hx_precision prec, double scale, hx_moments *mom)
{
    const hx_grid *g = &f->g;
    const double *src = (const double *)f->data;
    ptrdiff_t rows = g->nz * g->n[1], nx = g->n[0], stride = 2 * g->nxc;
    if (prec == HX_PREC_DOUBLE) {
        double *dst = (double *)f->data;
        for (ptrdiff_t r = 0; r < rows; r++) {
            memmove(dst + r * nx, src + r * stride, (size_t)nx * sizeof *dst);
            for (ptrdiff_t i = 0; i < nx; i++) dst[r * nx + i] *= scale;
            hx_moments_add_doubles(mom, dst + r * nx, nx);
        }
    } else {
        float *dst = (float *)f->data;
        for (ptrdiff_t r = 0; r < rows; r++) {
            for (ptrdiff_t i = 0; i < nx; i++) dst[r * nx + i] = (float)(scale * src[r * stride + i]);
            hx_moments_add_floats(mom, dst + r * nx, nx);
        }
    }
}

hx_status hx_field_component(hx_field *f, int c, hx_precision prec, const void **slab, hx_moments *mom)
{
    hx_status st = HX_OK;
    hx_moments *local = NULL;
    if (!f->d || c < 0 || c >= f->d->ncomp)
        HX_FAIL(HX_ERR_ARG, "component %d requested before hx_field_mix or out of 0..%d", c, f->d ? f->d->ncomp - 1 : 2);
    if (f->deferred && c != 0 && !f->ready) HX_FAIL(HX_ERR_ARG, "with exact = none component 0 must come first");
    int sums = f->deferred && !f->ready;
    double t0 = MPI_Wtime();
    double power = fill(f, c, sums), scale = 1.0;
    double t1 = MPI_Wtime();
    if (sums) {
        HX_TRY(hx_error_agree(f->comm, finish_mix(f)));
        scale = f->alpha > 0 ? f->a[0] / f->alpha : f->b[0] / f->beta; /* the global factor of hx_mix_solve */
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &power, 1, MPI_DOUBLE, MPI_SUM, f->comm));
    double t2 = MPI_Wtime();
    fftw_execute(f->plan);
    double t3 = MPI_Wtime();
    HX_ALLOC(local, 1);
    hx_moments_init(local, 0.0, scale * sqrt(power)); /* mean 0: the k = 0 mode is empty */
    local->n = (double)hx_grid_cells(&f->g);
    compact(f, prec, scale, local);
    f->t_draw += t1 - t0;
    f->t_fft += t3 - t2;
    HX_TRY(hx_moments_reduce(local, f->comm));
    if (mom) *mom = *local;
    *slab = f->data;
fail:
    free(local);
    return st;
}

void hx_field_timings(const hx_field *f, double *draw_s, double *transform_s)
{
    if (draw_s) *draw_s = f->t_draw;
    if (transform_s) *transform_s = f->t_fft;
}

void hx_field_destroy(hx_field **f)
{
    if (!f || !*f) return;
    if ((*f)->plan) fftw_destroy_plan((*f)->plan);
    fftw_free((*f)->data);
    for (int a = 0; a < 3; a++) {
        free((*f)->ph[a]);
        free((*f)->kv[a]);
        free((*f)->kd[a]);
    }
    free((*f)->tab_amp);
    free((*f)->tab_k);
    free((*f)->rm);
    free((*f)->rn);
    free((*f)->rw);
    free((*f)->rx);
    free_shells(*f);
    free(*f);
    *f = NULL;
}
