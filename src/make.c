/* make.c — the generator pipeline: prolog, k-space pass, three streamed components, epilog.
 * Invariant: every rank walks the same sequence of collective calls; a failure anywhere is
 * agreed before the next collective, and the partial file is removed. */
#include "helmix/make.h"

#include <fftw3.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>

#include "check.h"
#include "helmix/diag.h"
#include "helmix/field.h"
#include "helmix/grid.h"
#include "helmix/io.h"
#include "helmix/mix.h"
#include "helmix/spectrum.h"
#include "helmix/version.h"

static const char axis[3] = {'x', 'y', 'z'};

hx_status hx_make_peak_rss(MPI_Comm comm, long long *bytes)
{
    hx_status st = HX_OK;
    struct rusage ru;
    long long mine = getrusage(RUSAGE_SELF, &ru) == 0 ? (long long)ru.ru_maxrss * 1024LL : 0;
    HX_MPI(MPI_Allreduce(&mine, bytes, 1, MPI_LONG_LONG, MPI_MAX, comm));
fail:
    return st;
}

/* The /helmix group: the request, what was realized, and how long it took. */
static hx_status write_provenance(hx_io *io, const hx_recipe *r, const hx_grid *g, const hx_make_result *res)
{
    hx_status st = HX_OK;
    char *text = hx_recipe_render(r);
    const char *G = "/helmix";
    double nan = NAN, v;
    if (!text) HX_FAIL(HX_ERR_MEM, "out of memory rendering the recipe");
    int64_t cells[3] = {g->n[0], g->n[1], g->n[2]}, ranks = g->size;
    HX_TRY(hx_io_attr_string(io, G, "version", HX_VERSION));
    HX_TRY(hx_io_attr_string(io, G, "recipe", text));
    HX_TRY(hx_io_attr_uint64(io, G, "seed", r->seed));
    HX_TRY(hx_io_attr_int64s(io, G, "ranks", &ranks, 0));
    HX_TRY(hx_io_attr_int64s(io, G, "cells", cells, 3));
    HX_TRY(hx_io_attr_doubles(io, G, "box", g->box, 3));
    HX_TRY(hx_io_attr_string(io, G, "mix_mode", r->mix_mode == HX_MIX_ZETA ? "zeta" : "compressive_fraction"));
    HX_TRY(hx_io_attr_doubles(io, G, "zeta", r->mix_mode == HX_MIX_ZETA ? &r->zeta : &nan, 0));
    HX_TRY(hx_io_attr_string(io, G, "exact", hx_exact_name(r->exact)));
    v = r->mix_mode == HX_MIX_FRACTION ? r->compressive_fraction : hx_mix_expected_fraction(r->zeta);
    HX_TRY(hx_io_attr_doubles(io, G, "expected_compressive_fraction", &v, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "compressive_fraction_target", r->exact == HX_EXACT_NONE ? &nan : &v, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "realized_compressive_fraction", &res->fraction, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "vrms", &r->vrms, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "realized_vrms", &res->vrms_x, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "realized_vrms_kspace", &res->vrms_k, 0));
    HX_TRY(hx_io_attr_string(io, G, "spectrum_shape", hx_shape_name(r->shape)));
    HX_TRY(hx_io_attr_doubles(io, G, "slope", &r->slope, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "slope_fit_expected", &res->slope_fit, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "slope_fit_sigma", &res->slope_sigma, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "kmin", &r->kmin, 0));
    HX_TRY(hx_io_attr_doubles(io, G, "kmax", &r->kmax, 0));
    HX_TRY(hx_io_attr_string(io, G, "amplitudes", r->amplitudes == HX_AMP_FIXED ? "fixed" : "gaussian"));
    int64_t flip = r->flip;
    HX_TRY(hx_io_attr_int64s(io, G, "flip", &flip, 0));
    HX_TRY(hx_io_attr_string(io, G, "precision", r->precision == HX_PREC_DOUBLE ? "double" : "single"));
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
    d->fit_kmin = r->kmin;
    d->fit_kmax = r->kmax;
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
    hx_mix_weights(r, &al, &be);
    if (r->exact != HX_EXACT_NONE) al = 1.0, be = 1.0; /* pinned mixes keep each shell's unmixed draw */
    double kappa = (2 * al * al * al * al + be * be * be * be) / ((2 * al * al + be * be) * (2 * al * al + be * be));
    for (int s = 0; s < sum->nshell; s++)
        relvar[s] = sum->power[s] > 0 ? kappa * sum->power_sq[s] / (sum->power[s] * sum->power[s]) : 0.0;
    hx_diag_fit_shells(sum->power, sum->modes, relvar, sum->nshell, r->kmin, r->kmax, slope, &err, sigma);
fail:
    free(relvar);
    return st;
}

/* /helmix/diagnostics: the same numbers inspect reports, as attributes and small tables. */
static hx_status write_diag(hx_io *io, const hx_diag *d)
{
    hx_status st = HX_OK;
    const char *G = "/helmix/diagnostics";
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

hx_status hx_make_run(const hx_recipe *r, int force, const hx_log *log, MPI_Comm comm, hx_make_result *res_out)
{
    hx_status st = HX_OK;
    hx_make_result res = {0};
    hx_grid g;
    hx_spectrum *sp = NULL;
    hx_field *f = NULL;
    hx_io *io = NULL;
    hx_diag diag;
    memset(&diag, 0, sizeof diag);
    double t0 = MPI_Wtime(), t;

    HX_TRY(hx_io_check_target(r->file, force, comm));
    HX_TRY(hx_grid_init(&g, r->cells, r->box, comm));
    HX_TRY(hx_spectrum_create(&sp, r, comm));
    hx_log_say(log, HX_LOG_INFO, "plan: %tdx%tdx%td cells on %d rank%s, %.1f MiB complex slab per rank", g.n[0], g.n[1],
               g.n[2], g.size, g.size > 1 ? "s" : "", (double)g.alloc * 16.0 / 1048576.0);
    t = MPI_Wtime();
    HX_TRY(hx_field_create(&f, &g, FFTW_ESTIMATE, comm));
    res.t_plan = MPI_Wtime() - t;
    hx_log_say(log, HX_LOG_INFO, "plan: done in %.2f s", res.t_plan);

    t = MPI_Wtime();
    HX_TRY(hx_field_mix(f, r, sp));
    if (hx_field_summary_get(f))
        hx_log_say(log, HX_LOG_INFO, "draw: k-space pass for the mix in %.2f s", MPI_Wtime() - t);

    HX_TRY(hx_io_create(&io, r->file, &g, r->precision, comm));
    double sum2 = 0;
    for (int c = 0; c < 3; c++) {
        const void *slab = NULL;
        hx_moments mom;
        t = MPI_Wtime();
        HX_TRY(hx_field_component(f, c, r->precision, &slab, &mom));
        res.t_synth[c] = MPI_Wtime() - t;
        t = MPI_Wtime();
        HX_TRY(hx_io_write_component(io, c, slab));
        res.t_write[c] = MPI_Wtime() - t;
        hx_diag_set_moments(&diag, c, &mom);
        sum2 += diag.rms[c] * diag.rms[c];
        res.mean[c] = diag.mean[c];
        hx_log_say(log, HX_LOG_INFO, "velocity_%c: synthesized in %.2f s, written in %.2f s", axis[c], res.t_synth[c],
                   res.t_write[c]);
    }
    res.vrms_x = sqrt(sum2);
    const hx_field_summary *sum = hx_field_summary_get(f);
    res.fraction = sum->fraction;
    res.vrms_k = sum->vrms_k;
    hx_field_timings(f, &res.t_draw, &res.t_fft);
    /* local allocations only, but a failure must reach every rank before the next collective */
    HX_TRY(hx_error_agree(comm, fill_diag(&diag, sum, &g, r)));
    HX_TRY(hx_error_agree(comm, expected_slope(sum, r, &res.slope_fit, &res.slope_sigma)));
    HX_TRY(hx_make_peak_rss(comm, &res.peak_rss));
    res.t_total = MPI_Wtime() - t0;
    HX_TRY(write_provenance(io, r, &g, &res));
    HX_TRY(write_diag(io, &diag));
    HX_TRY(hx_io_close(&io, 1));
    res.t_total = MPI_Wtime() - t0;
    hx_log_say(log, HX_LOG_INFO, "wrote %s: rms %.6g (asked %.6g), compressive share %.6f; %.2f s, peak %.1f MiB per rank",
               r->file, res.vrms_x, r->vrms, res.fraction, res.t_total, (double)res.peak_rss / 1048576.0);
    if (res_out) *res_out = res;
fail:
    if (io) hx_io_close(&io, 0);
    hx_field_destroy(&f);
    hx_spectrum_destroy(&sp);
    hx_diag_clear(&diag);
    return st;
}
