/* verdict.c — requested versus measured, line by line, with the tolerance each line is
 * judged with. Tolerances: exact quantities are held to what the stored precision allows;
 * the slope of a Gaussian draw scatters, so it gets a statistical allowance. */
#include "helmix/verdict.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void hx_request_defaults(hx_request *q, int single, int fixed_amplitudes)
{
    memset(q, 0, sizeof *q);
    q->single = single;
    q->expected_fraction = NAN;
    q->slope_recipe = NAN;
    /* float32 keeps ~7 digits: rms and shares of a single-precision cube agree to ~1e-7;
     * doubles to ~1e-15. The margins below leave two orders of magnitude. */
    q->tol_vrms = single ? 1e-5 : 1e-9;
    q->tol_fraction = single ? 1e-5 : 1e-9;
    /* Without a recorded expectation: a compensated least-squares slope over >= 10 shells of a
     * Gaussian draw scatters by several hundredths; fixed amplitudes scatter less. */
    q->tol_slope = fixed_amplitudes ? 0.05 : 0.15;
}

hx_status hx_request_parse(hx_request *q, const char *text, int tolerances, const char *option)
{
    char buf[512];
    if (strlen(text) >= sizeof buf) return hx_error_set(HX_ERR_ARG, "%s: value too long", option);
    snprintf(buf, sizeof buf, "%s", text);
    char *save = NULL;
    for (char *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(tok, '='), *end = NULL;
        if (!eq) return hx_error_set(HX_ERR_ARG, "%s %s: '%s' is not key=value (keys: fraction, slope, vrms)", option, text, tok);
        *eq = '\0';
        double v = strtod(eq + 1, &end);
        if (end == eq + 1 || *end || !isfinite(v))
            return hx_error_set(HX_ERR_ARG, "%s %s: '%s' for %s is not a number", option, text, eq + 1, tok);
        int is_f = !strcmp(tok, "fraction"), is_s = !strcmp(tok, "slope"), is_v = !strcmp(tok, "vrms");
        if (!is_f && !is_s && !is_v)
            return hx_error_set(HX_ERR_ARG, "%s %s: unknown key '%s' (keys: fraction, slope, vrms)", option, text, tok);
        if (tolerances) {
            if (!(v >= 0)) return hx_error_set(HX_ERR_ARG, "%s %s: tolerance for %s must be >= 0", option, text, tok);
            if (is_f) q->tol_fraction = v;
            if (is_s) q->tol_slope = v;
            if (is_v) q->tol_vrms = v;
        } else if (is_f) {
            if (!(v >= 0 && v <= 1)) return hx_error_set(HX_ERR_ARG, "%s %s: fraction must be in [0, 1]", option, text);
            q->has_fraction = 1, q->fraction = v;
        } else if (is_s) {
            q->has_slope = 1, q->slope = v;
        } else {
            if (!(v > 0)) return hx_error_set(HX_ERR_ARG, "%s %s: vrms must be > 0", option, text);
            q->has_vrms = 1, q->vrms = v;
        }
    }
    return HX_OK;
}

static void add(hx_verdict *v, const char *what, double req, double meas, double tol, int passed)
{
    if (v->n >= HX_VERDICT_MAX) return;
    hx_verdict_line *l = &v->line[v->n++];
    snprintf(l->quantity, sizeof l->quantity, "%s", what);
    l->requested = req;
    l->measured = meas;
    l->tolerance = tol;
    l->passed = passed;
    if (!passed) v->passed = 0;
}

void hx_verdict_judge(const hx_request *q, const hx_diag *d, hx_verdict *v)
{
    memset(v, 0, sizeof *v);
    v->passed = 1;
    if (q->has_vrms) {
        double tol = q->tol_vrms * q->vrms;
        add(v, "rms velocity", q->vrms, d->rms3, tol, fabs(d->rms3 - q->vrms) <= tol);
        double m = fmax(fabs(d->mean[0]), fmax(fabs(d->mean[1]), fabs(d->mean[2])));
        add(v, "largest mean component", 0.0, m, tol, m <= tol);
    }
    if (q->has_fraction)
        add(v, "compressive share", q->fraction, d->fraction, q->tol_fraction, fabs(d->fraction - q->fraction) <= q->tol_fraction);
    if (q->has_shell_fraction) {
        /* only shells of the requested band that carry more than rounding noise of the data */
        double worst = q->fraction, dev = 0, floor_e = (q->single ? 1e-8 : 1e-20) * d->e_total;
        double lo = q->fit_kmax > 0 ? floor(q->fit_kmin + 0.5) : 1, hi = q->fit_kmax > 0 ? floor(q->fit_kmax + 0.5) : d->nshell;
        for (int s = 1; s < d->nshell; s++) {
            if (!(d->shell_e[s] > floor_e) || s < lo || s > hi) continue;
            double share = d->shell_comp[s] / d->shell_e[s];
            if (fabs(share - q->fraction) > dev) dev = fabs(share - q->fraction), worst = share;
        }
        /* shells far down the spectrum carry little energy, so their share is held 10x looser */
        add(v, "share, worst shell", q->fraction, worst, 10 * q->tol_fraction, dev <= 10 * q->tol_fraction);
    }
    if (q->has_recorded)
        add(v, "compressive share as drawn", q->recorded_fraction, d->fraction, q->tol_fraction,
            fabs(d->fraction - q->recorded_fraction) <= q->tol_fraction);
    if (isfinite(q->expected_fraction) && !q->has_fraction)
        add(v, "share expected (ensemble)", q->expected_fraction, d->fraction, NAN, 1);
    if (q->has_slope)
        add(v, "spectral slope", q->slope, d->slope, q->tol_slope, fabs(d->slope - q->slope) <= q->tol_slope);
    if (q->has_slope && isfinite(q->slope_recipe) && q->slope_recipe != q->slope)
        add(v, "slope asked in the recipe", q->slope_recipe, d->slope, NAN, 1);
}

void hx_verdict_print(const hx_verdict *v, FILE *out)
{
    fprintf(out, "\n%-28s %14s %14s %11s  %s\n", "check", "requested", "measured", "tolerance", "verdict");
    for (int i = 0; i < v->n; i++) {
        const hx_verdict_line *l = &v->line[i];
        if (isnan(l->tolerance))
            fprintf(out, "%-28s %14.8g %14.8g %11s  %s\n", l->quantity, l->requested, l->measured, "-", "info");
        else
            fprintf(out, "%-28s %14.8g %14.8g %11.2g  %s\n", l->quantity, l->requested, l->measured, l->tolerance,
                    l->passed ? "PASS" : "FAIL");
    }
    fprintf(out, "%s\n", v->n == 0 ? "nothing to check: the file records no request and no --expect was given"
                                   : v->passed ? "verdict: PASS" : "verdict: FAIL");
}
