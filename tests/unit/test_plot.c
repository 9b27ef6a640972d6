/* test_plot.c — the report page: a synthetic cube summary renders to PNG and PDF, the
 * files are real images of the promised size with the panels drawn, missing parts still
 * render, a magnetic field adds its own row below without touching the rest of the page, and
 * bad paths or formats fail with the documented status. Set HX_TEST_KEEP=1 to keep the
 * rendered files in /tmp for viewing. */
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <unistd.h>

#include <cairo.h>

#include "helmix/plot.h"
#include "hx_test.h"

enum { N = 64, NSHELL = 33, SLICE = 64 };

/* A summary shaped like a 64^3 cube with E ~ k^-2 and a third of the energy compressive. */
static void fill_spectra(hx_diag *d)
{
    d->nshell = NSHELL;
    d->shell_e = calloc(NSHELL, sizeof(double));
    d->shell_comp = calloc(NSHELL, sizeof(double));
    d->shell_sol = calloc(NSHELL, sizeof(double));
    d->shell_modes = calloc(NSHELL, sizeof(double));
    for (int s = 1; s < NSHELL; s++) {
        d->shell_e[s] = 0.5 * pow(s, -2.0);
        d->shell_comp[s] = d->shell_e[s] * (1.0 / 3.0 + 0.05 * sin(s));
        d->shell_sol[s] = d->shell_e[s] - d->shell_comp[s];
        d->shell_modes[s] = 4 * M_PI * s * s;
    }
    d->fit_kmin = 2, d->fit_kmax = 16, d->slope = 1.987, d->slope_err = 0.041;
}

/* Standard normal density at bin centres, empty beyond 4.4 sigma as in a finite sample. */
static void fill_pdfs(hx_diag *d)
{
    double dx = 2 * HX_DIAG_PDF_RANGE / HX_DIAG_BINS;
    for (int c = 0; c < 3; c++)
        for (int b = 0; b < HX_DIAG_BINS; b++) {
            double x = -HX_DIAG_PDF_RANGE + (b + 0.5) * dx;
            d->pdf[c][b] = fabs(x) < 4.4 ? exp(-0.5 * x * x) / sqrt(2 * M_PI) * (1 + 0.03 * c * x) : 0;
        }
}

/* Slices of v = (sin x cos y + cos 2x / 2, -cos x sin y, 0) on [0, 2 pi)^2, whose divergence
 * is -sin 2x and vorticity 2 sin x sin y (worked by hand). */
static void fill_slices(hx_diag *d, int n)
{
    d->slice_n[0] = d->slice_n[1] = n;
    d->slice_speed = malloc((size_t)n * n * sizeof(double));
    d->slice_div = malloc((size_t)n * n * sizeof(double));
    d->slice_vort = malloc((size_t)n * n * sizeof(double));
    for (int j = 0; j < n; j++)
        for (int i = 0; i < n; i++) {
            double x = 2 * M_PI * (i + 0.5) / n, y = 2 * M_PI * (j + 0.5) / n;
            double vx = sin(x) * cos(y) + 0.5 * cos(2 * x), vy = -cos(x) * sin(y);
            d->slice_speed[j * n + i] = sqrt(vx * vx + vy * vy);
            d->slice_div[j * n + i] = -sin(2 * x);
            d->slice_vort[j * n + i] = fabs(2 * sin(x) * sin(y));
        }
}

static hx_diag make_diag(int slice_n)
{
    hx_diag d = {0};
    d.cells[0] = d.cells[1] = d.cells[2] = N;
    d.box[0] = d.box[1] = d.box[2] = 1.0;
    d.ranks = 4;
    for (int c = 0; c < 3; c++) d.mean[c] = 1e-3 * (c - 1), d.rms[c] = sqrt(1.0 / 3.0);
    d.rms3 = 1.0;
    d.skew[0] = 0.012, d.skew[1] = -0.034, d.skew[2] = 0.005;
    d.kurt[0] = -0.02, d.kurt[1] = 0.07, d.kurt[2] = -0.11;
    d.e_total = 0.5, d.fraction = 0.3345, d.e_comp = 0.5 * d.fraction, d.e_sol = 0.5 - d.e_comp;
    d.div_ratio = 0.578, d.vort_ratio = 0.816;
    fill_spectra(&d);
    fill_pdfs(&d);
    if (slice_n > 0) fill_slices(&d, slice_n);
    return d;
}

/* The library's hx_diag_clear lives in diag.c, outside this test's build. */
static void free_diag(hx_diag *d)
{
    free(d->shell_e), free(d->shell_comp), free(d->shell_sol), free(d->shell_modes);
    free(d->slice_speed), free(d->slice_div), free(d->slice_vort);
    *d = (hx_diag){0};
}

/* ---- reading the PNG back --------------------------------------------------------------- */

typedef struct box { int x0, y0, x1, y1; } box;

static uint32_t pixel(cairo_surface_t *s, int x, int y)
{
    const unsigned char *data = cairo_image_surface_get_data(s);
    return ((const uint32_t *)(const void *)(data + (size_t)y * cairo_image_surface_get_stride(s)))[x] & 0xffffffu;
}

static int chroma(uint32_t p)
{
    int r = p >> 16 & 255, g = p >> 8 & 255, b = p & 255;
    int hi = r > g ? (r > b ? r : b) : (g > b ? g : b), lo = r < g ? (r < b ? r : b) : (g < b ? g : b);
    return hi - lo;
}

static int near(uint32_t p, uint32_t q, int tol)
{
    for (int sh = 0; sh <= 16; sh += 8)
        if (abs((int)(p >> sh & 255) - (int)(q >> sh & 255)) > tol) return 0;
    return 1;
}

/* Fraction of strongly coloured pixels (max - min channel > 60) in b: colour maps have
 * them, text, axes and grey notes do not. */
static double coloured_fraction(cairo_surface_t *s, box b)
{
    long hit = 0, all = 0;
    for (int y = b.y0; y < b.y1; y++)
        for (int x = b.x0; x < b.x1; x++, all++) hit += chroma(pixel(s, x, y)) > 60;
    return (double)hit / (double)all;
}

static long count_near(cairo_surface_t *s, box b, uint32_t colour, int tol)
{
    long n = 0;
    for (int y = b.y0; y < b.y1; y++)
        for (int x = b.x0; x < b.x1; x++) n += near(pixel(s, x, y), colour, tol);
    return n;
}

/* Distinct colours (one bit per 24-bit colour) and the share of non-white pixels. */
static void census(cairo_surface_t *s, int *distinct, double *nonwhite)
{
    unsigned char *seen = calloc(1u << 21, 1);
    long dark = 0, all = 0;
    *distinct = 0;
    for (int y = 0; seen && y < cairo_image_surface_get_height(s); y++)
        for (int x = 0; x < cairo_image_surface_get_width(s); x++, all++) {
            uint32_t p = pixel(s, x, y);
            dark += p != 0xffffffu;
            *distinct += !(seen[p >> 3] >> (p & 7) & 1);
            seen[p >> 3] |= (unsigned char)(1u << (p & 7));
        }
    *nonwhite = all ? (double)dark / (double)all : 0;
    free(seen);
}

/* The PNG at path, or NULL (a failed check) when cairo cannot read it. */
static cairo_surface_t *read_png(const char *path)
{
    cairo_surface_t *s = cairo_image_surface_create_from_png(path);
    int ok = cairo_surface_status(s) == CAIRO_STATUS_SUCCESS;
    CHECK(ok);
    if (!ok) cairo_surface_destroy(s);
    return ok ? s : NULL;
}

/* ---- tests ----------------------------------------------------------------------------- */

static char png_path[128], pdf_path[128], ppm_base[128];
static int keep;

static void discard(const char *path)
{
    if (!keep) remove(path);
}

/* Slices sit in the bottom band of the page (from y ~ 950), spectra in the upper left. */
static const box SLICE_BAND = {60, 950, 1740, 1250}, SPECTRUM = {150, 250, 910, 530}; /* plot areas */
#define GUIDE_RGB 0xc28c0du /* the guide line's colour, (0.76, 0.55, 0.05) in plot.c */

/* Requirement: PNG of ~1800x1300 px that is a real picture, slices in colour, guide shown. */
static void test_png(void)
{
    hx_diag d = make_diag(SLICE);
    hx_plot_request req = {2.0, 1.0 / 3.0, "demo64.h5   64³ cells, solenoidal + compressive mix"};
    CHECK(hx_plot_report(&d, &req, png_path) == HX_OK);
    cairo_surface_t *s = read_png(png_path);
    if (s) {
        CHECK(cairo_image_surface_get_width(s) == 1800);
        CHECK(cairo_image_surface_get_height(s) == 1300);
        int distinct = 0;
        double nonwhite = 0;
        census(s, &distinct, &nonwhite);
        CHECK(distinct > 600);                    /* three 256-step colour maps plus line art */
        CHECK(nonwhite > 0.05 && nonwhite < 0.6); /* neither blank nor flooded */
        if (cairo_image_surface_get_width(s) == 1800 && cairo_image_surface_get_height(s) == 1300) {
            CHECK(coloured_fraction(s, SLICE_BAND) > 0.15);
            CHECK(count_near(s, SPECTRUM, GUIDE_RGB, 10) > 100);
        }
        cairo_surface_destroy(s);
    }
    discard(png_path);

    char path[160];
    snprintf(path, sizeof path, "%s.noguide.png", png_path);
    req.slope = NAN; /* no guide requested: none of its colour in the spectrum panel */
    CHECK(hx_plot_report(&d, &req, path) == HX_OK);
    if ((s = read_png(path))) {
        CHECK(count_near(s, SPECTRUM, GUIDE_RGB, 10) == 0);
        cairo_surface_destroy(s);
    }
    discard(path);
    free_diag(&d);
}

static int starts_with_pdf(const char *path)
{
    char head[5] = {0};
    FILE *f = fopen(path, "rb");
    if (!f) return 0;
    size_t n = fread(head, 1, 4, f);
    fclose(f);
    return n == 4 && memcmp(head, "%PDF", 4) == 0;
}

/* Requirement: one PDF page, A4 landscape width (842 pt), that an independent renderer
 * (poppler's pdftoppm, when installed) can rasterize. */
static void test_pdf(void)
{
    hx_diag d = make_diag(SLICE);
    hx_plot_request req = {2.0, 1.0 / 3.0, "demo64.h5"};
    CHECK(hx_plot_report(&d, &req, pdf_path) == HX_OK);
    CHECK(starts_with_pdf(pdf_path));
    if (access("/usr/bin/pdftoppm", X_OK) == 0) {
        char cmd[512], out[160];
        snprintf(cmd, sizeof cmd, "/usr/bin/pdftoppm -png -r 50 -singlefile %s %s", pdf_path, ppm_base);
        CHECK(system(cmd) == 0);
        snprintf(out, sizeof out, "%s.png", ppm_base);
        cairo_surface_t *s = read_png(out);
        /* 842 pt at 50 dpi is 585 px (pdftoppm rounds up); the slices lie in y 330..415 */
        int fits = s && abs(cairo_image_surface_get_width(s) - 585) <= 1 && cairo_image_surface_get_height(s) > 415;
        CHECK(fits);
        if (fits) CHECK(coloured_fraction(s, (box){20, 330, 565, 415}) > 0.1);
        if (s) cairo_surface_destroy(s);
        discard(out);
    }
    discard(pdf_path);
    free_diag(&d);
}

/* Requirement: slices may be NULL (panel says "not computed"), spectra may be missing and
 * req may be NULL; the page still renders, with no colour-mapped pixels in the slice band. */
static void test_missing_parts(void)
{
    hx_diag d = make_diag(0);
    hx_plot_request req = {NAN, NAN, "no slices"};
    char png[160], pdf[160], bare[160];
    snprintf(png, sizeof png, "%s.noslices.png", png_path);
    snprintf(pdf, sizeof pdf, "%s.noslices.pdf", png_path);
    snprintf(bare, sizeof bare, "%s.nospectra.png", png_path);
    CHECK(hx_plot_report(&d, &req, png) == HX_OK);
    cairo_surface_t *s = read_png(png);
    if (s) {
        CHECK(coloured_fraction(s, SLICE_BAND) < 0.001);
        cairo_surface_destroy(s);
    }
    CHECK(hx_plot_report(&d, NULL, pdf) == HX_OK);
    CHECK(starts_with_pdf(pdf));
    free(d.shell_e);
    d.shell_e = NULL;
    CHECK(hx_plot_report(&d, NULL, bare) == HX_OK);
    discard(png), discard(pdf), discard(bare);
    free_diag(&d);
}

static double luma(uint32_t p) /* Rec. 709 weights on the encoded values, common practice */
{
    return 0.2126 * (p >> 16 & 255) + 0.7152 * (p >> 8 & 255) + 0.0722 * (p & 255);
}

/* Requirement: sequential maps get brighter with the value, x runs right and y up, and the
 * divergence map is blue below 0, red above, near white at 0. Ramps: speed = x, |vorticity|
 * = y, divergence from -1 to 1 along x. Image boxes (310 units square for a cubic box) start
 * at x = 100, 650, 1200 and y = 948 in plot.c's layout. */
static void test_slice_orientation(void)
{
    hx_diag d = make_diag(SLICE);
    for (int j = 0; j < SLICE; j++)
        for (int i = 0; i < SLICE; i++) {
            d.slice_speed[j * SLICE + i] = i;
            d.slice_vort[j * SLICE + i] = j;
            d.slice_div[j * SLICE + i] = -1 + 2.0 * (i + 0.5) / SLICE;
        }
    char png[160];
    snprintf(png, sizeof png, "%s.ramps.png", png_path);
    CHECK(hx_plot_report(&d, NULL, png) == HX_OK);
    cairo_surface_t *s = read_png(png);
    if (!s) {
        free_diag(&d);
        return;
    }
    const int mid = 948 + 155;
    CHECK(luma(pixel(s, 110, mid)) + 20 < luma(pixel(s, 255, mid)));
    CHECK(luma(pixel(s, 255, mid)) + 20 < luma(pixel(s, 400, mid)));
    CHECK(luma(pixel(s, 1355, 1250)) + 20 < luma(pixel(s, 1355, 1103)));
    CHECK(luma(pixel(s, 1355, 1103)) + 20 < luma(pixel(s, 1355, 958)));
    uint32_t left = pixel(s, 655, mid), centre = pixel(s, 805, mid), right = pixel(s, 955, mid);
    CHECK((left & 255) > (left >> 16 & 255) + 60);   /* blue below 0 */
    CHECK((right >> 16 & 255) > (right & 255) + 60); /* red above 0 */
    CHECK(luma(centre) > 225 && chroma(centre) < 30);
    CHECK(fabs(luma(left) - luma(right)) < 25);      /* both arms equally dark at +-max */
    cairo_surface_destroy(s);
    discard(png);
    free_diag(&d);
}

/* Requirement: the title is one line of text whatever bytes it holds: a file name in a legacy
 * encoding (invalid UTF-8) or with a newline must not make cairo refuse the page. */
static void test_odd_title(void)
{
    hx_diag d = make_diag(0);
    hx_plot_request req = {NAN, NAN, "caf\xe9 \xff\xfe run.h5\nsecond line ^{not markup}"};
    char png[160], pdf[160];
    snprintf(png, sizeof png, "%s.title.png", png_path);
    snprintf(pdf, sizeof pdf, "%s.title.pdf", png_path);
    CHECK(hx_plot_report(&d, &req, png) == HX_OK);
    CHECK(hx_plot_report(&d, &req, pdf) == HX_OK);
    discard(png), discard(pdf);
    free_diag(&d);
}

/* Requirement: large slices are drawn (scaled down by cairo), not refused. */
static void test_large_slice(void)
{
    hx_diag d = make_diag(1024);
    char path[160];
    snprintf(path, sizeof path, "%s.big.PNG", png_path); /* extension case does not matter */
    CHECK(hx_plot_report(&d, NULL, path) == HX_OK);
    cairo_surface_t *s = read_png(path);
    if (s) {
        CHECK(coloured_fraction(s, SLICE_BAND) > 0.15);
        cairo_surface_destroy(s);
    }
    discard(path);
    free_diag(&d);
}

/* A magnetic summary: E_B ~ k^-5/3 on shells 1..12 (a band-limited random part), a mean field
 * of 10 uG in a code unit of 3.545e-5 G, and a face-centred field. */
static hx_magnetic *make_magnetic(int face)
{
    hx_magnetic *m = calloc(1, sizeof *m);
    hx_diag *b = &m->field;
    b->cells[0] = b->cells[1] = b->cells[2] = N;
    b->box[0] = b->box[1] = b->box[2] = 1.0;
    b->nshell = NSHELL;
    b->shell_e = calloc(NSHELL, sizeof(double));
    b->shell_comp = calloc(NSHELL, sizeof(double));
    b->shell_sol = calloc(NSHELL, sizeof(double));
    b->shell_modes = calloc(NSHELL, sizeof(double));
    for (int s = 1; s < NSHELL; s++) {
        b->shell_modes[s] = 4 * M_PI * s * s;
        b->shell_e[s] = s <= 12 ? 3e-3 * pow(s, -5.0 / 3.0) : 1e-34; /* round-off beyond the band */
        b->shell_comp[s] = 1e-36;
        b->shell_sol[s] = b->shell_e[s] - b->shell_comp[s];
    }
    b->fit_kmin = 2, b->fit_kmax = 12, b->slope = 1.66, b->slope_err = 0.05;
    b->mean[0] = b->mean[1] = 0.1995, b->rms3 = 0.3154, b->e_total = 0.00995;
    m->mean_abs = 0.2821, m->random_rms = 0.1410, m->div_spectral = 1.4e-15;
    m->density_mean = 1, m->sound_speed = 0.188, m->gamma = 1, m->sigma_3d = 0.94;
    m->v_alfven = 0.2821, m->beta = 0.8899, m->alfven_mach = 3.335;
    m->unit_gauss = 3.5449e-5, m->unit_velocity_cm_s = 1e5;
    m->has_face = face, m->face_rms = 0.315, m->face_div = 5.3e-16, m->face_div_max = 5.3e-15;
    return m;
}

static void free_magnetic(hx_diag *d)
{
    if (!d->magnetic) return;
    hx_diag *b = &d->magnetic->field;
    free(b->shell_e), free(b->shell_comp), free(b->shell_sol), free(b->shell_modes);
    free(d->magnetic);
    d->magnetic = NULL;
}

#define MAGNETIC_RGB 0xb82978u /* the magnetic spectrum's colour, (0.72, 0.16, 0.47) in plot.c */
#define NORMAL_RGB 0xbdc2c9u   /* the grey of reference curves, (0.74, 0.76, 0.79) in draw.h */

/* Requirement (inspect learns magnetic fields): with a magnetic field the page shows a row of
 * its own below the slices — the magnetic energy spectrum drawn in its colour beside the
 * kinetic one (grey) and a box of key numbers — and the page above that row is unchanged, so
 * the new row overlaps no existing panel. A uniform field (no spectrum) and a field without
 * faces still render; the PDF page grows the same way. */
static void test_magnetic_page(void)
{
    hx_diag d = make_diag(SLICE);
    hx_plot_request req = {2.0, 1.0 / 3.0, "magnetised.h5"};
    char plain[160], mag[160], uni[160], pdf[160];
    snprintf(plain, sizeof plain, "%s.plain.png", png_path);
    snprintf(mag, sizeof mag, "%s.magnetic.png", png_path);
    snprintf(uni, sizeof uni, "%s.uniform.png", png_path);
    snprintf(pdf, sizeof pdf, "%s.magnetic.pdf", png_path);
    CHECK(hx_plot_report(&d, &req, plain) == HX_OK);
    d.magnetic = make_magnetic(1);
    CHECK(hx_plot_report(&d, &req, mag) == HX_OK);
    cairo_surface_t *p = read_png(plain), *s = read_png(mag);
    if (p && s) {
        int w = cairo_image_surface_get_width(s), h = cairo_image_surface_get_height(s);
        int h0 = cairo_image_surface_get_height(p);
        CHECK(w == 1800 && h0 == 1300 && h > h0 + 300); /* a row of its own, below the old page */
        if (w == 1800 && h0 == 1300 && h > h0 + 300) {
            const box row = {0, h0, w, h}, above = {0, 0, w, h0}, right = {w * 2 / 3, h0, w, h};
            CHECK(count_near(s, row, MAGNETIC_RGB, 10) > 300);   /* the E_B(k) curve and its markers */
            CHECK(count_near(s, above, MAGNETIC_RGB, 10) == 0);  /* nowhere else */
            CHECK(count_near(p, above, MAGNETIC_RGB, 10) == 0);  /* and not without a magnetic field */
            CHECK(count_near(s, row, NORMAL_RGB, 6) > 300);      /* the kinetic spectrum for comparison */
            long ink = 0;                                        /* the key numbers: text at the right */
            for (int y = right.y0; y < right.y1; y++)
                for (int x = right.x0; x < right.x1; x++) ink += luma(pixel(s, x, y)) < 100;
            CHECK(ink > 2000);
            long differ = 0; /* the page above the row is the page without a magnetic field */
            for (int y = 0; y < h0; y++)
                for (int x = 0; x < w; x++) differ += pixel(s, x, y) != pixel(p, x, y);
            CHECK(differ == 0);
        }
    }
    if (p) cairo_surface_destroy(p);
    if (s) cairo_surface_destroy(s);
    /* PDF: one page whose height grows with the row (aspect 1780/1800 instead of 1300/1800) */
    CHECK(hx_plot_report(&d, &req, pdf) == HX_OK);
    CHECK(starts_with_pdf(pdf));
    if (access("/usr/bin/pdftoppm", X_OK) == 0) {
        char cmd[512], out[200];
        snprintf(cmd, sizeof cmd, "/usr/bin/pdftoppm -png -r 50 -singlefile %s %s.magnetic", pdf, ppm_base);
        CHECK(system(cmd) == 0);
        snprintf(out, sizeof out, "%s.magnetic.png", ppm_base);
        cairo_surface_t *r = read_png(out);
        if (r) {
            double aspect = (double)cairo_image_surface_get_height(r) / cairo_image_surface_get_width(r);
            CHECK(aspect > 0.95 && aspect < 1.0);
            cairo_surface_destroy(r);
        }
        discard(out);
    }
    /* a uniform field has no spectrum (every shell empty) and here no face field: still a page,
     * with no magnetic curve */
    for (int k = 0; k < NSHELL; k++) d.magnetic->field.shell_e[k] = d.magnetic->field.shell_comp[k] = 0;
    d.magnetic->has_face = 0, d.magnetic->random_rms = 0, d.magnetic->beta = INFINITY;
    CHECK(hx_plot_report(&d, &req, uni) == HX_OK);
    if ((s = read_png(uni))) {
        int h = cairo_image_surface_get_height(s);
        CHECK(h > 1600 && count_near(s, (box){0, 1300, 1800, h}, MAGNETIC_RGB, 10) == 0);
        cairo_surface_destroy(s);
    }
    discard(plain), discard(mag), discard(uni), discard(pdf);
    free_magnetic(&d);
    free_diag(&d);
}

/* Requirement: other extensions give HX_ERR_ARG; cairo failures give HX_ERR_IO naming the path. */
static void test_errors(void)
{
    hx_diag d = make_diag(0);
    CHECK(hx_plot_report(&d, NULL, "/tmp/hx_plot_report.svg") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), ".png or .pdf");
    CHECK(hx_plot_report(&d, NULL, "/tmp/hx_plot_report") == HX_ERR_ARG);
    CHECK(hx_plot_report(NULL, NULL, png_path) == HX_ERR_ARG);
    CHECK(hx_plot_report(&d, NULL, NULL) == HX_ERR_ARG);
    CHECK(hx_plot_report(&d, NULL, "/nonexistent-helmix-dir/report.png") == HX_ERR_IO);
    CHECK_STR_CONTAINS(hx_error_message(), "/nonexistent-helmix-dir/report.png");
    CHECK(hx_plot_report(&d, NULL, "/nonexistent-helmix-dir/report.pdf") == HX_ERR_IO);
    CHECK_STR_CONTAINS(hx_error_message(), "/nonexistent-helmix-dir/report.pdf");
    free_diag(&d);
}

int main(void)
{
    keep = getenv("HX_TEST_KEEP") != NULL;
    snprintf(png_path, sizeof png_path, "/tmp/hx_test_plot_%ld.png", (long)getpid());
    snprintf(pdf_path, sizeof pdf_path, "/tmp/hx_test_plot_%ld.pdf", (long)getpid());
    snprintf(ppm_base, sizeof ppm_base, "/tmp/hx_test_plot_%ld_poppler", (long)getpid());
    test_png();
    test_pdf();
    test_missing_parts();
    test_slice_orientation();
    test_odd_title();
    test_large_slice();
    test_magnetic_page();
    test_errors();
    return hx_test_finish();
}
