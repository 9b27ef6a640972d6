/* scaling_plot.c — the page of `helmix scaling --plot` in the house look (draw.h): parallel
 * efficiency against cores for every group of runs, and time per phase against cores for the
 * group with the most runs. Cores sit on a log2 axis labelled with the core counts themselves.
 * A fixed logical page of 1800x1000 units, scaled onto a PNG or one landscape PDF page. */
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "draw.h"
#include "helmix/scaling.h"
#include "helmix/version.h"

enum { PAGE_W = 1800, PAGE_H = 1000, MARGIN = 60, MAX_SERIES = 12 };
#define PDF_W 842.0 /* A4 landscape width in points; the height keeps the page's aspect */

/* Colours of groups and phases, in turn; past the end they repeat dashed. */
static const rgb *palette(int i)
{
    static const rgb *const P[7] = {&COMPONENT[0], &SOL, &COMP, &COMPONENT[2], &COMPONENT[1], &GUIDE, &MUTED};
    return P[i % 7];
}

static style series_style(int i, double width)
{
    style st = {*palette(i), width, {0, 0}, 4.5};
    if ((i / 7) % 2) st.dash[0] = 9, st.dash[1] = 5;
    return st;
}

/* A polyline through the points with a finite positive y (a missing point breaks the line),
 * clipped to the frame, with a dot at every point when the style has a marker. */
static void polyline(cairo_t *cr, const frame *f, const double *x, const double *y, int n, const style *st)
{
    int open = 0;
    cairo_save(cr);
    cairo_rectangle(cr, f->x - 8, f->y - 8, f->w + 16, f->h + 16);
    cairo_clip(cr);
    cairo_new_path(cr);
    for (int i = 0; i < n; i++) {
        if (!isfinite(y[i]) || (f->ay.log && !(y[i] > 0))) {
            open = 0;
            continue;
        }
        double px = hx_draw_fx(f, x[i]), py = hx_draw_fy(f, y[i]);
        if (open) cairo_line_to(cr, px, py);
        else cairo_move_to(cr, px, py), open = 1;
    }
    hx_draw_apply_style(cr, st);
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
    for (int i = 0; i < n && st->marker > 0; i++)
        if (isfinite(y[i]) && (!f->ay.log || y[i] > 0)) {
            cairo_new_sub_path(cr);
            cairo_arc(cr, hx_draw_fx(f, x[i]), hx_draw_fy(f, y[i]), st->marker, 0, 2 * M_PI);
        }
    cairo_fill(cr);
    cairo_restore(cr);
}

/* The cores axis: x = log2(cores), a grid line, tick and label at every core count run. */
static void cores_axis(cairo_t *cr, const frame *f, const hx_scaling *s)
{
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f->x, f->y + f->h, f->x + f->w, f->y + f->h);
    hx_draw_font(cr, FS_TICK, 0);
    for (int i = 0; i < s->n; i++) {
        int seen = 0;
        for (int j = 0; j < i; j++) seen |= s->runs[j].cores == s->runs[i].cores;
        if (seen) continue;
        double x = hx_draw_fx(f, log2(s->runs[i].cores));
        char buf[32];
        cairo_set_line_width(cr, 1.0);
        hx_draw_set_rgb(cr, GRID);
        hx_draw_line(cr, x, f->y, x, f->y + f->h);
        hx_draw_set_rgb(cr, AXIS);
        hx_draw_line(cr, x, f->y + f->h, x, f->y + f->h + 7);
        hx_draw_set_rgb(cr, INK);
        snprintf(buf, sizeof buf, "%d", s->runs[i].cores);
        hx_draw_text(cr, buf, x, f->y + f->h + 12, 0.5, 1);
    }
    hx_draw_font(cr, FS_AXIS, 0);
    hx_draw_text(cr, "cores (ranks × threads)", f->x + f->w / 2, f->y + f->h + 52, 0.5, 0);
}

static axis cores_range(const hx_scaling *s)
{
    double lo = INFINITY, hi = -INFINITY;
    for (int i = 0; i < s->n; i++) lo = fmin(lo, log2(s->runs[i].cores)), hi = fmax(hi, log2(s->runs[i].cores));
    double pad = fmax(0.08 * (hi - lo), 0.3);
    return (axis){lo - pad, hi + pad, 0, 0, 1, 1, ""};
}

/* A group's name: its cells (strong) or cells per core (weak), with the command when the
 * study holds more than one. */
static void group_label(char *buf, size_t len, const hx_scaling *s, int g)
{
    const hx_scaling_run *r = NULL;
    int many = 0;
    for (int i = 0; i < s->n; i++) {
        if (s->runs[i].group == g && !r) r = &s->runs[i];
        many |= strcmp(s->runs[i].command, s->runs[0].command) != 0;
    }
    if (!r) {
        snprintf(buf, len, "?");
        return;
    }
    char what[64];
    if (s->kind == HX_SCALING_STRONG) {
        if (!(r->cells > 0)) snprintf(what, sizeof what, "no grid");
        else if (r->grid[0] == 0) snprintf(what, sizeof what, "%.0f cells", r->cells);
        else if (r->grid[0] == r->grid[1] && r->grid[1] == r->grid[2]) snprintf(what, sizeof what, "%lld^{3} cells", (long long)r->grid[0]);
        else snprintf(what, sizeof what, "%lld×%lld×%lld", (long long)r->grid[0], (long long)r->grid[1], (long long)r->grid[2]);
    } else
        snprintf(what, sizeof what, "%.3g cells/core", r->cells / r->cores);
    snprintf(buf, len, "%s%s%s", many ? r->command : "", many ? ", " : "", what);
}

static void efficiency_panel(cairo_t *cr, const hx_scaling *s, frame f)
{
    double top = 1.1;
    for (int i = 0; i < s->n; i++)
        if (isfinite(s->runs[i].efficiency)) top = fmax(top, s->runs[i].efficiency * 1.05);
    top = fmin(ceil(top * 5) / 5, 10);
    hx_draw_panel_title(cr, &f, s->kind == HX_SCALING_STRONG ? "Parallel efficiency T1·P1 / (T·P)" : "Weak-scaling efficiency");
    f.ax = cores_range(s);
    f.ay = (axis){0, top, 0, 0, top > 2.5 ? 0.5 : 0.1, top > 2.5 ? 1 : 2, "efficiency"};
    hx_draw_y_axis(cr, &f);
    cores_axis(cr, &f, s);
    const style ideal = {INK, 1.6, {10, 6}, 0};
    hx_draw_hline(cr, &f, 1.0, &ideal);
    entry e[MAX_SERIES + 1];
    int ne = 0;
    double *x = malloc((size_t)s->n * sizeof *x), *y = malloc((size_t)s->n * sizeof *y);
    if (!x || !y) {
        free(x), free(y);
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "out of memory");
        return;
    }
    for (int g = 0; g < s->ngroup; g++) {
        int n = 0;
        for (int i = 0; i < s->n; i++)
            if (s->runs[i].group == g) x[n] = log2(s->runs[i].cores), y[n++] = s->runs[i].efficiency;
        style st = series_style(g, 2.4);
        polyline(cr, &f, x, y, n, &st);
        if (ne < MAX_SERIES) {
            e[ne] = (entry){st, 0, ""};
            group_label(e[ne].label, sizeof e[ne].label, s, g);
            ne++;
        }
    }
    free(x), free(y);
    e[ne++] = (entry){ideal, 0, "ideal"};
    char notes[1][96];
    int nn = 0;
    if (s->ngroup > MAX_SERIES) snprintf(notes[nn++], sizeof notes[0], "%d more groups not in the legend", s->ngroup - MAX_SERIES);
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, ne, notes, nn);
}

/* The group with the most runs (the larger cells on a tie): the one whose phases are shown. */
static int main_group(const hx_scaling *s)
{
    int best = 0, nbest = -1;
    for (int g = 0; g < s->ngroup; g++) {
        int n = 0;
        double cells = 0;
        for (int i = 0; i < s->n; i++)
            if (s->runs[i].group == g) n++, cells = s->runs[i].cells;
        double bcells = 0;
        for (int i = 0; i < s->n; i++)
            if (s->runs[i].group == best) bcells = s->runs[i].cells;
        if (n > nbest || (n == nbest && cells > bcells)) best = g, nbest = n;
    }
    return best;
}

static void phases_panel(cairo_t *cr, const hx_scaling *s, frame f)
{
    int g = main_group(s), n = 0;
    char label[96], title[160];
    group_label(label, sizeof label, s, g);
    snprintf(title, sizeof title, "Time per phase, %s", label);
    hx_draw_panel_title(cr, &f, title);
    double *x = malloc((size_t)s->n * sizeof *x), *y = malloc((size_t)s->n * sizeof *y);
    int *idx = malloc((size_t)s->n * sizeof *idx);
    if (!x || !y || !idx) {
        free(x), free(y), free(idx);
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "out of memory");
        return;
    }
    double lo = INFINITY, hi = 0;
    for (int i = 0; i < s->n; i++) {
        if (s->runs[i].group != g) continue;
        idx[n++] = i;
        const hx_scaling_run *r = &s->runs[i];
        if (r->total > 0) lo = fmin(lo, r->total), hi = fmax(hi, r->total);
        for (int k = 0; k < s->nphase; k++)
            if (r->phase[k] > 0) lo = fmin(lo, r->phase[k]), hi = fmax(hi, r->phase[k]);
    }
    if (!(hi > 0)) {
        hx_draw_placeholder(cr, f.x, f.y, f.w, f.h, "no time was recorded");
        free(x), free(y), free(idx);
        return;
    }
    /* phases below 1e-4 of the total hold only timer noise: keep the axis on what matters */
    lo = fmax(lo, hi * 1e-4);
    double elo = floor(log10(lo)), ehi = ceil(log10(hi) + 1e-9);
    if (ehi - elo < 1) elo -= 1;
    f.ax = cores_range(s);
    f.ay = (axis){elo, ehi, 1, elo < -3 || ehi > 4, 0, 0, "wall time [s], slowest rank"};
    hx_draw_y_axis(cr, &f);
    cores_axis(cr, &f, s);
    entry e[MAX_SERIES + 2];
    int ne = 0, shown = 0;
    for (int j = 0; j < n; j++) x[j] = log2(s->runs[idx[j]].cores);
    const style total = {INK, 3.0, {0, 0}, 5};
    for (int j = 0; j < n; j++) y[j] = s->runs[idx[j]].total;
    polyline(cr, &f, x, y, n, &total);
    e[ne++] = (entry){total, 0, "total"};
    if (n > 0) { /* the ideal of the reference run: T1 P1 / P (strong) or T1 (weak) */
        const hx_scaling_run *q = &s->runs[idx[0]];
        for (int j = 0; j < n; j++)
            y[j] = s->kind == HX_SCALING_STRONG ? q->total * q->cores / s->runs[idx[j]].cores : q->total;
        const style ideal = {INK, 1.6, {10, 6}, 0};
        polyline(cr, &f, x, y, n, &ideal);
        e[ne++] = (entry){ideal, 0, "ideal total"};
    }
    int more = 0;
    for (int k = 0; k < s->nphase; k++) {
        int any = 0;
        for (int j = 0; j < n; j++) any |= s->runs[idx[j]].phase[k] >= lo;
        if (!any) continue;
        for (int j = 0; j < n; j++) y[j] = s->runs[idx[j]].phase[k];
        style st = series_style(shown, 2.0);
        st.marker = 3.5;
        polyline(cr, &f, x, y, n, &st);
        if (ne < MAX_SERIES + 2) {
            e[ne] = (entry){st, 0, ""};
            snprintf(e[ne++].label, sizeof e[0].label, "%s", s->phase[k]);
        } else
            more++;
        shown++;
    }
    char notes[1][96];
    int nn = 0;
    if (more) snprintf(notes[nn++], sizeof notes[0], "%d more phases not in the legend", more);
    hx_draw_legend(cr, f.x + f.w + LEGEND_GAP, f.y, e, ne, notes, nn);
    free(x), free(y), free(idx);
}

static void header(cairo_t *cr, const hx_scaling *s, const char *title)
{
    char sub[300];
    hx_draw_font(cr, FS_TITLE, 1);
    hx_draw_set_rgb(cr, INK);
    cairo_move_to(cr, MARGIN, 58);
    cairo_show_text(cr, title);
    hx_draw_font(cr, FS_SUB, 0);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, "helmix " HX_VERSION " · scaling", PAGE_W - MARGIN, 58, 1, 0);
    int cmin = s->n ? s->runs[0].cores : 0, cmax = cmin;
    for (int i = 0; i < s->n; i++) cmin = s->runs[i].cores < cmin ? s->runs[i].cores : cmin, cmax = s->runs[i].cores > cmax ? s->runs[i].cores : cmax;
    snprintf(sub, sizeof sub, "%d run%s in %d group%s, %d to %d cores; times are the slowest rank's wall time", s->n,
             s->n == 1 ? "" : "s", s->ngroup, s->ngroup == 1 ? "" : "s", cmin, cmax);
    hx_draw_text(cr, sub, MARGIN, 92, 0, 0);
    hx_draw_set_rgb(cr, RULE);
    cairo_set_line_width(cr, 1);
    hx_draw_line(cr, MARGIN, 112, PAGE_W - MARGIN, 112);
}

typedef struct page_args {
    const hx_scaling *s;
    const char *title;
} page_args;

static hx_status draw_page(cairo_t *cr, const void *user, double dev)
{
    (void)dev;
    const page_args *p = user;
    cairo_set_source_rgb(cr, 1, 1, 1);
    cairo_paint(cr);
    header(cr, p->s, p->title);
    efficiency_panel(cr, p->s, (frame){.x = 150, .y = 210, .w = 580, .h = 640});
    phases_panel(cr, p->s, (frame){.x = 1110, .y = 210, .w = 420, .h = 640});
    return HX_OK;
}

hx_status hx_scaling_plot(const hx_scaling *s, const char *path)
{
    if (!s || !path || s->n < 1) return hx_error_set(HX_ERR_ARG, "scaling plot: %s", !path ? "no output path" : "no runs to draw");
    char title[200], cmds[120] = "";
    for (int i = 0; i < s->n; i++) {
        int seen = 0;
        for (int j = 0; j < i; j++) seen |= !strcmp(s->runs[j].command, s->runs[i].command);
        size_t o = strlen(cmds);
        if (!seen && o + strlen(s->runs[i].command) + 3 < sizeof cmds) snprintf(cmds + o, sizeof cmds - o, "%s%s", o ? " and " : "", s->runs[i].command);
    }
    snprintf(title, sizeof title, "%s scaling of helmix %s", s->kind == HX_SCALING_STRONG ? "Strong" : "Weak", cmds);
    page_args p = {s, title};
    return hx_draw_page_write(path, title, PAGE_W, PAGE_H, PDF_W, draw_page, &p, "scaling plot");
}
