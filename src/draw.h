/* draw.h — the house look of helmix's report pages, shared by every page (the inspect report,
 * the scorecard): colours, line styles, fonts, text with raised exponents, frames with linear
 * and log axes, data series that break at missing points, and legends. Internal to the
 * library (src/); nothing here is collective. All drawing is in logical page units. */
#ifndef HX_DRAW_H
#define HX_DRAW_H

#include <cairo.h>
#include <stddef.h>

#include "helmix/error.h"

#ifndef M_PI /* POSIX, not ISO C */
#define M_PI 3.14159265358979323846
#endif

enum { FS_TITLE = 30, FS_SUB = 16, FS_PANEL = 18, FS_AXIS = 16, FS_TICK = 15, FS_SMALL = 14 };

enum { MAX_TICKS = 160 }; /* ticks one axis may carry */
enum { LEG_ROW = 24, LEG_SAMPLE = 34, LEG_PAD = 12, LEGEND_GAP = 22, LEGEND_W = 214 };

typedef struct rgb { double r, g, b; } rgb;

typedef struct style {
    rgb col;
    double width;
    double dash[2]; /* on, off; dash[0] == 0: solid */
    double marker;  /* radius of the dot at every point, 0: none */
} style;

typedef struct axis {
    double lo, hi;     /* shown range; its log10 on a log axis */
    int log;           /* logarithmic axis */
    int power;         /* log axis labelled 10^n rather than plain numbers */
    double step;       /* linear axis: tick spacing */
    int label_every;   /* linear axis: label every n-th tick */
    const char *title; /* with units */
} axis;

typedef struct frame { double x, y, w, h; axis ax, ay; } frame;

typedef struct tick { double v; int major; } tick;

typedef struct series {
    const double *y, *den;
    double floor, x0, dx;
    int i0, n;
} series;

typedef struct entry {
    style st;
    int band; /* draw a filled swatch of st.col instead of a line */
    char label[96];
} entry;

static const rgb INK = {0.11, 0.13, 0.18};
static const rgb MUTED = {0.40, 0.43, 0.49};
static const rgb AXIS = {0.35, 0.38, 0.43};
static const rgb GRID = {0.90, 0.91, 0.93};
static const rgb RULE = {0.80, 0.82, 0.85};
static const rgb BAND = {0.96, 0.94, 0.88};
static const rgb COMP = {0.80, 0.34, 0.22};
static const rgb SOL = {0.17, 0.43, 0.66};
static const rgb GUIDE = {0.76, 0.55, 0.05};
static const rgb NORMAL = {0.74, 0.76, 0.79};
static const rgb COMPONENT[3] = {{0.13, 0.58, 0.53}, {0.87, 0.55, 0.12}, {0.49, 0.35, 0.68}};

void hx_draw_set_rgb(cairo_t *cr, rgb c);
void hx_draw_apply_style(cairo_t *cr, const style *s);
void hx_draw_line(cairo_t *cr, double xa, double ya, double xb, double yb);
void hx_draw_font(cairo_t *cr, double size, int bold);
double hx_draw_font_size(cairo_t *cr);
double hx_draw_plain_width(cairo_t *cr, const char *s);
double hx_draw_rich(cairo_t *cr, const char *s, double x, double y, int draw);
double hx_draw_text_width(cairo_t *cr, const char *s);
void hx_draw_text(cairo_t *cr, const char *s, double x, double y, double ax, double ay);
void hx_draw_text_up(cairo_t *cr, const char *s, double x, double y);
int hx_draw_utf8_len(const unsigned char *p);
void hx_draw_clean_line(char *dst, size_t len, const char *src);
/* v with fmt, hyphens as the typographic minus, "n/a" when not finite */
const char *hx_draw_num(char *buf, size_t len, const char *fmt, double v);
double hx_draw_fx(const frame *f, double v);
double hx_draw_fy(const frame *f, double v);
int hx_draw_linear_ticks(const axis *a, tick *t);
int hx_draw_log_ticks(const axis *a, tick *t);
int hx_draw_ticks(const axis *a, tick *t);
double hx_draw_tick_label(cairo_t *cr, const axis *a, double v, double x, double y, double ax, double ay);
void hx_draw_x_axis(cairo_t *cr, const frame *f);
void hx_draw_y_axis(cairo_t *cr, const frame *f);
void hx_draw_panel_title(cairo_t *cr, const frame *f, const char *title);
void hx_draw_note(cairo_t *cr, const char *s, double x, double y);
void hx_draw_placeholder(cairo_t *cr, double x, double y, double w, double h, const char *s);
int hx_draw_point(const frame *f, const series *s, int i, double *px, double *py);
void hx_draw_draw_series(cairo_t *cr, const frame *f, const series *s, const style *st);
void hx_draw_hline(cairo_t *cr, const frame *f, double v, const style *st);
void hx_draw_sample(cairo_t *cr, const style *st, double x, double y, double len);
void hx_draw_legend_box(cairo_t *cr, double x, double y, double w, double h);

/* Draws a page on cr (already scaled to logical units); dev is device units per logical unit. */
typedef hx_status (*hx_draw_page_fn)(cairo_t *cr, const void *user, double dev);

/* Write a page of width x height logical units to path, a PNG (one unit, one pixel) or a PDF
 * page pdf_width points wide, chosen by the extension (.png or .pdf, any case). `who` names the
 * page in messages ("plot", "score plot"). HX_ERR_ARG for another extension, HX_ERR_IO when
 * cairo cannot create, draw or write the file; a half-written PDF is removed. Not collective. */
hx_status hx_draw_page_write(const char *path, const char *title, int width, int height, double pdf_width,
                             hx_draw_page_fn draw, const void *user, const char *who);

void hx_draw_legend(cairo_t *cr, double x, double y, const entry *e, int n, char (*notes)[96], int nnotes);

void hx_draw_legend(cairo_t *cr, double x, double y, const entry *e, int n, char (*notes)[96], int nnotes);

#endif
