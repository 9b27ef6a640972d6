/* flow.c — momentum, angular momentum, dispersions and their removal, one component at a time.
 * Invariant: every sum is a plain sum over cells (no cell volume) until hx_flow_summarize, and
 * Delta is measured from the centre of the mass weight, so sum w Delta = 0 and removing the
 * bulk velocity leaves the angular momentum unchanged (and removing a rotation the momentum). */
#include "helmix/flow.h"

#include <math.h>
#include <string.h>

#include "check.h"

/* Cell centre of local row (z, y) and column x; the rank's planes start at g->z0. */
static inline void centre(const hx_grid *g, ptrdiff_t z, ptrdiff_t y, ptrdiff_t x, double p[3])
{
    p[0] = ((double)x + 0.5) * g->box[0] / (double)g->n[0];
    p[1] = ((double)y + 0.5) * g->box[1] / (double)g->n[1];
    p[2] = ((double)(g->z0 + z) + 0.5) * g->box[2] / (double)g->n[2];
}

static inline double dist(const double p[3], const double c[3])
{
    double dx = p[0] - c[0], dy = p[1] - c[1], dz = p[2] - c[2];
    return sqrt(dx * dx + dy * dy + dz * dz);
}

/* Offsets of the sums of one weight in hx_flow.acc. */
enum { W0 = 0, W1 = 1, W2 = 4, V1 = 13, V2 = 16, VX = 19 };

static void add_density(hx_sum *acc, double wt, const double d[3])
{
    hx_sum_add(&acc[W0], wt);
    for (int a = 0; a < 3; a++) {
        hx_sum_add(&acc[W1 + a], wt * d[a]);
        for (int b = 0; b < 3; b++) hx_sum_add(&acc[W2 + 3 * a + b], wt * d[a] * d[b]);
    }
}

/* The mass weight of a cell: rho, times the window when the sums are windowed. */
static inline double mass_weight(const hx_flow *fl, const hx_cloud *cl, double rho, const double p[3])
{
    return fl->windowed ? rho * hx_cloud_window(cl, dist(p, cl->center)) : rho;
}

/* Reduce the sums [from, to) of the three weights and copy them into the plain structs. */
static hx_status reduce(hx_flow *fl, int from, int to, MPI_Comm comm)
{
    hx_status st = HX_OK;
    hx_sum buf[3 * HX_FLOW_SUMS];
    int n = to - from;
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < n; j++) buf[i * n + j] = fl->acc[i][from + j];
    HX_TRY(hx_sum_allreduce(buf, 3 * n, comm));
    hx_flow_w *ws[3] = {&fl->mass, &fl->region, &fl->volume};
    for (int i = 0; i < 3; i++) {
        double v[HX_FLOW_SUMS];
        for (int j = 0; j < HX_FLOW_SUMS; j++) v[j] = hx_sum_value(&fl->acc[i][j]);
        for (int j = 0; j < n; j++) v[from + j] = hx_sum_value(&buf[i * n + j]);
        hx_flow_w *w = ws[i];
        if (from <= W0) {
            w->w0 = v[W0];
            memcpy(w->w1, v + W1, sizeof w->w1);
            memcpy(w->w2, v + W2, sizeof w->w2);
        }
        if (to > V1) {
            memcpy(w->v1, v + V1, sizeof w->v1);
            memcpy(w->v2, v + V2, sizeof w->v2);
            memcpy(w->vx, v + VX, sizeof w->vx);
        }
    }
fail:
    return st;
}

hx_status hx_flow_begin(hx_flow *fl, const hx_grid *g, const double *rho, const hx_cloud *cl, int windowed,
                        MPI_Comm comm)
{
    hx_status st = HX_OK;
    memset(fl, 0, sizeof *fl);
    fl->windowed = windowed;
    fl->cell_volume = g->box[0] * g->box[1] * g->box[2] / (double)hx_grid_cells(g);
    hx_sum s[4] = {{0, 0}, {0, 0}, {0, 0}, {0, 0}};
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) {
                double p[3], r = rho ? rho[(z * g->n[1] + y) * g->n[0] + x] : 1.0;
                centre(g, z, y, x, p);
                r = mass_weight(fl, cl, r, p);
                for (int a = 0; a < 3; a++) hx_sum_add(&s[a], r * p[a]);
                hx_sum_add(&s[3], r);
            }
    HX_TRY(hx_sum_allreduce(s, 4, comm));
    double mass = hx_sum_value(&s[3]);
    if (!(mass > 0)) HX_FAIL(HX_ERR_ARG, "the density has no mass: nothing to weight the velocity with");
    for (int a = 0; a < 3; a++) fl->origin[a] = hx_sum_value(&s[a]) / mass;
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) {
                double p[3], d[3], r = rho ? rho[(z * g->n[1] + y) * g->n[0] + x] : 1.0;
                centre(g, z, y, x, p);
                for (int a = 0; a < 3; a++) d[a] = p[a] - fl->origin[a];
                add_density(fl->acc[0], mass_weight(fl, cl, r, p), d);
                if (hx_cloud_inside(cl, dist(p, cl->center))) add_density(fl->acc[1], r, d);
                add_density(fl->acc[2], 1.0, d);
            }
    HX_TRY(reduce(fl, W0, V1, comm));
fail:
    return st;
}

static inline void add_velocity(hx_sum *acc, int c, double wt, double v, const double d[3])
{
    hx_sum_add(&acc[V1 + c], wt * v);
    hx_sum_add(&acc[V2 + c], wt * v * v);
    for (int a = 0; a < 3; a++) hx_sum_add(&acc[VX + 3 * c + a], wt * v * d[a]);
}

void hx_flow_add(hx_flow *fl, const hx_grid *g, int c, const void *vals, hx_precision prec, const double *rho,
                 const hx_cloud *cl)
{
    const double *vd = vals;
    const float *vf = vals;
    for (ptrdiff_t z = 0; z < g->nz; z++)
        for (ptrdiff_t y = 0; y < g->n[1]; y++)
            for (ptrdiff_t x = 0; x < g->n[0]; x++) {
                ptrdiff_t i = (z * g->n[1] + y) * g->n[0] + x;
                double p[3], d[3], r = rho ? rho[i] : 1.0, v = prec == HX_PREC_DOUBLE ? vd[i] : (double)vf[i];
                centre(g, z, y, x, p);
                for (int a = 0; a < 3; a++) d[a] = p[a] - fl->origin[a];
                add_velocity(fl->acc[0], c, mass_weight(fl, cl, r, p), v, d);
                if (hx_cloud_inside(cl, dist(p, cl->center))) add_velocity(fl->acc[1], c, r, v, d);
                add_velocity(fl->acc[2], c, 1.0, v, d);
            }
}

hx_status hx_flow_reduce(hx_flow *fl, MPI_Comm comm) { return reduce(fl, V1, HX_FLOW_SUMS, comm); }

/* L_a = sum rho (Delta x v)_a = eps_abc sum rho Delta_b v_c. */
static void angular(const hx_flow_w *w, double L[3])
{
    L[0] = w->vx[2][1] - w->vx[1][2];
    L[1] = w->vx[0][2] - w->vx[2][0];
    L[2] = w->vx[1][0] - w->vx[0][1];
}

/* Solve the symmetric 3x3 system A x = b by Cramer's rule; 0 if A is singular. */
static int solve3(const double A[3][3], const double b[3], double x[3])
{
    double det = A[0][0] * (A[1][1] * A[2][2] - A[1][2] * A[2][1]) - A[0][1] * (A[1][0] * A[2][2] - A[1][2] * A[2][0]) +
                 A[0][2] * (A[1][0] * A[2][1] - A[1][1] * A[2][0]);
    double scale = fabs(A[0][0]) + fabs(A[1][1]) + fabs(A[2][2]);
    if (!(fabs(det) > 1e-12 * scale * scale * scale)) return 0;
    for (int k = 0; k < 3; k++) {
        double M[3][3];
        memcpy(M, A, sizeof M);
        for (int i = 0; i < 3; i++) M[i][k] = b[i];
        x[k] = (M[0][0] * (M[1][1] * M[2][2] - M[1][2] * M[2][1]) - M[0][1] * (M[1][0] * M[2][2] - M[1][2] * M[2][0]) +
                M[0][2] * (M[1][0] * M[2][1] - M[1][1] * M[2][0])) /
               det;
    }
    return 1;
}

hx_status hx_flow_correction(const hx_flow *fl, int bulk, int rotation, double vb[3], double K[3][3])
{
    const hx_flow_w *m = &fl->mass;
    memset(K, 0, 9 * sizeof(double));
    for (int c = 0; c < 3; c++) vb[c] = bulk ? m->v1[c] / m->w0 : 0.0;
    if (!rotation) return HX_OK;
    /* I_ab = sum rho (|Delta|^2 delta_ab - Delta_a Delta_b); Omega = I^-1 L; Omega x Delta = K Delta */
    double I[3][3], L[3], W[3], tr = m->w2[0][0] + m->w2[1][1] + m->w2[2][2];
    for (int a = 0; a < 3; a++)
        for (int b = 0; b < 3; b++) I[a][b] = (a == b ? tr : 0.0) - m->w2[a][b];
    angular(m, L);
    if (!solve3(I, L, W))
        return hx_error_set(HX_ERR_ARG, "[velocity] remove_rotation: the mass distribution has no inertia to rotate");
    K[0][1] = -W[2], K[0][2] = W[1];
    K[1][0] = W[2], K[1][2] = -W[0];
    K[2][0] = -W[1], K[2][1] = W[0];
    return HX_OK;
}

void hx_flow_summarize(const hx_flow *fl, hx_flow_report *rep)
{
    const double dv = fl->cell_volume;
    const hx_flow_w *r = &fl->region, *m = &fl->mass, *v = &fl->volume;
    double v2 = 0, s2 = 0, lever = sqrt(m->w2[0][0] + m->w2[1][1] + m->w2[2][2]) / sqrt(m->w0); /* rms |Delta| */
    for (int c = 0; c < 3; c++) {
        v2 += v->v2[c];
        s2 += r->v2[c] / r->w0 - (r->v1[c] / r->w0) * (r->v1[c] / r->w0);
        rep->momentum[c] = m->v1[c] * dv;
    }
    angular(m, rep->angular);
    for (int a = 0; a < 3; a++) rep->angular[a] *= dv;
    rep->vrms = sqrt(v2 / v->w0);
    rep->sigma_3d = sqrt(fmax(s2, 0.0));
    rep->region_mass = r->w0 * dv;
    rep->momentum_scale = m->w0 * dv * rep->vrms;
    rep->angular_scale = m->w0 * dv * lever * rep->vrms;
}
