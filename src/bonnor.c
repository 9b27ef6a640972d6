/* bonnor.c — the isothermal Lane-Emden solution psi(xi) on a table, and Bonnor-Ebert spheres.
 * Invariant: node i of a table holds psi and p = xi dpsi/dxi at t = ln xi = t0 + i dt, the
 * last node sits at xi_max; below XI0 (and for tables that end there) the series is used. */
#include "helmix/bonnor.h"

#include <math.h>
#include <stdlib.h>

#include "check.h"

/* Physics, in the order a reader needs it.
 *
 * Isothermal gas, P = c_s^2 rho, in hydrostatic equilibrium: c_s^2 d ln rho / dr = -G M(r) / r^2
 * with dM/dr = 4 pi r^2 rho. Writing rho = rho_c exp(-psi) and r = a xi with
 * a^2 = c_s^2 / (4 pi G rho_c) turns this into the isothermal Lane-Emden equation
 *     (1/xi^2) d/dxi (xi^2 psi') = exp(-psi),  psi(0) = psi'(0) = 0
 * (Chandrasekhar 1939, ch. IV). The first form also gives the mass: M(r) = r^2 c_s^2 psi_r / G
 * = 4 pi rho_c a^3 xi^2 psi'(xi), so mu = xi^2 psi' is the dimensionless mass.
 *
 * At fixed edge pressure P = rho_c exp(-psi) c_s^2, eliminating rho_c from M gives
 *     m = M G^(3/2) P^(1/2) / c_s^4 = (4 pi)^(-1/2) mu exp(-psi/2),
 * and since d mu / dxi = xi^2 exp(-psi),
 *     dm/dxi = (4 pi)^(-1/2) xi^2 exp(-psi/2) (exp(-psi) - psi'^2 / 2).
 * The critical sphere is the first zero of exp(-psi) - psi'^2 / 2 (Ebert 1955; Bonnor 1956).
 *
 * Numerics. psi grows like 2 ln xi and its approach to the singular sphere oscillates
 * periodically in ln xi, so we integrate in t = ln xi. With p = xi psi' = dpsi/dt:
 *     dpsi/dt = p,   dp/dt = xi^2 exp(-psi) - p = exp(2t - psi) - p.
 * A fixed step in t is then equally accurate at xi = 1 and xi = 1e4 with ~1e4 nodes, where a
 * fixed step in xi would need ~1e7. t -> -inf at the centre, so the integration starts at XI0
 * from the series psi = xi^2/6 - xi^4/120 + xi^6/1890 - 61 xi^8/1632960 + ... (Chandrasekhar
 * 1939; the xi^8 term re-derived from the power-series recursion), whose first omitted term,
 * 629 xi^10 / 224532000, is 3e-16 at XI0 = 0.1. */

#define XI0 0.1                /* series below, integration above                        */
#define DT (1.0 / 1024.0)      /* RK4 step in ln xi: global error ~1e-13 (see the tests)  */
#define XI_LIMIT 1e4           /* largest xi_max: at most ~1.2e4 nodes, ~190 kB          */

struct hx_bonnor {
    double xi_max;
    double t0, dt; /* ln XI0 and the step in ln xi */
    int n;         /* steps: nodes 0..n; n = 0 when xi_max <= XI0 (series only) */
    double *psi;   /* psi at node i */
    double *p;     /* p = xi dpsi/dxi = dpsi/dt at node i */
};

static double series_psi(double x)
{
    double x2 = x * x;
    return x2 * (1.0 / 6 + x2 * (-1.0 / 120 + x2 * (1.0 / 1890 + x2 * (-61.0 / 1632960))));
}

static double series_dpsi(double x)
{
    double x2 = x * x;
    return x * (2.0 / 6 + x2 * (-4.0 / 120 + x2 * (6.0 / 1890 + x2 * (-8.0 * 61 / 1632960))));
}

/* Right-hand side in t = ln xi; y = (psi, p). */
static double dpdt(double t, double psi, double p) { return exp(2.0 * t - psi) - p; }

/* One classical RK4 step of length h from (t, y). */
static void rk4(double t, double y[2], double h)
{
    double k1a = y[1], k1b = dpdt(t, y[0], y[1]);
    double k2a = y[1] + 0.5 * h * k1b, k2b = dpdt(t + 0.5 * h, y[0] + 0.5 * h * k1a, k2a);
    double k3a = y[1] + 0.5 * h * k2b, k3b = dpdt(t + 0.5 * h, y[0] + 0.5 * h * k2a, k3a);
    double k4a = y[1] + h * k3b, k4b = dpdt(t + h, y[0] + h * k3a, k4a);
    y[0] += h / 6.0 * (k1a + 2.0 * k2a + 2.0 * k3a + k4a);
    y[1] += h / 6.0 * (k1b + 2.0 * k2b + 2.0 * k3b + k4b);
}

static void start(double y[2])
{
    y[0] = series_psi(XI0);
    y[1] = XI0 * series_dpsi(XI0);
}

hx_status hx_bonnor_create(hx_bonnor **out, double xi_max)
{
    hx_status st = HX_OK;
    hx_bonnor *be = NULL;
    *out = NULL;
    if (!(xi_max > 0 && xi_max <= XI_LIMIT)) /* written so that NaN fails too */
        HX_FAIL(HX_ERR_ARG, "[bonnor] xi_max = %g: must be a number in (0, %g]", xi_max, XI_LIMIT);
    HX_ALLOC(be, 1);
    be->xi_max = xi_max;
    be->t0 = log(XI0);
    if (xi_max > XI0) {
        double span = log(xi_max) - be->t0;
        be->n = (int)ceil(span / DT);
        be->dt = span / be->n; /* a whole number of steps puts the last node on xi_max */
        HX_ALLOC(be->psi, be->n + 1);
        HX_ALLOC(be->p, be->n + 1);
        double y[2];
        start(y);
        for (int i = 0;; i++) {
            be->psi[i] = y[0];
            be->p[i] = y[1];
            if (i == be->n) break;
            rk4(be->t0 + i * be->dt, y, be->dt);
        }
    }
    *out = be;
    return HX_OK;
fail:
    hx_bonnor_destroy(&be);
    return st;
}

void hx_bonnor_destroy(hx_bonnor **be)
{
    if (!be || !*be) return;
    free((*be)->psi);
    free((*be)->p);
    free(*be);
    *be = NULL;
}

/* psi and dpsi/dxi at xi, clamped to [0, xi_max]. Between nodes, cubic Hermite in t: psi with
 * slope p, and p with slope dp/dt from the equation, so both keep the O(dt^4) accuracy. */
static void eval(const hx_bonnor *be, double xi, double *psi, double *dpsi)
{
    if (isnan(xi)) {
        *psi = *dpsi = NAN;
        return;
    }
    if (xi > be->xi_max) xi = be->xi_max;
    if (xi <= XI0 || be->n == 0) {
        if (xi < 0) xi = 0;
        *psi = series_psi(xi);
        *dpsi = series_dpsi(xi);
        return;
    }
    double t = log(xi), s = (t - be->t0) / be->dt;
    int i = (int)floor(s);
    if (i > be->n - 1) i = be->n - 1; /* xi_max itself, or a rounding above it */
    if (i < 0) i = 0;
    double u = s - i, h = be->dt, ta = be->t0 + i * h, tb = ta + h;
    double y0 = be->psi[i], y1 = be->psi[i + 1], p0 = be->p[i], p1 = be->p[i + 1];
    double q0 = dpdt(ta, y0, p0), q1 = dpdt(tb, y1, p1);
    double v = 1.0 - u;
    double h00 = (1.0 + 2.0 * u) * v * v, h10 = u * v * v, h01 = u * u * (3.0 - 2.0 * u), h11 = -u * u * v;
    *psi = h00 * y0 + h10 * h * p0 + h01 * y1 + h11 * h * p1;
    *dpsi = (h00 * p0 + h10 * h * q0 + h01 * p1 + h11 * h * q1) / xi;
}

double hx_bonnor_psi(const hx_bonnor *be, double xi)
{
    double psi, dpsi;
    eval(be, xi, &psi, &dpsi);
    return psi;
}

double hx_bonnor_dpsi(const hx_bonnor *be, double xi)
{
    double psi, dpsi;
    eval(be, xi, &psi, &dpsi);
    return dpsi;
}

double hx_bonnor_xi_max(const hx_bonnor *be) { return be->xi_max; }

double hx_bonnor_contrast(const hx_bonnor *be) { return exp(hx_bonnor_psi(be, be->xi_max)); }

double hx_bonnor_mass_factor(const hx_bonnor *be)
{
    return be->xi_max * be->xi_max * hx_bonnor_dpsi(be, be->xi_max);
}

double hx_bonnor_pressure_mass(const hx_bonnor *be)
{
    return hx_bonnor_mass_factor(be) * exp(-0.5 * hx_bonnor_psi(be, be->xi_max)) / sqrt(4.0 * M_PI);
}

/* 2 xi^2 (exp(-psi) - psi'^2 / 2) in the variables of the integration: > 0 while m still grows. */
static double growth(double t, const double y[2]) { return 2.0 * exp(2.0 * t - y[0]) - y[1] * y[1]; }

double hx_bonnor_critical_xi(void)
{
    /* March with the table's step until m stops growing, then bisect on the length of one
     * RK4 step from the last node before the sign change: no table, nothing to allocate. */
    double y[2], t = log(XI0);
    start(y);
    while (t < log(100.0)) { /* the first maximum is near 6.45; 100 only bounds the loop */
        double z[2] = {y[0], y[1]};
        rk4(t, z, DT);
        if (growth(t + DT, z) <= 0) {
            double lo = 0, hi = DT;
            while (hi - lo > 1e-15) {
                double mid = 0.5 * (lo + hi), w[2] = {y[0], y[1]};
                rk4(t, w, mid);
                if (growth(t + mid, w) > 0) lo = mid;
                else hi = mid;
            }
            return exp(t + 0.5 * (lo + hi));
        }
        y[0] = z[0], y[1] = z[1];
        t += DT;
    }
    return NAN; /* unreachable for this equation; NaN rather than a wrong number */
}

/* Positive and finite: the scaling formulas have no meaning otherwise. */
static int positive(double x) { return x > 0 && isfinite(x); }

double hx_bonnor_radius(const hx_bonnor *be, double c_s, double rho_c, double G)
{
    if (!positive(c_s) || !positive(rho_c) || !positive(G)) return NAN;
    return be->xi_max * c_s / sqrt(4.0 * M_PI * G * rho_c);
}

double hx_bonnor_mass(const hx_bonnor *be, double c_s, double rho_c, double G)
{
    if (!positive(c_s) || !positive(rho_c) || !positive(G)) return NAN;
    double a = c_s / sqrt(4.0 * M_PI * G * rho_c);
    return 4.0 * M_PI * rho_c * a * a * a * hx_bonnor_mass_factor(be);
}

double hx_bonnor_central_density(const hx_bonnor *be, double c_s, double mass, double G)
{
    if (!positive(c_s) || !positive(mass) || !positive(G)) return NAN;
    /* M = mu c_s^3 / (sqrt(4 pi) G^(3/2) rho_c^(1/2)), solved for rho_c; the square is taken
     * last so that c_s^6 and G^3 never stand alone (they leave double range in some units). */
    double s = hx_bonnor_mass_factor(be) * c_s * c_s * c_s / (sqrt(4.0 * M_PI) * G * sqrt(G) * mass);
    return s * s;
}
