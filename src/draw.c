/* draw.c — the house look: primitives every report page draws with (see draw.h). Text is
 * cleaned to valid UTF-8 before cairo sees it; numbers print the typographic minus. */
#include "draw.h"

#include <cairo-pdf.h>

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "helmix/version.h"

/* ---- colours and line styles ----------------------------------------------------------- */




void hx_draw_set_rgb(cairo_t *cr, rgb c) { cairo_set_source_rgb(cr, c.r, c.g, c.b); }

void hx_draw_apply_style(cairo_t *cr, const style *s)
{
    hx_draw_set_rgb(cr, s->col);
    cairo_set_line_width(cr, s->width);
    cairo_set_dash(cr, s->dash, s->dash[0] > 0 ? 2 : 0, 0);
    /* round caps turn a short "on" length into dots */
    cairo_set_line_cap(cr, s->dash[0] > 0 && s->dash[0] < 3 ? CAIRO_LINE_CAP_ROUND : CAIRO_LINE_CAP_BUTT);
    cairo_set_line_join(cr, CAIRO_LINE_JOIN_ROUND);
}

void hx_draw_line(cairo_t *cr, double xa, double ya, double xb, double yb)
{
    cairo_move_to(cr, xa, ya);
    cairo_line_to(cr, xb, yb);
    cairo_stroke(cr);
}

/* ---- text ------------------------------------------------------------------------------ */

void hx_draw_font(cairo_t *cr, double size, int bold)
{
    cairo_select_font_face(cr, "sans", CAIRO_FONT_SLANT_NORMAL,
                           bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, size);
}

double hx_draw_font_size(cairo_t *cr)
{
    cairo_matrix_t m;
    cairo_get_font_matrix(cr, &m);
    return m.yy;
}

double hx_draw_plain_width(cairo_t *cr, const char *s)
{
    cairo_text_extents_t e;
    cairo_text_extents(cr, s, &e);
    return e.x_advance;
}

/* Width of s, drawn with its baseline starting at (x, y) when draw is set. s is plain text
 * with one piece of markup, "^{...}" for a raised exponent in smaller type, which the toy
 * text API lacks and labels such as k^{-5/3} or 10^{-4} need. */
double hx_draw_rich(cairo_t *cr, const char *s, double x, double y, int draw)
{
    double size = hx_draw_font_size(cr), w = 0;
    char seg[256];
    while (*s) {
        int sup = strncmp(s, "^{", 2) == 0;
        const char *start = sup ? s + 2 : s, *end = sup ? strchr(start, '}') : strstr(start, "^{");
        if (!end) end = start + strlen(start);
        size_t n = (size_t)(end - start) < sizeof seg ? (size_t)(end - start) : sizeof seg - 1;
        while (n > 0 && start + n < end && ((unsigned char)start[n] & 0xC0) == 0x80) n--; /* whole UTF-8 */
        memcpy(seg, start, n);
        seg[n] = '\0';
        cairo_set_font_size(cr, sup ? 0.72 * size : size);
        if (draw) cairo_move_to(cr, x + w, y - (sup ? 0.42 * size : 0)), cairo_show_text(cr, seg);
        w += hx_draw_plain_width(cr, seg) + (sup ? 1 : 0);
        s = sup && *end ? end + 1 : end;
    }
    cairo_set_font_size(cr, size);
    return w;
}

double hx_draw_text_width(cairo_t *cr, const char *s) { return hx_draw_rich(cr, s, 0, 0, 0); }

/* Draw s anchored at (x, y): ax 0/0.5/1 = left/centre/right; ay 0 = baseline, 0.5 = middle
 * and 1 = top of the capitals (cap height ~0.73 of the size for a sans face), so labels
 * line up with ticks whatever their descenders. */
void hx_draw_text(cairo_t *cr, const char *s, double x, double y, double ax, double ay)
{
    hx_draw_rich(cr, s, x - ax * hx_draw_text_width(cr, s), y + ay * 0.73 * hx_draw_font_size(cr), 1);
}

/* Same, turned a quarter left so it reads upwards (y axis titles); (x, y) is the baseline
 * centre. */
void hx_draw_text_up(cairo_t *cr, const char *s, double x, double y)
{
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_rotate(cr, -M_PI / 2);
    hx_draw_text(cr, s, 0, 0, 0.5, 0);
    cairo_restore(cr);
}

/* Length of the valid UTF-8 character at p, 0 if it is none, by cairo's rules (no overlong
 * forms, surrogates, values past U+10FFFF or noncharacters); control characters count as
 * invalid since the font has no glyph for them. */
int hx_draw_utf8_len(const unsigned char *p)
{
    static const uint32_t least[5] = {0, 0, 0x80, 0x800, 0x10000};
    if (p[0] < 0x80) return p[0] >= 0x20 && p[0] != 0x7f;
    int n = p[0] >= 0xF8 ? 0 : p[0] >= 0xF0 ? 4 : p[0] >= 0xE0 ? 3 : p[0] >= 0xC0 ? 2 : 0;
    if (!n) return 0;
    uint32_t cp = p[0] & (0x7Fu >> n);
    for (int i = 1; i < n; i++) {
        if ((p[i] & 0xC0) != 0x80) return 0; /* also stops at the terminating NUL */
        cp = cp << 6 | (p[i] & 0x3Fu);
    }
    if (cp < least[n] || cp > 0x10FFFF || (cp >= 0xD800 && cp <= 0xDFFF) || (cp >= 0xFDD0 && cp <= 0xFDEF) ||
        (cp & 0xFFFE) == 0xFFFE)
        return 0;
    return n;
}

/* The first line of src as valid UTF-8, invalid bytes shown as '?': cairo refuses invalid
 * text and would fail the whole page over a file name in a legacy encoding. */
void hx_draw_clean_line(char *dst, size_t len, const char *src)
{
    const unsigned char *p = (const unsigned char *)src;
    size_t o = 0;
    while (*p && *p != '\n' && *p != '\r') {
        int n = hx_draw_utf8_len(p);
        if (o + (size_t)(n ? n : 1) + 1 > len) break;
        if (n) memcpy(dst + o, p, (size_t)n), o += (size_t)n, p += n;
        else dst[o++] = '?', p++;
    }
    dst[o] = '\0';
}

/* Format v with fmt (one double conversion) and write hyphens as the typographic minus,
 * which reads as a sign rather than a dash; "n/a" for a missing value. */
const char *hx_draw_num(char *buf, size_t len, const char *fmt, double v)
{
    char tmp[64];
    if (!isfinite(v)) {
        snprintf(buf, len, "n/a");
        return buf;
    }
    snprintf(tmp, sizeof tmp, fmt, v);
    size_t o = 0;
    for (const char *p = tmp; *p && o + 4 < len; p++) {
        if (*p == '-') memcpy(buf + o, "\xe2\x88\x92", 3), o += 3;
        else buf[o++] = *p;
    }
    buf[o] = '\0';
    return buf;
}

/* ---- frames, axes and ticks ------------------------------------------------------------ */




double hx_draw_fx(const frame *f, double v)
{
    double t = f->ax.log ? log10(v) : v;
    return f->x + (t - f->ax.lo) / (f->ax.hi - f->ax.lo) * f->w;
}

double hx_draw_fy(const frame *f, double v)
{
    double t = f->ay.log ? log10(v) : v;
    return f->y + f->h - (t - f->ay.lo) / (f->ay.hi - f->ay.lo) * f->h;
}

int hx_draw_linear_ticks(const axis *a, tick *t)
{
    int n = 0;
    long i0 = lround(ceil(a->lo / a->step - 1e-9)), i1 = lround(floor(a->hi / a->step + 1e-9));
    for (long i = i0; i <= i1 && n < MAX_TICKS; i++, n++) {
        t[n].v = (double)i * a->step;
        t[n].major = i % a->label_every == 0;
    }
    return n;
}

/* Log axis: labels at the decades (every few decades on a long axis so at most ~6 show),
 * also at 2 and 5 when the axis is shorter than two decades, minor ticks at the integer
 * multiples unless the axis is long enough to make them a smear. */
int hx_draw_log_ticks(const axis *a, tick *t)
{
    double span = a->hi - a->lo;
    int every = span > 6.5 ? (int)ceil(span / 6.0) : 1, minor = span <= 6.5, dense = span < 2.0;
    int n = 0;
    for (int e = (int)floor(a->lo); e <= (int)ceil(a->hi); e++)
        for (int m = 1; m <= (minor ? 9 : 1) && n < MAX_TICKS; m++) {
            double lv = e + log10((double)m);
            if (lv < a->lo - 1e-9 || lv > a->hi + 1e-9) continue;
            t[n].v = pow(10.0, lv);
            t[n++].major = m == 1 ? e % every == 0 : dense && (m == 2 || m == 5);
        }
    return n;
}

int hx_draw_ticks(const axis *a, tick *t) { return a->log ? hx_draw_log_ticks(a, t) : hx_draw_linear_ticks(a, t); }

/* Draw a tick label; returns its width. */
double hx_draw_tick_label(cairo_t *cr, const axis *a, double v, double x, double y, double ax, double ay)
{
    char buf[48], e[32];
    if (a->log && a->power) snprintf(buf, sizeof buf, "10^{%s}", hx_draw_num(e, sizeof e, "%.0f", round(log10(v)) + 0.0));
    else hx_draw_num(buf, sizeof buf, "%g", fabs(v) < 1e-12 ? 0.0 : v);
    hx_draw_text(cr, buf, x, y, ax, ay);
    return hx_draw_text_width(cr, buf);
}

void hx_draw_x_axis(cairo_t *cr, const frame *f)
{
    tick t[MAX_TICKS];
    int n = hx_draw_ticks(&f->ax, t);
    double yb = f->y + f->h;
    hx_draw_font(cr, FS_TICK, 0);
    cairo_set_line_width(cr, 1.0);
    for (int i = 0; i < n; i++) {
        double x = hx_draw_fx(f, t[i].v);
        if (t[i].major) hx_draw_set_rgb(cr, GRID), hx_draw_line(cr, x, f->y, x, yb);
        hx_draw_set_rgb(cr, AXIS);
        hx_draw_line(cr, x, yb, x, yb + (t[i].major ? 7 : 4));
        if (t[i].major) hx_draw_set_rgb(cr, INK), hx_draw_tick_label(cr, &f->ax, t[i].v, x, yb + 12, 0.5, 1);
    }
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f->x, yb, f->x + f->w, yb);
    hx_draw_font(cr, FS_AXIS, 0);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, f->ax.title, f->x + f->w / 2, yb + 52, 0.5, 0);
}

void hx_draw_y_axis(cairo_t *cr, const frame *f)
{
    tick t[MAX_TICKS];
    int n = hx_draw_ticks(&f->ay, t);
    double wmax = 0;
    hx_draw_font(cr, FS_TICK, 0);
    cairo_set_line_width(cr, 1.0);
    for (int i = 0; i < n; i++) {
        double y = hx_draw_fy(f, t[i].v);
        if (t[i].major) hx_draw_set_rgb(cr, GRID), hx_draw_line(cr, f->x, y, f->x + f->w, y);
        hx_draw_set_rgb(cr, AXIS);
        hx_draw_line(cr, f->x - (t[i].major ? 7 : 4), y, f->x, y);
        if (!t[i].major) continue;
        hx_draw_set_rgb(cr, INK);
        double w = hx_draw_tick_label(cr, &f->ay, t[i].v, f->x - 11, y, 1, 0.5);
        wmax = w > wmax ? w : wmax;
    }
    hx_draw_set_rgb(cr, AXIS);
    cairo_set_line_width(cr, 1.4);
    hx_draw_line(cr, f->x, f->y, f->x, f->y + f->h);
    hx_draw_font(cr, FS_AXIS, 0);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text_up(cr, f->ay.title, f->x - 24 - wmax, f->y + f->h / 2);
}

void hx_draw_panel_title(cairo_t *cr, const frame *f, const char *title)
{
    hx_draw_font(cr, FS_PANEL, 1);
    hx_draw_set_rgb(cr, INK);
    hx_draw_text(cr, title, f->x, f->y - 16, 0, 0);
}

void hx_draw_note(cairo_t *cr, const char *s, double x, double y)
{
    cairo_select_font_face(cr, "sans", CAIRO_FONT_SLANT_ITALIC, CAIRO_FONT_WEIGHT_NORMAL);
    cairo_set_font_size(cr, FS_AXIS);
    hx_draw_set_rgb(cr, MUTED);
    hx_draw_text(cr, s, x, y, 0.5, 0.5);
}

/* Light placeholder for a panel whose data is missing, with a short note in the middle. */
void hx_draw_placeholder(cairo_t *cr, double x, double y, double w, double h, const char *s)
{
    cairo_set_source_rgb(cr, 0.95, 0.955, 0.965);
    cairo_rectangle(cr, x, y, w, h);
    cairo_fill(cr);
    hx_draw_note(cr, s, x + w / 2, y + h / 2);
}

/* ---- data series ----------------------------------------------------------------------- */

/* Points i0 .. n-1 at x_i = x0 + i dx with value y_i, or y_i / den_i when den is given.
 * Points whose den (without den: whose value) is not above floor are skipped, so shells that
 * hold only round-off neither plunge off the axis nor show a share of nothing. */

int hx_draw_point(const frame *f, const series *s, int i, double *px, double *py)
{
    double x = s->x0 + i * s->dx, y = s->y[i];
    if (!((s->den ? s->den[i] : y) > s->floor)) return 0;
    if (s->den) y /= s->den[i];
    if (!isfinite(x) || !isfinite(y) || (f->ax.log && x <= 0) || (f->ay.log && y <= 0)) return 0;
    *px = hx_draw_fx(f, x), *py = hx_draw_fy(f, y);
    return 1;
}

/* A missing point breaks the line instead of dragging it to the axis; everything is clipped
 * to the frame. */
void hx_draw_draw_series(cairo_t *cr, const frame *f, const series *s, const style *st)
{
    double x, y;
    int open = 0;
    cairo_save(cr);
    cairo_rectangle(cr, f->x, f->y, f->w, f->h);
    cairo_clip(cr);
    for (int i = s->i0; i < s->n; i++) {
        if (!hx_draw_point(f, s, i, &x, &y)) open = 0;
        else if (open) cairo_line_to(cr, x, y);
        else cairo_move_to(cr, x, y), open = 1;
    }
    hx_draw_apply_style(cr, st);
    cairo_stroke(cr);
    for (int i = s->i0; i < s->n && st->marker > 0; i++) {
        if (!hx_draw_point(f, s, i, &x, &y)) continue;
        cairo_new_sub_path(cr);
        cairo_arc(cr, x, y, st->marker, 0, 2 * M_PI);
    }
    cairo_fill(cr);
    cairo_restore(cr);
}

/* A horizontal line at value v of f's y axis, linear or log; nothing when v is off the frame. */
void hx_draw_hline(cairo_t *cr, const frame *f, double v, const style *st)
{
    if (!isfinite(v) || (f->ay.log && !(v > 0))) return;
    double y = hx_draw_fy(f, v);
    if (y < f->y - 0.5 || y > f->y + f->h + 0.5) return;
    hx_draw_apply_style(cr, st);
    hx_draw_line(cr, f->x, y, f->x + f->w, y);
    cairo_set_dash(cr, NULL, 0, 0);
}

/* Short sample of a style for legends, centred vertically on y. */
void hx_draw_sample(cairo_t *cr, const style *st, double x, double y, double len)
{
    hx_draw_apply_style(cr, st);
    hx_draw_line(cr, x, y, x + len, y);
    cairo_set_dash(cr, NULL, 0, 0);
    if (st->marker > 0) {
        cairo_arc(cr, x + len / 2, y, st->marker, 0, 2 * M_PI);
        cairo_fill(cr);
    }
}

/* ---- legends --------------------------------------------------------------------------- */



void hx_draw_legend_box(cairo_t *cr, double x, double y, double w, double h)
{
    cairo_rectangle(cr, x, y, w, h);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.92);
    cairo_fill_preserve(cr);
    hx_draw_set_rgb(cr, RULE);
    cairo_set_line_width(cr, 1.0);
    cairo_stroke(cr);
}

/* Legend rows in a box with its top-left corner at (x, y), then plain notes under a thin
 * rule. The box sits beside the panel, where it can never hide data. */
void hx_draw_legend(cairo_t *cr, double x, double y, const entry *e, int n, char (*notes)[96], int nnotes)
{
    double wmax = 0;
    hx_draw_font(cr, FS_SMALL, 0);
    for (int i = 0; i < n; i++) wmax = fmax(wmax, LEG_SAMPLE + 10 + hx_draw_text_width(cr, e[i].label));
    for (int i = 0; i < nnotes; i++) wmax = fmax(wmax, hx_draw_text_width(cr, notes[i]));
    double w = fmax(wmax + 2 * LEG_PAD, LEGEND_W), h = (n + nnotes) * LEG_ROW + 2 * LEG_PAD - 4 + (nnotes ? 10 : 0);
    hx_draw_legend_box(cr, x, y, w, h);
    double cy = y + LEG_PAD + LEG_ROW / 2 - 2;
    for (int i = 0; i < n; i++, cy += LEG_ROW) {
        if (e[i].band) hx_draw_set_rgb(cr, e[i].st.col), cairo_rectangle(cr, x + LEG_PAD, cy - 7, LEG_SAMPLE, 14), cairo_fill(cr);
        else hx_draw_sample(cr, &e[i].st, x + LEG_PAD, cy, LEG_SAMPLE);
        hx_draw_set_rgb(cr, INK);
        hx_draw_text(cr, e[i].label, x + LEG_PAD + LEG_SAMPLE + 10, cy, 0, 0.5);
    }
    if (nnotes) hx_draw_set_rgb(cr, RULE), cairo_set_line_width(cr, 1), hx_draw_line(cr, x + LEG_PAD, cy - 6, x + w - LEG_PAD, cy - 6);
    cy += 10;
    for (int i = 0; i < nnotes; i++, cy += LEG_ROW) hx_draw_set_rgb(cr, INK), hx_draw_text(cr, notes[i], x + LEG_PAD, cy, 0, 0.5);
}


/* ---- pages ----------------------------------------------------------------------------- */

static int ends_with(const char *s, const char *ext)
{
    size_t n = strlen(s), m = strlen(ext);
    if (n < m) return 0;
    for (size_t i = 0; i < m; i++) {
        char c = s[n - m + i];
        if ((c >= 'A' && c <= 'Z' ? c - 'A' + 'a' : c) != ext[i]) return 0;
    }
    return 1;
}

static hx_status check_cairo(cairo_status_t cs, const char *who, const char *what, const char *path)
{
    if (cs == CAIRO_STATUS_SUCCESS) return HX_OK;
    return hx_error_set(HX_ERR_IO, "%s '%s': %s failed: %s", who, path, what, cairo_status_to_string(cs));
}

hx_status hx_draw_page_write(const char *path, const char *title, int width, int height, double pdf_width,
                             hx_draw_page_fn draw, const void *user, const char *who)
{
    int pdf = ends_with(path, ".pdf");
    if (!pdf && !ends_with(path, ".png"))
        return hx_error_set(HX_ERR_ARG, "%s '%s': unknown format; the file name must end in .png or .pdf", who, path);
    double dev = pdf ? pdf_width / width : 1.0;
    cairo_surface_t *surf = pdf ? cairo_pdf_surface_create(path, width * dev, height * dev)
                                : cairo_image_surface_create(CAIRO_FORMAT_RGB24, width, height);
    hx_status st = check_cairo(cairo_surface_status(surf), who, pdf ? "creating the PDF" : "creating the image", path);
    int created = st == HX_OK;
    if (created && pdf) {
        cairo_pdf_surface_set_metadata(surf, CAIRO_PDF_METADATA_CREATOR, "helmix " HX_VERSION);
        cairo_pdf_surface_set_metadata(surf, CAIRO_PDF_METADATA_TITLE, title);
    }
    if (created) {
        cairo_t *cr = cairo_create(surf);
        cairo_scale(cr, dev, dev);
        st = draw(cr, user, dev);
        if (st == HX_OK) st = check_cairo(cairo_status(cr), who, "drawing", path);
        cairo_destroy(cr);
        if (st == HX_OK && !pdf) st = check_cairo(cairo_surface_write_to_png(surf, path), who, "writing the PNG", path);
        if (st == HX_OK && pdf) {
            cairo_surface_finish(surf);
            st = check_cairo(cairo_surface_status(surf), who, "writing the PDF", path);
        }
    }
    cairo_surface_destroy(surf);
    if (st != HX_OK && pdf && created) remove(path); /* no half-written page left behind */
    return st;
}
