/* plot.c — the one-page report of a cube's summary: key numbers, shell spectra, compressive
 * share per shell, one-point PDFs, mid-plane slices, the state in a density and, below the
 * slices, a row for the magnetic field (its energy spectrum beside the kinetic one and its key
 * numbers), drawn with cairo on a fixed logical page of 1800x1300 units (1800x1780 with the
 * magnetic row) that is scaled onto the PNG or PDF surface. The slice colour maps are built
 * here from a few control points in the OKLab perceptual colour space. */
#include "helmix/plot.h"

#include <cairo-pdf.h>
#include <cairo.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "draw.h"
#include "helmix/version.h"


/* ---- page geometry (logical units; one unit is one PNG pixel) ---------------------------- */

enum { PAGE_W = 1800, PAGE_H = 1300, MARGIN = 60 };
enum { MAG_ROW_H = 480 }; /* the magnetic row added below the slices */
#define PDF_W 842.0 /* A4 landscape width in points; the height keeps the page's aspect */

/* Shells below this share of the peak hold round-off only: a single-precision cube carries
 * relative noise near 1e-7 in amplitude, 1e-14 in energy, far under this floor. */
#define DYN_RANGE 1e-10

enum { LUT_N = 256, PDF_CURVE = 201 };
enum { SLICE_W = 380, SLICE_H = 310, SLICE_STEP = 550 }; /* largest slice image; room for its colour bar beside */

/* ---- shell spectra and compressive share ----------------------------------------------- */

/* The k range both spectral panels share: shells 1 .. last with energy above the floor. */
typedef struct shells {
    int ok, last;
    double emax, floor;
    axis k;
} shells;

static shells shell_range(const hx_diag *d)
{
    shells r = {0};
    if (!d->shell_e || !d->shell_comp || !d->shell_sol || d->nshell < 2) return r;
    for (int s = 1; s < d->nshell; s++)
        if (isfinite(d->shell_e[s])) r.emax = fmax(r.emax, d->shell_e[s]);
    r.floor = r.emax * DYN_RANGE;
    for (int s = 1; s < d->nshell; s++)
        if (d->shell_e[s] > r.floor) r.last = s;
    r.ok = r.emax > 0 && r.last >= 1;
    double span = log10(fmax(r.last, 1)), pad = span > 0 ? 0.03 * span : 0.3;
    r.k = (axis){-pad, span + pad, 1, 0, 0, 0, "k [2π/L]"};
    return r;
}

/* Decade-rounded y range of the three spectra over the shown shells. */
static axis energy_axis(const hx_diag *d, const shells *r)
{
    double lo = r->emax, hi = r->emax;
    const double *arr[3] = {d->shell_e, d->shell_comp, d->shell_sol};
    for (int a = 0; a < 3; a++)
        for (int s = 1; s <= r->last; s++)
            if (arr[a][s] > r->floor && isfinite(arr[a][s])) lo = fmin(lo, arr[a][s]), hi = fmax(hi, arr[a][s]);
    double elo = floor(log10(lo)), ehi = ceil(log10(hi));
    if (ehi - elo < 1) elo -= 1;
    return (axis){elo, ehi, 1, 1, 0, 0, "E(k) [code velocity²]"};
}

/* Total spectrum at a possibly fractional k, interpolated linearly in log-log between shells. */
static double energy_at(const hx_diag *d, double k)
{
    int s = (int)floor(k);
    if (s == d->nshell - 1) return d->shell_e[s] > 0 ? d->shell_e[s] : NAN;
    if (s < 1 || s + 1 >= d->nshell) return NAN;
    double ea = d->shell_e[s], eb = d->shell_e[s + 1];
    if (!(ea > 0 && eb > 0)) return ea > 0 ? ea : eb > 0 ? eb : NAN;
    double u = log(k / s) / log((s + 1.0) / s);
    return exp((1 - u) * log(ea) + u * log(eb));
}

static int fit_range_ok(const hx_diag *d)
{
    return isfinite(d->fit_kmin) && isfinite(d->fit_kmax) && d->fit_kmin > 0 && d->fit_kmax > d->fit_kmin;
}

static void fit_band(cairo_t *cr, const frame *f, const hx_diag *d)
{
    double xa = fmax(hx_draw_fx(f, d->fit_kmin), f->x), xb = fmin(hx_draw_fx(f, d->fit_kmax), f->x + f->w);
    if (xb <= xa) return;
    hx_draw_set_rgb(cr, BAND);
    cairo_rectangle(cr, xa, f->y, xb - xa, f->h);
    cairo_fill(cr);
}

/* The requested E ~ k^-slope through the total spectrum at the geometric middle of the fit
 * range (the whole shown range when no fit range is recorded), drawn a little past its ends. */
static void guide_line(cairo_t *cr, const frame *f, const hx_diag *d, const shells *r, double slope, const style *st)
{
    double ka = fit_range_ok(d) ? d->fit_kmin : 1, kb = fit_range_ok(d) ? d->fit_kmax : fmax(r->last, 2);
    double km = sqrt(ka * kb), em = energy_at(d, km);
    if (!(em > 0)) return;
    double k0 = ka / 1.5, k1 = kb * 1.5, e0 = em * pow(k0 / km, -slope), e1 = em * pow(k1 / km, -slope);
    if (!(e0 > 0 && e1 > 0 && isfinite(e0) && isfinite(e1))) return; /* an absurd slope: no line */
    cairo_save(cr);
    cairo_rectangle(cr, f->x, f->y, f->w, f->h);
    cairo_clip(cr);
    hx_draw_apply_style(cr, st);
    hx_draw_line(cr, hx_draw_fx(f, k0), hx_draw_fy(f, e0), hx_draw_fx(f, k1), hx_draw_fy(f, e1));
    cairo_restore(cr);
}

static void spectra_legend(cairo_t *cr, const frame *f, const hx_diag *d, double slope, const style *sty)
{
    entry e[5];
    char notes[2][96], a[32], b[32];
    int n = 0, nn = 0;
    e[n++] = (entry){sty[0], 0, "total E(k)"};
    e[n++] = (entry){sty[1], 0, "compressive"};
    e[n++] = (entry){sty[2], 0, "solenoidal"};
    if (isfinite(slope)) {
        e[n] = (entry){sty[3], 0, ""};
        snprintf(e[n++].label, sizeof e[0].label, "requested k^{%s}", hx_draw_num(a, sizeof a, "%.2f", -slope));
    }
    if (fit_range_ok(d)) {
        e[n] = (entry){{BAND, 0, {0, 0}, 0}, 1, ""};
        snprintf(e[n++].label, sizeof e[0].label, "fit range k = %s – %s", hx_draw_num(a, sizeof a, "%g", d->fit_kmin),
                 hx_draw_num(b, sizeof b, "%g", d->fit_kmax));
    }
    if (isfinite(d->slope))
        snprintf(notes[nn++], sizeof notes[0], "fitted slope %s ± %s", hx_draw_num(a, sizeof a, "%.3f", d->slope),
                 hx_draw_num(b, sizeof b, "%.3f", d->slope_err));
    else snprintf(notes[nn++], sizeof notes[0], "fitted slope n/a");
    snprintf(notes[nn++], sizeof notes[0], "(E ∝ k^{−slope})");
    hx_draw_legend(cr, f->x + f->w + LEGEND_GAP, f->y, e, n, notes, nn);
}

static void spectra_panel(cairo_t *cr, const hx_diag *d, const shells *r, double slope, frame f)
{
    const style sty[4] = {{INK, 2.6, {0, 0}, 3.0}, {COMP, 2.0, {0, 0}, 2.4}, {SOL, 2.0, {0, 0}, 2.4},
                          {GUIDE, 2.4, {10, 6}, 0}};
    hx_draw_panel_title(cr, &f, "Shell spectra");
    if (!r->ok) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "spectrum not computed");
        return;
    }
    f.ax = r->k;
    f.ay = energy_axis(d, r);
    if (fit_range_ok(d)) fit_band(cr, &f, d);
    hx_draw_x_axis(cr, &f);
    hx_draw_y_axis(cr, &f);
    int big = r->last > 80; /* dots on hundreds of shells only blur the line */
    const series curves[3] = {{d->shell_e, NULL, r->floor, 0, 1, 1, r->last + 1},
                              {d->shell_comp, NULL, r->floor, 0, 1, 1, r->last + 1},
                              {d->shell_sol, NULL, r->floor, 0, 1, 1, r->last + 1}};
    for (int i = 2; i >= 0; i--) { /* total last, on top */
        style st = sty[i];
        st.marker = big ? 0 : st.marker;
        hx_draw_draw_series(cr, &f, &curves[i], &st);
    }
    if (isfinite(slope)) guide_line(cr, &f, d, r, slope, &sty[3]);
    spectra_legend(cr, &f, d, slope, sty);
}

static void share_panel(cairo_t *cr, const hx_diag *d, const shells *r, double target, frame f)
{
    const style per = {COMP, 2.0, {0, 0}, r->last > 80 ? 0 : 2.6}, req = {INK, 1.6, {10, 6}, 0},
                glob = {MUTED, 2.0, {0.1, 5}, 0};
    char a[32];
    entry e[3];
    int n = 0;
    hx_draw_panel_title(cr, &f, "Compressive share per shell");
    if (!r->ok) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "not computed");
        return;
    }
    f.ax = r->k;
    f.ay = (axis){0, 1, 0, 0, 0.25, 2, "compressive share"};
    hx_draw_x_axis(cr, &f);
    hx_draw_y_axis(cr, &f);
    hx_draw_hline(cr, &f, d->fraction, &glob);
    hx_draw_hline(cr, &f, target, &req);
    series s = {d->shell_comp, d->shell_e, r->floor, 0, 1, 1, r->last + 1};
    hx_draw_draw_series(cr, &f, &s, &per);
    e[n++] = (entry){per, 0, "per shell"};
    if (isfinite(target)) {
        e[n] = (entry){req, 0, ""};
        snprintf(e[n++].label, sizeof e[0].label, "requested %s", hx_draw_num(a, sizeof a, "%.3f", target));
    }
    e[n] = (entry){glob, 0, ""};
    snprintf(e[n++].label, sizeof e[0].label, "whole cube %s", hx_draw_num(a, sizeof a, "%.3f", d->fraction));
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, n, NULL, 0);
}

/* ---- the state in a density ------------------------------------------------------------ */

/* A small box of the state's numbers beside the lower spectra panel, its bottom at `bottom`
 * (above the share panel's title); drawn only when the cube has a density. */
static void state_box(cairo_t *cr, const hx_diag *d, double x, double bottom)
{
    char rows[5][96], a[32], b[32];
    if (!d->has_state) return;
    snprintf(rows[0], sizeof rows[0], "State in the density");
    snprintf(rows[1], sizeof rows[1], "σ(3D) %s · Mach %s", hx_draw_num(a, sizeof a, "%#.4g", d->sigma_3d),
             hx_draw_num(b, sizeof b, "%#.4g", d->mach));
    snprintf(rows[2], sizeof rows[2], "α(vir) %s · R %s (%s)", hx_draw_num(a, sizeof a, "%#.4g", d->virial),
             hx_draw_num(b, sizeof b, "%g", d->radius), d->cloud ? "cloud" : "box");
    snprintf(rows[3], sizeof rows[3], "σ(s) %s · mean ln ρ %s", hx_draw_num(a, sizeof a, "%#.4g", d->sigma_s),
             hx_draw_num(b, sizeof b, "%#.4g", d->ln_rho_mean));
    snprintf(rows[4], sizeof rows[4], "|P| / (M v(rms)) %s", hx_draw_num(a, sizeof a, "%.2g", d->momentum_rel));
    double w = 0;
    for (int i = 0; i < 5; i++) {
        hx_draw_font(cr, FS_SMALL, i == 0);
        w = fmax(w, hx_draw_text_width(cr, rows[i]));
    }
    w = fmax(w + 2 * LEG_PAD, LEGEND_W);
    double h = 5 * LEG_ROW + 2 * LEG_PAD - 4, y = bottom - h, cy = y + LEG_PAD + LEG_ROW / 2 - 2;
    hx_draw_legend_box(cr, x, y, w, h);
    hx_draw_set_rgb(cr, INK);
    for (int i = 0; i < 5; i++, cy += LEG_ROW) {
        hx_draw_font(cr, FS_SMALL, i == 0);
        hx_draw_text(cr, rows[i], x + LEG_PAD, cy, 0, 0.5);
    }
}

/* ---- one-point PDFs -------------------------------------------------------------------- */

static axis density_axis(const hx_diag *d)
{
    double lo = INFINITY, hi = 0;
    for (int c = 0; c < 3; c++)
        for (int b = 0; b < HX_DIAG_BINS; b++)
            if (d->pdf[c][b] > 0 && isfinite(d->pdf[c][b])) lo = fmin(lo, d->pdf[c][b]), hi = fmax(hi, d->pdf[c][b]);
    /* at least down to 1e-6 so the reference normal shows to the edge (1.5e-6 at 5 sigma),
     * at most ten decades so a stray tiny bin cannot flatten the rest */
    double elo = isfinite(lo) ? floor(log10(lo)) : -6;
    elo = fmax(fmin(elo, -6), -10);
    double ehi = hi > 0 ? fmax(ceil(log10(hi)), 0) : 0;
    return (axis){elo, ehi, 1, 1, 0, 0, "probability density"};
}

/* Table of per-component moments, centred low in the panel: the axis reaches down to 1e-6 or
 * below, and within a few sigma of the mean a PDF stays well above that corner. */
static void moment_table(cairo_t *cr, const frame *f, const hx_diag *d, const style *comp, const style *normal)
{
    static const char *name[3] = {"x", "y", "z"};
    static const double col[4] = {0, 128, 212, 302}; /* right edges of the number columns */
    char buf[32];
    double w = col[3] + 2 * LEG_PAD, h = 5 * LEG_ROW + 2 * LEG_PAD - 4;
    double x = f->x + (f->w - w) / 2, y = f->y + f->h - h - 14;
    hx_draw_legend_box(cr, x, y, w, h);
    hx_draw_font(cr, FS_SMALL, 0);
    double cy = y + LEG_PAD + LEG_ROW / 2 - 2, x0 = x + LEG_PAD;
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, "rms", x0 + col[1], cy, 1, 0.5);
    hx_draw_text(cr, "skewness", x0 + col[2], cy, 1, 0.5);
    hx_draw_text(cr, "ex. kurtosis", x0 + col[3], cy, 1, 0.5);
    for (int c = 0; c < 3; c++) {
        cy += LEG_ROW;
        hx_draw_sample(cr, &comp[c], x0, cy, 26);
        hx_draw_set_rgb(cr, INK);
        hx_draw_text(cr, name[c], x0 + 34, cy, 0, 0.5);
        hx_draw_text(cr, hx_draw_num(buf, sizeof buf, "%.4g", d->rms[c]), x0 + col[1], cy, 1, 0.5);
        hx_draw_text(cr, hx_draw_num(buf, sizeof buf, "%.3f", d->skew[c]), x0 + col[2], cy, 1, 0.5);
        hx_draw_text(cr, hx_draw_num(buf, sizeof buf, "%.3f", d->kurt[c]), x0 + col[3], cy, 1, 0.5);
    }
    cy += LEG_ROW;
    hx_draw_sample(cr, normal, x0, cy, 26);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, "standard normal", x0 + 34, cy, 0, 0.5);
}

static void pdf_panel(cairo_t *cr, const hx_diag *d, frame f)
{
    const double range = HX_DIAG_PDF_RANGE, dx = 2 * range / HX_DIAG_BINS;
    const style normal = {NORMAL, 5.0, {0, 0}, 0};
    style comp[3];
    double gauss[PDF_CURVE];
    hx_draw_panel_title(cr, &f, "One-point PDFs per component");
    f.ax = (axis){-range, range, 0, 0, 1, 2, "standardized component (v − ⟨v⟩) / σ"};
    f.ay = density_axis(d);
    hx_draw_x_axis(cr, &f);
    hx_draw_y_axis(cr, &f);
    for (int i = 0; i < PDF_CURVE; i++) {
        double x = -range + 2 * range * i / (PDF_CURVE - 1);
        gauss[i] = exp(-0.5 * x * x) / sqrt(2 * M_PI);
    }
    series g = {gauss, NULL, 0, -range, 2 * range / (PDF_CURVE - 1), 0, PDF_CURVE};
    hx_draw_draw_series(cr, &f, &g, &normal);
    for (int c = 0; c < 3; c++) {
        comp[c] = (style){COMPONENT[c], 2.0, {0, 0}, 0};
        series s = {d->pdf[c], NULL, 0, -range + dx / 2, dx, 0, HX_DIAG_BINS};
        hx_draw_draw_series(cr, &f, &s, &comp[c]);
    }
    moment_table(cr, &f, d, comp, &normal);
}

/* ---- colour maps ----------------------------------------------------------------------- */

/* A control point: position t in [0, 1] and an OKLab colour as lightness, chroma, hue (deg). */
typedef struct ctrl { double t, l, c, h; } ctrl;

/* Our own maps, written for helmix and checked by eye: lightness rises (nearly) linearly in
 * OKLab (B. Ottosson 2020, "A perceptual color space for image processing"), so equal steps
 * in value read as equal steps in brightness, also printed in grey.
 *   speed:       deep indigo -> steel blue -> teal -> green -> pale yellow
 *   |vorticity|: dark plum -> brick -> amber -> cream
 *   divergence:  blue -> near white at 0 -> red, both arms with the same lightness ramp so
 *                neither sign looks stronger. */
static const ctrl MAP_SPEED[] = {{0, .25, .09, 285}, {.25, .42, .11, 255}, {.5, .60, .085, 210},
                                 {.75, .77, .12, 150}, {1, .94, .13, 105}};
static const ctrl MAP_VORT[] = {{0, .21, .06, 325}, {.33, .45, .13, 15}, {.66, .70, .13, 50}, {1, .95, .08, 95}};
static const ctrl MAP_DIV[] = {{0, .42, .14, 260}, {.25, .69, .09, 255}, {.5, .97, 0, 0},
                               {.75, .69, .09, 30}, {1, .42, .14, 28}};

/* OKLab to linear sRGB with the published matrices of Ottosson (2020), written from memory
 * and checked: they invert his forward matrices to 1e-7 and map L = 1 to white. */
static void oklab_linear(double L, double a, double b, double out[3])
{
    double l = L + 0.3963377774 * a + 0.2158037573 * b;
    double m = L - 0.1055613458 * a - 0.0638541728 * b;
    double s = L - 0.0894841775 * a - 1.2914855480 * b;
    l = l * l * l, m = m * m * m, s = s * s * s;
    out[0] = 4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s;
    out[1] = -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s;
    out[2] = -0.0041960863 * l - 0.7034186147 * m + 1.7076147010 * s;
}

static int in_gamut(const double c[3])
{
    for (int i = 0; i < 3; i++)
        if (c[i] < -1e-6 || c[i] > 1 + 1e-6) return 0;
    return 1;
}

/* sRGB transfer curve (IEC 61966-2-1, common practice). */
static double srgb_encode(double c)
{
    c = c < 0 ? 0 : c > 1 ? 1 : c;
    return c <= 0.0031308 ? 12.92 * c : 1.055 * pow(c, 1 / 2.4) - 0.055;
}

/* 0x00RRGGBB of an OKLab colour. Out-of-gamut colours lose chroma at fixed lightness and hue
 * (bisection), so clipping never bends the lightness ramp. */
static uint32_t oklab_pixel(double L, double a, double b)
{
    double c[3], lo = 0, hi = 1;
    oklab_linear(L, a, b, c);
    if (!in_gamut(c)) {
        for (int i = 0; i < 30; i++) {
            double mid = 0.5 * (lo + hi);
            oklab_linear(L, a * mid, b * mid, c);
            if (in_gamut(c)) lo = mid;
            else hi = mid;
        }
        oklab_linear(L, a * lo, b * lo, c);
    }
    uint32_t p = 0;
    for (int i = 0; i < 3; i++) p = p << 8 | (uint32_t)lround(255 * srgb_encode(c[i]));
    return p;
}

/* Interpolate the control points in OKLab's Cartesian form (a = C cos h, b = C sin h): it
 * stays perceptually even and needs no rule for hue wrap-around or grey points. */
static void build_map(const ctrl *p, int n, uint32_t lut[LUT_N])
{
    for (int i = 0, j = 0; i < LUT_N; i++) {
        double t = (double)i / (LUT_N - 1);
        while (j < n - 2 && t > p[j + 1].t) j++;
        double u = (t - p[j].t) / (p[j + 1].t - p[j].t), v = 1 - u;
        double ha = p[j].h * M_PI / 180, hb = p[j + 1].h * M_PI / 180;
        lut[i] = oklab_pixel(v * p[j].l + u * p[j + 1].l, v * p[j].c * cos(ha) + u * p[j + 1].c * cos(hb),
                             v * p[j].c * sin(ha) + u * p[j + 1].c * sin(hb));
    }
}

static rgb lut_rgb(uint32_t p)
{
    return (rgb){(p >> 16 & 255) / 255.0, (p >> 8 & 255) / 255.0, (p & 255) / 255.0};
}

/* ---- slices ---------------------------------------------------------------------------- */

typedef struct slice_spec {
    const double *v;
    const char *title, *unit;
    const ctrl *map;
    int nmap, symmetric; /* symmetric: range [-max|v|, max|v|] so 0 sits at the map's centre */
} slice_spec;

static void value_range(const double *v, size_t n, int symmetric, double *lo, double *hi)
{
    double a = INFINITY, b = -INFINITY;
    for (size_t i = 0; i < n; i++)
        if (isfinite(v[i])) a = fmin(a, v[i]), b = fmax(b, v[i]);
    if (!(a <= b)) a = b = 0;
    if (symmetric) b = fmax(fabs(a), fabs(b)), a = -b;
    *lo = a, *hi = b;
}

/* Colour every cell into an RGB24 surface; row 0 of the slice (y = 0) goes to the bottom so
 * y points up as on paper. Non-finite values show as mid grey. */
static void fill_pixels(cairo_surface_t *img, const slice_spec *sp, int64_t nx, int64_t ny, double lo,
                        double hi, const uint32_t *lut)
{
    unsigned char *data = cairo_image_surface_get_data(img);
    int stride = cairo_image_surface_get_stride(img);
    double k = hi > lo ? (LUT_N - 1) / (hi - lo) : 0;
    cairo_surface_flush(img);
    for (int64_t j = 0; j < ny; j++) {
        uint32_t *row = (uint32_t *)(void *)(data + (size_t)(ny - 1 - j) * (size_t)stride);
        const double *src = sp->v + j * nx;
        for (int64_t i = 0; i < nx; i++) {
            double t = k > 0 ? (src[i] - lo) * k + 0.5 : LUT_N / 2;
            row[i] = !isfinite(src[i]) ? 0x808080u : lut[t < 0 ? 0 : t >= LUT_N ? LUT_N - 1 : (int)t];
        }
    }
    cairo_surface_mark_dirty(img);
}

/* Scale the cells onto the box: nearest keeps cells crisp when enlarged; a slice shrunk
 * below one device pixel per cell needs a real downsampling filter or it aliases. */
static void paint_image(cairo_t *cr, cairo_surface_t *img, double x, double y, double w, double h, double dev)
{
    int nx = cairo_image_surface_get_width(img), ny = cairo_image_surface_get_height(img);
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_scale(cr, w / nx, h / ny);
    cairo_set_source_surface(cr, img, 0, 0);
    cairo_pattern_set_filter(cairo_get_source(cr), w * dev < nx ? CAIRO_FILTER_GOOD : CAIRO_FILTER_NEAREST);
    cairo_pattern_set_extend(cairo_get_source(cr), CAIRO_EXTEND_PAD);
    cairo_rectangle(cr, 0, 0, nx, ny);
    cairo_fill(cr);
    cairo_restore(cr);
}

static void bar_tick(cairo_t *cr, double x, double y, double v, double *wmax)
{
    char buf[32];
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1);
    hx_draw_line(cr, x, y, x + 5, y);
    hx_draw_set_rgb(cr, INK);
    hx_draw_num(buf, sizeof buf, "%.3g", fabs(v) < 1e-300 ? 0.0 : v);
    hx_draw_text(cr, buf, x + 9, y, 0, 0.5);
    *wmax = fmax(*wmax, hx_draw_text_width(cr, buf));
}

/* Vertical colour bar with min and max (and 0 on a symmetric map) and the unit. */
static void colour_bar(cairo_t *cr, const uint32_t *lut, double x, double y, double w, double h, double lo,
                       double hi, const slice_spec *sp)
{
    cairo_pattern_t *g = cairo_pattern_create_linear(0, y + h, 0, y);
    for (int i = 0; i < LUT_N; i += 15) {
        rgb c = lut_rgb(lut[i]);
        cairo_pattern_add_color_stop_rgb(g, (double)i / (LUT_N - 1), c.r, c.g, c.b);
    }
    rgb c = lut_rgb(lut[LUT_N - 1]);
    cairo_pattern_add_color_stop_rgb(g, 1, c.r, c.g, c.b);
    cairo_rectangle(cr, x, y, w, h);
    cairo_set_source(cr, g);
    cairo_fill(cr);
    cairo_pattern_destroy(g);
    double wmax = 0;
    hx_draw_font(cr, FS_SMALL, 0);
    bar_tick(cr, x + w, y, hi, &wmax);
    bar_tick(cr, x + w, y + h, lo, &wmax);
    if (sp->symmetric) bar_tick(cr, x + w, y + h / 2, 0, &wmax);
    hx_draw_font(cr, FS_SMALL, 0);
    hx_draw_set_rgb(cr, MUTED);
    cairo_save(cr);
    cairo_translate(cr, x + w + 9 + wmax + 22, y + h / 2);
    cairo_rotate(cr, -M_PI / 2);
    hx_draw_text(cr, sp->unit, 0, 0, 0.5, 0);
    cairo_restore(cr);
}

/* Largest image box within SLICE_W x SLICE_H that keeps the plane's physical aspect ratio
 * (box lengths Lx, Ly; cell counts when the box is unknown). */
static void slice_box(const hx_diag *d, double *w, double *h)
{
    double lx = d->box[0] > 0 ? d->box[0] : (double)d->slice_n[0];
    double ly = d->box[1] > 0 ? d->box[1] : (double)d->slice_n[1];
    double scale = fmin(SLICE_W / lx, SLICE_H / ly);
    *w = lx * scale, *h = ly * scale;
}

static hx_status draw_slice(cairo_t *cr, const hx_diag *d, const slice_spec *sp, double x, double y, double dev)
{
    int64_t nx = d->slice_n[0], ny = d->slice_n[1];
    hx_draw_font(cr, FS_AXIS, 1);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, sp->title, x, y - 14, 0, 0);
    if (!sp->v || nx < 1 || ny < 1 || nx > 32767 || ny > 32767) {
        hx_draw_placeholder(cr, x, y, SLICE_H, SLICE_H, sp->v ? "slice size not drawable" : "not computed");
        return HX_OK;
    }
    cairo_surface_t *img = cairo_image_surface_create(CAIRO_FORMAT_RGB24, (int)nx, (int)ny);
    cairo_status_t cs = cairo_surface_status(img);
    if (cs != CAIRO_STATUS_SUCCESS) {
        cairo_surface_destroy(img);
        return hx_error_set(cs == CAIRO_STATUS_NO_MEMORY ? HX_ERR_MEM : HX_ERR_IO,
                            "plot: cannot make a %lldx%lld image for slice '%s': %s", (long long)nx, (long long)ny,
                            sp->title, cairo_status_to_string(cs));
    }
    uint32_t lut[LUT_N];
    double lo, hi, w, h;
    build_map(sp->map, sp->nmap, lut);
    value_range(sp->v, (size_t)(nx * ny), sp->symmetric, &lo, &hi);
    fill_pixels(img, sp, nx, ny, lo, hi, lut);
    slice_box(d, &w, &h);
    paint_image(cr, img, x, y, w, h, dev);
    cairo_surface_destroy(img);
    colour_bar(cr, lut, x + w + 16, y, 16, h, lo, hi, sp);
    hx_draw_font(cr, FS_SMALL, 0);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, "x →", x + w / 2, y + h + 8, 0.5, 1);
    hx_draw_text_up(cr, "y →", x - 8, y + h / 2);
    return HX_OK;
}

static hx_status slices_row(cairo_t *cr, const hx_diag *d, double top, double dev)
{
    const slice_spec sp[3] = {
        {d->slice_speed, "speed |v|", "|v| [code velocity]", MAP_SPEED, 5, 0},
        {d->slice_div, "divergence ∇·v", "∇·v [1/code time]", MAP_DIV, 5, 1},
        {d->slice_vort, "vorticity |∇×v|", "|∇×v| [1/code time]", MAP_VORT, 4, 0},
    };
    char sub[96];
    hx_draw_font(cr, FS_PANEL, 1);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, "Mid-plane slices", MARGIN, top, 0, 0);
    double wt = hx_draw_text_width(cr, "Mid-plane slices");
    hx_draw_font(cr, FS_SUB, 0);
    hx_draw_set_rgb(cr, MUTED);
    int n = snprintf(sub, sizeof sub, "plane z index Nz/2 = %lld (of %lld)", (long long)(d->cells[2] / 2),
                     (long long)d->cells[2]);
    if (d->slice_n[0] > 0 && d->slice_n[1] > 0 && n > 0 && (size_t)n < sizeof sub)
        snprintf(sub + n, sizeof sub - (size_t)n, ", %lld × %lld cells", (long long)d->slice_n[0], (long long)d->slice_n[1]);
    hx_draw_text(cr, sub, MARGIN + wt + 16, top, 0, 0);
    for (int i = 0; i < 3; i++) {
        hx_status st = draw_slice(cr, d, &sp[i], MARGIN + 40 + i * (double)SLICE_STEP, top + 50, dev);
        if (st != HX_OK) return st;
    }
    return HX_OK;
}

/* ---- the magnetic field ---------------------------------------------------------------- */

static const rgb MAGNETIC = {0.72, 0.16, 0.47}; /* a hue no other series of the page uses */

static int page_height(const hx_diag *d) { return d->magnetic ? PAGE_H + MAG_ROW_H : PAGE_H; }

/* k axis over shells 1 .. last, as shell_range builds it. */
static axis k_axis(int last)
{
    double span = log10(fmax(last, 1)), pad = span > 0 ? 0.03 * span : 0.3;
    return (axis){-pad, span + pad, 1, 0, 0, 0, "k [2π/L]"};
}

/* Decade-rounded energy range of the series shown (shells 1 .. last above each floor), at most
 * twelve decades below the top so a far weaker kinetic or magnetic spectrum cannot flatten the
 * other. */
static axis magnetic_energy_axis(const double *const *e, const double *floor_e, int n, int last)
{
    double lo = INFINITY, hi = 0;
    for (int a = 0; a < n; a++)
        for (int s = 1; s <= last && e[a]; s++)
            if (e[a][s] > floor_e[a] && isfinite(e[a][s])) lo = fmin(lo, e[a][s]), hi = fmax(hi, e[a][s]);
    if (!(hi > 0)) lo = hi = 1;
    double elo = floor(log10(lo)), ehi = ceil(log10(hi));
    if (ehi - elo < 1) elo -= 1;
    elo = fmax(elo, ehi - 12);
    return (axis){elo, ehi, 1, 1, 0, 0, "E(k) [code units]"};
}

/* E_B(k) with its fit band and slope, its curl-free part when it holds more than round-off,
 * and the velocity's E(k) in grey for comparison on the same axes. */
static void magnetic_spectrum_panel(cairo_t *cr, const hx_diag *d, frame f)
{
    const hx_diag *b = &d->magnetic->field;
    const style sty[3] = {{MAGNETIC, 2.6, {0, 0}, 3.0}, {MAGNETIC, 1.8, {7, 5}, 0}, {NORMAL, 2.4, {0, 0}, 0}};
    hx_draw_panel_title(cr, &f, "Magnetic energy spectrum");
    shells rb = shell_range(b), rv = shell_range(d);
    if (!rb.ok) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, rb.emax == 0 && b->shell_e ? "uniform field: no spectrum" : "not computed");
        return;
    }
    int comp = 0;
    for (int s = 1; s <= rb.last; s++) comp |= b->shell_comp[s] > rb.floor;
    int last = rv.ok && rv.last > rb.last ? rv.last : rb.last;
    const double *e[3] = {b->shell_e, comp ? b->shell_comp : NULL, rv.ok ? d->shell_e : NULL};
    const double fl[3] = {rb.floor, rb.floor, rv.floor};
    f.ax = k_axis(last);
    f.ay = magnetic_energy_axis(e, fl, 3, last);
    if (fit_range_ok(b)) fit_band(cr, &f, b);
    hx_draw_x_axis(cr, &f);
    hx_draw_y_axis(cr, &f);
    int big = last > 80;
    entry en[5];
    char notes[2][96], x[32], y[32];
    int n = 0, nn = 0;
    for (int i = 2; i >= 0; i--) { /* the magnetic spectrum last, on top */
        if (!e[i]) continue;
        series sr = {e[i], NULL, fl[i], 0, 1, 1, (i == 2 ? rv.last : rb.last) + 1};
        style st = sty[i];
        st.marker = big ? 0 : st.marker;
        hx_draw_draw_series(cr, &f, &sr, &st);
    }
    en[n++] = (entry){sty[0], 0, "magnetic E_B(k)"};
    if (comp) en[n++] = (entry){sty[1], 0, "its curl-free part"};
    if (rv.ok) { /* the energy spectrum of what was decomposed: of √ρ v when mass-weighted */
        en[n] = (entry){sty[2], 0, ""};
        snprintf(en[n++].label, sizeof en[0].label, "%s", d->mass_weighted ? "kinetic E(k) of √ρ v" : "kinetic E(k)");
    }
    if (fit_range_ok(b)) {
        en[n] = (entry){{BAND, 0, {0, 0}, 0}, 1, ""};
        snprintf(en[n++].label, sizeof en[0].label, "fit range k = %s – %s", hx_draw_num(x, sizeof x, "%g", b->fit_kmin),
                 hx_draw_num(y, sizeof y, "%g", b->fit_kmax));
    }
    if (isfinite(b->slope))
        snprintf(notes[nn++], sizeof notes[0], "fitted slope %s ± %s", hx_draw_num(x, sizeof x, "%.3f", b->slope),
                 hx_draw_num(y, sizeof y, "%.3f", b->slope_err));
    else snprintf(notes[nn++], sizeof notes[0], "fitted slope n/a");
    snprintf(notes[nn++], sizeof notes[0], "(E_B ∝ k^{−slope}; ⟨B⟩ left out)");
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, en, n, notes, nn);
}

/* A field strength in gauss with an SI prefix, or "" when the unit is unknown. */
static void gauss_text(char *buf, size_t len, double v_code, double unit)
{
    static const struct { double scale; const char *name; } pre[] = {{1, "G"}, {1e-3, "mG"}, {1e-6, "µG"}, {1e-9, "nG"}};
    char a[32];
    buf[0] = '\0';
    if (!isfinite(unit) || !isfinite(v_code)) return;
    double v = v_code * unit;
    int i = 0;
    while (i < 3 && v != 0 && fabs(v) < pre[i].scale) i++; /* zero stays in gauss */
    snprintf(buf, len, "%s %s", hx_draw_num(a, sizeof a, "%#.4g", v / pre[i].scale), pre[i].name);
}

/* A number that may be infinite (beta and M_A without a mean field). */
static const char *num_inf(char *buf, size_t len, const char *fmt, double v)
{
    if (isinf(v)) {
        snprintf(buf, len, "∞");
        return buf;
    }
    return hx_draw_num(buf, len, fmt, v);
}

/* The key numbers of the magnetic field: a box of label / value rows. */
static void magnetic_numbers(cairo_t *cr, const hx_diag *d, double x, double y, double w)
{
    const hx_magnetic *m = d->magnetic;
    const hx_diag *b = &m->field;
    enum { NROW = 11, ROW = 28 };
    char val[NROW][96], g[48], a[32], c[32], e[32];
    const char *label[NROW] = {"rms |B|", "mean field ⟨B⟩", "|⟨B⟩|", "random part, rms", "Alfvén speed of ⟨B⟩",
                               "plasma β of ⟨B⟩", "Alfvén Mach number", "slope of E_B(k)", "div B, spectral",
                               "div B, faces", "face field, rms |B|"};
    const double ug = m->unit_gauss;
    int n = 0;
#define HX_WITH_GAUSS(v)                                                                      \
    do {                                                                                      \
        gauss_text(g, sizeof g, (v), ug);                                                     \
        snprintf(val[n], sizeof val[0], "%s%s%s%s", hx_draw_num(a, sizeof a, "%#.4g", (v)),     \
                 g[0] ? " (" : "", g, g[0] ? ")" : "");                                        \
        n++;                                                                                  \
    } while (0)
    HX_WITH_GAUSS(b->rms3);
    snprintf(val[n++], sizeof val[0], "(%s, %s, %s)", hx_draw_num(a, sizeof a, "%.3g", b->mean[0]),
             hx_draw_num(c, sizeof c, "%.3g", b->mean[1]), hx_draw_num(e, sizeof e, "%.3g", b->mean[2]));
    HX_WITH_GAUSS(m->mean_abs);
    HX_WITH_GAUSS(m->random_rms);
#undef HX_WITH_GAUSS
    hx_draw_num(val[n], sizeof val[0], "%#.4g", m->v_alfven);
    if (isfinite(m->unit_velocity_cm_s) && isfinite(m->v_alfven))
        snprintf(val[n] + strlen(val[n]), sizeof val[0] - strlen(val[n]), " (%s km/s)",
                 hx_draw_num(a, sizeof a, "%#.4g", m->v_alfven * m->unit_velocity_cm_s / 1e5));
    n++;
    num_inf(val[n++], sizeof val[0], "%#.4g", m->beta);
    num_inf(val[n++], sizeof val[0], "%#.4g", m->alfven_mach);
    if (isfinite(b->slope))
        snprintf(val[n++], sizeof val[0], "%s ± %s", hx_draw_num(a, sizeof a, "%.2f", b->slope),
                 hx_draw_num(c, sizeof c, "%.2f", b->slope_err));
    else snprintf(val[n++], sizeof val[0], "n/a");
    hx_draw_num(val[n++], sizeof val[0], "%.2g", m->div_spectral);
    if (m->has_face) {
        hx_draw_num(val[n++], sizeof val[0], "%.2g", m->face_div);
        hx_draw_num(val[n++], sizeof val[0], "%#.4g", m->face_rms);
    } else {
        snprintf(val[n++], sizeof val[0], "no face-centred field");
        val[n++][0] = '\0';
    }
    int rows = m->has_face ? NROW : NROW - 1;
    double h = rows * ROW + 2 * LEG_PAD, cy = y + LEG_PAD + ROW / 2.0;
    hx_draw_legend_box(cr, x, y, w, h);
    hx_draw_font(cr, FS_SMALL + 1, 0);
    for (int i = 0; i < rows; i++, cy += ROW) {
        hx_draw_set_rgb(cr, MUTED);
        hx_draw_text(cr, label[i], x + LEG_PAD, cy, 0, 0.5);
        hx_draw_set_rgb(cr, INK);
        hx_draw_text(cr, val[i], x + w - LEG_PAD, cy, 1, 0.5);
    }
}

/* The row of the magnetic field below the slices: title with the unit, spectrum, numbers. */
static void magnetic_row(cairo_t *cr, const hx_diag *d, double top)
{
    const hx_magnetic *m = d->magnetic;
    char sub[160], a[32];
    if (!m) return;
    hx_draw_font(cr, FS_PANEL, 1);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, "Magnetic field", MARGIN, top, 0, 0);
    double wt = hx_draw_text_width(cr, "Magnetic field");
    if (isfinite(m->unit_gauss))
        snprintf(sub, sizeof sub, "cell-centred B in code units (1 code unit = %s G, v(A) = B/√ρ)%s",
                 hx_draw_num(a, sizeof a, "%.4g", m->unit_gauss), m->has_face ? " · face-centred B beside it" : "");
    else snprintf(sub, sizeof sub, "cell-centred B in code units (v(A) = B/√ρ; the file records no units)%s",
                  m->has_face ? " · face-centred B beside it" : "");
    hx_draw_font(cr, FS_SUB, 0);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, sub, MARGIN + wt + 16, top, 0, 0);
    magnetic_spectrum_panel(cr, d, (frame){.x = 150, .y = top + 80, .w = 760, .h = 260});
    hx_draw_font(cr, FS_PANEL, 1);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, "Key numbers", 1290, top + 64, 0, 0);
    magnetic_numbers(cr, d, 1290, top + 80, 450);
}

/* ---- header ---------------------------------------------------------------------------- */

typedef struct card { char label[48], value[96], unit[64]; } card;

static int header_cards(const hx_diag *d, double slope, double fraction, card *c)
{
    char a[32], b[32], e[32];
    int n = 0;
    c[n] = (card){"rms speed", "", "code velocity"};
    hx_draw_num(c[n++].value, sizeof c[0].value, "%#.4g", d->rms3);
    c[n] = (card){"mean velocity", "", "code velocity"};
    snprintf(c[n++].value, sizeof c[0].value, "(%s, %s, %s)", hx_draw_num(a, sizeof a, "%.2g", d->mean[0]),
             hx_draw_num(b, sizeof b, "%.2g", d->mean[1]), hx_draw_num(e, sizeof e, "%.2g", d->mean[2]));
    c[n] = (card){"compressive share", "", ""};
    hx_draw_num(c[n].value, sizeof c[0].value, "%.4f", d->fraction);
    if (isfinite(fraction)) snprintf(c[n].unit, sizeof c[0].unit, "requested %s", hx_draw_num(a, sizeof a, "%.3f", fraction));
    n++;
    c[n] = (card){"spectral slope", "", ""};
    if (isfinite(d->slope))
        snprintf(c[n].value, sizeof c[0].value, "%s ± %s", hx_draw_num(a, sizeof a, "%.2f", d->slope),
                 hx_draw_num(b, sizeof b, "%.2f", d->slope_err));
    else snprintf(c[n].value, sizeof c[0].value, "n/a");
    if (isfinite(slope)) snprintf(c[n].unit, sizeof c[0].unit, "requested %s", hx_draw_num(a, sizeof a, "%.2f", slope));
    n++;
    c[n] = (card){"divergence ratio", "", ""};
    hx_draw_num(c[n++].value, sizeof c[0].value, "%.4f", d->div_ratio);
    c[n] = (card){"vorticity ratio", "", ""};
    hx_draw_num(c[n++].value, sizeof c[0].value, "%.4f", d->vort_ratio);
    c[n++] = d->mass_weighted ? (card){"weighting", "mass", "field √ρ v"} : (card){"weighting", "volume", "field v"};
    if (d->remove_scale > 0) { /* the Gaussian-smoothed flow on this scale was subtracted */
        c[n] = (card){"smoothed flow removed", "", "code length"};
        hx_draw_num(c[n++].value, sizeof c[0].value, "%.3g", d->remove_scale);
    }
    return n;
}

static double card_width(cairo_t *cr, const card *c)
{
    hx_draw_font(cr, 13, 0);
    double wl = hx_draw_text_width(cr, c->label), wu = c->unit[0] ? 6 + hx_draw_text_width(cr, c->unit) : 0;
    hx_draw_font(cr, 22, 0);
    return fmax(wl, hx_draw_text_width(cr, c->value) + wu);
}

/* The key numbers as a strip of label-over-value cards between two thin rules. */
static void header_strip(cairo_t *cr, const hx_diag *d, double slope, double fraction, double top)
{
    card c[8];
    double w[8], sum = 0;
    int n = header_cards(d, slope, fraction, c);
    for (int i = 0; i < n; i++) sum += w[i] = card_width(cr, &c[i]);
    double gap = fmin(fmax((PAGE_W - 2 * MARGIN - sum) / (n - 1), 20), 90);
    hx_draw_set_rgb(cr, RULE);
    cairo_set_line_width(cr, 1);
    hx_draw_line(cr, MARGIN, top, PAGE_W - MARGIN, top);
    hx_draw_line(cr, MARGIN, top + 74, PAGE_W - MARGIN, top + 74);
    double x = MARGIN;
    for (int i = 0; i < n; x += w[i] + gap, i++) {
        hx_draw_font(cr, 13, 0);
        hx_draw_set_rgb(cr, MUTED);
        hx_draw_text(cr, c[i].label, x, top + 26, 0, 0);
        hx_draw_font(cr, 22, 0);
        hx_draw_set_rgb(cr, INK);
        hx_draw_text(cr, c[i].value, x, top + 56, 0, 0);
        double wv = hx_draw_text_width(cr, c[i].value);
        hx_draw_font(cr, 13, 0);
        hx_draw_set_rgb(cr, MUTED);
        hx_draw_text(cr, c[i].unit, x + wv + 6, top + 56, 0, 0);
    }
}

/* The title, shrunk until it fits (never below 16 units); drawn as plain text, no markup. */
static void title_line(cairo_t *cr, const char *title, double y, double room)
{
    double size = FS_TITLE;
    hx_draw_font(cr, size, 1);
    while (size > 16 && hx_draw_plain_width(cr, title) > room) hx_draw_font(cr, --size, 1);
    hx_draw_set_rgb(cr, INK);
    cairo_move_to(cr, MARGIN, y);
    cairo_show_text(cr, title);
}

static void header(cairo_t *cr, const hx_diag *d, const hx_plot_request *req, const char *title)
{
    char sub[256];
    title_line(cr, title, 58, PAGE_W - 2 * MARGIN - 260);
    hx_draw_font(cr, FS_SUB, 0);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, "helmix " HX_VERSION " · cube report", PAGE_W - MARGIN, 58, 1, 0);
    snprintf(sub, sizeof sub, "%lld × %lld × %lld cells   ·   box %g × %g × %g   ·   %d shells   ·   analysed on %d rank%s",
             (long long)d->cells[0], (long long)d->cells[1], (long long)d->cells[2], d->box[0], d->box[1], d->box[2],
             d->nshell, d->ranks, d->ranks == 1 ? "" : "s");
    hx_draw_text(cr, sub, MARGIN, 90, 0, 0);
    header_strip(cr, d, req ? req->slope : NAN, req ? req->fraction : NAN, 110);
}

/* ---- page and output ------------------------------------------------------------------- */

static hx_status draw_page(cairo_t *cr, const hx_diag *d, const hx_plot_request *req, const char *title, double dev)
{
    const frame spec = {.x = 150, .y = 250, .w = 760, .h = 280}, share = {.x = 150, .y = 646, .w = 760, .h = 150},
                pdf = {.x = 1290, .y = 250, .w = 450, .h = 546};
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    header(cr, d, req, title);
    shells r = shell_range(d);
    spectra_panel(cr, d, &r, req ? req->slope : NAN, spec);
    share_panel(cr, d, &r, req ? req->fraction : NAN, share);
    state_box(cr, d, spec.x + spec.w + LEGEND_GAP, share.y - 44);
    pdf_panel(cr, d, pdf);
    hx_status st = slices_row(cr, d, 898, dev);
    if (st == HX_OK) magnetic_row(cr, d, PAGE_H + 36);
    return st;
}

/* The inspect page, for hx_draw_page_write. */
typedef struct page_args {
    const hx_diag *d;
    const hx_plot_request *req;
    const char *title;
    int height;
} page_args;

static hx_status draw_report(cairo_t *cr, const void *user, double dev)
{
    const page_args *p = user;
    return draw_page(cr, p->d, p->req, p->title, dev);
}

hx_status hx_plot_report(const hx_diag *d, const hx_plot_request *req, const char *path)
{
    char title[512];
    if (!d || !path)
        return hx_error_set(HX_ERR_ARG, "plot: %s is NULL", !d ? "the cube summary" : "the output path");
    hx_draw_clean_line(title, sizeof title, req && req->title ? req->title : "velocity cube");
    page_args p = {d, req, title, page_height(d)};
    return hx_draw_page_write(path, title, PAGE_W, p.height, PDF_W, draw_report, &p, "plot");
}
