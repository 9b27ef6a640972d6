/* report.c — the cube's summary as a table on a stream, as JSON (cJSON) and as a per-shell
 * CSV file, with the state of the velocity in a density when the cube has one. Every number
 * printed is a field of hx_diag; nothing is computed here except the per-shell share
 * shell_comp/shell_e. */
#include "helmix/report.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdlib.h>

#include "helmix/version.h"

static const char axis[3] = {'x', 'y', 'z'};

/* The state in a density: mass, ln rho, dispersion, Mach number, virial parameter, momentum. */
static void print_state(FILE *out, const hx_diag *d)
{
    if (!d->has_state) return;
    fprintf(out, "\n  state of v in the density (volume-weighted over the box unless said otherwise):\n");
    fprintf(out, "    mass %.7g, mean density %.7g; ln rho: mean %.7g, sigma_s %.7g\n", d->mass, d->rho_mean,
            d->ln_rho_mean, d->sigma_s);
    fprintf(out, "    rms velocity %.7g, mean velocity (%.4g, %.4g, %.4g)\n", d->vrms, d->vmean[0], d->vmean[1],
            d->vmean[2]);
    if (d->cloud)
        fprintf(out, "    region: the cloud, centre (%g, %g, %g), radius %g; mass %.7g\n", d->cloud_center[0],
                d->cloud_center[1], d->cloud_center[2], d->radius, d->region_mass);
    else fprintf(out, "    region: the whole box (radius max(L)/2 = %g for the virial parameter); mass %.7g\n", d->radius, d->region_mass);
    fprintf(out, "    mass-weighted 3D dispersion sigma_3D over the region %.7g\n", d->sigma_3d);
    if (isfinite(d->mach)) fprintf(out, "    Mach number sigma_3D / c_s %.7g (c_s = %.7g)\n", d->mach, d->sound_speed);
    else fprintf(out, "    Mach number: no sound speed known (give --sound-speed)\n");
    if (isfinite(d->virial))
        fprintf(out, "    virial parameter 5 sigma_1D^2 R / (G M) %.7g (G = %.7g; Bertoldi & McKee 1992)\n", d->virial, d->gravity);
    else fprintf(out, "    virial parameter: no G known (give --gravity)\n");
    fprintf(out, "    net momentum (%.6g, %.6g, %.6g), |P| / (M vrms) = %.3g\n", d->momentum[0], d->momentum[1],
            d->momentum[2], d->momentum_rel);
}

void hx_report_print(FILE *out, const hx_diag *d, const char *source)
{
    fprintf(out, "helmix %s inspect: %s\n", HX_VERSION, source);
    fprintf(out, "  grid %lld x %lld x %lld cells, box %g x %g x %g, %d rank%s\n", (long long)d->cells[0],
            (long long)d->cells[1], (long long)d->cells[2], d->box[0], d->box[1], d->box[2], d->ranks,
            d->ranks > 1 ? "s" : "");
    if (d->remove_scale > 0) fprintf(out, "  flow smoothed on scale %g removed before the analysis\n", d->remove_scale);
    if (d->mass_weighted) fprintf(out, "  mass-weighted: the field analysed is sqrt(rho) v\n");
    print_state(out, d);
    fprintf(out, "\n  %-10s %14s %14s %12s %12s\n", "component", "mean", "rms", "skewness", "ex.kurtosis");
    for (int c = 0; c < 3; c++)
        fprintf(out, "  %-10c %14.7g %14.7g %12.4g %12.4g\n", axis[c], d->mean[c], d->rms[c], d->skew[c], d->kurt[c]);
    fprintf(out, "  %-10s %14s %14.7g\n", "3D", "", d->rms3);
    fprintf(out, "\n  kinetic energy per unit mass (k != 0): total %.7g, compressive %.7g, solenoidal %.7g\n", d->e_total,
            d->e_comp, d->e_sol);
    fprintf(out, "  compressive share of the kinetic energy: %.8f\n", d->fraction);
    fprintf(out, "  rms divergence %.6g, rms vorticity %.6g (1/code time); as shares of the rms gradient: %.4f, %.4f\n",
            d->div_rms, d->vort_rms, d->div_ratio, d->vort_ratio);
    fprintf(out, "  spectral slope over shells [%g, %g]: %.4f +- %.4f (E ~ k^-slope, mode-count compensated)\n",
            d->fit_kmin, d->fit_kmax, d->slope, d->slope_err);
    fprintf(out, "\n  %5s %10s %14s %14s %14s %9s\n", "k", "modes", "E(k)", "E_comp(k)", "E_sol(k)", "share");
    double emax = 0;
    int quiet = 0;
    for (int s = 1; s < d->nshell; s++) emax = fmax(emax, d->shell_e[s]);
    for (int s = 1; s < d->nshell; s++) {
        if (d->shell_modes[s] <= 0) continue;
        if (!(d->shell_e[s] > 1e-12 * emax)) { /* round-off only: keep the table readable */
            quiet++;
            continue;
        }
        double share = d->shell_e[s] > 0 ? d->shell_comp[s] / d->shell_e[s] : NAN;
        fprintf(out, "  %5d %10.0f %14.6e %14.6e %14.6e %9.5f\n", s, d->shell_modes[s], d->shell_e[s], d->shell_comp[s],
                d->shell_sol[s], share);
    }
    if (quiet) fprintf(out, "  (%d more shells below 1e-12 of the largest: see --csv or --json)\n", quiet);
}

static cJSON *array(const double *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; a && i < n; i++) cJSON_AddItemToArray(a, cJSON_CreateNumber(v[i]));
    return a;
}

static cJSON *shells(const hx_diag *d)
{
    cJSON *o = cJSON_CreateObject();
    double *k = malloc((size_t)d->nshell * sizeof *k), *share = malloc((size_t)d->nshell * sizeof *share);
    if (!o || !k || !share) {
        free(k);
        free(share);
        cJSON_Delete(o);
        return NULL;
    }
    for (int s = 0; s < d->nshell; s++) {
        k[s] = s;
        share[s] = d->shell_e[s] > 0 ? d->shell_comp[s] / d->shell_e[s] : NAN;
    }
    cJSON_AddItemToObject(o, "k", array(k, d->nshell));
    cJSON_AddItemToObject(o, "modes", array(d->shell_modes, d->nshell));
    cJSON_AddItemToObject(o, "energy", array(d->shell_e, d->nshell));
    cJSON_AddItemToObject(o, "compressive", array(d->shell_comp, d->nshell));
    cJSON_AddItemToObject(o, "solenoidal", array(d->shell_sol, d->nshell));
    cJSON_AddItemToObject(o, "compressive_fraction", array(share, d->nshell));
    free(k);
    free(share);
    return o;
}

static cJSON *verdict(const hx_verdict *v)
{
    cJSON *o = cJSON_CreateObject(), *lines = cJSON_CreateArray();
    cJSON_AddBoolToObject(o, "passed", v->passed);
    for (int i = 0; i < v->n; i++) {
        const hx_verdict_line *l = &v->line[i];
        cJSON *e = cJSON_CreateObject();
        cJSON_AddStringToObject(e, "quantity", l->quantity);
        cJSON_AddNumberToObject(e, "requested", l->requested);
        cJSON_AddNumberToObject(e, "measured", l->measured);
        cJSON_AddNumberToObject(e, "tolerance", l->tolerance); /* NaN (information only) prints as null */
        if (isnan(l->tolerance)) cJSON_AddNullToObject(e, "passed");
        else cJSON_AddBoolToObject(e, "passed", l->passed);
        cJSON_AddItemToArray(lines, e);
    }
    cJSON_AddItemToObject(o, "lines", lines);
    return o;
}

/* The state as JSON (NAN prints as null), or null without a density. */
static cJSON *state(const hx_diag *d)
{
    if (!d->has_state) return cJSON_CreateNull();
    cJSON *o = cJSON_CreateObject();
    cJSON_AddNumberToObject(o, "mass", d->mass);
    cJSON_AddNumberToObject(o, "density_mean", d->rho_mean);
    cJSON_AddNumberToObject(o, "ln_density_mean", d->ln_rho_mean);
    cJSON_AddNumberToObject(o, "sigma_s", d->sigma_s);
    cJSON_AddItemToObject(o, "velocity_mean", array(d->vmean, 3));
    cJSON_AddNumberToObject(o, "velocity_rms", d->vrms);
    cJSON_AddBoolToObject(o, "cloud", d->cloud);
    cJSON_AddItemToObject(o, "cloud_center", array(d->cloud_center, 3));
    cJSON_AddNumberToObject(o, "radius", d->radius);
    cJSON_AddNumberToObject(o, "region_mass", d->region_mass);
    cJSON_AddNumberToObject(o, "sigma_3d", d->sigma_3d);
    cJSON_AddNumberToObject(o, "sound_speed", d->sound_speed);
    cJSON_AddNumberToObject(o, "mach", d->mach);
    cJSON_AddNumberToObject(o, "gravity", d->gravity);
    cJSON_AddNumberToObject(o, "virial", d->virial);
    cJSON_AddItemToObject(o, "momentum", array(d->momentum, 3));
    cJSON_AddNumberToObject(o, "momentum_relative", d->momentum_rel);
    return o;
}

hx_status hx_report_json(const char *path, const hx_diag *d, const hx_verdict *v, const char *source)
{
    cJSON *root = cJSON_CreateObject();
    if (!root) return hx_error_set(HX_ERR_MEM, "out of memory building the JSON report");
    double cells[3] = {(double)d->cells[0], (double)d->cells[1], (double)d->cells[2]};
    double fit[2] = {d->fit_kmin, d->fit_kmax}, edges[HX_DIAG_BINS + 1];
    for (int b = 0; b <= HX_DIAG_BINS; b++) edges[b] = -HX_DIAG_PDF_RANGE + 2.0 * HX_DIAG_PDF_RANGE * b / HX_DIAG_BINS;
    cJSON_AddStringToObject(root, "helmix_version", HX_VERSION);
    cJSON_AddStringToObject(root, "file", source);
    cJSON_AddItemToObject(root, "cells", array(cells, 3));
    cJSON_AddItemToObject(root, "box", array(d->box, 3));
    cJSON_AddNumberToObject(root, "ranks", d->ranks);
    cJSON_AddNumberToObject(root, "seconds", d->seconds);
    cJSON_AddNumberToObject(root, "peak_rss_bytes", (double)d->peak_rss);
    cJSON_AddNumberToObject(root, "remove_scale", d->remove_scale);
    cJSON_AddBoolToObject(root, "mass_weighted", d->mass_weighted);
    cJSON_AddItemToObject(root, "mean", array(d->mean, 3));
    cJSON_AddItemToObject(root, "rms", array(d->rms, 3));
    cJSON_AddNumberToObject(root, "rms_3d", d->rms3);
    cJSON_AddItemToObject(root, "skewness", array(d->skew, 3));
    cJSON_AddItemToObject(root, "excess_kurtosis", array(d->kurt, 3));
    cJSON *e = cJSON_AddObjectToObject(root, "energy");
    cJSON_AddNumberToObject(e, "total", d->e_total);
    cJSON_AddNumberToObject(e, "compressive", d->e_comp);
    cJSON_AddNumberToObject(e, "solenoidal", d->e_sol);
    cJSON_AddNumberToObject(e, "compressive_fraction", d->fraction);
    cJSON *gr = cJSON_AddObjectToObject(root, "gradients");
    cJSON_AddNumberToObject(gr, "divergence_rms", d->div_rms);
    cJSON_AddNumberToObject(gr, "vorticity_rms", d->vort_rms);
    cJSON_AddNumberToObject(gr, "divergence_ratio", d->div_ratio);
    cJSON_AddNumberToObject(gr, "vorticity_ratio", d->vort_ratio);
    cJSON *sl = cJSON_AddObjectToObject(root, "slope");
    cJSON_AddItemToObject(sl, "fit_range", array(fit, 2));
    cJSON_AddNumberToObject(sl, "value", d->slope);
    cJSON_AddNumberToObject(sl, "stderr", d->slope_err);
    cJSON_AddItemToObject(root, "state", state(d));
    cJSON_AddItemToObject(root, "shells", shells(d));
    cJSON *pdf = cJSON_AddObjectToObject(root, "pdf");
    cJSON_AddItemToObject(pdf, "edges", array(edges, HX_DIAG_BINS + 1));
    cJSON *dens = cJSON_AddArrayToObject(pdf, "density");
    for (int c = 0; c < 3; c++) cJSON_AddItemToArray(dens, array(d->pdf[c], HX_DIAG_BINS));
    if (v) cJSON_AddItemToObject(root, "check", verdict(v));
    char *text = cJSON_Print(root);
    cJSON_Delete(root);
    if (!text) return hx_error_set(HX_ERR_MEM, "out of memory printing the JSON report");
    FILE *fp = fopen(path, "w");
    int ok = fp && fputs(text, fp) >= 0 && fputc('\n', fp) != EOF;
    if (fp && fclose(fp) != 0) ok = 0;
    free(text);
    return ok ? HX_OK : hx_error_set(HX_ERR_IO, "cannot write the JSON report %s", path);
}

hx_status hx_report_csv(const char *path, const hx_diag *d)
{
    FILE *fp = fopen(path, "w");
    if (!fp) return hx_error_set(HX_ERR_IO, "cannot write the CSV table %s", path);
    fprintf(fp, "k,modes,energy,compressive,solenoidal,compressive_fraction\n");
    for (int s = 1; s < d->nshell; s++) {
        double share = d->shell_e[s] > 0 ? d->shell_comp[s] / d->shell_e[s] : NAN;
        fprintf(fp, "%d,%.0f,%.17g,%.17g,%.17g,%.17g\n", s, d->shell_modes[s], d->shell_e[s], d->shell_comp[s],
                d->shell_sol[s], share);
    }
    return fclose(fp) == 0 ? HX_OK : hx_error_set(HX_ERR_IO, "cannot finish writing %s", path);
}
