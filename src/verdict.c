/* verdict.c — asked, target and measured, line by line, with the tolerance each line is
 * judged with. The target is the asked value, or what follows from it for this file (the
 * share this draw holds, the slope the fit gives on this grid and band, the state as made).
 * Tolerances: exact quantities (rms, shares, the state in a density, the magnetic field and
 * its divergence) are held to what the stored precision allows; the slope of a Gaussian draw
 * scatters, so it gets a statistical allowance. */
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
    q->zero_mean = 1;
    q->sigma_3d = q->mach = q->virial = q->sigma_s = q->density_mean = q->momentum_rel = NAN;
    /* the state is a sum over the stored values, so it keeps the digits of the data as well */
    q->tol_state = single ? 1e-5 : 1e-9;
    q->tol_momentum = single ? 1e-5 : 1e-9;
    q->b0[0] = q->b0[1] = q->b0[2] = q->b_random_rms = q->beta = q->alfven_mach = NAN;
    q->tol_magnetic = single ? 1e-5 : 1e-9;
    q->tol_divergence = single ? 1e-5 : 1e-12;
    /* Without a recorded expectation: a compensated least-squares slope over >= 10 shells of a
     * Gaussian draw scatters by several hundredths; fixed amplitudes scatter less. */
    q->tol_slope = fixed_amplitudes ? 0.05 : 0.15;
}

/* The keys of --expect and --tolerance: where the value goes and what it must be. A value of
 * --expect is judged like the same value recorded in a helmix file (asked for). */
typedef struct expect_key {
    const char *name;
    double lo;      /* --expect: the value must exceed lo (or equal it when closed) */
    int closed;
    double hi;      /* and be at most hi */
} expect_key;

static const expect_key expect_keys[] = {
    {"fraction", 0, 1, 1}, {"slope", -INFINITY, 0, INFINITY}, {"vrms", 0, 0, INFINITY},
    {"mach", 0, 0, INFINITY}, {"virial", 0, 0, INFINITY}, {"sigma_s", 0, 1, INFINITY},
    {"beta", 0, 0, INFINITY}, {"alfven_mach", 0, 0, INFINITY},
};
#define EXPECT_KEYS "fraction, slope, vrms, mach, virial, sigma_s, beta, alfven_mach"
#define TOLERANCE_KEYS "fraction, slope, vrms, state, magnetic, divergence"

static hx_status set_expected(hx_request *q, const char *key, double v)
{
    if (!strcmp(key, "fraction")) q->has_fraction = 1, q->fraction = v;
    else if (!strcmp(key, "slope")) q->has_slope = 1, q->slope = v;
    else if (!strcmp(key, "vrms")) q->has_vrms = 1, q->vrms = v;
    else if (!strcmp(key, "mach")) q->mach = v, q->asked_mach = 1;
    else if (!strcmp(key, "virial")) q->virial = v, q->asked_virial = 1;
    else if (!strcmp(key, "sigma_s")) q->sigma_s = v, q->asked_sigma_s = 1;
    else if (!strcmp(key, "beta")) q->beta = v, q->asked_beta = 1, q->has_magnetic = 1;
    else q->alfven_mach = v, q->asked_alfven_mach = 1, q->has_magnetic = 1;
    return HX_OK;
}

static int set_tolerance(hx_request *q, const char *key, double v)
{
    if (!strcmp(key, "fraction")) q->tol_fraction = v;
    else if (!strcmp(key, "slope")) q->tol_slope = v;
    else if (!strcmp(key, "vrms")) q->tol_vrms = v;
    else if (!strcmp(key, "state")) q->tol_state = q->tol_momentum = v;
    else if (!strcmp(key, "magnetic")) q->tol_magnetic = v;
    else if (!strcmp(key, "divergence")) q->tol_divergence = v;
    else return 0;
    return 1;
}

hx_status hx_request_parse(hx_request *q, const char *text, int tolerances, const char *option)
{
    char buf[512];
    const char *keys = tolerances ? TOLERANCE_KEYS : EXPECT_KEYS;
    if (strlen(text) >= sizeof buf) return hx_error_set(HX_ERR_ARG, "%s: value too long", option);
    snprintf(buf, sizeof buf, "%s", text);
    char *save = NULL;
    for (char *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(tok, '='), *end = NULL;
        if (!eq) return hx_error_set(HX_ERR_ARG, "%s %s: '%s' is not key=value (keys: %s)", option, text, tok, keys);
        *eq = '\0';
        double v = strtod(eq + 1, &end);
        if (end == eq + 1 || *end || !isfinite(v))
            return hx_error_set(HX_ERR_ARG, "%s %s: '%s' for %s is not a number", option, text, eq + 1, tok);
        if (tolerances) {
            if (!(v >= 0)) return hx_error_set(HX_ERR_ARG, "%s %s: tolerance for %s must be >= 0", option, text, tok);
            if (!set_tolerance(q, tok, v))
                return hx_error_set(HX_ERR_ARG, "%s %s: unknown key '%s' (keys: %s)", option, text, tok, keys);
            continue;
        }
        const expect_key *k = NULL;
        for (size_t i = 0; i < sizeof expect_keys / sizeof expect_keys[0] && !k; i++)
            if (!strcmp(tok, expect_keys[i].name)) k = &expect_keys[i];
        if (!k) return hx_error_set(HX_ERR_ARG, "%s %s: unknown key '%s' (keys: %s)", option, text, tok, keys);
        if (!((k->closed ? v >= k->lo : v > k->lo) && v <= k->hi)) {
            if (isfinite(k->hi)) return hx_error_set(HX_ERR_ARG, "%s %s: %s must be in [%g, %g]", option, text, tok, k->lo, k->hi);
            return hx_error_set(HX_ERR_ARG, "%s %s: %s must be %s %g", option, text, tok, k->closed ? ">=" : ">", k->lo);
        }
        set_expected(q, tok, v);
    }
    return HX_OK;
}

/* One line: what was asked (NAN: nothing was asked of it), what it is judged against and why
 * that differs from the asked value, the measured value and its tolerance. */
static void add(hx_verdict *v, const char *what, double asked, double target, const char *basis, double meas, double tol,
                int passed)
{
    if (v->n >= HX_VERDICT_MAX) return;
    hx_verdict_line *l = &v->line[v->n++];
    snprintf(l->quantity, sizeof l->quantity, "%s", what);
    snprintf(l->basis, sizeof l->basis, "%s", basis);
    l->asked = asked;
    l->target = target;
    l->measured = meas;
    l->tolerance = tol;
    l->passed = isnan(tol) ? 1 : passed; /* information lines never fail */
    if (!l->passed) v->passed = 0;
}

/* A state line: relative tolerance; when nothing was asked the target is what make measured,
 * and the line is named "... as made". */
static void add_state(hx_verdict *v, const char *what, int asked, double target, double meas, double tol)
{
    char name[48];
    snprintf(name, sizeof name, "%s%s", what, asked ? "" : " as made");
    add(v, name, asked ? target : NAN, target, asked ? "asked" : "as made", meas, tol, fabs(meas - target) <= tol);
}

/* The lines of the state in a density; nothing when the cube has none. */
static void judge_state(const hx_request *q, const hx_diag *d, hx_verdict *v)
{
    if (!d->has_state) return;
    const double t = q->tol_state;
    if (isfinite(q->sigma_3d))
        add_state(v, "dispersion sigma_3D", q->asked_sigma_3d, q->sigma_3d, d->sigma_3d, t * fabs(q->sigma_3d));
    if (isfinite(q->mach)) add_state(v, "Mach number", q->asked_mach, q->mach, d->mach, t * fabs(q->mach));
    if (isfinite(q->virial))
        add_state(v, "virial parameter", q->asked_virial, q->virial, d->virial, t * fabs(q->virial));
    /* ln rho is dimensionless: stored digits bound its error absolutely */
    if (isfinite(q->sigma_s))
        add_state(v, "sigma_s of ln rho", q->asked_sigma_s, q->sigma_s, d->sigma_s, t * fmax(1.0, q->sigma_s));
    if (isfinite(q->density_mean))
        add_state(v, "mean density", 0, q->density_mean, d->rho_mean, t * fabs(q->density_mean));
    if (q->momentum_removed)
        add(v, "net momentum |P|/(M vrms)", NAN, 0.0, "bulk flow removed", d->momentum_rel, q->tol_momentum,
            fabs(d->momentum_rel) <= q->tol_momentum);
    else if (isfinite(q->momentum_rel))
        add(v, "net momentum as made", NAN, q->momentum_rel, "as made", d->momentum_rel, q->tol_momentum,
            fabs(d->momentum_rel - q->momentum_rel) <= q->tol_momentum);
}

/* The lines of the magnetic field; nothing without a recorded one or without its analysis. */
static void judge_magnetic(const hx_request *q, const hx_diag *d, hx_verdict *v)
{
    const hx_magnetic *m = d->magnetic;
    if (!q->has_magnetic || !m) return;
    const double t = q->tol_magnetic, b0 = sqrt(q->b0[0] * q->b0[0] + q->b0[1] * q->b0[1] + q->b0[2] * q->b0[2]);
    /* the mean field's error is the round-off of the whole field: scaled by |B0|, or by the
     * rms of B when there is no uniform field */
    const double tmean = t * (b0 > 0 ? b0 : m->field.rms3);
    const char *name[3] = {"mean field B_x", "mean field B_y", "mean field B_z"};
    /* the field make recorded; --expect of beta or alfven_mach alone records none */
    for (int c = 0; c < 3 && isfinite(b0); c++)
        add(v, name[c], NAN, q->b0[c], "as made", m->field.mean[c], tmean, fabs(m->field.mean[c] - q->b0[c]) <= tmean);
    const double trand = t * (q->b_random_rms > 0 ? q->b_random_rms : b0 > 0 ? b0 : m->field.rms3);
    if (isfinite(q->b_random_rms))
        add(v, "rms of the random field", NAN, q->b_random_rms, "as made", m->random_rms, trand,
            fabs(m->random_rms - q->b_random_rms) <= trand);
    if (isfinite(q->beta)) add_state(v, "plasma beta", q->asked_beta, q->beta, m->beta, t * fabs(q->beta));
    if (isfinite(q->alfven_mach))
        add_state(v, "Alfven Mach number", q->asked_alfven_mach, q->alfven_mach, m->alfven_mach, t * fabs(q->alfven_mach));
    add(v, "divergence of B (spectral)", NAN, 0.0, "divergence-free", m->div_spectral, q->tol_divergence,
        m->div_spectral <= q->tol_divergence);
    if (m->has_face)
        add(v, "divergence of B (faces)", NAN, 0.0, "divergence-free", m->face_div, q->tol_divergence,
            m->face_div <= q->tol_divergence);
}

void hx_verdict_judge(const hx_request *q, const hx_diag *d, hx_verdict *v)
{
    memset(v, 0, sizeof *v);
    v->passed = 1;
    /* rms and mean are of v itself: when sqrt(rho) v is decomposed they come from the state */
    const int raw = d->mass_weighted && d->has_state;
    const double rms = raw ? d->vrms : d->rms3, *mean = raw ? d->vmean : d->mean;
    if (q->has_vrms) {
        double tol = q->tol_vrms * q->vrms;
        add(v, "rms velocity", q->vrms, q->vrms, "asked", rms, tol, fabs(rms - q->vrms) <= tol);
        double m = fmax(fabs(mean[0]), fmax(fabs(mean[1]), fabs(mean[2])));
        if (q->zero_mean) add(v, "largest mean component", NAN, 0.0, "zero-mean synthesis", m, tol, m <= tol);
    }
    if (q->has_fraction)
        add(v, "compressive share", q->fraction, q->fraction, "asked", d->fraction, q->tol_fraction,
            fabs(d->fraction - q->fraction) <= q->tol_fraction);
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
        add(v, "share, worst shell", q->fraction, q->fraction, "asked", worst, 10 * q->tol_fraction,
            dev <= 10 * q->tol_fraction);
    }
    /* free draws (exact = none) or a field shaped after the synthesis: the share asked of the
     * ensemble (for zeta, (1-zeta)^2/(1-2 zeta+3 zeta^2)) next to the share this file holds */
    if (q->has_recorded)
        add(v, "compressive share as drawn", q->expected_fraction, q->recorded_fraction,
            q->zero_mean ? "this draw" : "as written", d->fraction, q->tol_fraction,
            fabs(d->fraction - q->recorded_fraction) <= q->tol_fraction);
    if (q->has_slope) /* a helmix file: what the compensated fit gives on this grid and band */
        add(v, "spectral slope", isfinite(q->slope_recipe) ? q->slope_recipe : q->slope, q->slope,
            isfinite(q->slope_recipe) && q->slope_recipe != q->slope ? "fit on this grid" : "asked", d->slope,
            q->tol_slope, fabs(d->slope - q->slope) <= q->tol_slope);
    judge_state(q, d, v);
    judge_magnetic(q, d, v);
}

/* A number, or "-" for NAN (nothing asked). */
static const char *cell(char *buf, size_t len, double x)
{
    if (isnan(x)) snprintf(buf, len, "-");
    else snprintf(buf, len, "%.8g", x);
    return buf;
}

void hx_verdict_print(const hx_verdict *v, FILE *out)
{
    char a[32], t[32];
    fprintf(out, "\n%-28s %14s %14s %14s %11s  %-7s  %s\n", "check", "asked", "target", "measured", "tolerance",
            "verdict", "target is");
    for (int i = 0; i < v->n; i++) {
        const hx_verdict_line *l = &v->line[i];
        fprintf(out, "%-28s %14s %14s %14.8g ", l->quantity, cell(a, sizeof a, l->asked), cell(t, sizeof t, l->target),
                l->measured);
        if (isnan(l->tolerance)) fprintf(out, "%11s  %-7s  %s\n", "-", "info", l->basis);
        else fprintf(out, "%11.2g  %-7s  %s\n", l->tolerance, l->passed ? "PASS" : "FAIL", l->basis);
    }
    fprintf(out, "%s\n", v->n == 0 ? "nothing to check: the file records no request and no --expect was given"
                                   : v->passed ? "verdict: PASS" : "verdict: FAIL");
}
