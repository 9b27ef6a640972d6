/* make.c — the generator pipeline: prolog, density, k-space pass, three streamed velocity
 * components (one pass, or a measuring and a writing pass when the cloud shapes them), epilog.
 * Invariant: every rank walks the same sequence of collective calls; a failure anywhere is
 * agreed before the next collective, and the partial file is removed. */
#include "helmix/make.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "check.h"
#include "helmix/cloud.h"
#include "helmix/desc.h"
#include "helmix/diag.h"
#include "helmix/flow.h"
#include "helmix/inspect.h"
#include "helmix/fft.h"
#include "helmix/field.h"
#include "helmix/grid.h"
#include "helmix/io.h"
#include "helmix/mix.h"
#include "helmix/plan.h"
#include "helmix/schema.h"
#include "helmix/spectrum.h"
#include "helmix/sum.h"
#include "helmix/units.h"
#include "helmix/version.h"


/* The /helmix group: the request, what was realized, and how long it took. */
static hx_status write_provenance(hx_io *io, const hx_recipe *r, const hx_grid *g, const hx_make_result *res)
{
    hx_status st = HX_OK;
    char *text = hx_recipe_render(r);
    const char *G = HX_SCHEMA_PROVENANCE;
    double nan = NAN, v;
    if (!text) HX_FAIL(HX_ERR_MEM, "out of memory rendering the recipe");
    int64_t cells[3] = {g->n[0], g->n[1], g->n[2]}, ranks = g->size;
    HX_TRY(hx_io_attr_string(io, G, "version", HX_VERSION));
    HX_TRY(hx_io_attr_string(io, G, "recipe", text));
    HX_TRY(hx_io_attr_uint64(io, G, "seed", r->seed));
    HX_TRY(hx_io_attr_int64s(io, G, "ranks", &ranks, 0));
    HX_TRY(hx_io_attr_int64s(io, G, "cells", cells, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "box", g->box, 3));
    HX_TRY(hx_io_attr_string(io, G, "mix_mode", r->mix.mode == HX_MIX_ZETA ? "zeta" : "compressive_fraction"));
    HX_TRY(hx_io_attr_doubles(io, G, "zeta", r->mix.mode == HX_MIX_ZETA ? &r->mix.zeta : &nan, 0));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_EXACT, hx_exact_name(r->mix.exact)));
    v = r->mix.mode == HX_MIX_FRACTION ? r->mix.compressive_fraction : hx_mix_expected_fraction(r->mix.zeta);
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_FRACTION_EXPECTED, &v, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_FRACTION_TARGET, r->mix.exact == HX_EXACT_NONE || res->as_written ? &nan : &v, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_FRACTION_REALIZED, &res->fraction, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_VRMS, r->amplitude_by == HX_AMPLITUDE_VRMS ? &r->vrms : &res->vrms_x, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "realized_vrms", &res->vrms_x, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "realized_vrms_kspace", &res->vrms_k, 0));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_SHAPE, hx_shape_name(r->spectrum.shape)));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_SLOPE, &r->spectrum.slope, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_SLOPE_FIT, &res->slope_fit, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_SLOPE_SIGMA, &res->slope_sigma, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_KMIN, &r->spectrum.kmin, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_ATTR_KMAX, &r->spectrum.kmax, 0));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_AMPLITUDES, r->amplitudes == HX_AMP_FIXED ? "fixed" : "gaussian"));
    int64_t flip = r->flip;
    HX_TRY(hx_io_attr_int64s(io, G, "flip", &flip, 0));
    HX_TRY(hx_io_attr_string(io, G, "precision", r->precision == HX_PREC_DOUBLE ? "double" : "single"));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_COMPUTE, r->compute == HX_PREC_DOUBLE ? "double" : "single"));
    HX_TRY(hx_io_attr_string(io, G, "draws", res->kept_bytes > 0 ? "kept" : "regenerated"));
    HX_TRY(hx_io_attr_doubles(io, G, "kept_draw_bytes", &res->kept_bytes, 0));
    HX_TRY(hx_io_attr_tuning(io, G));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_WEIGHT, r->weight == HX_WEIGHT_MASS ? "mass" : "volume"));
    HX_TRY(hx_io_attr_string(io, G, HX_ATTR_FRACTION_OF, res->as_written ? "written" : "synthesis"));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_plan", &res->t_plan, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_draw", &res->t_draw, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_fft", &res->t_fft, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_synthesize", res->t_synth, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_write", res->t_write, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "timing_total", &res->t_total, 0));
    int64_t rss = res->peak_rss;
    HX_TRY(hx_io_attr_int64s(io, G, "peak_rss_bytes", &rss, 0));
fail:
    free(text);
    return st;
}

/* The summary of the cube as inspect would measure it, from the k-space sums of the mix and
 * the moments of the values written: no transform beyond the three of the synthesis. */
static hx_status fill_diag(hx_diag *d, const hx_field_summary *sum, const hx_grid *g, const hx_recipe *r)
{
    hx_status st = HX_OK;
    for (int a = 0; a < 3; a++) d->cells[a] = g->n[a], d->box[a] = g->box[a];
    d->ranks = g->size;
    HX_TRY(hx_diag_shells(d, sum->nshell));
    for (int s = 0; s < sum->nshell; s++) {
        d->shell_e[s] = sum->sol[s] + sum->comp[s];
        d->shell_comp[s] = sum->comp[s];
        d->shell_modes[s] = sum->modes[s];
    }
    d->div_rms = sum->div_rms;
    d->vort_rms = sqrt(fmax(sum->grad_rms * sum->grad_rms - sum->div_rms * sum->div_rms, 0.0));
    d->div_ratio = sum->grad_rms > 0 ? d->div_rms / sum->grad_rms : NAN;
    d->vort_ratio = sum->grad_rms > 0 ? d->vort_rms / sum->grad_rms : NAN;
    d->fit_kmin = r->spectrum.kmin;
    d->fit_kmax = r->spectrum.kmax;
    hx_diag_finish(d);
fail:
    return st;
}

/* What the compensated slope fit should give on this grid, band and mode set if every shell
 * held its expected energy, and how much a Gaussian draw scatters it. A mode's energy
 * alpha^2 |P_perp w|^2 + beta^2 |P_par w|^2 is Gamma(2) and exponential parts, so its relative
 * variance is (2 alpha^4 + beta^4) / (2 alpha^2 + beta^2)^2; a shell's is that times
 * sum (wA^2)^2 / (sum wA^2)^2. Fixed amplitudes scatter less: the Gaussian value bounds them. */
static hx_status expected_slope(const hx_field_summary *sum, const hx_recipe *r, double *slope, double *sigma)
{
    hx_status st = HX_OK;
    double *relvar = NULL, al, be, err;
    HX_ALLOC(relvar, sum->nshell);
    hx_mix_weights(&r->mix, &al, &be);
    if (r->mix.exact != HX_EXACT_NONE) al = 1.0, be = 1.0; /* pinned mixes keep each shell's unmixed draw */
    double kappa = (2 * al * al * al * al + be * be * be * be) / ((2 * al * al + be * be) * (2 * al * al + be * be));
    for (int s = 0; s < sum->nshell; s++)
        relvar[s] = sum->power[s] > 0 ? kappa * sum->power_sq[s] / (sum->power[s] * sum->power[s]) : 0.0;
    hx_diag_fit_shells(sum->power, sum->modes, relvar, sum->nshell, r->spectrum.kmin, r->spectrum.kmax, slope, &err, sigma);
fail:
    free(relvar);
    return st;
}

/* /helmix/diagnostics: the same numbers inspect reports, as attributes and small tables. */
static hx_status write_diag(hx_io *io, const hx_diag *d)
{
    hx_status st = HX_OK;
    const char *G = HX_SCHEMA_DIAGNOSTICS;
    int ns = d->nshell;
    double *k = NULL, *share = NULL, fit[2] = {d->fit_kmin, d->fit_kmax}, edges[HX_DIAG_BINS + 1];
    HX_ALLOC(k, ns);
    HX_ALLOC(share, ns);
    for (int s = 0; s < ns; s++) {
        k[s] = s;
        share[s] = d->shell_e[s] > 0 ? d->shell_comp[s] / d->shell_e[s] : NAN;
    }
    for (int b = 0; b <= HX_DIAG_BINS; b++) edges[b] = -HX_DIAG_PDF_RANGE + 2.0 * HX_DIAG_PDF_RANGE * b / HX_DIAG_BINS;
    HX_TRY(hx_io_attr_doubles(io, G, "mean", d->mean, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "rms", d->rms, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "rms_3d", &d->rms3, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "skewness", d->skew, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "excess_kurtosis", d->kurt, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "energy_total", &d->e_total, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "energy_compressive", &d->e_comp, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "energy_solenoidal", &d->e_sol, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "compressive_fraction", &d->fraction, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "divergence_rms", &d->div_rms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "vorticity_rms", &d->vort_rms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "divergence_ratio", &d->div_ratio, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "vorticity_ratio", &d->vort_ratio, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "slope", &d->slope, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "slope_stderr", &d->slope_err, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "slope_fit_range", fit, 2));
    HX_TRY(hx_io_table(io, G, "shell_k", k, ns));
    HX_TRY(hx_io_table(io, G, "shell_modes", d->shell_modes, ns));
    HX_TRY(hx_io_table(io, G, "shell_energy", d->shell_e, ns));
    HX_TRY(hx_io_table(io, G, "shell_energy_compressive", d->shell_comp, ns));
    HX_TRY(hx_io_table(io, G, "shell_energy_solenoidal", d->shell_sol, ns));
    HX_TRY(hx_io_table(io, G, "shell_compressive_fraction", share, ns));
    HX_TRY(hx_io_table(io, G, "pdf_edges", edges, HX_DIAG_BINS + 1));
    HX_TRY(hx_io_table(io, G, "pdf_x", d->pdf[0], HX_DIAG_BINS));
    HX_TRY(hx_io_table(io, G, "pdf_y", d->pdf[1], HX_DIAG_BINS));
    HX_TRY(hx_io_table(io, G, "pdf_z", d->pdf[2], HX_DIAG_BINS));
fail:
    free(k);
    free(share);
    return st;
}

/* /helmix/state: the physical state, so inspect and a reader can judge it in physical units. */
static hx_status write_state(hx_io *io, const hx_recipe *r, const hx_cloud *cl, const hx_make_result *res)
{
    hx_status st = HX_OK;
    const char *G = HX_SCHEMA_STATE;
    const hx_code_units *u = &r->code;
    double cs_cgs = u->sound_speed * u->velocity, nan = NAN;
    HX_TRY(hx_io_attr_doubles(io, G, "unit_length_cm", &u->length, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "unit_velocity_cm_s", &u->velocity, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "unit_density_g_cm3", &u->density, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "unit_mass_g", &u->mass, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_G, &u->G, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "temperature_K", &r->temperature.value, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "mu", &r->mu, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_GAMMA, &r->gamma, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_SOUND_SPEED, &u->sound_speed, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "sound_speed_cm_s", &cs_cgs, 0));
    HX_TRY(hx_io_attr_string(io, G, HX_STATE_AMPLITUDE_BY, hx_amplitude_by_name(r->amplitude_by)));
    /* asked: the rule's value; realized: measured on the field as written */
    double asked[4] = {r->amplitude_by == HX_AMPLITUDE_VRMS ? r->vrms : NAN,
                       r->amplitude_by == HX_AMPLITUDE_MACH ? r->mach : NAN,
                       r->amplitude_by == HX_AMPLITUDE_VIRIAL ? r->virial : NAN,
                       r->amplitude_by == HX_AMPLITUDE_LINEWIDTH ? hx_cloud_target_sigma(cl, r, res->region_mass) : NAN};
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_VRMS_ASKED, &asked[0], 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MACH_ASKED, &asked[1], 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_VIRIAL_ASKED, &asked[2], 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_SIGMA_3D_ASKED, &asked[3], 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_VRMS, &res->vrms_x, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_SIGMA_3D, &res->sigma_3d, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MACH, &res->mach, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_VIRIAL, &res->virial, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MOMENTUM, res->momentum, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "angular_momentum", res->angular, 3));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MOMENTUM_RELATIVE, &res->momentum_rel, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "angular_momentum_relative", &res->angular_rel, 0));
    int64_t flags[3] = {r->window, r->remove_bulk, r->remove_rotation};
    HX_TRY(hx_io_attr_int64s(io, G, HX_STATE_FLAGS, flags, 3));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MAGNETIC_B0, res->b0, 3));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MAGNETIC_RANDOM_RMS, &res->b_random_rms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MAGNETIC_RMS, &res->b_rms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_MAGNETIC_FACE_RMS, &res->b_face_rms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_BETA, &res->beta, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_ALFVEN_MACH, &res->alfven_mach, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_BETA_ASKED, r->magnetic_by == HX_MAGNETIC_BETA ? &r->beta : &nan, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_ALFVEN_MACH_ASKED, r->magnetic_by == HX_MAGNETIC_ALFVEN ? &r->alfven_mach : &nan, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_UNIT_MAGNETIC, &u->magnetic, 0));
    HX_TRY(hx_io_attr_string(io, G, "magnetic_face_convention",
                             "magnetic_face_c[k][j][i] lies on the low-c face of cell (i, j, k): at x_c = i dx_c, the "
                             "other two coordinates at cell centres; it is the discrete curl of a vector potential on "
                             "cell edges, so sum_c (B_c[i_c + 1] - B_c[i_c]) / dx_c = 0 (periodic)"));
    HX_TRY(hx_io_attr_string(io, G, HX_STATE_DENSITY_MODEL, hx_density_model_name(r->density_model)));
    if (r->density_model == HX_DENSITY_NONE) return HX_OK;
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_DENSITY_MEAN, &res->density_mean, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_SIGMA_S_ASKED, r->density_model == HX_DENSITY_LOGNORMAL ? &r->sigma_s : &nan, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_SIGMA_S, &res->sigma_s_written, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "b", &r->b, 0));
    int64_t cloud = cl->has_cloud, clumps = r->clumps;
    HX_TRY(hx_io_attr_int64s(io, G, HX_STATE_CLOUD, &cloud, 0));
    HX_TRY(hx_io_attr_int64s(io, G, "clumps", &clumps, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_CLOUD_CENTER, cl->center, 3));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_CLOUD_RADIUS, &cl->radius, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "cloud_edge", &cl->edge, 0));
    HX_TRY(hx_io_attr_doubles(io, G, HX_STATE_REGION_MASS, &res->region_mass, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "model_mass", &cl->mass_model, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "density_inside", &cl->rho_in, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "density_edge", &cl->rho_edge, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "density_ambient", &cl->rho_ambient, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "temperature_ambient_K", &cl->t_ambient, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "xi_max", &cl->xi_max, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "contrast", cl->has_cloud ? &r->contrast : &nan, 0));
fail:
    return st;
}

/* The field descriptors of a recipe: the velocity, and s = ln(rho/rho_0) of a lognormal or
 * clumpy density. */
static void velocity_desc(const hx_recipe *r, double rms, hx_desc *d)
{
    *d = (hx_desc){HX_FIELD_VELOCITY, 3, "code_length/code_time", r->spectrum, r->mix, rms, r->seed,
                   HX_STREAM_VELOCITY, r->amplitudes, r->flip, HX_PART_ALL, HX_STAGGER_CELL};
}

static void log_density_desc(const hx_recipe *r, hx_desc *d)
{
    *d = (hx_desc){"log_density", 1, "dimensionless", r->density_spectrum, {HX_MIX_FRACTION, NAN, 0.0, HX_EXACT_TOTAL},
                   r->sigma_s, r->seed, HX_STREAM_DENSITY, HX_AMP_GAUSSIAN, 0, HX_PART_ALL, HX_STAGGER_CELL};
}

/* Everything a run carries between its phases. */
typedef struct run_t {
    const hx_recipe *r;
    const hx_log *log;
    MPI_Comm comm;
    hx_grid g;
    hx_cloud cloud;
    hx_field *f;
    hx_io *io;
    int vel_id, rho_id;
    double *rho;   /* this rank's density (nz * Ny * Nx), NULL without one */
    hx_make_result res;
    hx_timer *timer;
    int threads;   /* per rank, resolved (hx_fft_threads) */
} run_t;

/* Write component c of field id (from doubles, or in the file's precision) as phase "write". */
static hx_status timed_write(run_t *R, int id, int c, const void *slab, int doubles)
{
    const hx_grid *g = &R->g;
    hx_timer_begin(R->timer, "write");
    hx_status st = doubles ? hx_io_write_doubles(R->io, id, c, slab) : hx_io_write_component(R->io, id, c, slab);
    double bytes = (double)g->nz * (double)g->n[1] * (double)g->n[0] * (R->r->precision == HX_PREC_DOUBLE ? 8.0 : 4.0);
    hx_timer_end(R->timer, "write", bytes, 0);
    return st;
}

static inline double cell_distance(const run_t *R, ptrdiff_t z, ptrdiff_t y, ptrdiff_t x)
{
    const hx_grid *g = &R->g;
    double p[3] = {((double)x + 0.5) * g->box[0] / (double)g->n[0], ((double)y + 0.5) * g->box[1] / (double)g->n[1],
                   ((double)(g->z0 + z) + 0.5) * g->box[2] / (double)g->n[2]};
    double d2 = 0;
    for (int a = 0; a < 3; a++) d2 += (p[a] - R->cloud.center[a]) * (p[a] - R->cloud.center[a]);
    return sqrt(d2);
}

/* The density: the model, times exp(s) for a lognormal or clumpy one, normalised so that a
 * lognormal keeps its mean and a clumpy cloud its mass exactly. Written, and kept in R->rho. */
static hx_status make_density(run_t *R)
{
    hx_status st = HX_OK;
    const hx_recipe *r = R->r;
    const hx_grid *g = &R->g;
    hx_spectrum *sp = NULL;
    hx_desc ds;
    int64_t n = g->nz * g->n[1] * g->n[0];
    double t = MPI_Wtime();
    st = n ? ((R->rho = malloc((size_t)n * sizeof *R->rho)) ? HX_OK : hx_error_set(HX_ERR_MEM, "out of memory for the density slab (%.1f MiB)", (double)n * 8 / 1048576.0)) : HX_OK;
    HX_TRY(hx_error_agree(R->comm, st));
    int lognormal = (r->density_model == HX_DENSITY_LOGNORMAL || r->clumps) && r->sigma_s > 0;
    if (lognormal) {
        const void *slab = NULL;
        log_density_desc(r, &ds);
        HX_TRY(hx_spectrum_create(&sp, &ds.spectrum, R->comm));
        HX_TRY(hx_field_mix(R->f, &ds, sp));
        HX_TRY(hx_field_component(R->f, 0, HX_PREC_DOUBLE, &slab, NULL));
        memcpy(R->rho, slab, (size_t)n * sizeof *R->rho);
    }
    /* sums[0] = sum of the modulated part, sums[1] = sum of the part it replaces; double-double
     * so that the normalisation, and so the density, is the same on any number of ranks */
    hx_sum sums[2] = {{0, 0}, {0, 0}};
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) {
                ptrdiff_t i = (z * g->n[1] + y) * g->n[0] + x;
                double e = lognormal ? exp(R->rho[i]) : 1.0, p = hx_cloud_profile(&R->cloud, cell_distance(R, z, y, x));
                double part = R->cloud.has_cloud ? p - R->cloud.rho_ambient : p; /* clumps modulate the cloud only */
                R->rho[i] = part * e;
                hx_sum_add(&sums[0], part * e);
                hx_sum_add(&sums[1], part);
            }
    HX_TRY(hx_sum_allreduce(sums, 2, R->comm));
    double s0 = hx_sum_value(&sums[0]), s1 = hx_sum_value(&sums[1]);
    double norm = s0 > 0 ? s1 / s0 : 1.0, base = R->cloud.has_cloud ? R->cloud.rho_ambient : 0.0;
    hx_sum mom[3] = {{0, 0}, {0, 0}, {0, 0}}; /* sum rho, sum ln rho, sum (ln rho)^2 */
    for (int64_t i = 0; i < n; i++) {
        R->rho[i] = base + R->rho[i] * norm;
        double l = log(R->rho[i]);
        hx_sum_add(&mom[0], R->rho[i]), hx_sum_add(&mom[1], l), hx_sum_add(&mom[2], l * l);
    }
    HX_TRY(hx_sum_allreduce(mom, 3, R->comm));
    double N = (double)hx_grid_cells(g), ml = hx_sum_value(&mom[1]) / N;
    R->res.density_mean = hx_sum_value(&mom[0]) / N;
    R->res.sigma_s_written = sqrt(fmax(hx_sum_value(&mom[2]) / N - ml * ml, 0.0));
    HX_TRY(timed_write(R, R->rho_id, 0, R->rho, 1));
    hx_log_say(R->log, HX_LOG_INFO, "density: %s%s, mean %.6g, sigma of ln rho %.4g; %.2f s",
               hx_density_model_name(r->density_model), r->clumps ? " with clumps" : "", R->res.density_mean,
               R->res.sigma_s_written, MPI_Wtime() - t);
fail:
    hx_spectrum_destroy(&sp);
    return st;
}

/* The velocity needs real-space shaping when the cloud changes it (window, removal of bulk flow
 * or rotation, mass weighting) or when its amplitude is a mass-weighted dispersion of a
 * non-uniform density. Otherwise the k-space normalisation is exact and one pass suffices. */
int hx_make_shaped(const hx_recipe *r)
{
    int uniform = r->density_model == HX_DENSITY_NONE || r->density_model == HX_DENSITY_UNIFORM;
    return r->window || r->remove_bulk || r->remove_rotation || r->weight == HX_WEIGHT_MASS ||
           (!uniform && r->amplitude_by != HX_AMPLITUDE_VRMS);
}

int hx_make_needs_doubles(const hx_recipe *r)
{
    return r->density_model != HX_DENSITY_NONE || hx_make_shaped(r) || hx_recipe_has_magnetic(r);
}

/* The rms of the one-pass velocity: the asked dispersion is the volume rms of a zero-mean field
 * in a uniform density. */
static double one_pass_rms(const run_t *R)
{
    const hx_recipe *r = R->r;
    double mass = R->cloud.mass_model;
    if (r->amplitude_by == HX_AMPLITUDE_VIRIAL) mass = R->res.density_mean * R->g.box[0] * R->g.box[1] * R->g.box[2];
    return hx_cloud_target_sigma(&R->cloud, r, mass);
}

/* The velocity as the cloud shapes it, in place: W (u - vb - K Delta) with a window, u - vb -
 * K Delta without, u sqrt(<rho>/rho) with mass weighting (which allows no correction). Delta
 * is measured from the origin of the sums that gave the correction. */
static void shape_component(const run_t *R, int c, const double origin[3], const double vb[3], const double K[3][3],
                            double *v)
{
    const hx_grid *g = &R->g;
    int win = R->r->window, mass = R->r->weight == HX_WEIGHT_MASS;
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) {
                double p[3] = {((double)x + 0.5) * g->box[0] / (double)g->n[0],
                               ((double)y + 0.5) * g->box[1] / (double)g->n[1],
                               ((double)(g->z0 + z) + 0.5) * g->box[2] / (double)g->n[2]};
                double k = 0;
                for (int a = 0; a < 3; a++) k += K[c][a] * (p[a] - origin[a]);
                ptrdiff_t i = (z * g->n[1] + y) * g->n[0] + x;
                v[i] -= vb[c] + k;
                if (win) v[i] *= hx_cloud_window(&R->cloud, cell_distance(R, z, y, x));
                if (mass) v[i] *= sqrt(R->res.density_mean / R->rho[i]);
            }
}

/* The scale that gives the asked amplitude to a field whose sums are in fl. */
static hx_status solve_scale(run_t *R, const hx_flow *fl, double *scale)
{
    const hx_recipe *r = R->r;
    double have = 0, want;
    if (r->amplitude_by == HX_AMPLITUDE_VRMS) {
        for (int c = 0; c < 3; c++) have += fl->volume.v2[c];
        have = sqrt(have / fl->volume.w0);
        want = r->vrms;
    } else {
        const hx_flow_w *w = &fl->region;
        for (int c = 0; c < 3; c++) have += w->v2[c] / w->w0 - (w->v1[c] / w->w0) * (w->v1[c] / w->w0);
        have = sqrt(fmax(have, 0.0));
        want = hx_cloud_target_sigma(&R->cloud, r, w->w0 * fl->cell_volume);
    }
    if (!(have > 0) || !isfinite(want))
        return hx_error_set(HX_ERR_ARG, "the velocity has no motion left inside the cloud to scale to the %s asked "
                                        "(the window or the removal of bulk flow took it all)",
                            hx_amplitude_by_name(r->amplitude_by));
    *scale = want / have;
    return HX_OK;
}

/* Measure what the written velocity holds in the density (real space, collective). */
static hx_status measure_state(run_t *R, hx_flow *fl)
{
    hx_status st = HX_OK;
    hx_flow_report rep;
    HX_TRY(hx_flow_reduce(fl, R->comm));
    hx_flow_summarize(fl, &rep);
    hx_make_result *res = &R->res;
    const hx_code_units *u = &R->r->code;
    res->vrms_x = rep.vrms;
    res->sigma_3d = rep.sigma_3d;
    res->region_mass = R->rho ? rep.region_mass : NAN;
    res->radius = R->cloud.radius;
    res->mach = rep.sigma_3d / u->sound_speed;
    res->virial = R->rho ? 5.0 * (rep.sigma_3d * rep.sigma_3d / 3.0) * R->cloud.radius / (u->G * rep.region_mass) : NAN;
    double p = 0, l = 0;
    for (int a = 0; a < 3; a++) {
        res->momentum[a] = R->rho ? rep.momentum[a] : NAN;
        res->angular[a] = R->rho ? rep.angular[a] : NAN;
        p += rep.momentum[a] * rep.momentum[a];
        l += rep.angular[a] * rep.angular[a];
    }
    res->momentum_rel = R->rho ? sqrt(p) / rep.momentum_scale : NAN;
    res->angular_rel = R->rho ? sqrt(l) / rep.angular_scale : NAN;
fail:
    return st;
}

/* The velocity in one pass: k-space normalisation, moments and diagnostics from the synthesis. */
static hx_status velocity_one_pass(run_t *R, hx_desc *dv, const hx_spectrum *sp, hx_diag *diag, hx_flow *fl)
{
    hx_status st = HX_OK;
    const hx_recipe *r = R->r;
    const hx_grid *g = &R->g;
    double t = MPI_Wtime(), sum2 = 0, var = 0;
    velocity_desc(r, one_pass_rms(R), dv);
    HX_TRY(hx_field_mix(R->f, dv, sp));
    if (hx_field_summary_get(R->f))
        hx_log_say(R->log, HX_LOG_INFO, "draw: k-space pass for the mix in %.2f s", MPI_Wtime() - t);
    for (int c = 0; c < 3; c++) {
        const void *slab = NULL;
        hx_moments mom;
        t = MPI_Wtime();
        HX_TRY(hx_field_component(R->f, c, r->precision, &slab, &mom));
        R->res.t_synth[c] = MPI_Wtime() - t;
        t = MPI_Wtime();
        HX_TRY(timed_write(R, R->vel_id, c, slab, 0));
        R->res.t_write[c] = MPI_Wtime() - t;
        if (R->rho) hx_flow_add(fl, g, c, slab, r->precision, R->rho, &R->cloud);
        hx_diag_set_moments(diag, c, &mom);
        sum2 += diag->rms[c] * diag->rms[c];
        var += diag->rms[c] * diag->rms[c] - diag->mean[c] * diag->mean[c];
        R->res.mean[c] = diag->mean[c];
        hx_log_say(R->log, HX_LOG_INFO, "velocity_%c: synthesized in %.2f s, written in %.2f s", "xyz"[c],
                   R->res.t_synth[c], R->res.t_write[c]);
    }
    if (R->rho) HX_TRY(measure_state(R, fl));
    else { /* no density: the dispersion is the volume one, read off the moments of the values */
        R->res.sigma_3d = sqrt(fmax(var, 0.0));
        R->res.mach = R->res.sigma_3d / r->code.sound_speed;
        R->res.region_mass = R->res.virial = R->res.momentum_rel = R->res.angular_rel = NAN;
        R->res.radius = R->cloud.radius;
        for (int a = 0; a < 3; a++) R->res.momentum[a] = R->res.angular[a] = NAN;
    }
    R->res.vrms_x = sqrt(sum2); /* the moments of the values written, as before */
fail:
    return st;
}

/* The velocity shaped by the cloud, in passes that each regenerate the three components
 * (memory stays one slab): with removal of bulk flow or rotation, a first pass takes the sums of
 * the synthesised u under rho W that give the correction; a measuring pass takes the sums of the
 * shaped field that give the scale; the writing pass writes the scaled, shaped field. */
static hx_status velocity_shaped(run_t *R, hx_desc *dv, const hx_spectrum *sp, hx_flow *fl)
{
    hx_status st = HX_OK;
    const hx_recipe *r = R->r;
    const hx_grid *g = &R->g;
    double vb[3] = {0, 0, 0}, K[3][3] = {{0}}, origin[3] = {0, 0, 0}, scale = 1.0, t = MPI_Wtime();
    const void *slab = NULL;
    hx_flow sums;
    velocity_desc(r, 1.0, dv);
    HX_TRY(hx_field_mix(R->f, dv, sp));
    if (r->remove_bulk || r->remove_rotation) {
        HX_TRY(hx_flow_begin(&sums, g, R->rho, &R->cloud, r->window, R->comm));
        for (int c = 0; c < 3; c++) {
            HX_TRY(hx_field_component(R->f, c, HX_PREC_DOUBLE, &slab, NULL));
            hx_flow_add(&sums, g, c, slab, HX_PREC_DOUBLE, R->rho, &R->cloud);
        }
        HX_TRY(hx_flow_reduce(&sums, R->comm));
        HX_TRY(hx_error_agree(R->comm, hx_flow_correction(&sums, r->remove_bulk, r->remove_rotation, vb, K)));
        memcpy(origin, sums.origin, sizeof origin);
    }
    HX_TRY(hx_flow_begin(&sums, g, R->rho, &R->cloud, 0, R->comm));
    for (int c = 0; c < 3; c++) {
        HX_TRY(hx_field_component(R->f, c, HX_PREC_DOUBLE, &slab, NULL));
        shape_component(R, c, origin, vb, K, (double *)slab);
        hx_flow_add(&sums, g, c, slab, HX_PREC_DOUBLE, R->rho, &R->cloud);
    }
    HX_TRY(hx_flow_reduce(&sums, R->comm));
    HX_TRY(hx_error_agree(R->comm, solve_scale(R, &sums, &scale)));
    hx_log_say(R->log, HX_LOG_INFO, "velocity: measuring passes in %.2f s (bulk %.3g %.3g %.3g before scaling)",
               MPI_Wtime() - t, vb[0], vb[1], vb[2]);
    for (int c = 0; c < 3; c++) {
        t = MPI_Wtime();
        HX_TRY(hx_field_component(R->f, c, HX_PREC_DOUBLE, &slab, NULL));
        double *v = (double *)slab;
        shape_component(R, c, origin, vb, K, v);
        for (int64_t i = 0; i < g->nz * g->n[1] * g->n[0]; i++) v[i] *= scale;
        hx_flow_add(fl, g, c, v, HX_PREC_DOUBLE, R->rho, &R->cloud);
        R->res.t_synth[c] = MPI_Wtime() - t;
        t = MPI_Wtime();
        HX_TRY(timed_write(R, R->vel_id, c, v, 1));
        R->res.t_write[c] = MPI_Wtime() - t;
        hx_log_say(R->log, HX_LOG_INFO, "velocity_%c: synthesized in %.2f s, written in %.2f s", "xyz"[c],
                   R->res.t_synth[c], R->res.t_write[c]);
    }
    HX_TRY(measure_state(R, fl));
fail:
    return st;
}

/* [output] parts: the solenoidal and compressive parts of the velocity, synthesised from the
 * same draws and factors (the mix solve sees the same sums), each written as its own field. */
static hx_status write_parts(run_t *R, const hx_desc *dv, const hx_spectrum *sp)
{
    hx_status st = HX_OK;
    static const char *const names[2] = {HX_FIELD_SOLENOIDAL, HX_FIELD_COMPRESSIVE};
    for (int p = 0; p < 2; p++) {
        hx_desc d = *dv;
        int id = -1;
        d.name = names[p];
        d.part = p ? HX_PART_COMPRESSIVE : HX_PART_SOLENOIDAL;
        HX_TRY(hx_io_add_field(R->io, d.name, 3, "code_length/code_time", 0, &id));
        HX_TRY(hx_field_mix(R->f, &d, sp));
        for (int c = 0; c < 3; c++) {
            const void *slab = NULL;
            HX_TRY(hx_field_component(R->f, c, R->r->precision, &slab, NULL));
            HX_TRY(timed_write(R, id, c, slab, 0));
        }
        hx_log_say(R->log, HX_LOG_INFO, "%s written", d.name);
    }
fail:
    return st;
}

/* The magnetic field: B0 from its strength, plasma beta or Alfven Mach number (code units:
 * beta = 2 P / B0^2 with P = <rho> c_s^2 / gamma, v_A = B0 / sqrt(<rho>)), plus a random part that
 * is purely solenoidal (mix share 0, exact) on its own stream; cell-centred and, with faces, the
 * discrete curl of the same potential on a staggered grid. Each component goes through the one
 * slab and is written with B0 added. */
static hx_status make_magnetic(run_t *R, const hx_spectrum *sp, int cell_id, int face_id)
{
    hx_status st = HX_OK;
    const hx_recipe *r = R->r;
    const hx_grid *g = &R->g;
    hx_make_result *res = &R->res;
    double rho = R->rho ? res->density_mean : (r->density_model == HX_DENSITY_NONE ? 1.0 : res->density_mean);
    double P = rho * r->code.sound_speed * r->code.sound_speed / r->gamma, b0 = 0;
    switch (r->magnetic_by) {
    case HX_MAGNETIC_STRENGTH: b0 = r->b_strength.value; break;
    case HX_MAGNETIC_BETA: b0 = sqrt(2.0 * P / r->beta); break;
    case HX_MAGNETIC_ALFVEN: b0 = res->sigma_3d * sqrt(rho) / r->alfven_mach; break;
    default: b0 = 0;
    }
    double brms = !isnan(r->random_ratio) ? r->random_ratio * b0 : !isnan(r->random_rms.value) ? r->random_rms.value : 0.0;
    for (int c = 0; c < 3; c++) res->b0[c] = b0 * r->direction[c];
    res->b_random_rms = brms;
    res->beta = b0 > 0 ? 2.0 * P / (b0 * b0) : INFINITY;
    res->alfven_mach = b0 > 0 ? res->sigma_3d * sqrt(rho) / b0 : INFINITY;
    hx_desc db = {HX_FIELD_MAGNETIC, 3, "code_magnetic", r->magnetic_spectrum, {HX_MIX_FRACTION, NAN, 0.0, HX_EXACT_TOTAL},
                  brms, r->seed, HX_STREAM_MAGNETIC, HX_AMP_GAUSSIAN, 0, HX_PART_ALL, HX_STAGGER_CELL};
    if (!(brms > 0)) db.spectrum = r->spectrum; /* no random part: any validated band, scaled to rms 0 */
    int64_t n = g->nz * g->n[1] * g->n[0];
    for (int pass = 0; pass < 1 + (face_id >= 0); pass++) {
        double t = MPI_Wtime(), s2 = 0;
        db.stagger = pass ? HX_STAGGER_FACE : HX_STAGGER_CELL;
        HX_TRY(hx_field_mix(R->f, &db, sp));
        for (int c = 0; c < 3; c++) {
            const void *slab = NULL;
            HX_TRY(hx_field_component(R->f, c, HX_PREC_DOUBLE, &slab, NULL));
            double *v = (double *)slab;
            for (int64_t i = 0; i < n; i++) {
                v[i] += res->b0[c];
                s2 += v[i] * v[i];
            }
            HX_TRY(timed_write(R, pass ? face_id : cell_id, c, v, 1));
        }
        HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &s2, 1, MPI_DOUBLE, MPI_SUM, R->comm));
        *(pass ? &res->b_face_rms : &res->b_rms) = sqrt(s2 / (double)hx_grid_cells(g));
        hx_log_say(R->log, HX_LOG_INFO, "%s: |B0| %.4g, random rms %.4g, rms %.6g code magnetic; %.2f s",
                   pass ? HX_FIELD_MAGNETIC_FACE : HX_FIELD_MAGNETIC, b0, brms, pass ? res->b_face_rms : res->b_rms,
                   MPI_Wtime() - t);
    }
fail:
    return st;
}

/* The magnetic datasets, their spectrum and the fields, when the recipe asks for a field. */
static hx_status magnetic_fields(run_t *R)
{
    hx_status st = HX_OK;
    const hx_recipe *r = R->r;
    hx_spectrum *spb = NULL;
    int cell_id = -1, face_id = -1;
    for (int c = 0; c < 3; c++) R->res.b0[c] = NAN;
    R->res.b_random_rms = R->res.b_rms = R->res.b_face_rms = R->res.beta = R->res.alfven_mach = NAN;
    if (!hx_recipe_has_magnetic(r)) return HX_OK;
    HX_TRY(hx_io_add_field(R->io, HX_FIELD_MAGNETIC, 3, "code_magnetic", 0, &cell_id));
    if (r->faces) HX_TRY(hx_io_add_field(R->io, HX_FIELD_MAGNETIC_FACE, 3, "code_magnetic", 1, &face_id));
    /* a uniform field alone has no (validated) spectrum of its own: any band serves, scaled to rms 0 */
    int random = (!isnan(r->random_ratio) && r->random_ratio > 0) || (!isnan(r->random_rms.value) && r->random_rms.value > 0);
    HX_TRY(hx_spectrum_create(&spb, random ? &r->magnetic_spectrum : &r->spectrum, R->comm));
    HX_TRY(make_magnetic(R, spb, cell_id, face_id));
fail:
    hx_spectrum_destroy(&spb);
    return st;
}

/* The summary of the field as written, measured by inspect's own analysis of the partial file
 * (the window and the corrections mix modes, so the k-space sums no longer describe it). */
static hx_status analyse_written(run_t *R, hx_diag *diag)
{
    hx_status st = HX_OK;
    hx_inspect_opts o;
    hx_request q;
    int found = 0;
    char dens[128];
    hx_log quiet = *R->log;
    memset(&o, 0, sizeof o);
    quiet.verbosity = HX_LOG_QUIET;
    hx_schema_dataset(dens, sizeof dens, HX_FIELD_DENSITY, 1, 0);
    o.cube.file = hx_io_partial(R->io);
    o.cube.density = R->r->weight == HX_WEIGHT_MASS ? dens : NULL;
    o.fit[0] = R->r->spectrum.kmin;
    o.fit[1] = R->r->spectrum.kmax;
    o.threads = R->threads;
    HX_TRY(hx_io_pause(R->io));
    hx_diag_clear(diag);
    double t = MPI_Wtime();
    st = hx_inspect_run(&o, &quiet, R->comm, diag, &q, &found);
    hx_status st2 = hx_io_resume(R->io);
    HX_TRY(st);
    HX_TRY(st2);
    hx_log_say(R->log, HX_LOG_INFO, "velocity as written: compressive share %.6f, analysed in %.2f s", diag->fraction,
               MPI_Wtime() - t);
fail:
    return st;
}

/* The plan of this run, agreed on every rank: the largest baseline and the smallest budget
 * (--mem-per-rank, else the node's available memory shared by its ranks). A run that cannot fit
 * is refused before anything large is allocated: exit 2 against the user's budget, 3 against
 * the machine's. */
static hx_status make_plan(const hx_recipe *r, const hx_run_opts *run, const hx_grid *g, const hx_log *log,
                           hx_plan *p, MPI_Comm comm)
{
    hx_status st = HX_OK;
    MPI_Comm node = MPI_COMM_NULL;
    int on_node = 1;
    HX_MPI(MPI_Comm_split_type(comm, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &node));
    HX_MPI(MPI_Comm_size(node, &on_node));
    double given = run ? run->mem_per_rank : 0.0;
    double v[2] = {hx_plan_rss_bytes(), -(given > 0 ? given : hx_plan_mem_available() / on_node)};
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, v, 2, MPI_DOUBLE, MPI_MAX, comm));
    st = hx_plan_compute(r, g->size, hx_fft_threads(run), -v[1] > 0 ? -v[1] : 0.0, hx_plan_baseline(v[0], g->size, g->size), p);
    if (st == HX_OK && r->draws != HX_DRAWS_AUTO) p->choice = r->draws;
    if (st == HX_OK && (st = hx_plan_verdict(p)) != HX_OK && !(given > 0)) {
        char msg[1024];
        snprintf(msg, sizeof msg, "%s", hx_error_message());
        st = hx_error_set(HX_ERR_MEM, "%s (the budget is this node's available memory shared by its %d rank%s)", msg,
                          on_node, on_node > 1 ? "s" : "");
    }
    HX_TRY(hx_error_agree(comm, st));
    char line[512];
    hx_plan_summary(p, line, sizeof line);
    hx_log_say(log, HX_LOG_INFO, "%s", line);
fail:
    if (node != MPI_COMM_NULL) MPI_Comm_free(&node);
    return st;
}

/* The share for the closing line: what was asked next to what the file holds. Free draws
 * (exact = none) and a field shaped after the synthesis hold a share of their own; the share
 * asked of the ensemble (for zeta, (1-zeta)^2/(1-2 zeta+3 zeta^2)) is shown beside it. */
static void share_line(char *buf, size_t len, const hx_recipe *r, const hx_make_result *res)
{
    const int zeta = r->mix.mode == HX_MIX_ZETA;
    const double asked = zeta ? hx_mix_expected_fraction(r->mix.zeta) : r->mix.compressive_fraction;
    char what[48];
    if (zeta) snprintf(what, sizeof what, "ensemble expectation %.6f for zeta %g", asked, r->mix.zeta);
    else snprintf(what, sizeof what, "asked %g", asked);
    if (res->as_written) snprintf(buf, len, "compressive share %.6f as written (%s)", res->fraction, what);
    else if (r->mix.exact == HX_EXACT_NONE) snprintf(buf, len, "compressive share %.6f as drawn (%s)", res->fraction, what);
    else snprintf(buf, len, "compressive share %.6f (%s, exact %s)", res->fraction, what, hx_exact_name(r->mix.exact));
}

hx_status hx_make_run(const hx_recipe *r, int force, const hx_run_opts *run, const hx_log *log, MPI_Comm comm,
                      hx_make_result *res_out)
{
    hx_status st = HX_OK;
    run_t R;
    memset(&R, 0, sizeof R);
    R.r = r, R.log = log, R.comm = comm, R.vel_id = R.rho_id = -1;
    hx_spectrum *sp = NULL;
    hx_diag diag;
    hx_desc dv;
    hx_flow fl;
    memset(&diag, 0, sizeof diag);
    double t0 = MPI_Wtime(), t;

    hx_timer *tm = run ? run->timer : NULL;
    R.timer = tm;
    R.threads = hx_fft_threads(run);
    HX_TRY(hx_io_check_target(r->file, force, comm));
    hx_timer_begin(tm, "plan");
    HX_TRY(hx_fft_begin(run, comm));
    hx_cpus cpus;
    char warn[400];
    HX_TRY(hx_fft_cpus(comm, &cpus));
    if (hx_fft_threads_warning(R.threads, &cpus, warn, sizeof warn)) hx_log_say(log, HX_LOG_QUIET, "%s", warn);
    hx_timer_note(tm, "cores_per_rank", cpus.cores);
    HX_TRY(hx_grid_init(&R.g, r->cells, r->box, comm));
    HX_TRY(hx_error_agree(comm, hx_cloud_init(&R.cloud, r)));
    HX_TRY(hx_spectrum_create(&sp, &r->spectrum, comm));
    double dx = fmax(r->box[0] / (double)r->cells[0], fmax(r->box[1] / (double)r->cells[1], r->box[2] / (double)r->cells[2]));
    if (R.cloud.has_cloud && R.cloud.radius < 4.0 * dx) /* legal, but the profile is a handful of cells */
        hx_log_say(log, HX_LOG_QUIET, "warning: the cloud radius is %.2g cells: its profile is not resolved on this grid",
                   R.cloud.radius / dx);
    hx_plan plan;
    HX_TRY(make_plan(r, run, &R.g, log, &plan, comm));
    t = MPI_Wtime();
    hx_field_opts fo = {(hx_precision)r->compute, hx_make_needs_doubles(r), plan.choice == HX_DRAWS_KEEP,
                        hx_fft_flags(run), R.threads, tm};
    HX_TRY(hx_field_create(&R.f, &R.g, &fo, comm));
    HX_TRY(hx_fft_end(run, comm));
    R.res.t_plan = MPI_Wtime() - t;
    hx_timer_end(tm, "plan", 0, 0);
    hx_timer_grid(tm, (int64_t[3]){R.g.n[0], R.g.n[1], R.g.n[2]});
    hx_timer_note(tm, "threads", R.threads);
    hx_timer_note_text(tm, "compute", r->compute == HX_PREC_DOUBLE ? "double" : "single");
    hx_timer_note_text(tm, "precision", r->precision == HX_PREC_DOUBLE ? "double" : "single");
    hx_timer_note_text(tm, "effort", hx_fft_effort_name(run ? run->effort : HX_EFFORT_ESTIMATE));
    hx_log_say(log, HX_LOG_INFO, "plan: done in %.2f s", R.res.t_plan);

    HX_TRY(hx_io_create(&R.io, r->file, &R.g, r->precision, &(hx_io_tuning){r->alignment, r->io_hints}, comm));
    if (hx_io_note(R.io)) hx_log_say(log, HX_LOG_QUIET, "warning: %s", hx_io_note(R.io)); /* a stale partial */
    HX_TRY(hx_io_units(R.io, r->code.length, r->code.mass, r->code.time));
    HX_TRY(hx_io_add_field(R.io, HX_FIELD_VELOCITY, 3, "code_length/code_time", 0, &R.vel_id));
    if (r->density_model != HX_DENSITY_NONE) {
        HX_TRY(hx_io_add_field(R.io, HX_FIELD_DENSITY, 1, "code_mass/code_length**3", 0, &R.rho_id));
        hx_timer_begin(tm, "density");
        HX_TRY(make_density(&R));
        hx_timer_end(tm, "density", 0, 0);
    }
    R.res.as_written = hx_make_shaped(r);
    if (R.rho || R.res.as_written) HX_TRY(hx_flow_begin(&fl, &R.g, R.rho, &R.cloud, 0, comm));
    if (R.res.as_written) HX_TRY(velocity_shaped(&R, &dv, sp, &fl));
    else HX_TRY(velocity_one_pass(&R, &dv, sp, &diag, &fl));

    const hx_field_summary *sum = hx_field_summary_get(R.f);
    R.res.fraction = sum->fraction;
    R.res.vrms_k = sum->vrms_k;
    hx_field_timings(R.f, &R.res.t_draw, &R.res.t_fft);
    R.res.kept_bytes = hx_field_kept_bytes(R.f);
    HX_MPI(MPI_Allreduce(MPI_IN_PLACE, &R.res.kept_bytes, 1, MPI_DOUBLE, MPI_MAX, comm));
    /* local allocations only, but a failure must reach every rank before the next collective */
    HX_TRY(hx_error_agree(comm, expected_slope(sum, r, &R.res.slope_fit, &R.res.slope_sigma)));
    if (!R.res.as_written) HX_TRY(hx_error_agree(comm, fill_diag(&diag, sum, &R.g, r)));
    sum = NULL; /* the magnetic field reuses the synthesis: the velocity's summary is taken */
    if (r->parts) HX_TRY(write_parts(&R, &dv, sp));
    HX_TRY(magnetic_fields(&R));
    if (R.res.as_written) {
        hx_field_destroy(&R.f); /* the analysis needs the memory */
        free(R.rho);
        R.rho = NULL;
        hx_timer_begin(tm, "analysis");
        HX_TRY(analyse_written(&R, &diag));
        hx_timer_end(tm, "analysis", 0, 0);
        R.res.fraction = diag.fraction;
        R.res.vrms_k = NAN;
        for (int c = 0; c < 3; c++) R.res.mean[c] = diag.mean[c];
    }
    hx_timer_begin(tm, "epilog");
    HX_TRY(hx_log_peak_rss(comm, &R.res.peak_rss));
    R.res.t_total = MPI_Wtime() - t0;
    HX_TRY(write_provenance(R.io, r, &R.g, &R.res));
    HX_TRY(write_state(R.io, r, &R.cloud, &R.res));
    HX_TRY(write_diag(R.io, &diag));
    HX_TRY(hx_io_close(&R.io, 1));
    hx_timer_end(tm, "epilog", 0, 0);
    R.res.t_total = MPI_Wtime() - t0;
    char share[128];
    share_line(share, sizeof share, r, &R.res);
    if (r->amplitude_by == HX_AMPLITUDE_VRMS)
        hx_log_say(log, HX_LOG_INFO, "wrote %s: rms %.6g (asked %.6g), %s; %.2f s, peak %.1f MiB per rank", r->file,
                   R.res.vrms_x, r->vrms, share, R.res.t_total, (double)R.res.peak_rss / 1048576.0);
    else {
        char sig[48];
        hx_units_format(sig, sizeof sig, R.res.sigma_3d * r->code.velocity, HX_QTY_VELOCITY);
        hx_log_say(log, HX_LOG_INFO,
                   "wrote %s: sigma_3D %s, Mach %.6g, virial parameter %.6g (asked: %s), %s; "
                   "%.2f s, peak %.1f MiB per rank",
                   r->file, sig, R.res.mach, R.res.virial, hx_amplitude_by_name(r->amplitude_by), share,
                   R.res.t_total, (double)R.res.peak_rss / 1048576.0);
    }
    if (res_out) *res_out = R.res;
fail:
    if (R.io) hx_io_close(&R.io, 0);
    hx_field_destroy(&R.f);
    hx_spectrum_destroy(&sp);
    hx_cloud_clear(&R.cloud);
    free(R.rho);
    hx_diag_clear(&diag);
    return st;
}
