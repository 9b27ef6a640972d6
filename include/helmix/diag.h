/* helmix/diag.h — what a velocity cube holds: the summary `helmix inspect` measures and
 * `helmix make` records, with its definitions.
 *
 * Definitions (N cells, v̂_n = (1/N) Σ_x v(x) e^{-i k_n·x}, physical k_n = 2π n_a / L_a,
 * |k| in units of 2π/max L for shells, shell s = round|k|; the k = 0 mode is the mean flow
 * and is left out of every energy, spectrum and gradient):
 *   mean_c = <v_c>, rms_c = <v_c^2>^(1/2), rms3 = <|v|^2>^(1/2)
 *   e_total = ½ Σ_{n≠0} |v̂_n|^2, e_comp = ½ Σ |k̂·v̂|^2, e_sol = e_total − e_comp,
 *   fraction = e_comp / e_total (Helmholtz decomposition by projection, common practice)
 *   shell_e[s], shell_comp[s], shell_sol[s]: the same sums over shell s; shell_modes[s]: count
 *   slope: least-squares index of E ∝ k^-slope over shells [fit_kmin, fit_kmax], fitted to the
 *          shell sums compensated for the discrete mode count, shell_e[s] · 4πs² / modes[s]
 *   div_rms = <|∇·v|^2>^(1/2) = (Σ |k·v̂|^2)^(1/2); vort_rms = (Σ |k×v̂|^2)^(1/2);
 *   div_ratio, vort_ratio: each divided by (Σ |k|^2 |v̂|^2)^(1/2), so div² + vort² ratios = 1
 *   skew_c, kurt_c: <(v_c−m)^3>/σ^3 and <(v_c−m)^4>/σ^4 − 3 (excess), σ^2 = <(v_c−m)^2>
 *   pdf[c][b]: density of (v_c − m)/σ in HX_DIAG_BINS bins over [−HX_DIAG_PDF_RANGE, +range]
 *
 * The state in a density rho (has_state = 1; always of v itself, whatever field is decomposed;
 * cell centres x_i = (i + 1/2) dx, cell volume dV, sums over the box unless said otherwise):
 *   vmean_c = <v_c>, vrms = <|v|^2>^(1/2) (volume-weighted)
 *   mass = Σ rho dV, rho_mean = <rho>, ln_rho_mean = <ln rho>, sigma_s = <(ln rho − <ln rho>)^2>^(1/2)
 *   region R: the cells whose centre lies within `radius` of cloud_center when cloud = 1, else the
 *          box (radius max(L)/2); region_mass M_R = Σ_R rho dV
 *   sigma_3d = (Σ_c [Σ_R rho v_c^2 / Σ_R rho − (Σ_R rho v_c / Σ_R rho)^2])^(1/2), the mass-weighted
 *          dispersion about the region's mass-weighted mean (common practice)
 *   mach = sigma_3d / sound_speed; virial = 5 (sigma_3d^2 / 3) radius / (gravity M_R)
 *          (Bertoldi & McKee 1992, ApJ 395, 140); NAN when the sound speed or G is unknown
 *   momentum_c = Σ rho v_c dV; momentum_rel = |momentum| / (mass vrms)
 *
 * The magnetic field (hx_magnetic; code magnetic unit sqrt(4 pi rho_u) v_u gauss, so that in
 * code units v_A = B / sqrt(rho) and P_B = B^2 / 2 — Gaussian units, NRL Plasma Formulary):
 *   field: the cell-centred B analysed as a vector field with every definition above (mean,
 *          rms, rms3 = <|B|^2>^(1/2), shells: E_B(k) = ½ Σ_shell |B̂|^2 with the mean field k = 0
 *          left out, slope, div_ratio)
 *   mean_abs = |<B>|; random_rms = <|B − <B>|^2>^(1/2) = (Σ_{k≠0} |B̂|^2)^(1/2) (Parseval)
 *   div_spectral = rms(k·B̂) / rms(|k| |B̂|) (field.div_ratio; 0 for a uniform field)
 *   v_alfven = |<B>| / <rho>^(1/2); beta = 2 P / |<B>|^2 with P = <rho> c_s^2 / gamma;
 *   alfven_mach = sigma_3d / v_alfven, sigma_3d the velocity's dispersion (the state's with a
 *          density, else (Σ_c <(v_c − <v_c>)^2>)^(1/2)); <rho> = 1 without a density
 *   face field B_c on the low-c faces (x_c = i dx_c): div = Σ_c (B_c[i_c + 1] − B_c[i_c]) / dx_c
 *          (periodic); face_rms = <|B_face|^2>^(1/2); face_div_max = max |div|;
 *          face_div = face_div_max / (face_rms / min dx) (0 for a uniform field) */
#ifndef HELMIX_DIAG_H
#define HELMIX_DIAG_H

#include <math.h>
#include <mpi.h>
#include <stdint.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

#define HX_DIAG_BINS 100
#define HX_DIAG_PDF_RANGE 5.0

typedef struct hx_diag {
    int64_t cells[3]; /* Nx, Ny, Nz */
    double box[3];
    int ranks;
    /* real space */
    double mean[3], rms[3], rms3;
    double skew[3], kurt[3];
    double pdf[3][HX_DIAG_BINS]; /* probability density per bin of the standardized value */
    /* k space */
    double e_total, e_comp, e_sol, fraction;
    int nshell;                  /* shells s = 0 .. nshell-1 */
    double *shell_e, *shell_comp, *shell_sol, *shell_modes;
    double fit_kmin, fit_kmax, slope, slope_err;
    double div_rms, vort_rms, div_ratio, vort_ratio;
    /* mid-plane slices z = Nz/2 (rank 0 only; NULL elsewhere or when not computed):
     * slice_n[0] * slice_n[1] values, x fastest */
    int64_t slice_n[2];
    double *slice_speed, *slice_div, *slice_vort;
    /* the state in a density (definitions above; has_state = 0 without a density) */
    int has_state;
    double vmean[3], vrms;
    double mass, rho_mean, ln_rho_mean, sigma_s;
    int cloud;
    double cloud_center[3], radius, region_mass;
    double sigma_3d, sound_speed, mach, gravity, virial;
    double momentum[3], momentum_rel;
    /* how the cube was analysed */
    double remove_scale;         /* 0: none */
    int mass_weighted;           /* 1: the field analysed is sqrt(rho) v */
    double seconds;              /* wall time of the analysis (inspect) */
    long long peak_rss;          /* largest resident set over the ranks, bytes (inspect) */
    struct hx_magnetic *magnetic; /* the magnetic field (definitions above), NULL without one;
                                   * owned by d: hx_diag_clear frees it */
} hx_diag;

typedef struct hx_magnetic {
    hx_diag field;               /* the cell-centred B as a vector field (no state, no slices) */
    int single;                  /* stored in single precision                            */
    double mean_abs, random_rms, div_spectral;
    /* what beta and M_A are taken with (NAN: unknown), and the results */
    double density_mean, sound_speed, gamma, sigma_3d;
    double v_alfven, beta, alfven_mach;
    double unit_gauss, unit_velocity_cm_s; /* code units in cgs, NAN when the file has none */
    int has_face;                /* a face-centred field was analysed                      */
    double face_rms, face_div_max, face_div;
} hx_magnetic;

/* Free the arrays of d and its magnetic summary (not d itself) and zero it. Accepts NULL. */
void hx_diag_clear(hx_diag *d);

/* Allocate zeroed shell arrays for nshell shells (frees earlier ones). */
hx_status hx_diag_shells(hx_diag *d, int nshell);

/* Collective: mean, rms, skewness, excess kurtosis and PDF of component c from this rank's
 * real values: rows rows of nx values each, rows `stride` elements apart, as float
 * (single) or double. ntotal is the global number of values. Two passes over the local
 * data (mean and spread; central moments and histogram) so the moments do not lose digits
 * to cancellation. Rows are summed in fixed blocks, `threads` blocks at a time, the blocks'
 * sums added in block order: every thread count gives the same bits. */
hx_status hx_diag_moments(hx_diag *d, int c, const void *data, hx_precision prec, int64_t rows, int64_t nx,
                          int64_t stride, int64_t ntotal, int threads, MPI_Comm comm);

/* One-pass moment sums for values whose centre and spread are known in advance (the
 * generator knows each component's variance from its k-space sums and its mean is zero):
 * power sums about `center` and a histogram of (v - center)/scale. Four interleaved lanes of
 * sums and histograms keep the additions of neighbouring values independent (the loop would
 * otherwise wait on one running sum); they are combined by hx_moments_reduce. */
enum { HX_MOMENT_LANES = 4 };

typedef struct hx_moments {
    double center, scale, n;
    double s1, s2, s3, s4;       /* sums of d, d^2, d^3, d^4 with d = v - center (after reduce) */
    double hist[HX_DIAG_BINS];   /* counts per bin (after reduce)                              */
    double lane[HX_MOMENT_LANES][4];
    double lane_hist[HX_MOMENT_LANES][HX_DIAG_BINS];
} hx_moments;

void hx_moments_init(hx_moments *m, double center, double scale);

/* Add n consecutive values, doubles or floats. Not collective. */
void hx_moments_add_doubles(hx_moments *m, const double *v, int64_t n);
void hx_moments_add_floats(hx_moments *m, const float *v, int64_t n);

/* Collective: combine the lanes and sum over comm (m->n must already hold the global count). */
hx_status hx_moments_reduce(hx_moments *m, MPI_Comm comm);

/* mean, rms, skewness, excess kurtosis and PDF of component c from reduced sums. The PDF
 * bins are those of (v - center)/scale, which equal the standardized bins when center and
 * scale are the mean and standard deviation (to round-off). */
void hx_diag_set_moments(hx_diag *d, int c, const hx_moments *m);

/* Sums over the cells of a velocity v in a density rho, reduced over the ranks, from which
 * hx_diag_set_state derives the state (R: the region; m_c = Σ_R rho v_c / Σ_R rho). The
 * deviations are summed about means known from an earlier reduction, so they keep their digits. */
typedef struct hx_state_sums {
    double cells, cell_volume;
    double rho, rho_region;      /* Σ rho, Σ_R rho                                  */
    double ln_rho, ln_rho_dev2;  /* Σ ln rho, Σ (ln rho − <ln rho>)^2 (NAN if some rho = 0) */
    double v[3], v2[3];          /* Σ v_c, Σ v_c^2                                  */
    double rho_v[3];             /* Σ rho v_c                                       */
    double rho_v_region[3];      /* Σ_R rho v_c                                     */
    double rho_dev2_region[3];   /* Σ_R rho (v_c − m_c)^2                          */
} hx_state_sums;

/* The state of d (has_state, vmean ... momentum_rel) from reduced sums s; the region (cloud,
 * cloud_center, radius), sound_speed and gravity (NAN: unknown) must be set in d already.
 * Not collective. */
void hx_diag_set_state(hx_diag *d, const hx_state_sums *s);

/* From m->field (finished by hx_diag_finish) and the inputs density_mean, sound_speed, gamma
 * and sigma_3d: mean_abs, random_rms, div_spectral, v_alfven, beta and alfven_mach (beta NAN
 * when the sound speed is unknown; beta and M_A infinite without a mean field). Not collective. */
void hx_diag_set_magnetic(hx_magnetic *m);

/* Energies, share and slope from the filled shell arrays (not collective): e_total,
 * e_comp, e_sol, fraction, and the slope fit over [fit_kmin, fit_kmax]. */
void hx_diag_finish(hx_diag *d);

/* The same fit on plain arrays; with relvar (relative variance of each shell's energy) it
 * also gives sigma, the scatter of the fitted slope that this variance implies. Shells with
 * less than 1e-28 of the total energy (round-off) are left out. */
void hx_diag_fit_shells(const double *e, const double *modes, const double *relvar, int nshell, double kmin, double kmax,
                        double *slope, double *err, double *sigma);

/* The number of shells the fit over [kmin, kmax] would use (with modes and energy above the
 * round-off floor of hx_diag_fit_shells); *first and *last: the lowest and highest shell that
 * carry energy anywhere (0 when none). Not collective. */
int hx_diag_fit_count(const hx_diag *d, double kmin, double kmax, int *first, int *last);

/* Least-squares fit of log(shell_e[s] 4 pi s^2 / modes[s]) against log s over shells
 * kmin <= s <= kmax with power; *slope is minus the fitted exponent and *err its standard
 * error. NAN when fewer than three shells qualify. */
void hx_diag_fit_slope(const hx_diag *d, double kmin, double kmax, double *slope, double *err);

#endif
