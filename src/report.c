/* report.c — the cube's summary as a table on a stream, as JSON (cJSON) and as a per-shell
 * CSV file, with the state of the velocity in a density and the magnetic field when the cube
 * has them. Every number printed is a field of hx_diag; nothing is computed here except the
 * per-shell share shell_comp/shell_e and the conversions of code units to gauss and cm/s. */
#include "helmix/report.h"

#include <cjson/cJSON.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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

/* The magnetic field: rms and mean (in gauss with units), beta, Alfven speed and Mach number
 * of the mean field, energy, slope, divergences and the magnetic energy per shell. */
static void print_magnetic(FILE *out, const hx_diag *d)
{
    const hx_magnetic *m = d->magnetic;
    if (!m) return;
    const hx_diag *b = &m->field;
    const double ug = m->unit_gauss, uv = m->unit_velocity_cm_s;
    fprintf(out, "\n  magnetic field (cell-centred, code magnetic units sqrt(4 pi rho_u) v_u%s):\n",
            isfinite(ug) ? "" : "; the file records no units");
    if (isfinite(ug)) fprintf(out, "    one code magnetic unit is %.7g G\n", ug);
    fprintf(out, "    rms |B| %.7g, mean field (%.7g, %.7g, %.7g), |<B>| %.7g\n", b->rms3, b->mean[0], b->mean[1],
            b->mean[2], m->mean_abs);
    if (isfinite(ug))
        fprintf(out, "    in gauss: rms |B| %.6g G, mean field (%.6g, %.6g, %.6g) G, |<B>| %.6g G\n", b->rms3 * ug,
                b->mean[0] * ug, b->mean[1] * ug, b->mean[2] * ug, m->mean_abs * ug);
    fprintf(out, "    rms of the random part B - <B> %.7g%s\n", m->random_rms, m->mean_abs > 0 ? "" : " (no mean field)");
    if (isfinite(ug)) fprintf(out, "    in gauss: %.6g G\n", m->random_rms * ug);
    fprintf(out, "    Alfven speed of the mean field |<B>| / sqrt(<rho>) %.7g (<rho> = %.7g%s)", m->v_alfven, m->density_mean,
            d->has_state ? "" : ", no density: 1");
    if (isfinite(uv)) fprintf(out, ", %.7g km/s", m->v_alfven * uv / 1e5);
    fprintf(out, "\n");
    if (isfinite(m->beta))
        fprintf(out, "    plasma beta 2 <rho> c_s^2 / gamma / |<B>|^2 %.7g (c_s = %.7g, gamma = %g; NRL Plasma Formulary)\n",
                m->beta, m->sound_speed, m->gamma);
    else if (isinf(m->beta)) fprintf(out, "    plasma beta: infinite (no mean field)\n");
    else fprintf(out, "    plasma beta: no sound speed known (give --sound-speed)\n");
    fprintf(out, "    Alfven Mach number sigma_3D / v_A %.7g (sigma_3D = %.7g, %s)\n", m->alfven_mach, m->sigma_3d,
            d->has_state ? "mass-weighted over the region" : "volume-weighted over the box");
    fprintf(out, "    magnetic energy (k != 0) 1/2 sum |B_hat|^2 %.7g; spectral slope over shells [%g, %g]: ", b->e_total,
            b->fit_kmin, b->fit_kmax);
    if (isfinite(b->slope)) fprintf(out, "%.4f +- %.4f\n", b->slope, b->slope_err);
    else fprintf(out, "none (fewer than 3 shells there carry energy)\n");
    fprintf(out, "    divergence (spectral) rms(k.B_hat) / rms(|k| |B_hat|) %.3g\n", m->div_spectral);
    if (m->has_face)
        fprintf(out, "    face-centred: rms |B| %.7g; discrete divergence max %.3g, over rms |B| / min dx: %.3g\n",
                m->face_rms, m->face_div_max, m->face_div);
    fprintf(out, "\n  %5s %10s %14s %14s\n", "k", "modes", "E_B(k)", "E_B,comp(k)");
    double emax = 0;
    int quiet = 0;
    for (int s = 1; s < b->nshell; s++) emax = fmax(emax, b->shell_e[s]);
    for (int s = 1; s < b->nshell; s++) {
        if (b->shell_modes[s] <= 0) continue;
        if (!(b->shell_e[s] > 1e-12 * emax)) {
            quiet++;
            continue;
        }
        fprintf(out, "  %5d %10.0f %14.6e %14.6e\n", s, b->shell_modes[s], b->shell_e[s], b->shell_comp[s]);
    }
    if (quiet) fprintf(out, "  (%d more shells below 1e-12 of the largest: see --json)\n", quiet);
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
    if (isfinite(d->slope))
        fprintf(out, "  spectral slope over shells [%g, %g]: %.4f +- %.4f (E ~ k^-slope, mode-count compensated)\n",
                d->fit_kmin, d->fit_kmax, d->slope, d->slope_err);
    else fprintf(out, "  spectral slope over shells [%g, %g]: none (fewer than 3 shells there carry energy)\n", d->fit_kmin, d->fit_kmax);
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
    print_magnetic(out, d);
}

/* The shortest decimal text that reads back as exactly x (at most 17 digits), as in the CSV
 * table, so the two files hold the same numbers; cJSON's own printing keeps only ~15 digits. */
static void exact_text(char *buf, size_t len, double x)
{
    for (int digits = 15; digits <= 17; digits++) {
        snprintf(buf, len, "%.*g", digits, x);
        if (strtod(buf, NULL) == x) return;
    }
}

/* A number as JSON: exact text, or null when it is not finite (RFC 8259 has no NaN). */
static cJSON *num(double x)
{
    char buf[32];
    if (!isfinite(x)) return cJSON_CreateNull();
    exact_text(buf, sizeof buf, x);
    return cJSON_CreateRaw(buf);
}

static void add_num(cJSON *o, const char *name, double x) { cJSON_AddItemToObject(o, name, num(x)); }

static cJSON *array(const double *v, int n)
{
    cJSON *a = cJSON_CreateArray();
    for (int i = 0; a && i < n; i++) cJSON_AddItemToArray(a, num(v[i]));
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
        add_num(e, "asked", l->asked); /* NaN (nothing asked) prints as null */
        add_num(e, "target", l->target);
        cJSON_AddStringToObject(e, "target_is", l->basis);
        add_num(e, "measured", l->measured);
        add_num(e, "tolerance", l->tolerance); /* NaN (information only) prints as null */
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
    add_num(o, "mass", d->mass);
    add_num(o, "density_mean", d->rho_mean);
    add_num(o, "ln_density_mean", d->ln_rho_mean);
    add_num(o, "sigma_s", d->sigma_s);
    cJSON_AddItemToObject(o, "velocity_mean", array(d->vmean, 3));
    add_num(o, "velocity_rms", d->vrms);
    cJSON_AddBoolToObject(o, "cloud", d->cloud);
    cJSON_AddItemToObject(o, "cloud_center", array(d->cloud_center, 3));
    add_num(o, "radius", d->radius);
    add_num(o, "region_mass", d->region_mass);
    add_num(o, "sigma_3d", d->sigma_3d);
    add_num(o, "sound_speed", d->sound_speed);
    add_num(o, "mach", d->mach);
    add_num(o, "gravity", d->gravity);
    add_num(o, "virial", d->virial);
    cJSON_AddItemToObject(o, "momentum", array(d->momentum, 3));
    add_num(o, "momentum_relative", d->momentum_rel);
    return o;
}

/* Three numbers times a unit, or null when the unit is unknown. */
static cJSON *scaled(const double *v, int n, double unit)
{
    double w[3];
    if (!isfinite(unit)) return cJSON_CreateNull();
    for (int i = 0; i < n; i++) w[i] = v[i] * unit;
    return array(w, n);
}

/* The magnetic field as JSON (NAN and infinity print as null), or null without one. */
static cJSON *magnetic(const hx_diag *d)
{
    const hx_magnetic *m = d->magnetic;
    if (!m) return cJSON_CreateNull();
    const hx_diag *b = &m->field;
    double fit[2] = {b->fit_kmin, b->fit_kmax}, ug = m->unit_gauss;
    cJSON *o = cJSON_CreateObject();
    cJSON_AddBoolToObject(o, "single_precision", m->single);
    cJSON_AddItemToObject(o, "mean", array(b->mean, 3));
    add_num(o, "mean_magnitude", m->mean_abs);
    cJSON_AddItemToObject(o, "rms", array(b->rms, 3));
    add_num(o, "rms_3d", b->rms3);
    add_num(o, "random_rms", m->random_rms);
    cJSON_AddItemToObject(o, "skewness", array(b->skew, 3));
    cJSON_AddItemToObject(o, "excess_kurtosis", array(b->kurt, 3));
    add_num(o, "unit_gauss", ug);
    cJSON *gs = isfinite(ug) ? cJSON_CreateObject() : cJSON_CreateNull();
    if (isfinite(ug)) {
        cJSON_AddItemToObject(gs, "mean", scaled(b->mean, 3, ug));
        add_num(gs, "mean_magnitude", m->mean_abs * ug);
        add_num(gs, "rms_3d", b->rms3 * ug);
        add_num(gs, "random_rms", m->random_rms * ug);
    }
    cJSON_AddItemToObject(o, "gauss", gs);
    add_num(o, "density_mean", m->density_mean);
    add_num(o, "sound_speed", m->sound_speed);
    add_num(o, "gamma", m->gamma);
    add_num(o, "sigma_3d", m->sigma_3d);
    add_num(o, "alfven_speed", m->v_alfven);
    add_num(o, "unit_velocity_cm_s", m->unit_velocity_cm_s);
    add_num(o, "alfven_speed_cm_s", m->v_alfven * m->unit_velocity_cm_s);
    add_num(o, "beta", m->beta);
    add_num(o, "alfven_mach", m->alfven_mach);
    cJSON *e = cJSON_AddObjectToObject(o, "energy");
    add_num(e, "total", b->e_total);
    add_num(e, "compressive", b->e_comp);
    add_num(o, "divergence_ratio", m->div_spectral);
    cJSON *sl = cJSON_AddObjectToObject(o, "slope");
    cJSON_AddItemToObject(sl, "fit_range", array(fit, 2));
    add_num(sl, "value", b->slope);
    add_num(sl, "stderr", b->slope_err);
    cJSON *sh = shells(b);
    if (sh) { /* E_B(k) and its curl-free part, which a magnetic field should not have */
        cJSON_DeleteItemFromObject(sh, "solenoidal");
        cJSON_DeleteItemFromObject(sh, "compressive_fraction");
    }
    cJSON_AddItemToObject(o, "shells", sh);
    cJSON *f = m->has_face ? cJSON_CreateObject() : cJSON_CreateNull();
    if (m->has_face) {
        add_num(f, "rms_3d", m->face_rms);
        add_num(f, "divergence_max", m->face_div_max);
        add_num(f, "divergence_ratio", m->face_div);
    }
    cJSON_AddItemToObject(o, "face", f);
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
    add_num(root, "ranks", d->ranks);
    add_num(root, "seconds", d->seconds);
    add_num(root, "peak_rss_bytes", (double)d->peak_rss);
    add_num(root, "remove_scale", d->remove_scale);
    cJSON_AddBoolToObject(root, "mass_weighted", d->mass_weighted);
    cJSON_AddItemToObject(root, "mean", array(d->mean, 3));
    cJSON_AddItemToObject(root, "rms", array(d->rms, 3));
    add_num(root, "rms_3d", d->rms3);
    cJSON_AddItemToObject(root, "skewness", array(d->skew, 3));
    cJSON_AddItemToObject(root, "excess_kurtosis", array(d->kurt, 3));
    cJSON *e = cJSON_AddObjectToObject(root, "energy");
    add_num(e, "total", d->e_total);
    add_num(e, "compressive", d->e_comp);
    add_num(e, "solenoidal", d->e_sol);
    add_num(e, "compressive_fraction", d->fraction);
    cJSON *gr = cJSON_AddObjectToObject(root, "gradients");
    add_num(gr, "divergence_rms", d->div_rms);
    add_num(gr, "vorticity_rms", d->vort_rms);
    add_num(gr, "divergence_ratio", d->div_ratio);
    add_num(gr, "vorticity_ratio", d->vort_ratio);
    cJSON *sl = cJSON_AddObjectToObject(root, "slope");
    cJSON_AddItemToObject(sl, "fit_range", array(fit, 2));
    add_num(sl, "value", d->slope);
    add_num(sl, "stderr", d->slope_err);
    cJSON_AddItemToObject(root, "state", state(d));
    cJSON_AddItemToObject(root, "magnetic", magnetic(d));
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
    /* the rows of the JSON's shells: from k = 0 (the mean flow, left out: no modes, no energy);
     * the share of a shell without energy is undefined, an empty field as JSON's null */
    for (int s = 0; s < d->nshell; s++) {
        char t[5][32];
        exact_text(t[0], sizeof t[0], d->shell_modes[s]);
        exact_text(t[1], sizeof t[1], d->shell_e[s]);
        exact_text(t[2], sizeof t[2], d->shell_comp[s]);
        exact_text(t[3], sizeof t[3], d->shell_sol[s]);
        if (d->shell_e[s] > 0) exact_text(t[4], sizeof t[4], d->shell_comp[s] / d->shell_e[s]);
        else t[4][0] = '\0';
        fprintf(fp, "%d,%s,%s,%s,%s,%s\n", s, t[0], t[1], t[2], t[3], t[4]);
    }
    return fclose(fp) == 0 ? HX_OK : hx_error_set(HX_ERR_IO, "cannot finish writing %s", path);
}
