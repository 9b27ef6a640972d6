/* diag.c — the shared summary of a cube: real-space moments and PDFs, shell energies,
 * compressive share and the compensated slope fit, the state of a velocity in a density
 * (dispersion, Mach number, virial parameter, momentum) and the magnetic field's numbers
 * (mean field, random rms, beta, Alfven Mach number). Used by make (from its k-space sums
 * and the values it writes) and by inspect (from a cube it reads). */
#include "helmix/diag.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"

void hx_diag_clear(hx_diag *d)
{
    if (!d) return;
    free(d->shell_e);
    free(d->shell_comp);
    free(d->shell_sol);
    free(d->shell_modes);
    free(d->slice_speed);
    free(d->slice_div);
    free(d->slice_vort);
    if (d->magnetic) {
        hx_diag_clear(&d->magnetic->field);
        free(d->magnetic);
    }
    memset(d, 0, sizeof *d);
}

hx_status hx_diag_shells(hx_diag *d, int nshell)
{
    hx_status st = HX_OK;
    free(d->shell_e);
    free(d->shell_comp);
    free(d->shell_sol);
    free(d->shell_modes);
    d->shell_e = d->shell_comp = d->shell_sol = d->shell_modes = NULL;
    d->nshell = nshell;
    HX_ALLOC(d->shell_e, nshell);
    HX_ALLOC(d->shell_comp, nshell);
    HX_ALLOC(d->shell_sol, nshell);
    HX_ALLOC(d->shell_modes, nshell);
    return HX_OK;
fail:
    d->nshell = 0;
    return st;
}

static inline double value_at(const void *data, hx_precision prec, int64_t i)
{
    return prec == HX_PREC_DOUBLE ? ((const double *)data)[i] : (double)((const float *)data)[i];
}

/* Rows per block: the unit of the moment sums. Blocks go to the threads in groups; each
 * block's sums are added in block order, so every thread count gives the same bits. */
enum { MOMENT_BLOCK_ROWS = 64 };

/* The raw sums (sum v, sum v^2) of rows [r0, r1), in four lanes as in hx_moments. */
static void raw_sums(const void *data, hx_precision prec, int64_t r0, int64_t r1, int64_t nx, int64_t stride, double s[2])
{
    double p[4][2] = {{0}};
    for (int64_t r = r0; r < r1; r++)
        for (int64_t i = 0; i < nx; i++) {
            double v = value_at(data, prec, r * stride + i);
            p[i & 3][0] += v;
            p[i & 3][1] += v * v;
        }
    s[0] = s[1] = 0;
    for (int l = 0; l < 4; l++) s[0] += p[l][0], s[1] += p[l][1];
}

/* Add the lanes of src to those of dst (before hx_moments_reduce). */
static void moments_merge(hx_moments *dst, const hx_moments *src)
{
    for (int l = 0; l < HX_MOMENT_LANES; l++) {
        for (int p = 0; p < 4; p++) dst->lane[l][p] += src->lane[l][p];
        for (int b = 0; b < HX_DIAG_BINS; b++) dst->lane_hist[l][b] += src->lane_hist[l][b];
    }
}

hx_status hx_diag_moments(hx_diag *d, int c, const void *data, hx_precision prec, int64_t rows, int64_t nx,
                          int64_t stride, int64_t ntotal, int threads, MPI_Comm comm)
{
    hx_status st = HX_OK;
    const int T = threads > 1 ? threads : 1;
    const int64_t nblock = (rows + MOMENT_BLOCK_ROWS - 1) / MOMENT_BLOCK_ROWS;
    double s[2] = {0, 0}, (*bs)[2] = malloc((size_t)T * sizeof *bs);
    hx_moments *acc = malloc((size_t)(T + 1) * sizeof *acc), *part = acc ? acc + 1 : NULL;
    HX_TRY(hx_error_agree(comm, bs && acc ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for moment sums")));
    for (int64_t b0 = 0; b0 < nblock; b0 += T) {
        int m = nblock - b0 < T ? (int)(nblock - b0) : T;
#pragma omp parallel for num_threads(m) schedule(static, 1) if (m > 1)
        for (int j = 0; j < m; j++) {
            int64_t r0 = (b0 + j) * MOMENT_BLOCK_ROWS, r1 = r0 + MOMENT_BLOCK_ROWS < rows ? r0 + MOMENT_BLOCK_ROWS : rows;
            raw_sums(data, prec, r0, r1, nx, stride, bs[j]);
        }
        for (int j = 0; j < m; j++) s[0] += bs[j][0], s[1] += bs[j][1];
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, s, 2, MPI_DOUBLE, MPI_SUM, comm));
    double n = (double)ntotal, m = s[0] / n;
    /* the spread for the PDF bins from the raw sums; the moments themselves from the second,
     * centred pass, so they keep their digits when the mean is large */
    double sd0 = sqrt(fmax(s[1] / n - m * m, 0.0));
    hx_moments_init(acc, m, sd0);
    acc->n = n;
    for (int64_t b0 = 0; b0 < nblock; b0 += T) {
        int k = nblock - b0 < T ? (int)(nblock - b0) : T;
#pragma omp parallel for num_threads(k) schedule(static, 1) if (k > 1)
        for (int j = 0; j < k; j++) {
            int64_t r0 = (b0 + j) * MOMENT_BLOCK_ROWS, r1 = r0 + MOMENT_BLOCK_ROWS < rows ? r0 + MOMENT_BLOCK_ROWS : rows;
            hx_moments_init(&part[j], m, sd0);
            for (int64_t r = r0; r < r1; r++) {
                if (prec == HX_PREC_DOUBLE) hx_moments_add_doubles(&part[j], (const double *)data + r * stride, nx);
                else hx_moments_add_floats(&part[j], (const float *)data + r * stride, nx);
            }
        }
        for (int j = 0; j < k; j++) moments_merge(acc, &part[j]);
    }
    st = hx_moments_reduce(acc, comm);
    if (st == HX_OK) hx_diag_set_moments(d, c, acc);
    HX_TRY(st);
    d->rms[c] = sqrt(s[1] / n);
    if (!(sd0 > 0)) memset(d->pdf[c], 0, sizeof d->pdf[c]);
fail:
    free(bs);
    free(acc);
    return st;
}

void hx_moments_init(hx_moments *m, double center, double scale)
{
    memset(m, 0, sizeof *m);
    m->center = center;
    m->scale = scale > 0 ? scale : 1.0;
}

/* One lane's share of a value: the four powers and its bin. */
#define HX_MOMENT_STEP(m, l, value)                                                           \
    do {                                                                                      \
        double d_ = (value) - c0, d2_ = d_ * d_;                                              \
        (m)->lane[l][0] += d_, (m)->lane[l][1] += d2_, (m)->lane[l][2] += d2_ * d_;           \
        (m)->lane[l][3] += d2_ * d2_;                                                         \
        double b_ = d_ * inv + off; /* b_ >= 0 after the test: truncation is floor */         \
        if (b_ >= 0 && b_ < HX_DIAG_BINS) (m)->lane_hist[l][(int)b_] += 1.0;                  \
    } while (0)

#define HX_MOMENT_ROW(m, v, n)                                                                \
    do {                                                                                      \
        const double c0 = (m)->center, inv = (HX_DIAG_BINS / (2.0 * HX_DIAG_PDF_RANGE)) / (m)->scale; \
        const double off = HX_DIAG_PDF_RANGE * (HX_DIAG_BINS / (2.0 * HX_DIAG_PDF_RANGE));    \
        int64_t i_ = 0;                                                                       \
        for (; i_ + HX_MOMENT_LANES <= (n); i_ += HX_MOMENT_LANES)                            \
            for (int l_ = 0; l_ < HX_MOMENT_LANES; l_++) HX_MOMENT_STEP(m, l_, (double)(v)[i_ + l_]); \
        for (; i_ < (n); i_++) HX_MOMENT_STEP(m, 0, (double)(v)[i_]);                         \
    } while (0)

void hx_moments_add_doubles(hx_moments *m, const double *v, int64_t n) { HX_MOMENT_ROW(m, v, n); }

void hx_moments_add_floats(hx_moments *m, const float *v, int64_t n) { HX_MOMENT_ROW(m, v, n); }

hx_status hx_moments_reduce(hx_moments *m, MPI_Comm comm)
{
    hx_status st = HX_OK;
    double s[4] = {0, 0, 0, 0};
    for (int l = 0; l < HX_MOMENT_LANES; l++) {
        for (int p = 0; p < 4; p++) s[p] += m->lane[l][p];
        for (int b = 0; b < HX_DIAG_BINS; b++) m->hist[b] += m->lane_hist[l][b];
    }
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, s, 4, MPI_DOUBLE, MPI_SUM, comm));
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, m->hist, HX_DIAG_BINS, MPI_DOUBLE, MPI_SUM, comm));
    m->s1 = s[0], m->s2 = s[1], m->s3 = s[2], m->s4 = s[3];
fail:
    return st;
}

void hx_diag_set_moments(hx_diag *d, int c, const hx_moments *m)
{
    double n = m->n, e1 = m->s1 / n, e2 = m->s2 / n, e3 = m->s3 / n, e4 = m->s4 / n;
    double var = e2 - e1 * e1;                               /* central moments from raw ones */
    double mu3 = e3 - 3 * e1 * e2 + 2 * e1 * e1 * e1;
    double mu4 = e4 - 4 * e1 * e3 + 6 * e1 * e1 * e2 - 3 * e1 * e1 * e1 * e1;
    d->mean[c] = m->center + e1;
    d->rms[c] = sqrt(fmax(var + d->mean[c] * d->mean[c], 0.0));
    d->skew[c] = var > 0 ? mu3 / (var * sqrt(var)) : NAN;
    d->kurt[c] = var > 0 ? mu4 / (var * var) - 3.0 : NAN;
    double width = 2.0 * HX_DIAG_PDF_RANGE / HX_DIAG_BINS;
    for (int b = 0; b < HX_DIAG_BINS; b++) d->pdf[c][b] = m->hist[b] / (n * width);
}

/* Shells that take part in the fit: inside [kmin, kmax], with modes, and with more energy
 * than the round-off of double precision leaves in empty shells. */
static int fit_shell(const double *e, const double *modes, double floor_e, int s, double kmin, double kmax)
{
    return s >= kmin && s <= kmax && e[s] > floor_e && modes[s] > 0;
}

void hx_diag_fit_shells(const double *e, const double *modes, const double *relvar, int nshell, double kmin, double kmax,
                        double *slope, double *err, double *sigma)
{
    double sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0, total = 0;
    int n = 0;
    *slope = *err = NAN;
    if (sigma) *sigma = NAN;
    for (int s = 0; s < nshell; s++) total += e[s] > 0 ? e[s] : 0;
    const double floor_e = 1e-28 * total;
    for (int s = 1; s < nshell; s++) {
        if (!fit_shell(e, modes, floor_e, s, kmin, kmax)) continue;
        double x = log((double)s), y = log(e[s] * 4.0 * M_PI * s * s / modes[s]);
        sx += x, sy += y, sxx += x * x, sxy += x * y, syy += y * y;
        n++;
    }
    if (n < 3) return;
    double vx = sxx - sx * sx / n, cxy = sxy - sx * sy / n, vy = syy - sy * sy / n;
    if (!(vx > 0)) return;
    double b = cxy / vx, rss = vy - b * cxy;
    *slope = -b;
    *err = sqrt((rss > 0 ? rss : 0) / (n - 2) / vx);
    if (!sigma || !relvar) return;
    /* var(slope) = sum (x_s - mean x)^2 var(y_s) / Sxx^2, var(log E_s) ~ relative variance of E_s */
    double xm = sx / n, v = 0;
    for (int s = 1; s < nshell; s++)
        if (fit_shell(e, modes, floor_e, s, kmin, kmax)) v += (log((double)s) - xm) * (log((double)s) - xm) * relvar[s];
    *sigma = sqrt(v) / vx;
}

int hx_diag_fit_count(const hx_diag *d, double kmin, double kmax, int *first, int *last)
{
    double total = 0;
    int n = 0;
    *first = *last = 0;
    for (int s = 0; s < d->nshell; s++) total += d->shell_e[s] > 0 ? d->shell_e[s] : 0;
    const double floor_e = 1e-28 * total; /* the floor of hx_diag_fit_shells */
    for (int s = 1; s < d->nshell; s++) {
        if (!(d->shell_e[s] > floor_e && d->shell_modes[s] > 0)) continue;
        if (!*first) *first = s;
        *last = s;
        n += fit_shell(d->shell_e, d->shell_modes, floor_e, s, kmin, kmax);
    }
    return n;
}

void hx_diag_fit_slope(const hx_diag *d, double kmin, double kmax, double *slope, double *err)
{
    hx_diag_fit_shells(d->shell_e, d->shell_modes, NULL, d->nshell, kmin, kmax, slope, err, NULL);
}

void hx_diag_finish(hx_diag *d)
{
    double et = 0, ec = 0;
    for (int s = 0; s < d->nshell; s++) {
        d->shell_sol[s] = d->shell_e[s] - d->shell_comp[s];
        et += d->shell_e[s];
        ec += d->shell_comp[s];
    }
    d->e_total = et;
    d->e_comp = ec;
    d->e_sol = et - ec;
    d->fraction = et > 0 ? ec / et : NAN;
    d->rms3 = sqrt(d->rms[0] * d->rms[0] + d->rms[1] * d->rms[1] + d->rms[2] * d->rms[2]);
    hx_diag_fit_slope(d, d->fit_kmin, d->fit_kmax, &d->slope, &d->slope_err);
}

void hx_diag_set_state(hx_diag *d, const hx_state_sums *s)
{
    const double n = s->cells, dv = s->cell_volume;
    double v2 = 0, s2 = 0, p2 = 0;
    d->has_state = 1;
    for (int c = 0; c < 3; c++) {
        d->vmean[c] = s->v[c] / n;
        v2 += s->v2[c];
        s2 += s->rho_dev2_region[c] / s->rho_region;
        d->momentum[c] = s->rho_v[c] * dv;
        p2 += d->momentum[c] * d->momentum[c];
    }
    d->vrms = sqrt(v2 / n);
    d->mass = s->rho * dv;
    d->rho_mean = s->rho / n;
    d->ln_rho_mean = s->ln_rho / n;
    d->sigma_s = sqrt(s->ln_rho_dev2 / n);
    d->region_mass = s->rho_region * dv;
    d->sigma_3d = s->rho_region > 0 ? sqrt(s2) : NAN;
    d->mach = d->sound_speed > 0 ? d->sigma_3d / d->sound_speed : NAN;
    /* alpha_vir = 5 sigma_1D^2 R / (G M), sigma_1D^2 = sigma_3D^2 / 3 (Bertoldi & McKee 1992) */
    const double s1d2 = d->sigma_3d * d->sigma_3d / 3.0;
    d->virial = d->gravity > 0 && d->region_mass > 0 ? 5.0 * s1d2 * d->radius / (d->gravity * d->region_mass) : NAN;
    d->momentum_rel = d->mass > 0 && d->vrms > 0 ? sqrt(p2) / (d->mass * d->vrms) : NAN;
}

void hx_diag_set_magnetic(hx_magnetic *m)
{
    const hx_diag *b = &m->field;
    const double b2 = b->mean[0] * b->mean[0] + b->mean[1] * b->mean[1] + b->mean[2] * b->mean[2];
    m->mean_abs = sqrt(b2);
    /* the random part is every mode but k = 0: its rms from the shell sums (Parseval), with no
     * cancellation against a large mean field */
    m->random_rms = sqrt(2.0 * b->e_total);
    m->div_spectral = b->e_total > 0 ? b->div_ratio : 0.0;
    /* code units: v_A = B / sqrt(rho), beta = 2 P / B^2 (Gaussian units, NRL Plasma Formulary) */
    const double rho = m->density_mean, P = rho * m->sound_speed * m->sound_speed / m->gamma;
    m->v_alfven = rho > 0 ? m->mean_abs / sqrt(rho) : NAN;
    m->beta = !(m->sound_speed > 0 && m->gamma > 0) ? NAN : b2 > 0 ? 2.0 * P / b2 : INFINITY;
    m->alfven_mach = !(m->sigma_3d >= 0 && m->v_alfven >= 0) ? NAN : m->v_alfven > 0 ? m->sigma_3d / m->v_alfven : INFINITY;
}
