/* score_plot.c — the scorecard page of `helmix score --plot` in the house look (draw.h): key
 * numbers, every case's errors over its tolerance grouped by category, the shells of the cube
 * with the largest shell error, and the share error along each resolution ladder. A fixed
 * logical page of 1800x1300 units, scaled onto a PNG or one landscape PDF page as plot.c does. */
#include <cairo-pdf.h>
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "draw.h"
#include "helmix/score.h"
#include "helmix/version.h"

enum { PAGE_W = 1800, PAGE_H = 1300, MARGIN = 60 };
#define PDF_W 842.0 /* A4 landscape width in points; the height keeps the page's aspect */

/* Ratios |error| / tolerance below this are drawn hollow on the bottom edge: an exact answer
 * has error 0, which a log axis cannot show, and round-off of double precision against a
 * tolerance of 1e-6 lies near 1e-10, above it. */
#define RATIO_FLOOR 1e-12
/* The shell errors panel shows at most this many decades under the tolerance, so its short
 * axis keeps readable labels; smaller errors sit hollow on its bottom edge. */
#define SHELL_DECADES 10
/* Cube names longer than this (bytes) are cut under the errors panel, which leaves them room
 * for about 24 characters at 45 degrees before the panels below. */
enum { NAME_SHOWN = 24 };

static const rgb FAIL_INK = {0.75, 0.16, 0.13};
static const rgb FAIL_ZONE = {0.978, 0.924, 0.922}; /* FAIL_INK at 9 % over white */
static const rgb STRIPE = {0.965, 0.97, 0.975};

typedef enum { MARK_CIRCLE, MARK_SQUARE, MARK_TRIANGLE } mark_shape;

/* ---- small pieces ----------------------------------------------------------------------- */

/* A mark centred on (x, y); open marks (hollow) stand for values clamped to the floor. */
static void mark(cairo_t *cr, double x, double y, mark_shape shape, double r, rgb col, int open)
{
    cairo_new_path(cr);
    if (shape == MARK_CIRCLE) cairo_arc(cr, x, y, r, 0, 2 * M_PI);
    else if (shape == MARK_SQUARE) cairo_rectangle(cr, x - 0.85 * r, y - 0.85 * r, 1.7 * r, 1.7 * r);
    else {
        cairo_move_to(cr, x, y - 1.15 * r);
        cairo_line_to(cr, x + r, y + 0.7 * r);
        cairo_line_to(cr, x - r, y + 0.7 * r);
        cairo_close_path(cr);
    }
    hx_draw_set_rgb(cr, col);
    if (open) {
        cairo_set_line_width(cr, 1.8);
        cairo_set_dash(cr, NULL, 0, 0);
        cairo_stroke(cr);
    } else cairo_fill(cr);
}

/* A polyline through the points whose y is above floor (a missing point breaks the line). */
static void polyline(cairo_t *cr, const frame *f, const double *x, const double *y, int n, double floor, const style *st)
{
    int open = 0;
    cairo_save(cr);
    cairo_rectangle(cr, f->x, f->y, f->w, f->h);
    cairo_clip(cr);
    cairo_new_path(cr);
    for (int i = 0; i < n; i++) {
        if (!(y[i] > floor) || !isfinite(y[i]) || !(x[i] > 0)) {
            open = 0;
            continue;
        }
        double px = hx_draw_fx(f, x[i]), py = hx_draw_fy(f, y[i]);
        if (open) cairo_line_to(cr, px, py);
        else cairo_move_to(cr, px, py), open = 1;
    }
    hx_draw_apply_style(cr, st);
    if (st->width > 0) cairo_stroke(cr);
    cairo_new_path(cr);
    for (int i = 0; i < n && st->marker > 0; i++)
        if (y[i] > floor && isfinite(y[i]) && x[i] > 0) {
            cairo_new_sub_path(cr);
            cairo_arc(cr, hx_draw_fx(f, x[i]), hx_draw_fy(f, y[i]), st->marker, 0, 2 * M_PI);
        }
    cairo_fill(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    cairo_restore(cr);
}

static double ratio(double err, double tol)
{
    if (!isfinite(err)) return INFINITY;
    if (!(tol > 0)) return err == 0 ? 0 : INFINITY;
    return fabs(err) / tol;
}

static double share_ratio(const hx_score_case *k) { return ratio(k->error, k->tolerance); }
static double shells_ratio(const hx_score_case *k) { return k->has_shells ? ratio(k->shells.max_error, k->shells.tolerance) : NAN; }
static double parts_ratio(const hx_score_case *k)
{
    return k->has_parts ? ratio(fmax(k->parts_error[0], k->parts_error[1]), k->parts_tolerance) : NAN;
}

/* Decades covering the finite positive values (at least [lo_min, 10]). */
static void decades(const double *v, int n, double floor_exp, double *lo, double *hi)
{
    double a = INFINITY, b = 0;
    for (int i = 0; i < n; i++)
        if (v[i] > 0 && isfinite(v[i])) a = fmin(a, v[i]), b = fmax(b, v[i]);
    *lo = isfinite(a) ? fmax(floor(log10(a)), floor_exp) : floor_exp;
    *hi = fmax(b > 0 ? ceil(log10(b) + 1e-9) : 1, 1);
    *lo = fmin(*lo, *hi - 2);
}

/* ---- header ----------------------------------------------------------------------------- */

typedef struct card { char label[48], value[96], unit[64]; int alarm; } card;

static int cards(const hx_scorecard *sc, card *c)
{
    char a[32];
    int n = 0, worst_share = -1, worst_shell = -1;
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        if (worst_share < 0 || share_ratio(k) > share_ratio(&sc->cases[worst_share])) worst_share = i;
        if (k->has_shells && (worst_shell < 0 || shells_ratio(k) > shells_ratio(&sc->cases[worst_shell]))) worst_shell = i;
    }
    c[n] = (card){"verdict", "", "", !sc->passed};
    snprintf(c[n++].value, sizeof c[0].value, "%s", sc->passed ? "PASS" : "FAIL");
    c[n] = (card){"cubes passed", "", "", 0};
    snprintf(c[n].value, sizeof c[0].value, "%d", sc->n_passed);
    snprintf(c[n++].unit, sizeof c[0].unit, "of %d", sc->n);
    c[n] = (card){"categories failing", "", "", 0};
    for (int g = 0; g < sc->ncat; g++)
        if (sc->cat[g].failed) {
            size_t o = strlen(c[n].value);
            snprintf(c[n].value + o, sizeof c[0].value - o, "%s%s", o ? ", " : "", sc->cat[g].name);
        }
    if (!c[n].value[0]) snprintf(c[n].value, sizeof c[0].value, "none");
    c[n].alarm = strcmp(c[n].value, "none") != 0;
    n++;
    if (worst_share >= 0) {
        c[n] = (card){"largest share error", "", "", 0};
        hx_draw_num(c[n].value, sizeof c[0].value, "%.2g", share_ratio(&sc->cases[worst_share]));
        snprintf(c[n++].unit, sizeof c[0].unit, "× tol (%s)", sc->cases[worst_share].name);
    }
    if (worst_shell >= 0) {
        c[n] = (card){"largest shell error", "", "", 0};
        hx_draw_num(c[n].value, sizeof c[0].value, "%.2g", shells_ratio(&sc->cases[worst_shell]));
        snprintf(c[n++].unit, sizeof c[0].unit, "× tol (%s, k = %s)", sc->cases[worst_shell].name,
                 hx_draw_num(a, sizeof a, "%g", sc->cases[worst_shell].shells.max_k));
    }
    return n;
}

static void header(cairo_t *cr, const hx_scorecard *sc, const char *title)
{
    char sub[400];
    card c[6];
    double w[6], sum = 0;
    hx_draw_font(cr, FS_TITLE, 1);
    double size = FS_TITLE;
    while (size > 16 && hx_draw_plain_width(cr, title) > PAGE_W - 2 * MARGIN - 300) hx_draw_font(cr, --size, 1);
    hx_draw_set_rgb(cr, INK);
    cairo_move_to(cr, MARGIN, 58);
    cairo_show_text(cr, title);
    hx_draw_font(cr, FS_SUB, 0);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, "helmix " HX_VERSION " · scorecard", PAGE_W - MARGIN, 58, 1, 0);
    char suite[160];
    hx_draw_clean_line(suite, sizeof suite, sc->suite[0] ? sc->suite : "suite");
    snprintf(sub, sizeof sub, "%s, version %d   ·   manifest made by helmix %s   ·   %d cubes in %d categories", suite,
             sc->suite_version, sc->suite_helmix_version[0] ? sc->suite_helmix_version : "?", sc->n, sc->ncat);
    hx_draw_clean_line(suite, sizeof suite, sub);
    hx_draw_text(cr, suite, MARGIN, 90, 0, 0);
    int n = cards(sc, c);
    for (int i = 0; i < n; i++) {
        hx_draw_font(cr, 13, 0);
        double wl = hx_draw_text_width(cr, c[i].label), wu = c[i].unit[0] ? 6 + hx_draw_text_width(cr, c[i].unit) : 0;
        hx_draw_font(cr, 22, i == 0);
        sum += w[i] = fmax(wl, hx_draw_text_width(cr, c[i].value) + wu);
    }
    double gap = n > 1 ? fmin(fmax((PAGE_W - 2 * MARGIN - sum) / (n - 1), 20), 90) : 0, x = MARGIN, top = 110;
    hx_draw_set_rgb(cr, RULE);
    cairo_set_line_width(cr, 1);
    hx_draw_line(cr, MARGIN, top, PAGE_W - MARGIN, top);
    hx_draw_line(cr, MARGIN, top + 74, PAGE_W - MARGIN, top + 74);
    for (int i = 0; i < n; x += w[i] + gap, i++) {
        hx_draw_font(cr, 13, 0);
        hx_draw_set_rgb(cr, MUTED);
        hx_draw_text(cr, c[i].label, x, top + 26, 0, 0);
        hx_draw_font(cr, 22, i == 0);
        hx_draw_set_rgb(cr, c[i].alarm ? FAIL_INK : INK);
        hx_draw_text(cr, c[i].value, x, top + 56, 0, 0);
        double wv = hx_draw_text_width(cr, c[i].value);
        hx_draw_font(cr, 13, 0);
        hx_draw_set_rgb(cr, MUTED);
        hx_draw_text(cr, c[i].unit, x + wv + 6, top + 56, 0, 0);
    }
}

/* ---- errors per case -------------------------------------------------------------------- */

/* Slot of every case along the x axis: categories in the scorecard's order, one empty slot
 * between categories. Returns the number of slots. */
static int slots(const hx_scorecard *sc, int *slot, int *order)
{
    int s = 0, m = 0;
    for (int g = 0; g < sc->ncat; g++) {
        if (g) s++;
        for (int i = 0; i < sc->n; i++)
            if (!strcmp(sc->cases[i].category, sc->cat[g].name)) order[m++] = i, slot[i] = s++;
    }
    for (int i = 0; i < sc->n; i++) /* a category beyond the summary's slots */
        if (slot[i] < 0) order[m++] = i, slot[i] = s++;
    return s;
}

/* Cube names under the category labels, turned 45 degrees; failing ones in bold red. */
static void case_names(cairo_t *cr, const frame *f, const hx_scorecard *sc, const int *slot, double step)
{
    double fs = step >= 22 ? FS_SMALL : fmax(8, step * 0.6);
    char name[HX_SCORE_NAME + 8];
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        hx_draw_clean_line(name, sizeof name, k->name);
        if (strlen(name) > NAME_SHOWN) /* cut on a character boundary, marked with an ellipsis */
            for (size_t o = 0, n; name[o]; o += n)
                if ((n = (size_t)hx_draw_utf8_len((const unsigned char *)name + o)) == 0 || o + n > NAME_SHOWN - 1) {
                    snprintf(name + o, sizeof name - o, "…");
                    break;
                }
        hx_draw_font(cr, fs, !k->passed);
        hx_draw_set_rgb(cr, k->passed ? INK : FAIL_INK);
        cairo_save(cr);
        cairo_translate(cr, hx_draw_fx(f, slot[i]) + 4, f->y + f->h + 40);
        cairo_rotate(cr, -M_PI / 4);
        hx_draw_text(cr, name, 0, 0, 1, 0.5);
        cairo_restore(cr);
    }
}

/* Category stripes behind the marks; under the axis a bracket with the category's name. */
static void category_bands(cairo_t *cr, const frame *f, const hx_scorecard *sc, const int *slot)
{
    double yb = f->y + f->h;
    for (int g = 0; g < sc->ncat; g++) {
        double lo = INFINITY, hi = -INFINITY;
        for (int i = 0; i < sc->n; i++)
            if (!strcmp(sc->cases[i].category, sc->cat[g].name)) lo = fmin(lo, slot[i]), hi = fmax(hi, slot[i]);
        if (!isfinite(lo)) continue;
        double xa = hx_draw_fx(f, lo - 0.5), xb = hx_draw_fx(f, hi + 0.5);
        if (g % 2 == 0) hx_draw_set_rgb(cr, STRIPE), cairo_rectangle(cr, xa, f->y, xb - xa, f->h), cairo_fill(cr);
        hx_draw_set_rgb(cr, RULE);
        cairo_set_line_width(cr, 1.2);
        cairo_move_to(cr, xa + 3, yb + 6), cairo_line_to(cr, xa + 3, yb + 10), cairo_line_to(cr, xb - 3, yb + 10);
        cairo_line_to(cr, xb - 3, yb + 6);
        cairo_stroke(cr);
        hx_draw_font(cr, FS_SMALL, 1);
        hx_draw_set_rgb(cr, sc->cat[g].failed ? FAIL_INK : MUTED);
        char label[64];
        snprintf(label, sizeof label, "%s", sc->cat[g].name);
        if (hx_draw_text_width(cr, label) > xb - xa + 30) snprintf(label, sizeof label, "%.3s.", sc->cat[g].name);
        hx_draw_text(cr, label, (xa + xb) / 2, yb + 16, 0.5, 1);
    }
}

static void errors_panel(cairo_t *cr, const hx_scorecard *sc, frame f)
{
    int *slot = malloc((size_t)sc->n * sizeof *slot), *order = malloc((size_t)sc->n * sizeof *order);
    double *all = malloc((size_t)(3 * sc->n + 1) * sizeof *all);
    hx_draw_panel_title(cr, &f, "Error over tolerance, per case");
    if (!slot || !order || !all) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "out of memory");
        free(slot), free(order), free(all);
        return;
    }
    for (int i = 0; i < sc->n; i++) slot[i] = -1;
    int ns = slots(sc, slot, order), m = 0;
    for (int i = 0; i < sc->n; i++) {
        all[m++] = share_ratio(&sc->cases[i]);
        all[m++] = shells_ratio(&sc->cases[i]);
        all[m++] = parts_ratio(&sc->cases[i]);
    }
    double lo, hi;
    decades(all, m, log10(RATIO_FLOOR), &lo, &hi);
    hi = fmin(hi, 8);
    f.ax = (axis){-0.8, ns - 0.2, 0, 0, 1, 1, ""};
    f.ay = (axis){lo, hi, 1, 1, 0, 0, "|error| / tolerance"};
    double y1 = hx_draw_fy(&f, 1), step = f.w / (ns + 0.6);
    category_bands(cr, &f, sc, slot);
    cairo_set_source_rgba(cr, FAIL_INK.r, FAIL_INK.g, FAIL_INK.b, 0.09); /* above the line a case fails */
    cairo_rectangle(cr, f.x, f.y, f.w, y1 - f.y);
    cairo_fill(cr);
    hx_draw_y_axis(cr, &f);
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f.x, f.y + f.h, f.x + f.w, f.y + f.h);
    const style tol = {INK, 1.6, {10, 6}, 0};
    hx_draw_hline(cr, &f, 1, &tol);
    double off = fmin(step * 0.22, 9), r = fmin(fmax(step * 0.16, 3.5), 6.5);
    cairo_save(cr);
    cairo_rectangle(cr, f.x, f.y - 8, f.w, f.h + 16);
    cairo_clip(cr);
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        double x = hx_draw_fx(&f, slot[i]), v[3] = {share_ratio(k), shells_ratio(k), parts_ratio(k)};
        const mark_shape shape[3] = {MARK_CIRCLE, MARK_SQUARE, MARK_TRIANGLE};
        const rgb col[3] = {INK, SOL, COMPONENT[0]};
        const double dx[3] = {-off, 0, off};
        for (int j = 0; j < 3; j++) {
            if (isnan(v[j])) continue;
            int open = v[j] < pow(10, lo) * (1 - 1e-9); /* 0, or below the floor of the axis */
            double t = open ? pow(10, lo) : fmin(v[j], pow(10, hi));
            mark(cr, x + dx[j], hx_draw_fy(&f, t), shape[j], r, col[j], open);
        }
    }
    cairo_restore(cr);
    case_names(cr, &f, sc, slot, step);
    entry e[5];
    char notes[2][96], a[32];
    int n = 0;
    e[n++] = (entry){{INK, 0, {0, 0}, 5}, 0, "compressive share"};
    e[n++] = (entry){{SOL, 0, {0, 0}, 5}, 0, "shells: worst shell"};
    e[n++] = (entry){{COMPONENT[0], 0, {0, 0}, 5}, 0, "parts: worse part"};
    e[n++] = (entry){tol, 0, "tolerance"};
    e[n++] = (entry){{FAIL_ZONE, 0, {0, 0}, 0}, 1, "fails"};
    snprintf(notes[0], sizeof notes[0], "hollow on the axis: error 0");
    if (lo <= log10(RATIO_FLOOR)) snprintf(notes[1], sizeof notes[1], "or below %s × tol", hx_draw_num(a, sizeof a, "%.0e", RATIO_FLOOR));
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, n, notes, lo <= log10(RATIO_FLOOR) ? 2 : 1);
    /* the legend draws dots; put the real shapes over its samples */
    double cy = f.y + LEG_PAD + LEG_ROW / 2 - 2, sx = f.x + f.w + LEGEND_GAP + LEG_PAD + LEG_SAMPLE / 2;
    const mark_shape shape[3] = {MARK_CIRCLE, MARK_SQUARE, MARK_TRIANGLE};
    for (int j = 0; j < 3; j++, cy += LEG_ROW) {
        cairo_set_source_rgb(cr, 1, 1, 1);
        cairo_rectangle(cr, sx - 9, cy - 9, 18, 18);
        cairo_fill(cr);
        mark(cr, sx, cy, shape[j], 6, e[j].st.col, 0);
    }
    free(slot), free(order), free(all);
}

/* ---- shells of the worst cube ----------------------------------------------------------- */

/* The vertical grid and ticks of f's x axis without labels: the panel below shares the axis
 * and labels it. */
static void x_grid(cairo_t *cr, const frame *f)
{
    tick t[MAX_TICKS];
    int n = hx_draw_ticks(&f->ax, t);
    double yb = f->y + f->h;
    cairo_set_line_width(cr, 1.0);
    for (int i = 0; i < n; i++) {
        double x = hx_draw_fx(f, t[i].v);
        if (t[i].major) hx_draw_set_rgb(cr, GRID), hx_draw_line(cr, x, f->y, x, yb);
        hx_draw_set_rgb(cr, AXIS);
        hx_draw_line(cr, x, yb, x, yb + (t[i].major ? 7 : 4));
    }
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f->x, yb, f->x + f->w, yb);
}

/* Relative error per shell of the worst cube, under its spectra (g shares f's k axis). */
static void shell_errors(cairo_t *cr, const hx_score_shells *s, frame g)
{
    double *ec = malloc((size_t)s->n * sizeof *ec), *es = malloc((size_t)s->n * sizeof *es);
    if (!ec || !es) {
        free(ec), free(es);
        return;
    }
    double lo = INFINITY, hi = -INFINITY, t = s->tolerance > 0 ? log10(s->tolerance) : -6;
    for (int i = 0; i < s->n; i++) {
        ec[i] = fabs(s->err_comp[i]), es[i] = fabs(s->err_sol[i]);
        if (ec[i] > 0) lo = fmin(lo, log10(ec[i])), hi = fmax(hi, log10(ec[i]));
        if (es[i] > 0) lo = fmin(lo, log10(es[i])), hi = fmax(hi, log10(es[i]));
    }
    lo = fmax(floor(fmin(isfinite(lo) ? lo - 0.5 : t - 4, t - 2)), floor(t) - SHELL_DECADES);
    hi = ceil(fmax(isfinite(hi) ? hi + 1e-9 : t + 1, t + 1));
    g.ay = (axis){lo, hi, 1, 1, 0, 0, "relative error"};
    double bottom = pow(10, lo);
    hx_draw_x_axis(cr, &g);
    hx_draw_y_axis(cr, &g);
    const style tol = {INK, 1.6, {10, 6}, 0};
    hx_draw_hline(cr, &g, s->tolerance, &tol);
    const style pc = {COMP, 1.4, {0, 0}, 2.6}, ps = {SOL, 1.4, {0, 0}, 2.6};
    for (int i = 0; i < s->n; i++) ec[i] = fmax(ec[i], bottom), es[i] = fmax(es[i], bottom);
    polyline(cr, &g, s->k, es, s->n, 0, &ps);
    polyline(cr, &g, s->k, ec, s->n, 0, &pc);
    int zero = 0; /* an exact shell (error 0) or one below the axis: a hollow mark on its bottom edge */
    for (int i = 0; i < s->n; i++)
        for (int p = 0; p < 2; p++)
            if (!((p ? es : ec)[i] > bottom))
                zero++, mark(cr, hx_draw_fx(&g, s->k[i]), g.y + g.h, MARK_CIRCLE, 3.4, p ? SOL : COMP, 1);
    char a[32], notes[1][96];
    entry e[3] = {{pc, 0, "compressive"}, {ps, 0, "solenoidal"}, {tol, 0, ""}};
    snprintf(e[2].label, sizeof e[2].label, "tolerance %s", hx_draw_num(a, sizeof a, "%.2g", s->tolerance));
    snprintf(notes[0], sizeof notes[0], "hollow on the axis: %s or less", hx_draw_num(a, sizeof a, "%.0e", bottom));
    hx_draw_legend(cr, g.x + g.w + LEGEND_GAP, g.y, e, 3, notes, zero ? 1 : 0);
    free(ec), free(es);
}

static void shells_panels(cairo_t *cr, const hx_scorecard *sc, frame f, frame g)
{
    int w = -1;
    for (int i = 0; i < sc->n; i++)
        if (sc->cases[i].has_shells && sc->cases[i].shells.n > 0 &&
            (w < 0 || shells_ratio(&sc->cases[i]) > shells_ratio(&sc->cases[w])))
            w = i;
    char title[200], name[HX_SCORE_NAME];
    if (w < 0) {
        hx_draw_panel_title(cr, &f, "Shells");
        hx_draw_placeholder(cr, f.x, f.y, f.w, g.y + g.h - f.y, "no shells were graded");
        return;
    }
    const hx_score_shells *s = &sc->cases[w].shells;
    hx_draw_clean_line(name, sizeof name, sc->cases[w].name);
    if (s->max_error > 0) snprintf(title, sizeof title, "Shells of %s, the largest shell error", name);
    else snprintf(title, sizeof title, "Shells of %s (every shell error is 0)", name);
    hx_draw_panel_title(cr, &f, title);
    double kmax = 1, emax = 0, emin = INFINITY;
    for (int i = 0; i < s->n; i++) kmax = fmax(kmax, s->k[i]), emax = fmax(emax, s->energy[i]);
    double floor_e = emax * HX_SCORE_SHELL_FLOOR;
    const double *arr[4] = {s->ans_comp, s->ans_sol, s->got_comp, s->got_sol};
    for (int a = 0; a < 4; a++)
        for (int i = 0; i < s->n; i++)
            if (arr[a][i] > floor_e && isfinite(arr[a][i])) emin = fmin(emin, arr[a][i]);
    double elo = isfinite(emin) ? floor(log10(emin)) : floor(log10(emax)) - 1, ehi = ceil(log10(emax));
    if (ehi - elo < 1) elo -= 1;
    double span = log10(fmax(kmax, 2)), pad = 0.03 * span;
    f.ax = (axis){-pad, span + pad, 1, 0, 0, 0, "k [2π/L]"};
    f.ay = (axis){elo, ehi, 1, 1, 0, 0, "E(k) [code velocity²]"};
    x_grid(cr, &f);
    hx_draw_y_axis(cr, &f);
    rgb lc = {0.5 * COMP.r + 0.5, 0.5 * COMP.g + 0.5, 0.5 * COMP.b + 0.5}, ls = {0.5 * SOL.r + 0.5, 0.5 * SOL.g + 0.5, 0.5 * SOL.b + 0.5};
    const style ans_c = {lc, 6, {0, 0}, 0}, ans_s = {ls, 6, {0, 0}, 0};
    const style got_c = {COMP, 0, {0, 0}, 3.2}, got_s = {SOL, 0, {0, 0}, 3.2};
    polyline(cr, &f, s->k, s->ans_sol, s->n, floor_e, &ans_s);
    polyline(cr, &f, s->k, s->ans_comp, s->n, floor_e, &ans_c);
    polyline(cr, &f, s->k, s->got_sol, s->n, floor_e, &got_s);
    polyline(cr, &f, s->k, s->got_comp, s->n, floor_e, &got_c);
    entry e[4] = {{ans_c, 0, "answer, compressive"}, {got_c, 0, "tool, compressive"}, {ans_s, 0, "answer, solenoidal"},
                  {got_s, 0, "tool, solenoidal"}};
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, 4, NULL, 0);
    g.ax = f.ax;
    shell_errors(cr, s, g);
}

/* ---- the resolution ladder -------------------------------------------------------------- */

enum { MAX_GROUPS = 6, MAX_LEVELS = 32 };

/* The ladder groups in the order the manifest first names them; returns how many. */
static int ladder_groups(const hx_scorecard *sc, char (*groups)[HX_SCORE_CATEGORY])
{
    int ng = 0;
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        if (!k->ladder) continue;
        int g = 0;
        while (g < ng && strcmp(groups[g], k->ladder_group)) g++;
        if (g == ng && ng < MAX_GROUPS) snprintf(groups[ng++], HX_SCORE_CATEGORY, "%s", k->ladder_group);
    }
    return ng;
}

static void ladder_panel(cairo_t *cr, const hx_scorecard *sc, frame f)
{
    char groups[MAX_GROUPS][HX_SCORE_CATEGORY];
    int ng = ladder_groups(sc, groups), zero = 0;
    double nlo = INFINITY, nhi = 0, elo = INFINITY, ehi = -INFINITY, tlo = INFINITY, thi = -INFINITY;
    hx_draw_panel_title(cr, &f, "Share error along the resolution ladder");
    if (!ng) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "no ladder cubes in the manifest");
        return;
    }
    for (int i = 0; i < sc->n; i++) {
        const hx_score_case *k = &sc->cases[i];
        if (!k->ladder) continue;
        nlo = fmin(nlo, k->ladder_cells), nhi = fmax(nhi, k->ladder_cells);
        if (fabs(k->error) > 0) elo = fmin(elo, log10(fabs(k->error))), ehi = fmax(ehi, log10(fabs(k->error)));
        if (k->tolerance > 0) tlo = fmin(tlo, log10(k->tolerance)), thi = fmax(thi, log10(k->tolerance));
    }
    if (!isfinite(tlo)) tlo = thi = -6;
    double lo = fmax(floor(fmin(isfinite(elo) ? elo - 0.5 : tlo - 4, tlo - 2)), -18);
    double hi = ceil(fmax(isfinite(ehi) ? ehi + 1e-9 : thi + 1, thi + 1));
    /* x is log2 N on a linear axis, ticks labelled with N itself */
    f.ax = (axis){log2(nlo) - 0.5, log2(nhi) + 0.5, 0, 0, 1, 1, ""};
    f.ay = (axis){lo, hi, 1, 1, 0, 0, "|share error|"};
    hx_draw_y_axis(cr, &f);
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f.x, f.y + f.h, f.x + f.w, f.y + f.h);
    hx_draw_font(cr, FS_TICK, 0);
    for (int i = 0; i < sc->n; i++) {
        if (!sc->cases[i].ladder) continue;
        double x = hx_draw_fx(&f, log2(sc->cases[i].ladder_cells));
        char buf[32];
        cairo_set_line_width(cr, 1.0);
        hx_draw_set_rgb(cr, GRID);
        hx_draw_line(cr, x, f.y, x, f.y + f.h);
        hx_draw_set_rgb(cr, AXIS);
        hx_draw_line(cr, x, f.y + f.h, x, f.y + f.h + 7);
        hx_draw_set_rgb(cr, INK);
        hx_draw_text(cr, hx_draw_num(buf, sizeof buf, "%g", sc->cases[i].ladder_cells), x, f.y + f.h + 12, 0.5, 1);
    }
    hx_draw_font(cr, FS_AXIS, 0);
    hx_draw_text(cr, "cells per side N", f.x + f.w / 2, f.y + f.h + 52, 0.5, 0);
    entry e[MAX_GROUPS + 1];
    char notes[1][96];
    int ne = 0;
    const style tol = {INK, 1.6, {10, 6}, 0};
    double bottom = pow(10, lo);
    for (int g = 0; g < ng; g++) {
        double x[MAX_LEVELS], y[MAX_LEVELS], t[MAX_LEVELS];
        int n = 0;
        for (int lvl = 0; lvl < MAX_LEVELS; lvl++) /* in the order of the ladder's levels */
            for (int i = 0; i < sc->n && n < MAX_LEVELS; i++) {
                const hx_score_case *k = &sc->cases[i];
                if (!k->ladder || k->ladder_level != lvl || strcmp(k->ladder_group, groups[g])) continue;
                x[n] = log2(k->ladder_cells), y[n] = fmax(fabs(k->error), bottom), t[n++] = k->tolerance;
            }
        const style st = {COMPONENT[g % 3], 2.2, {0, 0}, 0};
        polyline(cr, &f, x, t, n, 0, &tol);
        polyline(cr, &f, x, y, n, 0, &st);
        for (int i = 0; i < n; i++) {
            int open = !(y[i] > bottom);
            zero += open;
            mark(cr, hx_draw_fx(&f, x[i]), hx_draw_fy(&f, y[i]), MARK_CIRCLE, 5.5, COMPONENT[g % 3], open);
        }
        e[ne] = (entry){{st.col, st.width, {0, 0}, 4.5}, 0, ""};
        snprintf(e[ne++].label, sizeof e[0].label, "group %s", groups[g]);
    }
    e[ne++] = (entry){tol, 0, "tolerance"};
    snprintf(notes[0], sizeof notes[0], "hollow on the axis: error 0");
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, ne, notes, zero ? 1 : 0);
}

/* ---- page and output -------------------------------------------------------------------- */

static void draw_page(cairo_t *cr, const hx_scorecard *sc, const char *title)
{
    const frame errs = {.x = 150, .y = 250, .w = 1330, .h = 420};
    const frame sh = {.x = 150, .y = 900, .w = 620, .h = 164}, she = {.x = 150, .y = 1084, .w = 620, .h = 140};
    const frame lad = {.x = 1120, .y = 900, .w = 380, .h = 324};
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    header(cr, sc, title);
    errors_panel(cr, sc, errs);
    shells_panels(cr, sc, sh, she);
    ladder_panel(cr, sc, lad);
}

/* The scorecard page, for hx_draw_page_write. */
typedef struct page_args {
    const hx_scorecard *sc;
    const char *title;
} page_args;

static hx_status draw_scorecard(cairo_t *cr, const void *user, double dev)
{
    (void)dev;
    const page_args *p = user;
    draw_page(cr, p->sc, p->title);
    return HX_OK;
}

hx_status hx_score_plot(const hx_scorecard *sc, const char *path)
{
    char title[600], raw[1100];
    if (!sc || !path) return hx_error_set(HX_ERR_ARG, "score plot: %s is NULL", !sc ? "the scorecard" : "the output path");
    const char *rb = strrchr(sc->results, '/'), *mb = strrchr(sc->manifest, '/');
    snprintf(raw, sizeof raw, "Scorecard: %s against %s", rb ? rb + 1 : sc->results, mb ? mb + 1 : sc->manifest);
    hx_draw_clean_line(title, sizeof title, raw);
    page_args p = {sc, title};
    return hx_draw_page_write(path, title, PAGE_W, PAGE_H, PDF_W, draw_scorecard, &p, "score plot");
}
