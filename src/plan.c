/* plan.c — the arithmetic of a make run before it runs: slabs, memory by phase, file, transforms.
 * Invariant: nothing here calls MPI, FFTW or HDF5; the slab rule is FFTW-MPI's default block
 * (tests/unit/test_plan.c checks it against fftw_mpi_local_size_3d_transposed), and every phase
 * mirrors one of make.c's: a component synthesised and written, and for a shaped velocity
 * inspect.c's analysis of the written file. Constants that are not arithmetic were measured on
 * Open MPI 4.1.4 (OMPIO) with HDF5 1.10.8 at 64^3..256^3 on 1..4 ranks; each says how. */
#include "helmix/plan.h"

#include <cjson/cJSON.h>
#include <ctype.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/grid.h"
#include "helmix/make.h"

#define MIB 1048576.0

/* Measured: VmRSS after MPI_Init, H5open and fftw_mpi_init is 20.9-21.2 MiB on 1 and 2 ranks
 * and 24.2-24.5 MiB on 3..8 ranks (Open MPI's shared-memory segments), so a plan measured on
 * one process adds the difference for three or more ranks. */
static const double MPI_SHARED_EXTRA = 3.4 * MIB;
/* Measured: make's own allocations beside the slabs (phase, wavenumber and row tables, the
 * open HDF5 file and its metadata cache, the FFTW plan): make's peak RSS minus the baseline,
 * slabs, draws and buffers was 4.0-4.3 MiB at 64^3..192^3 on 1..3 ranks. */
static const double MAKE_FIXED = 4.1 * MIB;
/* Measured: with three or more ranks OMPIO's collective write aggregates on rank 0 through a
 * buffer holding the data of one write up to io_ompio_bytes_per_agg (32 MiB by default: peak
 * +27 MiB for a 27 MiB write, +32 MiB for 54 and 64 MiB writes); with one or two ranks it
 * writes without one (peak unchanged). */
static const double AGG_CAP = 32.0 * MIB;
/* HDF5's type-conversion buffer (H5Pset_buffer default, 1 MiB, from the HDF5 reference manual):
 * inspect reads a single-precision file into doubles through it, independently (HDF5 1.10 gives
 * up collective I/O when it converts). */
static const double TCONV = 1.0 * MIB;
/* io.c rounds doubles bound for a single-precision file itself, 4 MiB of floats at a time
 * (CONVERT_BYTES there), and writes each run collectively. */
static const double ROUND_BYTES = 4.0 * MIB;
/* Measured: file bytes beyond the datasets (GDF skeleton, /helmix attributes and diagnostics
 * tables, field_types groups): h5py/os.path.getsize at 64^3..192^3 give about 36 KiB plus 1 KiB
 * per dataset plus ~80 bytes per diagnostics shell. */
static const double META_BASE = 36.0 * 1024, META_DATASET = 1024.0, META_SHELL = 80.0;

int64_t hx_plan_rank_planes(int64_t n, int ranks, int rank, int64_t *first)
{
    int64_t block = (n + ranks - 1) / ranks, start = (int64_t)rank * block;
    int64_t own = n - start < block ? n - start : block;
    if (own < 0) own = 0;
    if (first) *first = own > 0 ? start : n;
    return own;
}

static hx_plan_slabs slabs_of(int64_t n, int ranks)
{
    hx_plan_slabs s = {n, (n + ranks - 1) / ranks, 0, 0, 0, 0};
    s.max = hx_plan_rank_planes(n, ranks, 0, NULL);
    int64_t owners = (n + s.block - 1) / s.block; /* ranks with at least one plane */
    s.idle = ranks - owners;
    s.min = s.idle > 0 ? 0 : hx_plan_rank_planes(n, ranks, ranks - 1, NULL);
    s.imbalance = (double)s.max / ((double)n / ranks);
    return s;
}

/* Signed frequency of index i on an axis of n points (as hx_grid_freq). */
static inline int64_t freq(int64_t i, int64_t n) { return i <= n / 2 - (n % 2 == 0) ? i : i - n; }

/* The squared wavenumber of field.c's mode_at, in its order of operations, so the band edges
 * fall where the synthesis puts them. */
static inline double k2_of(double kx, double ky, double kz) { return kx * kx + ky * ky + kz * kz; }

/* In-band modes of every k-space plane y (array of Ny counts). */
static void plane_modes(const int64_t cells[3], const double box[3], double kmin, double kmax, int64_t y0, int64_t ny,
                        int64_t *count)
{
    double lmax = fmax(box[0], fmax(box[1], box[2])), u[3];
    for (int a = 0; a < 3; a++) u[a] = lmax / box[a];
    const double lo = kmin * kmin * (1 - 1e-12), hi = kmax * kmax * (1 + 1e-12); /* field.c's slack */
    const int64_t nx = (cells[0] + 1) / 2; /* kx = 0 .. (Nx-1)/2: an even Nx's index Nx/2 is its Nyquist plane */
    /* Beyond 10^9 rows in all (grids far past any machine: 32768^2 planes' rows) the exact count
     * would take minutes to hours; each plane's count is then the area of its band annulus in
     * (z, x >= 0) index space, pi (r_hi^2 - r_lo^2) / (2 u_z u_x), relative error ~ 1/r. */
    const int estimate = (double)cells[1] * (double)cells[2] > 1e9;
    for (int64_t y = y0; y < y0 + ny; y++) {
        int64_t c = 0;
        count[y - y0] = 0;
        if (2 * y == cells[1]) continue;
        double ky = (double)freq(y, cells[1]) * u[1];
        if (estimate) {
            double rh = fmax(hi - ky * ky, 0.0), rl = fmax(lo - ky * ky, 0.0);
            count[y - y0] = (int64_t)(0.5 * M_PI * (rh - rl) / (u[2] * u[0]));
            continue;
        }
        for (int64_t z = 0; z < cells[2]; z++) {
            if (2 * z == cells[2]) continue;
            double kz = (double)freq(z, cells[2]) * u[2];
            /* the band is an interval of x on this row: k2 grows with x; estimate its ends from
             * the square roots, then settle them with the exact test */
            double b2 = ky * ky + kz * kz;
            int64_t a = lo > b2 ? (int64_t)fmin(floor(sqrt(lo - b2) / u[0]), (double)nx) : 0;
            int64_t b = hi > b2 ? (int64_t)fmin(floor(sqrt(hi - b2) / u[0]), (double)(nx - 1)) : 0;
            while (a > 0 && k2_of((double)(a - 1) * u[0], ky, kz) >= lo) a--;
            while (a < nx && k2_of((double)a * u[0], ky, kz) < lo) a++;
            while (b + 1 < nx && k2_of((double)(b + 1) * u[0], ky, kz) <= hi) b++;
            while (b >= 0 && k2_of((double)b * u[0], ky, kz) > hi) b--;
            if (b < a) continue;
            c += b - a + 1;
            if (a == 0 && ky == 0 && kz == 0) c--; /* k = 0 carries nothing */
        }
        count[y - y0] = c;
    }
}

int64_t hx_plan_band_modes(const int64_t cells[3], const double box[3], double kmin, double kmax, int64_t y0, int64_t ny)
{
    int64_t total = 0, chunk[256];
    for (int64_t y = y0; y < y0 + ny; y += 256) {
        int64_t m = y0 + ny - y < 256 ? y0 + ny - y : 256;
        plane_modes(cells, box, kmin, kmax, y, m, chunk);
        for (int64_t i = 0; i < m; i++) total += chunk[i];
    }
    return total;
}

/* In-band modes of the rank with the most, and of all ranks, for one spectrum band. */
static hx_status band_max(const hx_recipe *r, const hx_spectrum_spec *sp, int ranks, int64_t *most, int64_t *all)
{
    int64_t *count = malloc((size_t)r->cells[1] * sizeof *count);
    if (!count) return hx_error_set(HX_ERR_MEM, "out of memory counting the modes of %lld planes", (long long)r->cells[1]);
    plane_modes(r->cells, r->box, sp->kmin, sp->kmax, 0, r->cells[1], count);
    *most = *all = 0;
    for (int q = 0; q < ranks; q++) {
        int64_t y0, n = hx_plan_rank_planes(r->cells[1], ranks, q, &y0), s = 0;
        if (n == 0) break; /* the rest own nothing too */
        for (int64_t y = y0; y < y0 + n; y++) s += count[y];
        if (s > *most) *most = s;
        *all += s;
    }
    free(count);
    return HX_OK;
}

/* The fields make synthesises, in order, with their band, how their values are written and how
 * many c2r transforms each takes. */
typedef struct {
    const hx_spectrum_spec *band;
    int transforms;
    int doubles; /* written from doubles (hx_io_write_doubles), else in the file's precision */
} field_use;

static int lognormal_of(const hx_recipe *r)
{
    return (r->density_model == HX_DENSITY_LOGNORMAL || r->clumps) && r->sigma_s > 0;
}

static int magnetic_random(const hx_recipe *r)
{
    return (!isnan(r->random_ratio) && r->random_ratio > 0) || (!isnan(r->random_rms.value) && r->random_rms.value > 0);
}

static int fields_of(const hx_recipe *r, hx_plan *p, field_use f[4])
{
    int n = 0;
    p->transforms_density = lognormal_of(r);
    if (p->transforms_density) f[n++] = (field_use){&r->density_spectrum, 1, 1};
    p->transforms_velocity = p->shaped ? 3 * (2 + (r->remove_bulk || r->remove_rotation)) : 3;
    f[n++] = (field_use){&r->spectrum, p->transforms_velocity, p->shaped};
    p->transforms_parts = r->parts ? 6 : 0;
    if (r->parts) f[n++] = (field_use){&r->spectrum, 6, 0};
    p->transforms_magnetic = hx_recipe_has_magnetic(r) ? 3 * (1 + (r->faces != 0)) : 0;
    if (p->transforms_magnetic)
        f[n++] = (field_use){magnetic_random(r) ? &r->magnetic_spectrum : &r->spectrum, p->transforms_magnetic, 1};
    /* inspect's analysis of a shaped velocity: three r2c, three more for a magnetic field */
    p->transforms_analysis = p->shaped ? 3 * (1 + (p->transforms_magnetic > 0)) : 0;
    p->transforms = p->transforms_density + p->transforms_velocity + p->transforms_parts + p->transforms_magnetic +
                    p->transforms_analysis;
    return n;
}

/* The buffers one write of a component adds on the largest rank (rank 0, OMPIO's aggregator):
 * from doubles into a single-precision file, io.c's rounding buffer and the aggregation of one
 * run of every rank; otherwise the aggregation of the whole component. */
static double write_buffer(const hx_plan *p, int doubles)
{
    const double nx = (double)p->cells[0], one = nx * p->cells[1] * p->cells[2] * p->value_bytes;
    if (doubles && p->value_bytes == 4) {
        double per = fmax(1.0, floor(ROUND_BYTES / (nx * 4.0))), run = 0; /* rows of one run */
        for (int q = 0; q < p->ranks; q++) {
            double rows = (double)hx_plan_rank_planes(p->cells[2], p->ranks, q, NULL) * p->cells[1];
            if (rows <= 0) break;
            run += fmin(rows, per) * nx * 4.0;
        }
        double mine = fmin((double)p->z.max * p->cells[1], per) * nx * 4.0;
        return mine + (p->ranks >= 3 ? fmin(run, AGG_CAP) : 0.0);
    }
    return p->ranks >= 3 ? fmin(one, AGG_CAP) : 0.0;
}

/* The buffer a collective read of one component into doubles adds (inspect.c through cube.c). */
static double read_buffer(const hx_plan *p)
{
    if (p->value_bytes == 4) return TCONV; /* converted by HDF5, independent reads */
    return p->ranks >= 3 ? fmin((double)p->cells[0] * p->cells[1] * p->cells[2] * 8.0, AGG_CAP) : 0.0;
}

/* FFTW-MPI's transpose buffer: one block of the pairwise exchange, (Nz/P) (Ny/P) (Nx/2+1) complex. */
static double transpose_buffer(const hx_plan *p, double csize)
{
    return p->ranks > 1 ? (double)p->z.block * p->y.block * (p->cells[0] / 2 + 1) * csize : 0.0;
}

/* Memory by phase for one draws choice; draws_bytes: the kept draws of each field (0: regenerated). */
static void memory_of(const hx_recipe *r, hx_plan *p, const field_use *f, int nf, const double *draws_bytes,
                      double baseline, hx_plan_memory *m)
{
    const double nxc = (double)(p->cells[0] / 2 + 1), real = (double)p->z.max * p->cells[1] * p->cells[0] * 8.0;
    memset(m, 0, sizeof *m);
    m->baseline = baseline;
    m->fixed = MAKE_FIXED;
    m->slab = fmax((double)p->alloc_complex * (p->compute_single ? 8.0 : 16.0), p->needs_doubles ? real : 0.0);
    m->density = r->density_model != HX_DENSITY_NONE ? real : 0.0;
    m->transpose = transpose_buffer(p, p->compute_single ? 8.0 : 16.0);
    double base = m->baseline + m->fixed + m->slab + m->density;
    for (int i = 0; i < nf; i++) {
        double io = write_buffer(p, f[i].doubles);
        double phase = base + draws_bytes[i] + fmax(m->transpose, io);
        if (draws_bytes[i] > m->draws) m->draws = draws_bytes[i];
        if (io > m->io) m->io = io;
        m->synthesis = fmax(m->synthesis, phase);
    }
    if (p->shaped) { /* the synthesis and the density are freed; inspect.c's setup and passes */
        double a = 2.0 * p->alloc_complex * 16.0;                               /* slabs A and B */
        a += (double)p->cells[2] * nxc * 16.0 + (double)p->y.max * nxc * 16.0;   /* Nyquist partners */
        /* the partial file records no state yet, so inspect reads the density only to weight by it */
        a += r->density_model != HX_DENSITY_NONE && r->weight == HX_WEIGHT_MASS ? real : 0.0;
        double read = read_buffer(p);
        double face = r->faces && p->transforms_magnetic ? (double)p->cells[0] * p->cells[1] * 8.0 : 0.0;
        m->analysis = m->baseline + m->fixed + a + fmax(fmax(transpose_buffer(p, 16.0), read), face);
    }
    m->peak = fmax(m->synthesis, m->analysis);
}

/* The regenerated peak of the same recipe on another rank count (no draws: no mode counting);
 * baseline: the one of the planned rank count `from`. */
static double regenerated_peak(const hx_recipe *r, int ranks, double baseline, int from)
{
    hx_plan q;
    memset(&q, 0, sizeof q);
    memcpy(q.cells, r->cells, sizeof q.cells);
    q.ranks = ranks;
    q.z = slabs_of(r->cells[2], ranks);
    q.y = slabs_of(r->cells[1], ranks);
    q.alloc_complex = (int64_t)fmax(1.0, fmax((double)q.y.max * r->cells[2], (double)q.z.max * r->cells[1]) * (double)(r->cells[0] / 2 + 1));
    q.compute_single = r->compute == HX_PREC_SINGLE;
    q.needs_doubles = hx_make_needs_doubles(r);
    q.shaped = hx_make_shaped(r);
    q.value_bytes = r->precision == HX_PREC_DOUBLE ? 8 : 4;
    field_use f[4];
    double none[4] = {0, 0, 0, 0};
    int nf = fields_of(r, &q, f);
    hx_plan_memory m;
    double shared = hx_plan_baseline(0.0, 1, ranks) - hx_plan_baseline(0.0, 1, from); /* Open MPI's segments */
    memory_of(r, &q, f, nf, none, baseline + shared, &m);
    return m.peak;
}

hx_status hx_plan_compute(const hx_recipe *r, int ranks, int threads, double budget_bytes, double baseline_bytes,
                          hx_plan *p)
{
    hx_status st = HX_OK;
    memset(p, 0, sizeof *p);
    if (ranks < 1) return hx_error_set(HX_ERR_ARG, "plan: %d ranks: need at least 1", ranks);
    if (threads < 1) return hx_error_set(HX_ERR_ARG, "plan: %d threads per rank: need at least 1", threads);
    if (hx_grid_check(r->cells, r->box) != HX_OK) { /* the grid make would refuse */
        char why[512];
        snprintf(why, sizeof why, "%s", hx_error_message());
        return hx_error_set(HX_ERR_ARG, "plan: %s", why);
    }
    if (!(budget_bytes >= 0)) return hx_error_set(HX_ERR_ARG, "plan: memory budget %g bytes: must be >= 0", budget_bytes);
    memcpy(p->cells, r->cells, sizeof p->cells);
    p->ranks = ranks, p->threads = threads;
    p->z = slabs_of(r->cells[2], ranks);
    p->y = slabs_of(r->cells[1], ranks);
    p->max_ranks = r->cells[2] < r->cells[1] ? r->cells[2] : r->cells[1];
    /* cores beyond the slab limit become threads: the fewest threads that keep ranks <= max_ranks */
    int64_t cores = (int64_t)ranks * threads, t = (cores + p->max_ranks - 1) / p->max_ranks;
    if (t < 1) t = 1;
    p->layout_threads = (int)t;
    p->layout_ranks = (int)(cores / t);
    for (p->balanced_ranks = ranks < p->max_ranks ? ranks : p->max_ranks; p->balanced_ranks > 1; p->balanced_ranks--)
        if (r->cells[2] % p->balanced_ranks == 0 && r->cells[1] % p->balanced_ranks == 0) break;
    const double nxc = (double)(r->cells[0] / 2 + 1);
    p->alloc_complex = (int64_t)fmax(1.0, fmax((double)p->y.max * r->cells[2], (double)p->z.max * r->cells[1]) * nxc);
    p->compute_single = r->compute == HX_PREC_SINGLE;
    p->needs_doubles = hx_make_needs_doubles(r);
    p->shaped = hx_make_shaped(r);
    p->value_bytes = r->precision == HX_PREC_DOUBLE ? 8 : 4;
    p->budget = budget_bytes;
    p->asked = r->draws;

    field_use f[4];
    int nf = fields_of(r, p, f);
    double kept[4] = {0, 0, 0, 0}, none[4] = {0, 0, 0, 0};
    for (int i = 0; i < nf; i++) {
        int64_t most = 0, all = 0;
        HX_TRY(band_max(r, f[i].band, ranks, &most, &all));
        if (f[i].band == &r->spectrum && !p->band_modes) p->band_modes = all;
        if (most > p->band_modes_rank) p->band_modes_rank = most;
        kept[i] = 6.0 * (double)most * (p->compute_single ? 4.0 : 8.0);
    }
    memory_of(r, p, f, nf, kept, baseline_bytes, &p->keep);
    memory_of(r, p, f, nf, none, baseline_bytes, &p->regenerate);

    /* the choice: keep when it fits with a tenth to spare, else regenerate */
    if (r->draws == HX_DRAWS_KEEP || r->draws == HX_DRAWS_REGENERATE) p->choice = r->draws;
    else p->choice = budget_bytes <= 0 || p->keep.peak <= 0.9 * budget_bytes ? HX_DRAWS_KEEP : HX_DRAWS_REGENERATE;
    const hx_plan_memory *m = p->choice == HX_DRAWS_KEEP ? &p->keep : &p->regenerate;
    p->fits = budget_bytes <= 0 || m->peak <= budget_bytes;
    if (!p->fits) {
        for (int64_t q = ranks + 1; q <= p->max_ranks && !p->fit_ranks; q++)
            if (regenerated_peak(r, (int)q, baseline_bytes, ranks) <= budget_bytes) p->fit_ranks = q;
        if (!p->compute_single && r->precision == HX_PREC_SINGLE) {
            hx_recipe s = *r;
            s.compute = HX_PREC_SINGLE;
            p->single_fits = regenerated_peak(&s, ranks, baseline_bytes, ranks) <= budget_bytes;
        }
    }

    /* the file: every dataset, metadata, and the padding of [output] alignment */
    p->datasets = 3 + (r->density_model != HX_DENSITY_NONE) + (r->parts ? 6 : 0) +
                  (hx_recipe_has_magnetic(r) ? 3 * (1 + (r->faces != 0)) : 0);
    double one = (double)r->cells[0] * r->cells[1] * r->cells[2] * p->value_bytes;
    int shells = p->shaped ? (int)(hx_grid_kcorner(r->cells, r->box) + 0.5) + 2 /* inspect's shells_needed */
                           : (int)(r->spectrum.kmax + 0.5) + 2;
    p->data_bytes = one * p->datasets;
    p->meta_bytes = META_BASE + META_DATASET * p->datasets + META_SHELL * shells;
    if (r->alignment > 0) { /* each dataset starts on a multiple of the alignment */
        double al = r->alignment;
        p->data_bytes = ceil(one / al) * al * p->datasets;
        p->meta_bytes = ceil(p->meta_bytes / al) * al;
    }
    p->file_bytes = p->data_bytes + p->meta_bytes;
    p->write_bytes_rank = (double)p->z.max * r->cells[1] * r->cells[0] * p->value_bytes * p->datasets;
fail:
    return st;
}

/* "412.3 MiB" or "3.21 GiB". */
static const char *human(double b, char *buf, size_t n)
{
    if (b >= 1024.0 * MIB * 1024.0) snprintf(buf, n, "%.2f TiB", b / (1024.0 * MIB * 1024.0));
    else if (b >= 1024.0 * MIB) snprintf(buf, n, "%.2f GiB", b / (1024.0 * MIB));
    else snprintf(buf, n, "%.1f MiB", b / MIB);
    return buf;
}

static const char *draws_name(hx_draws d)
{
    return d == HX_DRAWS_KEEP ? "keep" : d == HX_DRAWS_REGENERATE ? "regenerate" : "auto";
}

hx_status hx_plan_verdict(const hx_plan *p)
{
    if (p->fits) return HX_OK;
    char a[32], b[32], c[32], ways[256] = "";
    const hx_plan_memory *m = p->choice == HX_DRAWS_KEEP ? &p->keep : &p->regenerate;
    size_t n = 0;
    if (p->choice == HX_DRAWS_KEEP && p->regenerate.peak <= p->budget)
        n += (size_t)snprintf(ways + n, sizeof ways - n, "; [output] draws = regenerate needs %s",
                              human(p->regenerate.peak, c, sizeof c));
    if (p->fit_ranks) n += (size_t)snprintf(ways + n, sizeof ways - n, "; %lld ranks fit", (long long)p->fit_ranks);
    if (p->single_fits && n < sizeof ways) n += (size_t)snprintf(ways + n, sizeof ways - n, "; [output] compute = single fits");
    if (!n) snprintf(ways, sizeof ways, "; no rank count up to %lld fits: give each rank more memory", (long long)p->max_ranks);
    return hx_error_set(HX_ERR_ARG, "plan: a rank needs %s (%s draws) but the budget is %s per rank%s",
                        human(m->peak, a, sizeof a), draws_name(p->choice), human(p->budget, b, sizeof b), ways);
}

void hx_plan_summary(const hx_plan *p, char *buf, size_t size)
{
    char a[32], b[32], c[32];
    snprintf(buf, size,
             "plan: %lldx%lldx%lld cells on %d rank%s (%lld z planes, %lld y planes per rank), peak %s per rank with "
             "kept draws, %s regenerated: %s; file %s",
             (long long)p->cells[0], (long long)p->cells[1], (long long)p->cells[2], p->ranks, p->ranks > 1 ? "s" : "",
             (long long)p->z.max, (long long)p->y.max, human(p->keep.peak, a, sizeof a),
             human(p->regenerate.peak, b, sizeof b), draws_name(p->choice), human(p->file_bytes, c, sizeof c));
}

static void memory_row(FILE *out, const char *what, double keep, double regen)
{
    char a[32], b[32];
    fprintf(out, "  %-34s %14s %14s\n", what, human(keep, a, sizeof a), human(regen, b, sizeof b));
}

void hx_plan_print(const hx_plan *p, FILE *out)
{
    char a[32], b[32], c[32];
    fprintf(out, "helmix plan: %lld x %lld x %lld cells on %d rank%s x %d thread%s\n\n", (long long)p->cells[0],
            (long long)p->cells[1], (long long)p->cells[2], p->ranks, p->ranks > 1 ? "s" : "", p->threads,
            p->threads > 1 ? "s" : "");
    fprintf(out, "decomposition (FFTW-MPI slabs, block = ceil(N/P))\n");
    fprintf(out, "  real space: %lld z planes, %lld per rank (smallest %lld), %lld idle rank%s, imbalance %.3f\n",
            (long long)p->z.planes, (long long)p->z.max, (long long)p->z.min, (long long)p->z.idle,
            p->z.idle == 1 ? "" : "s", p->z.imbalance);
    fprintf(out, "  k space:    %lld y planes, %lld per rank (smallest %lld), %lld idle rank%s, imbalance %.3f\n",
            (long long)p->y.planes, (long long)p->y.max, (long long)p->y.min, (long long)p->y.idle,
            p->y.idle == 1 ? "" : "s", p->y.imbalance);
    fprintf(out, "  at most %lld ranks own planes", (long long)p->max_ranks);
    if (p->layout_ranks != p->ranks || p->layout_threads != p->threads)
        fprintf(out, "; for %lld cores run %d ranks x %d threads", (long long)p->ranks * p->threads, p->layout_ranks,
                p->layout_threads);
    if (p->balanced_ranks != p->ranks && p->balanced_ranks < p->max_ranks)
        fprintf(out, "; %lld ranks divide the grid evenly", (long long)p->balanced_ranks);
    fprintf(out, "\n\nmemory per rank (largest rank)           kept draws    regenerated\n");
    memory_row(out, "process baseline (measured)", p->keep.baseline, p->regenerate.baseline);
    memory_row(out, "make's tables, open file, FFTW plan", p->keep.fixed, p->regenerate.fixed);
    memory_row(out, p->compute_single ? "synthesis slab (single)" : "synthesis slab (double)", p->keep.slab, p->regenerate.slab);
    if (p->keep.density > 0) memory_row(out, "density slab", p->keep.density, p->regenerate.density);
    memory_row(out, "draws (6 per in-band mode)", p->keep.draws, p->regenerate.draws);
    memory_row(out, "FFTW transpose buffer", p->keep.transpose, p->regenerate.transpose);
    memory_row(out, "MPI-IO / HDF5 write buffer", p->keep.io, p->regenerate.io);
    memory_row(out, "peak of the synthesis", p->keep.synthesis, p->regenerate.synthesis);
    if (p->shaped) memory_row(out, "peak of the analysis of the file", p->keep.analysis, p->regenerate.analysis);
    memory_row(out, "peak", p->keep.peak, p->regenerate.peak);
    fprintf(out, "  in-band modes: %lld in all, %lld on the busiest rank\n\n", (long long)p->band_modes,
            (long long)p->band_modes_rank);
    fprintf(out, "draws: %s%s", draws_name(p->choice), p->asked == HX_DRAWS_AUTO ? " (auto" : " (asked");
    if (p->asked == HX_DRAWS_AUTO)
        fprintf(out, p->budget > 0 ? ": kept when their peak is at most 0.9 x the budget)" : ": no budget given)");
    else fprintf(out, ")");
    fprintf(out, "; budget %s\n\n", p->budget > 0 ? human(p->budget, a, sizeof a) : "none");
    fprintf(out, "file: %d datasets of %d-byte values, %s (%s data, %.0f KiB metadata); the largest rank writes %s\n",
            p->datasets, p->value_bytes, human(p->file_bytes, a, sizeof a), human(p->data_bytes, b, sizeof b),
            p->meta_bytes / 1024.0, human(p->write_bytes_rank, c, sizeof c));
    fprintf(out, "transforms: %d (velocity %d, density %d, parts %d, magnetic %d c2r; analysis %d r2c)\n", p->transforms,
            p->transforms_velocity, p->transforms_density, p->transforms_parts, p->transforms_magnetic,
            p->transforms_analysis);
    if (!p->fits) fprintf(out, "\ndoes not fit: %s\n", hx_plan_verdict(p) != HX_OK ? hx_error_message() : "");
}

static cJSON *slabs_json(const hx_plan_slabs *s)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddNumberToObject(o, "planes", (double)s->planes);
    cJSON_AddNumberToObject(o, "block", (double)s->block);
    cJSON_AddNumberToObject(o, "max", (double)s->max);
    cJSON_AddNumberToObject(o, "min", (double)s->min);
    cJSON_AddNumberToObject(o, "idle", (double)s->idle);
    cJSON_AddNumberToObject(o, "imbalance", s->imbalance);
    return o;
}

static cJSON *memory_json(const hx_plan_memory *m)
{
    cJSON *o = cJSON_CreateObject();
    cJSON_AddNumberToObject(o, "baseline", m->baseline);
    cJSON_AddNumberToObject(o, "fixed", m->fixed);
    cJSON_AddNumberToObject(o, "slab", m->slab);
    cJSON_AddNumberToObject(o, "density", m->density);
    cJSON_AddNumberToObject(o, "draws", m->draws);
    cJSON_AddNumberToObject(o, "transpose", m->transpose);
    cJSON_AddNumberToObject(o, "io", m->io);
    cJSON_AddNumberToObject(o, "synthesis", m->synthesis);
    cJSON_AddNumberToObject(o, "analysis", m->analysis);
    cJSON_AddNumberToObject(o, "peak", m->peak);
    return o;
}

char *hx_plan_json(const hx_plan *p)
{
    cJSON *o = cJSON_CreateObject(), *t;
    if (!o) return NULL;
    cJSON_AddItemToObject(o, "cells", cJSON_CreateDoubleArray((const double[]){(double)p->cells[0], (double)p->cells[1],
                                                                              (double)p->cells[2]}, 3));
    cJSON_AddNumberToObject(o, "ranks", p->ranks);
    cJSON_AddNumberToObject(o, "threads", p->threads);
    cJSON_AddItemToObject(o, "z_slabs", slabs_json(&p->z));
    cJSON_AddItemToObject(o, "y_slabs", slabs_json(&p->y));
    cJSON_AddNumberToObject(o, "max_ranks", (double)p->max_ranks);
    cJSON_AddItemToObject(o, "layout", t = cJSON_CreateObject());
    cJSON_AddNumberToObject(t, "ranks", p->layout_ranks);
    cJSON_AddNumberToObject(t, "threads", p->layout_threads);
    cJSON_AddNumberToObject(o, "balanced_ranks", (double)p->balanced_ranks);
    cJSON_AddNumberToObject(o, "alloc_complex", (double)p->alloc_complex);
    cJSON_AddStringToObject(o, "compute", p->compute_single ? "single" : "double");
    cJSON_AddBoolToObject(o, "shaped", p->shaped);
    cJSON_AddNumberToObject(o, "band_modes", (double)p->band_modes);
    cJSON_AddNumberToObject(o, "band_modes_rank", (double)p->band_modes_rank);
    cJSON_AddItemToObject(o, "memory_keep", memory_json(&p->keep));
    cJSON_AddItemToObject(o, "memory_regenerate", memory_json(&p->regenerate));
    cJSON_AddNumberToObject(o, "budget", p->budget);
    cJSON_AddStringToObject(o, "draws_asked", draws_name(p->asked));
    cJSON_AddStringToObject(o, "draws", draws_name(p->choice));
    cJSON_AddNumberToObject(o, "peak", (p->choice == HX_DRAWS_KEEP ? &p->keep : &p->regenerate)->peak);
    cJSON_AddBoolToObject(o, "fits", p->fits);
    cJSON_AddNumberToObject(o, "fit_ranks", (double)p->fit_ranks);
    cJSON_AddItemToObject(o, "file", t = cJSON_CreateObject());
    cJSON_AddNumberToObject(t, "datasets", p->datasets);
    cJSON_AddNumberToObject(t, "value_bytes", p->value_bytes);
    cJSON_AddNumberToObject(t, "data_bytes", p->data_bytes);
    cJSON_AddNumberToObject(t, "meta_bytes", p->meta_bytes);
    cJSON_AddNumberToObject(t, "bytes", p->file_bytes);
    cJSON_AddNumberToObject(t, "write_bytes_rank", p->write_bytes_rank);
    cJSON_AddItemToObject(o, "transforms", t = cJSON_CreateObject());
    cJSON_AddNumberToObject(t, "velocity", p->transforms_velocity);
    cJSON_AddNumberToObject(t, "density", p->transforms_density);
    cJSON_AddNumberToObject(t, "parts", p->transforms_parts);
    cJSON_AddNumberToObject(t, "magnetic", p->transforms_magnetic);
    cJSON_AddNumberToObject(t, "analysis", p->transforms_analysis);
    cJSON_AddNumberToObject(t, "total", p->transforms);
    char *text = cJSON_Print(o);
    cJSON_Delete(o);
    return text;
}

/* ---- the process and the node ---------------------------------------------------------------- */

/* The value in kB of the line starting with `key` in a /proc file, in bytes; 0 if absent. */
static double proc_kb(const char *path, const char *key)
{
    FILE *fp = fopen(path, "r");
    char line[256];
    double v = 0;
    size_t n = strlen(key);
    if (!fp) return 0;
    while (fgets(line, sizeof line, fp))
        if (!strncmp(line, key, n)) {
            v = strtod(line + n, NULL) * 1024.0;
            break;
        }
    fclose(fp);
    return v;
}

double hx_plan_rss_bytes(void) { return proc_kb("/proc/self/status", "VmRSS:"); }

double hx_plan_mem_available(void) { return proc_kb("/proc/meminfo", "MemAvailable:"); }

double hx_plan_baseline(double measured, int measured_ranks, int ranks)
{
    return measured + (ranks >= 3 && measured_ranks < 3 ? MPI_SHARED_EXTRA : 0.0);
}

hx_status hx_plan_parse_size(const char *text, const char *what, double *bytes)
{
    char *end = NULL;
    double v = text ? strtod(text, &end) : NAN;
    if (!text || end == text || !(v > 0) || !isfinite(v))
        return hx_error_set(HX_ERR_ARG, "%s '%s': give a size > 0 such as 3.5G, 1800MiB or 512M", what, text ? text : "");
    char unit[8] = "";
    size_t n = 0;
    for (const char *s = end; *s && n + 1 < sizeof unit; s++)
        if (!isspace((unsigned char)*s)) unit[n++] = (char)toupper((unsigned char)*s);
    unit[n] = '\0';
    if (n && unit[n - 1] == 'B') unit[--n] = '\0'; /* "MB", "MiB": the B is optional */
    static const char *const si = "KMGT";
    double scale = 0;
    if (!n) scale = 1;
    else if (strchr(si, unit[0]) && (n == 1 || (n == 2 && unit[1] == 'I'))) {
        int power = (int)(strchr(si, unit[0]) - si) + 1;
        scale = pow(n == 2 ? 1024.0 : 1000.0, power);
    }
    if (!(scale > 0) || strlen(end) > 8)
        return hx_error_set(HX_ERR_ARG, "%s '%s': unknown unit (allowed: K, M, G, T = powers of 1000, Ki, Mi, Gi, Ti = "
                                        "powers of 1024, each with an optional B)", what, text);
    *bytes = v * scale;
    return HX_OK;
}
