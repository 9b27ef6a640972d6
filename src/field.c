/* field.c — k-space sums, mix and one-component-at-a-time synthesis through in-place c2r.
 * Invariants: the complex slab holds an exactly Hermitian spectrum (draws are keyed on the
 * canonical half); the DC and Nyquist entries are zero (an odd axis has no Nyquist index: every
 * frequency there has its partner); the per-shell factors a_s, b_s of hx_mix_solve are applied
 * identically in the sums and in the synthesis. */
#include "helmix/field.h"

#include <complex.h>
#include <fftw3-mpi.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/fault.h"
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
    double weight;       /* 2 for x > 0 (the conjugate partner is not stored), 1 for x = 0; an
                          * even Nx's x = Nx/2 never carries power, an odd Nx's top x has its partner */
} mode_t_;

/* Kept draws: which modes they belong to, and how far a pass has got. */
typedef struct cache_key {
    uint64_t seed;
    int stream, amplitudes, flip;
    hx_spectrum_spec spec;
    const hx_spectrum *sp;
} cache_key;

enum { CACHE_NONE = 0, CACHE_FILLING, CACHE_VALID };

/* What one thread needs to handle one k-space plane: a row of modes with power, their
 * wavevectors and draws (nxc each), its place in the kept draws, and the plane's sums. */
typedef struct work_s {
    mode_t_ *rm;
    int64_t (*rn)[3];
    double (*rw)[6];
    ptrdiff_t *rx;
    int64_t cursor;  /* index of the row's first mode in the kept draws                      */
    double *plane;   /* NSUM per-shell sums over the plane (see accumulate)                   */
    double power;    /* the plane's share of sum |u_c|^2                                       */
} work_t;

struct hx_field {
    hx_grid g;
    MPI_Comm comm;
    hx_field_opts o;
    void *data;             /* the slab: complex in the compute precision, then real values      */
    fftw_plan plan;         /* double compute                                                    */
    fftwf_plan planf;       /* single compute                                                    */
    double *cache;          /* kept draws, 6 per mode in pass order (double compute) ...          */
    float *cachef;          /* ... or single compute                                             */
    int64_t cache_cap;
    int64_t *plane_off;     /* per local k-space plane: index of its first mode in the kept draws */
    int cache_state;
    cache_key key;
    double *ph[3];          /* per axis: half-cell phase exp(i pi n / N) as (re, im) pairs */
    double *kv[3];          /* per axis: wavenumber component n * lmax / L (NAN at an even N's Nyquist index) */
    double *kd[3];          /* per axis: (2 N / L) sin(pi n / N), the staggered difference's k  */
    double kmin2, kmax2;    /* band limits, squared                                       */
    double *tab_amp, *tab_k; /* cubic boxes: amplitude and |k| by integer k^2 (else NULL)   */
    int64_t ntab;
    const hx_desc *d;
    const hx_spectrum *sp;
    int nshell;
    double *sol, *comp, *modes, *a, *b; /* per shell */
    hx_sum *loc;            /* the planes' sums added up double-double, so that the reduced sums
                             * do not depend on how the planes are split over ranks        */
    double *tot;            /* the same sums reduced over the ranks                        */
    int deferred;           /* sums still to be taken during component 0 (exact = none)    */
    double alpha, beta;     /* exact = none: provisional weights of the deferred pass      */
    int ready;              /* summary valid                                              */
    hx_field_summary sum;
    double t_draw, t_fft;
    /* one workspace per thread; thread j handles plane j of each group of nthreads planes, and
     * the planes' sums are added up in plane order afterwards, so that the sums (per-plane
     * sums in plain doubles, then double-double across planes: a plane lies whole on one rank,
     * and on one thread) are the same whatever the rank and thread counts */
    int nthreads;
    work_t *work;
};

double hx_field_slab_bytes(const hx_grid *g, const hx_field_opts *o)
{
    double c = (double)g->alloc * (o->compute == HX_PREC_SINGLE ? sizeof(fftwf_complex) : sizeof(fftw_complex));
    double r = o->real_doubles ? (double)g->nz * (double)g->n[1] * (double)g->n[0] * sizeof(double) : 0.0;
    return c > r ? c : r;
}

/* FFTW-MPI takes its transpose buffers when it executes and aborts if it cannot (fftw_malloc
 * asserts): a block of the slab's size must be there just before, so that a memory or
 * address-space limit is one agreed line instead. Not collective. */
static hx_status transpose_room(const hx_field *f)
{
    double bytes = hx_field_slab_bytes(&f->g, &f->o);
    void *probe = malloc((size_t)bytes);
    hx_status st = probe ? HX_OK : hx_error_set(HX_ERR_MEM, "rank %d cannot find the %.1f MiB FFTW needs for its "
                                                "transposes (memory or address-space limit): give it more memory or "
                                                "use more ranks", f->g.rank, bytes / 1048576.0);
    free(probe);
    return st;
}

hx_status hx_field_create(hx_field **out, const hx_grid *g, const hx_field_opts *o, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_field *f = calloc(1, sizeof *f);
    if (!f) st = hx_error_set(HX_ERR_MEM, "out of memory allocating the field handle");
    if (f) {
        f->g = *g;
        f->comm = comm;
        f->o = *o;
        double bytes = hx_field_slab_bytes(g, o);
        f->data = bytes < 9e18 ? fftw_malloc((size_t)bytes) : NULL;
        if (!f->data)
            st = hx_error_set(HX_ERR_MEM, "cannot allocate the synthesis slab (%.1f MiB on rank %d)", bytes / 1048576.0,
                              g->rank);
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
                    f->kv[a][i] = 2 * i == g->n[a] ? NAN : (double)hx_grid_freq(i, g->n[a]) * hx_grid_kunit(g, a);
        }
    }
    if (st == HX_OK) {
        f->nthreads = o->threads > 1 ? o->threads : 1;
        f->work = calloc((size_t)f->nthreads, sizeof *f->work);
        f->plane_off = calloc((size_t)g->ny + 1, sizeof *f->plane_off);
        if (!f->work || !f->plane_off) st = hx_error_set(HX_ERR_MEM, "out of memory for the row buffers");
        for (int j = 0; j < f->nthreads && st == HX_OK; j++) {
            work_t *w = &f->work[j];
            w->rm = malloc((size_t)g->nxc * sizeof *w->rm);
            w->rn = malloc((size_t)g->nxc * sizeof *w->rn);
            w->rw = malloc((size_t)g->nxc * sizeof *w->rw);
            w->rx = malloc((size_t)g->nxc * sizeof *w->rx);
            if (!w->rm || !w->rn || !w->rw || !w->rx) st = hx_error_set(HX_ERR_MEM, "out of memory for the row buffers");
        }
    }
    if (st == HX_OK) st = transpose_room(f); /* planning allocates too, and aborts the same way */
    if (st == HX_OK) st = hx_fault_point("alloc", comm); /* HELMIX_FAULT: tests only */
    HX_TRY(hx_error_agree(comm, st));
    if (o->compute == HX_PREC_SINGLE) {
        fftwf_mpi_init();
        f->planf = fftwf_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], f->data, f->data, comm,
                                             o->plan_flags | FFTW_MPI_TRANSPOSED_IN);
    } else
        f->plan = fftw_mpi_plan_dft_c2r_3d(g->n[2], g->n[1], g->n[0], f->data, f->data, comm,
                                           o->plan_flags | FFTW_MPI_TRANSPOSED_IN);
    st = f->plan || f->planf ? HX_OK : hx_error_set(HX_ERR_FFTW, "FFTW could not plan a %tdx%tdx%td c2r transform on rank %d",
                                                    g->n[0], g->n[1], g->n[2], g->rank);
    if (st == HX_OK) st = hx_fault_point("plan", comm);
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
 * (outside the band, k = 0, or an even axis's Nyquist index: its kv entry is NAN and fails
 * every test). */
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

/* The modes with power of row (y, z) and their draws: from the kept draws when a previous
 * pass kept them, else one batched call (kept now when this pass fills the cache). In single
 * compute the draws are rounded to single precision whichever way they come, so kept and
 * regenerated draws give the same bits. Returns how many; rx[i] is the x index of mode i. */
/* How far along row (y, z) modes can lie in the band: |k| grows with x (kx = x lmax / Lx for
 * x < nxc, the even Nyquist column last and NAN), so the row ends at the first x beyond kmax;
 * a row whose ky, kz alone exceed kmax (or a Nyquist row) holds none. */
static inline ptrdiff_t row_end(const hx_field *f, ptrdiff_t y, ptrdiff_t z)
{
    double b2 = f->kv[1][y] * f->kv[1][y] + f->kv[2][z] * f->kv[2][z];
    if (!(b2 <= f->kmax2)) return 0;
    ptrdiff_t x = 0;
    while (x < f->g.nxc && !(f->kv[0][x] * f->kv[0][x] + b2 > f->kmax2)) x++;
    return x;
}

static int row_modes(const hx_field *f, work_t *w, ptrdiff_t y, ptrdiff_t z)
{
    int n = 0;
    for (ptrdiff_t x = 0, end = row_end(f, y, z); x < end; x++)
        if (mode_at(f, y, z, x, &w->rm[n])) {
            for (int a = 0; a < 3; a++) w->rn[n][a] = w->rm[n].n[a];
            w->rx[n++] = x;
        }
    int single = f->o.compute == HX_PREC_SINGLE;
    if (f->cache_state == CACHE_VALID) {
        if (single)
            for (int i = 0; i < n; i++)
                for (int j = 0; j < 6; j++) w->rw[i][j] = f->cachef[6 * (w->cursor + i) + j];
        else memcpy(w->rw, f->cache + 6 * w->cursor, (size_t)n * sizeof *w->rw);
    } else {
        hx_rng_vectors(f->d->seed, (uint64_t)f->d->stream, (const int64_t(*)[3])w->rn, n, f->d->amplitudes, f->d->flip,
                       w->rw);
        if (single)
            for (int i = 0; i < n; i++)
                for (int j = 0; j < 6; j++) w->rw[i][j] = (float)w->rw[i][j];
        if (f->cache_state == CACHE_FILLING) {
            if (single)
                for (int i = 0; i < n; i++)
                    for (int j = 0; j < 6; j++) f->cachef[6 * (w->cursor + i) + j] = (float)w->rw[i][j];
            else memcpy(f->cache + 6 * w->cursor, w->rw, (size_t)n * sizeof *w->rw);
        }
    }
    w->cursor += n;
    return n;
}

/* The modes of the current descriptor with power on this rank, plane by plane: where each
 * plane's draws start in a full cache, and how many it holds. */
static int64_t count_band(hx_field *f)
{
    const hx_grid *g = &f->g;
    int64_t n = 0;
    mode_t_ m;
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++) {
        f->plane_off[y - g->y0] = n;
        for (ptrdiff_t z = 0; z < g->n[2]; z++)
            for (ptrdiff_t x = 0, end = row_end(f, y, z); x < end; x++) n += mode_at(f, y, z, x, &m);
    }
    f->plane_off[g->ny] = n;
    return n;
}

static void drop_cache(hx_field *f)
{
    free(f->cache);
    free(f->cachef);
    f->cache = NULL;
    f->cachef = NULL;
    f->cache_cap = 0;
    f->cache_state = CACHE_NONE;
}

/* Before a pass over the modes of the current descriptor: reuse the kept draws when they are
 * this descriptor's (same seed, stream, amplitudes, flip and mode set), else make room to keep
 * them during this pass. A rank that cannot allocate simply regenerates: the bits are the same. */
static void begin_pass(hx_field *f)
{
    if (!f->o.keep_draws) return;
    cache_key k;
    memset(&k, 0, sizeof k);
    k.seed = f->d->seed, k.stream = f->d->stream, k.amplitudes = f->d->amplitudes, k.flip = f->d->flip;
    k.spec = f->d->spectrum, k.sp = f->sp;
    if (f->cache_state == CACHE_VALID && !memcmp(&k, &f->key, sizeof k)) return;
    drop_cache(f);
    f->key = k;
    int64_t n = count_band(f);
    size_t each = f->o.compute == HX_PREC_SINGLE ? sizeof(float) : sizeof(double);
    void *p = n > 0 ? malloc((size_t)n * 6 * each) : NULL;
    if (!p) return;
    if (f->o.compute == HX_PREC_SINGLE) f->cachef = p;
    else f->cache = p;
    f->cache_cap = n;
    f->cache_state = CACHE_FILLING;
}

/* After a pass: a cache that was filled by it is complete and valid. */
static void end_pass(hx_field *f)
{
    if (f->cache_state == CACHE_FILLING) f->cache_state = CACHE_VALID;
}

double hx_field_kept_bytes(const hx_field *f)
{
    return f->cache_state == CACHE_NONE ? 0.0 : (double)f->cache_cap * 6 *
                                                   (f->o.compute == HX_PREC_SINGLE ? sizeof(float) : sizeof(double));
}

/* The draws of mode i as three complex numbers and k_hat . w. A scalar keeps only the first
 * draw, with no compressive part: then every sum and fill below serves it unchanged. */
static inline void draws_of(const hx_field *f, const work_t *ws, int i, double complex w[3], double complex *kw)
{
    const double *v = ws->rw[i];
    const mode_t_ *m = &ws->rm[i];
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
    free(f->tot);
    for (int j = 0; j < f->nthreads && f->work; j++) {
        free(f->work[j].plane);
        f->work[j].plane = NULL;
    }
    f->sol = f->comp = f->modes = f->a = f->b = f->tot = NULL;
    f->loc = NULL;
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
static void flush_plane(hx_field *f, double *plane)
{
    for (int i = 0; i < NSUM * f->nshell; i++)
        if (plane[i] != 0) {
            hx_sum_add(&f->loc[i], plane[i]);
            plane[i] = 0;
        }
}

/* Count the Fourier modes of every shell below ns, whether or not they carry power, with the
 * conventions of inspect (Nyquist at -N/2, weight 1 on the kx = 0 and an even Nx's kx = Nx/2
 * planes), so a mode-count-compensated spectrum means the same in both. The shell is settled in
 * double before any cast: |k| of an elongated box's modes may be far beyond an int. */
static void count_modes(hx_field *f, double *modes, int ns)
{
    const hx_grid *g = &f->g;
    for (ptrdiff_t y = g->y0; y < g->y0 + g->ny; y++)
        for (ptrdiff_t z = 0; z < g->n[2]; z++) {
            double ky = (double)hx_grid_freq(y, g->n[1]) * hx_grid_kunit(g, 1);
            double kz = (double)hx_grid_freq(z, g->n[2]) * hx_grid_kunit(g, 2), b2 = ky * ky + kz * kz;
            for (ptrdiff_t x = 0; x < g->nxc; x++) {
                double kx = (double)hx_grid_freq(x, g->n[0]) * hx_grid_kunit(g, 0), k2 = b2 + kx * kx;
                double r = sqrt(k2) + 0.5; /* shell floor(r), below ns exactly when r < ns */
                if (k2 > 0 && r < ns) modes[(int)r] += (x == 0 || 2 * x == g->n[0]) ? 1.0 : 2.0;
            }
            if (z == g->n[2] - 1) flush_plane(f, modes - 2 * ns);
        }
}

static double each_plane(hx_field *f, int c, int sums);

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
    count_modes(f, f->work[0].plane + 2 * ns, ns);
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
    f->d = d;
    f->sp = sp;
    f->ready = 0;
    free_shells(f);
    if (!(d->spectrum.kmax <= HX_GRID_SHELLS_MAX))
        HX_FAIL(HX_ERR_ARG, "kmax = %g: more than the %.0f shells a grid may span", d->spectrum.kmax, HX_GRID_SHELLS_MAX);
    HX_TRY(prepare_band(f));
    f->nshell = (int)(d->spectrum.kmax + 0.5) + 2;
    int ns = f->nshell;
    HX_ALLOC(f->sol, ns);
    HX_ALLOC(f->comp, ns);
    HX_ALLOC(f->modes, ns);
    HX_ALLOC(f->a, ns);
    HX_ALLOC(f->b, ns);
    HX_ALLOC(f->loc, NSUM * (size_t)ns);
    for (int j = 0; j < f->nthreads; j++) HX_ALLOC(f->work[j].plane, NSUM * (size_t)ns);
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
    hx_timer_begin(f->o.timer, "draw");
    each_plane(f, -1, 1);
    f->t_draw += MPI_Wtime() - t0;
    hx_timer_end(f->o.timer, "draw", 0, 0);
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

/* Write component c of every mode of local plane y into the slab (transposed layout y, z, x);
 * with sums, also add every mode's energies to the plane's shell sums. Cell-centred values get
 * the half-cell phase on every axis; a face-centred component c on every axis but c. */
static void fill_plane(const hx_field *f, work_t *ws, ptrdiff_t y, int c, int sums)
{
    const hx_grid *g = &f->g;
    int face = f->d->stagger == HX_STAGGER_FACE;
    int plain = !face && f->d->part == HX_PART_ALL; /* the common case: the whole field at cell centres */
    int single = f->o.compute == HX_PREC_SINGLE;
    size_t csz = single ? sizeof(float complex) : sizeof(double complex);
    for (ptrdiff_t z = 0; z < g->n[2]; z++) {
        char *row = (char *)f->data + (size_t)((y - g->y0) * g->n[2] + z) * (size_t)g->nxc * csz;
        double complex py = face && c == 1 ? 1.0 : f->ph[1][2 * y] + I * f->ph[1][2 * y + 1];
        double complex pz = face && c == 2 ? 1.0 : f->ph[2][2 * z] + I * f->ph[2][2 * z + 1];
        double complex pyz = py * pz;
        memset(row, 0, (size_t)g->nxc * csz);
        int n = row_modes(f, ws, y, z);
        for (int i = 0; i < n; i++) {
            const mode_t_ *m = &ws->rm[i];
            ptrdiff_t x = ws->rx[i];
            double complex w[3], kw;
            draws_of(f, ws, i, w, &kw);
            if (sums) accumulate(ws->plane, f->nshell, m, w, kw);
            double a = f->a[m->shell], b = f->b[m->shell];
            double complex u = plain ? whole(m, c, w, kw, a, b) : coefficient(f, m, c, w, kw, a, b);
            double complex px = face && c == 0 ? 1.0 : f->ph[0][2 * x] + I * f->ph[0][2 * x + 1];
            double complex v = u * pyz * px;
            if (single) ((float complex *)row)[x] = (float complex)v;
            else ((double complex *)row)[x] = v;
            ws->power += m->weight * creal(u * conj(u));
        }
    }
}

/* The sums of the mix over local plane y. */
static void mix_plane(const hx_field *f, work_t *ws, ptrdiff_t y)
{
    for (ptrdiff_t z = 0; z < f->g.n[2]; z++) {
        int n = row_modes(f, ws, y, z);
        for (int i = 0; i < n; i++) {
            double complex w[3], kw;
            draws_of(f, ws, i, w, &kw);
            accumulate(ws->plane, f->nshell, &ws->rm[i], w, kw);
        }
    }
}

/* One pass over the local k-space planes: the mix's sums (c < 0) or component c (with sums
 * if asked). Planes go to the threads in groups; the planes' sums and powers are added up in
 * plane order after each group, so every thread count gives the same bits. Returns sum
 * |u_c|^2 over the local modes (weight 2 for kx > 0). */
static double each_plane(hx_field *f, int c, int sums)
{
    const hx_grid *g = &f->g;
    double power = 0;
    begin_pass(f);
    for (ptrdiff_t y0 = 0; y0 < g->ny; y0 += f->nthreads) {
        int m = g->ny - y0 < f->nthreads ? (int)(g->ny - y0) : f->nthreads;
#pragma omp parallel for num_threads(m) schedule(static, 1) if (m > 1)
        for (int j = 0; j < m; j++) {
            work_t *w = &f->work[j];
            w->cursor = f->plane_off[y0 + j];
            w->power = 0;
            if (c < 0) mix_plane(f, w, g->y0 + y0 + j);
            else fill_plane(f, w, g->y0 + y0 + j, c, sums);
        }
        for (int j = 0; j < m; j++) {
            power += f->work[j].power;
            if (c < 0 || sums) flush_plane(f, f->work[j].plane);
        }
    }
    end_pass(f);
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
    if (f->o.compute == HX_PREC_SINGLE) {
        const float *fs = (const float *)f->data;
        if (prec == HX_PREC_SINGLE) {
            float *dst = (float *)f->data;
            for (ptrdiff_t r = 0; r < rows; r++) {
                if (scale == 1.0) memmove(dst + r * nx, fs + r * stride, (size_t)nx * sizeof *dst);
                else
                    for (ptrdiff_t i = 0; i < nx; i++) dst[r * nx + i] = (float)(scale * fs[r * stride + i]);
                hx_moments_add_floats(mom, dst + r * nx, nx);
            }
        } else { /* widen back to front: every double lands at or after the float it comes from
                  * (8 (r nx + i) >= 4 (r (nx + 2) + i) for nx >= 2); the slab holds the doubles */
            double *dst = (double *)f->data;
            for (ptrdiff_t r = rows - 1; r >= 0; r--)
                for (ptrdiff_t i = nx - 1; i >= 0; i--) dst[r * nx + i] = scale * (double)fs[r * stride + i];
            for (ptrdiff_t r = 0; r < rows; r++) hx_moments_add_doubles(mom, dst + r * nx, nx);
        }
        return;
    }
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
    if (prec == HX_PREC_DOUBLE && f->o.compute == HX_PREC_SINGLE && !f->o.real_doubles)
        HX_FAIL(HX_ERR_ARG, "double values asked of a single-precision synthesis built without room for them");
    int sums = f->deferred && !f->ready;
    double t0 = MPI_Wtime();
    hx_timer_begin(f->o.timer, "draw");
    double power = each_plane(f, c, sums), scale = 1.0;
    hx_timer_end(f->o.timer, "draw", 0, 0);
    double t1 = MPI_Wtime();
    if (sums) {
        HX_TRY(hx_error_agree(f->comm, finish_mix(f)));
        scale = f->alpha > 0 ? f->a[0] / f->alpha : f->b[0] / f->beta; /* the global factor of hx_mix_solve */
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &power, 1, MPI_DOUBLE, MPI_SUM, f->comm));
    double t2 = MPI_Wtime();
    HX_TRY(hx_error_agree(f->comm, transpose_room(f)));
    hx_timer_begin(f->o.timer, "transform");
    if (f->planf) fftwf_execute(f->planf);
    else fftw_execute(f->plan);
    hx_timer_end(f->o.timer, "transform", 0, 1);
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
    if ((*f)->planf) fftwf_destroy_plan((*f)->planf);
    drop_cache(*f);
    fftw_free((*f)->data);
    for (int a = 0; a < 3; a++) {
        free((*f)->ph[a]);
        free((*f)->kv[a]);
        free((*f)->kd[a]);
    }
    free((*f)->tab_amp);
    free((*f)->tab_k);
    free_shells(*f);
    for (int j = 0; j < (*f)->nthreads && (*f)->work; j++) {
        free((*f)->work[j].rm);
        free((*f)->work[j].rn);
        free((*f)->work[j].rw);
        free((*f)->work[j].rx);
    }
    free((*f)->work);
    free((*f)->plane_off);
    free(*f);
    *f = NULL;
}
