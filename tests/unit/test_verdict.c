/* test_verdict.c — asked, target and measured: each line passes inside its tolerance and
 * fails outside it, information lines never fail, the state in a density and the magnetic
 * field are judged against the asked or recorded values, and --expect/--tolerance text is
 * parsed or refused with a clear message. */
#include <math.h>

#include "helmix/cube.h"
#include "helmix/verdict.h"
#include "hx_test.h"

static hx_diag cube(double fraction, double rms3, double slope)
{
    hx_diag d = {0};
    d.fraction = fraction;
    d.rms3 = rms3;
    d.slope = slope;
    return d;
}

static int line_passed(const hx_verdict *v, const char *what)
{
    for (int i = 0; i < v->n; i++)
        if (!strcmp(v->line[i].quantity, what)) return v->line[i].passed;
    return -1;
}

static void test_judge(void)
{
    hx_request q;
    hx_verdict v;
    hx_request_defaults(&q, 1, 0); /* single precision: 1e-5 on rms and share */
    q.has_vrms = 1, q.vrms = 2.0;
    q.has_fraction = 1, q.fraction = 0.3;
    q.has_slope = 1, q.slope = 2.0;
    q.expected_fraction = 0.3;
    hx_diag d = cube(0.300004, 2.00001, 1.9);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    CHECK(line_passed(&v, "rms velocity") == 1);
    CHECK(line_passed(&v, "spectral slope") == 1);
    d = cube(0.3002, 2.0, 1.9);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "compressive share") == 0);
    d = cube(0.3, 2.0, 1.8); /* slope off by 0.2 > 0.15 */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "spectral slope") == 0);
    d = cube(0.3, 2.0, NAN); /* no slope measured: a request cannot pass on NaN */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed);
    /* free draws: one line, the share asked of the ensemble as asked, the share this draw
     * holds as the target (issue 9: what was asked apart from what is derived) */
    hx_request_defaults(&q, 0, 0);
    q.has_recorded = 1, q.recorded_fraction = 0.2526;
    q.expected_fraction = 1.0 / 3.0;
    d = cube(0.2526, 1.0, 2.0);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 1 && !strcmp(v.line[0].quantity, "compressive share as drawn"));
    CHECK(v.line[0].asked == 1.0 / 3.0 && v.line[0].target == 0.2526 && !strcmp(v.line[0].basis, "this draw"));
    d = cube(0.2527, 1.0, 2.0); /* the target, not the ensemble value, decides */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed);
}

/* A helmix file that asked slope 2: the table shows 2 as asked and the fit expected on this grid
 * as the target; the zero mean is derived (nothing asked: "-"). */
static void test_asked_target(void)
{
    hx_request q;
    hx_verdict v;
    hx_request_defaults(&q, 0, 0);
    q.has_vrms = 1, q.vrms = 1.0;
    q.has_slope = 1, q.slope_recipe = 2.0, q.slope = 1.914, q.tol_slope = 0.05;
    hx_diag d = cube(0.3, 1.0, 1.93);
    hx_verdict_judge(&q, &d, &v);
    int found = 0;
    for (int i = 0; i < v.n; i++) {
        const hx_verdict_line *l = &v.line[i];
        if (!strcmp(l->quantity, "spectral slope")) {
            found++;
            CHECK(l->asked == 2.0 && l->target == 1.914 && l->passed && !strcmp(l->basis, "fit on this grid"));
        }
        if (!strcmp(l->quantity, "largest mean component")) {
            found++;
            CHECK(isnan(l->asked) && l->target == 0.0);
        }
    }
    CHECK(found == 2 && v.passed);
    /* the printed table: its header names the columns, the slope row shows 2 then 1.914 */
    char buf[4096] = {0};
    FILE *fp = fmemopen(buf, sizeof buf - 1, "w");
    CHECK(fp != NULL);
    if (!fp) return;
    hx_verdict_print(&v, fp);
    fclose(fp);
    CHECK_STR_CONTAINS(buf, "asked");
    CHECK_STR_CONTAINS(buf, "target");
    CHECK(strstr(buf, "requested") == NULL);
    const char *row = strstr(buf, "spectral slope");
    double asked = 0, target = 0;
    CHECK(row && sscanf(row + strlen("spectral slope"), "%lf %lf", &asked, &target) == 2 && asked == 2.0 && target == 1.914);
    row = strstr(buf, "largest mean component");
    char dash[8] = {0};
    CHECK(row && sscanf(row + strlen("largest mean component"), "%7s", dash) == 1 && !strcmp(dash, "-"));
    /* --expect: asked and target are the same number */
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "slope=2", 0, "--expect") == HX_OK);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.n == 1 && v.line[0].asked == 2.0 && v.line[0].target == 2.0 && !strcmp(v.line[0].basis, "asked"));
}

static void test_parse(void)
{
    hx_request q;
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "fraction=0.4,slope=1.6666667,vrms=3", 0, "--expect") == HX_OK);
    CHECK(q.has_fraction && q.has_slope && q.has_vrms && q.fraction == 0.4 && q.vrms == 3);
    CHECK(hx_request_parse(&q, "fraction=0.02", 1, "--tolerance") == HX_OK && q.tol_fraction == 0.02);
    CHECK(hx_request_parse(&q, "fraction=1.5", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "[0, 1]");
    CHECK(hx_request_parse(&q, "frac=0.1", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "unknown key 'frac'");
    CHECK(hx_request_parse(&q, "slope=abc", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "not a number");
    CHECK(hx_request_parse(&q, "vrms", 0, "--expect") == HX_ERR_ARG);
}

/* A cube in a density whose state matches the request below exactly. */
static hx_diag state_cube(void)
{
    hx_diag d = cube(0.3, 2.0, 2.0);
    d.has_state = 1;
    d.sigma_3d = 0.65, d.mach = 3.5, d.virial = 1.0, d.sigma_s = 0.72, d.rho_mean = 88.5;
    d.momentum_rel = 0.0;
    d.vrms = 0.64, d.rms3 = 2.0; /* sqrt(rho) v analysed: rms3 is not the rms of v */
    return d;
}

static hx_request state_request(int single)
{
    hx_request q;
    hx_request_defaults(&q, single, 0);
    q.sigma_3d = 0.65, q.mach = 3.5, q.virial = 1.0, q.sigma_s = 0.72, q.density_mean = 88.5;
    q.asked_virial = 1; /* amplitude by the virial parameter: the others are as make measured them */
    q.momentum_removed = 1;
    return q;
}

/* The state lines of a cube in a density (helmix specification: the asked value where one was
 * asked, else the recorded one; tolerances from the stored precision, 1e-5 single, 1e-9 double;
 * |P|/(M vrms) against 0 when make removed the bulk flow). */
static void test_state(void)
{
    hx_verdict v;
    hx_request q = state_request(1);
    hx_diag d = state_cube();
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 6);
    CHECK(line_passed(&v, "virial parameter") == 1);               /* asked: no suffix */
    CHECK(line_passed(&v, "Mach number as made") == 1);            /* recorded: "as made" */
    CHECK(line_passed(&v, "dispersion sigma_3D as made") == 1);
    CHECK(line_passed(&v, "sigma_s of ln rho as made") == 1);
    CHECK(line_passed(&v, "mean density as made") == 1);
    CHECK(line_passed(&v, "net momentum |P|/(M vrms)") == 1);
    /* inside and outside the relative tolerance, one line at a time */
    d = state_cube(), d.virial = 1.0 + 0.9e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    d = state_cube(), d.virial = 1.0 + 1.1e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "virial parameter") == 0 && line_passed(&v, "Mach number as made") == 1);
    d = state_cube(), d.mach = 3.5 * 1.1, d.sigma_3d = 0.65 * 1.1; /* velocity scaled by 1.1 */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "Mach number as made") == 0 && line_passed(&v, "dispersion sigma_3D as made") == 0);
    CHECK(line_passed(&v, "sigma_s of ln rho as made") == 1);
    d = state_cube(), d.rho_mean = 88.5 * 1.001;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "mean density as made") == 0);
    /* sigma_s is held absolutely (ln rho is dimensionless): a uniform density passes at 0 */
    q.sigma_s = 0.0, d = state_cube(), d.sigma_s = 1e-12;
    hx_verdict_judge(&q, &d, &v);
    CHECK(line_passed(&v, "sigma_s of ln rho as made") == 1);
    d.sigma_s = 2e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(line_passed(&v, "sigma_s of ln rho as made") == 0);
    /* momentum: below the precision's bound when the bulk flow was removed */
    q = state_request(1), d = state_cube(), d.momentum_rel = 9e-6;
    hx_verdict_judge(&q, &d, &v);
    CHECK(line_passed(&v, "net momentum |P|/(M vrms)") == 1);
    d.momentum_rel = 2e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "net momentum |P|/(M vrms)") == 0);
    /* ... else equal to what make recorded */
    q.momentum_removed = 0, q.momentum_rel = 0.0365, d.momentum_rel = 0.0365 + 5e-6;
    hx_verdict_judge(&q, &d, &v);
    CHECK(line_passed(&v, "net momentum as made") == 1);
    d.momentum_rel = 0.0;
    hx_verdict_judge(&q, &d, &v);
    CHECK(line_passed(&v, "net momentum as made") == 0);
    /* double precision holds 1e-9 */
    q = state_request(0), d = state_cube(), d.virial = 1.0 + 5e-10;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    d.virial = 1.0 + 5e-9;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "virial parameter") == 0);
    /* an expected Mach number cannot pass without a sound speed (NAN measured) */
    q = state_request(1), d = state_cube(), d.mach = NAN;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "Mach number as made") == 0);
    /* a windowed velocity keeps no slope: with tolerance NAN the slope is information only */
    q = state_request(1), q.has_slope = 1, q.slope = 1.87, q.tol_slope = NAN, d = state_cube(), d.slope = 1.15;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && line_passed(&v, "spectral slope") == 1 && isnan(v.line[0].tolerance));
    /* a cube without a density has no state lines, whatever the request */
    q = state_request(1), d = state_cube(), d.has_state = 0;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 0);
}

/* rms and mean are those of v itself when sqrt(rho) v is decomposed, and a field shaped after
 * its synthesis (fraction_of = written) promises no zero mean (helmix specification). */
static void test_weighted_rms(void)
{
    hx_verdict v;
    hx_request q = state_request(1);
    q.has_vrms = 1, q.vrms = 0.64;
    hx_diag d = state_cube();
    d.mass_weighted = 1, d.mean[2] = 0.5; /* the mean of sqrt(rho) v, not judged */
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && line_passed(&v, "rms velocity") == 1 && line_passed(&v, "largest mean component") == 1);
    d.vmean[2] = 0.18;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "largest mean component") == 0);
    q.zero_mean = 0;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && line_passed(&v, "largest mean component") == -1);
    d.mass_weighted = 0; /* v itself analysed: its own rms, 2.0, is judged */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "rms velocity") == 0);
    /* every line fits: rms, mean, share, worst shell, slope (the recipe's as asked) and six of the state */
    q = state_request(0);
    q.has_vrms = q.has_fraction = q.has_shell_fraction = q.has_slope = 1;
    q.vrms = 0.64, q.fraction = 0.3, q.slope = 2.0, q.slope_recipe = 1.9, q.expected_fraction = 0.3;
    d = state_cube(), d.mass_weighted = 1;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.n == 11 && v.n <= HX_VERDICT_MAX);
}

/* A magnetic summary that matches magnetic_request below exactly: B0 = (0.3, 0.4, 0), |B0| = 0.5,
 * random rms 0.25, beta 0.8, M_A 3, divergences at round-off of single precision. */
static hx_magnetic magnetic_summary(void)
{
    hx_magnetic m = {0};
    m.field.mean[0] = 0.3, m.field.mean[1] = 0.4, m.field.mean[2] = 0.0;
    m.field.rms3 = sqrt(0.25 + 0.25 * 0.25);
    m.mean_abs = 0.5, m.random_rms = 0.25, m.beta = 0.8, m.alfven_mach = 3.0;
    m.div_spectral = 1e-7, m.has_face = 1, m.face_div = 2e-7;
    return m;
}

/* What make records of that field, read back by cube.c as --check does (beta asked). */
static hx_request magnetic_request(int single)
{
    hx_cube_state s;
    hx_request q;
    memset(&s, 0, sizeof s);
    s.found = 1;
    s.b0[0] = 0.3, s.b0[1] = 0.4, s.b0[2] = 0.0, s.b_random_rms = 0.25;
    s.beta = 0.8, s.beta_asked = 0.8, s.alfven_mach = 3.0, s.alfven_mach_asked = NAN;
    hx_request_defaults(&q, single, 0);
    hx_cube_request_magnetic(&s, single, &q);
    return q;
}

static double tolerance_of(const hx_verdict *v, const char *what)
{
    for (int i = 0; i < v->n; i++)
        if (!strcmp(v->line[i].quantity, what)) return v->line[i].tolerance;
    return NAN;
}

/* The magnetic lines (helmix specification: the mean field equals B0 within 1e-5 (single) /
 * 1e-9 (double) of |B0|, or of the rms when B0 = 0; the random rms within the same relative
 * tolerance; beta and M_A equal to the asked value, else the recorded one; both divergence
 * ratios below 1e-5 (single) / 1e-12 (double)); each passes inside and fails outside. */
static void test_magnetic(void)
{
    hx_verdict v;
    hx_diag d = cube(0.3, 2.0, 2.0);
    hx_magnetic m = magnetic_summary();
    hx_request q = magnetic_request(1);
    d.magnetic = &m;
    CHECK(q.has_magnetic && q.asked_beta && !q.asked_alfven_mach);
    CHECK(q.tol_magnetic == 1e-5 && q.tol_divergence == 1e-5);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 8);
    CHECK(line_passed(&v, "mean field B_x") == 1 && line_passed(&v, "mean field B_y") == 1);
    CHECK(line_passed(&v, "mean field B_z") == 1 && line_passed(&v, "rms of the random field") == 1);
    CHECK(line_passed(&v, "plasma beta") == 1);                /* asked: no suffix */
    CHECK(line_passed(&v, "Alfven Mach number as made") == 1); /* recorded */
    CHECK(line_passed(&v, "divergence of B (spectral)") == 1 && line_passed(&v, "divergence of B (faces)") == 1);
    CHECK_CLOSE(tolerance_of(&v, "mean field B_z"), 0.5e-5, 1e-18); /* relative to |B0|, for the zero component too */
    /* each line alone: just inside passes, just outside fails, the others stay */
    m = magnetic_summary(), m.field.mean[0] = 0.3 + 0.9 * 0.5e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    m.field.mean[0] = 0.3 + 1.1 * 0.5e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "mean field B_x") == 0 && line_passed(&v, "mean field B_y") == 1);
    m = magnetic_summary(), m.field.mean[2] = -1.1 * 0.5e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "mean field B_z") == 0);
    m = magnetic_summary(), m.random_rms = 0.25 * (1 + 0.9e-5);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    m.random_rms = 0.25 * (1 + 1.1e-5);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "rms of the random field") == 0 && line_passed(&v, "plasma beta") == 1);
    m = magnetic_summary(), m.beta = 0.8 * (1 - 1.1e-5);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "plasma beta") == 0 && line_passed(&v, "Alfven Mach number as made") == 1);
    m = magnetic_summary(), m.alfven_mach = 3.0 * (1 + 1.1e-5);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "Alfven Mach number as made") == 0 && line_passed(&v, "plasma beta") == 1);
    m = magnetic_summary(), m.alfven_mach = NAN; /* not measurable: a recorded value cannot pass */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "Alfven Mach number as made") == 0);
    m = magnetic_summary(), m.div_spectral = 0.9e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    m.div_spectral = 1.1e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "divergence of B (spectral)") == 0 && line_passed(&v, "divergence of B (faces)") == 1);
    m = magnetic_summary(), m.face_div = 1.1e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "divergence of B (faces)") == 0 && line_passed(&v, "divergence of B (spectral)") == 1);
    m.face_div = NAN; /* a field holding non-numbers */
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "divergence of B (faces)") == 0);
    /* B scaled by 1.1: mean, random rms, beta (1/1.21) and M_A (1/1.1) fail; the divergences do not */
    m = magnetic_summary();
    m.field.mean[0] *= 1.1, m.field.mean[1] *= 1.1, m.random_rms *= 1.1, m.beta /= 1.21, m.alfven_mach /= 1.1;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "mean field B_x") == 0 && line_passed(&v, "rms of the random field") == 0);
    CHECK(line_passed(&v, "plasma beta") == 0 && line_passed(&v, "Alfven Mach number as made") == 0);
    CHECK(line_passed(&v, "divergence of B (spectral)") == 1 && line_passed(&v, "divergence of B (faces)") == 1);
    /* double precision: 1e-9 relative, 1e-12 on the divergences */
    q = magnetic_request(0);
    CHECK(q.tol_magnetic == 1e-9 && q.tol_divergence == 1e-12);
    m = magnetic_summary(), m.div_spectral = 5e-13, m.face_div = 5e-13, m.random_rms = 0.25 * (1 + 5e-10);
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed);
    m.face_div = 2e-12, m.random_rms = 0.25 * (1 + 2e-9);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "divergence of B (faces)") == 0 && line_passed(&v, "rms of the random field") == 0);
    /* no uniform field: the mean is held to the rms of B; beta and M_A are infinite, not judged */
    hx_cube_state s;
    memset(&s, 0, sizeof s);
    s.found = 1, s.b_random_rms = 0.25, s.beta = INFINITY, s.alfven_mach = INFINITY;
    s.beta_asked = s.alfven_mach_asked = NAN;
    hx_request_defaults(&q, 1, 0);
    hx_cube_request_magnetic(&s, 1, &q);
    m = magnetic_summary(), m.field.mean[0] = m.field.mean[1] = 0.0, m.field.rms3 = 0.25, m.mean_abs = 0;
    m.field.mean[2] = 0.9 * 0.25e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 6 && line_passed(&v, "plasma beta") == -1);
    m.field.mean[2] = 1.1 * 0.25e-5;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed && line_passed(&v, "mean field B_z") == 0);
    /* without a face-centred field there is no face line; without a magnetic analysis no line;
     * a file that records no magnetic field asks for none */
    q = magnetic_request(1), m = magnetic_summary(), m.has_face = 0, m.face_div = 1.0;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 7 && line_passed(&v, "divergence of B (faces)") == -1);
    d.magnetic = NULL;
    hx_verdict_judge(&q, &d, &v);
    CHECK(v.passed && v.n == 0);
    memset(&s, 0, sizeof s);
    s.found = 1;
    s.b0[0] = s.b0[1] = s.b0[2] = NAN;
    hx_request_defaults(&q, 1, 0);
    hx_cube_request_magnetic(&s, 1, &q);
    d.magnetic = &m;
    hx_verdict_judge(&q, &d, &v);
    CHECK(!q.has_magnetic && v.n == 0);
}

/* --expect judges a foreign cube's state and magnetic numbers like recorded requests
 * (helmix specification: "--expect" names what the cube should hold). */
static void test_expect_state(void)
{
    hx_request q;
    hx_verdict v;
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "mach=3.5,virial=1,sigma_s=0.72,beta=0.5,alfven_mach=2", 0, "--expect") == HX_OK);
    CHECK(q.asked_mach && q.asked_virial && q.asked_sigma_s && q.asked_beta && q.asked_alfven_mach && q.has_magnetic);
    CHECK(q.mach == 3.5 && q.virial == 1.0 && q.sigma_s == 0.72 && q.beta == 0.5 && q.alfven_mach == 2.0);
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "mach=3.5", 0, "--expect") == HX_OK);
    hx_diag d = state_cube();
    hx_verdict_judge(&q, &d, &v);
    int found = 0;
    for (int i = 0; i < v.n; i++)
        if (strstr(v.line[i].quantity, "Mach")) {
            found = 1;
            CHECK(v.line[i].passed && v.line[i].asked == 3.5 && v.line[i].target == 3.5);
        }
    CHECK(found && v.passed);
    hx_request_defaults(&q, 0, 0);
    CHECK(hx_request_parse(&q, "mach=4", 0, "--expect") == HX_OK);
    hx_verdict_judge(&q, &d, &v);
    CHECK(!v.passed);
    CHECK(hx_request_parse(&q, "beta=0", 0, "--expect") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "beta must be > 0");
    CHECK(hx_request_parse(&q, "sigma_s=-1", 0, "--expect") == HX_ERR_ARG);
    CHECK(hx_request_parse(&q, "state=1e-3,magnetic=1e-4,divergence=1e-8", 1, "--tolerance") == HX_OK);
    CHECK(q.tol_state == 1e-3 && q.tol_momentum == 1e-3 && q.tol_magnetic == 1e-4 && q.tol_divergence == 1e-8);
    CHECK(hx_request_parse(&q, "mach=1", 1, "--tolerance") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "keys: fraction, slope, vrms, state, magnetic, divergence");
}

int main(void)
{
    test_judge();
    test_asked_target();
    test_parse();
    test_expect_state();
    test_state();
    test_weighted_rms();
    test_magnetic();
    return hx_test_finish();
}
