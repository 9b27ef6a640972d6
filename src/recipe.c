/* recipe.c — the recipe: one table of keys drives parsing, --set overrides, validation, the
 * annotated template, the --help key list and a rendering that parses back to the same struct.
 * Until hx_recipe_validate, "not given" lives in the struct itself: cells 0, kmax < 0, zeta and
 * compressive_fraction NaN, exact EXACT_UNSET, table "". No state outlives a call. */
#include "helmix/recipe.h"

#include <ctype.h>
#include <errno.h>
#include <inttypes.h>
#include <ini.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "helmix/spectrum.h"

#define CELLS_MAX 1048576         /* 2^20 per axis keeps Nx Ny Nz inside int64 */
#define EXACT_UNSET ((hx_exact)3) /* exact not given: validate picks it by mix mode */
#define ZETA_DEFAULT 0.5
#define SHOW_MAX 200   /* longest user text echoed in a message */
#define WORD_MAX 64    /* longest section, key or single number */
#define HINT_MAX 256
#define VALUE_MAX (HX_PATH_MAX + 64)

#define CELLS_RULE "must be one integer N or three integers \"Nx Ny Nz\", each even " \
                   "(the real-to-complex FFT layout wants even N) and in [4, 1048576]"
#define BOX_RULE "must be one number L or three numbers \"Lx Ly Lz\", each > 0"
#define UNIT_RULE "must be a number > 0 in units of 2 pi / max(L)"
#define SHARE_RULE "must be a number in [0, 1]"
#define BOTH_RULE "give either zeta or compressive_fraction, not both"

/* ---- reading values ---------------------------------------------------------------------- */

static const char *const shape_names[] = {"power", "band", "table", NULL};
static const char *const exact_names[] = {"none", "total", "shell", NULL};
static const char *const amp_names[] = {"gaussian", "fixed", NULL};
static const char *const prec_names[] = {"single", "double", NULL};

/* The whole of s is one finite number. */
static int read_real(const char *s, double *out)
{
    char *end;
    errno = 0;
    double x = strtod(s, &end);
    if (end == s || *end || errno == ERANGE || !isfinite(x)) return 0;
    *out = x;
    return 1;
}

/* The whole of s is one decimal integer that fits int64. */
static int read_int(const char *s, int64_t *out)
{
    char *end;
    errno = 0;
    long long x = strtoll(s, &end, 10);
    if (end == s || *end || errno == ERANGE) return 0;
    *out = (int64_t)x;
    return 1;
}

/* Split s at blanks into words; returns their count, or -1 for more than three or a long one. */
static int split3(const char *s, char w[3][WORD_MAX])
{
    int n = 0;
    for (;;) {
        while (isspace((unsigned char)*s)) s++;
        if (!*s) return n;
        size_t len = 0;
        while (s[len] && !isspace((unsigned char)s[len])) len++;
        if (n == 3 || len >= WORD_MAX) return -1;
        memcpy(w[n], s, len);
        w[n++][len] = '\0';
        s += len;
    }
}

/* One number for all three axes or three numbers; 0 when malformed. */
static int read_reals3(const char *s, double out[3])
{
    char w[3][WORD_MAX];
    int n = split3(s, w);
    if (n != 1 && n != 3) return 0;
    for (int i = 0; i < 3; i++)
        if (!read_real(w[n == 1 ? 0 : i], &out[i])) return 0;
    return 1;
}

static int read_ints3(const char *s, int64_t out[3])
{
    char w[3][WORD_MAX];
    int n = split3(s, w);
    if (n != 1 && n != 3) return 0;
    for (int i = 0; i < 3; i++)
        if (!read_int(w[n == 1 ? 0 : i], &out[i])) return 0;
    return 1;
}

static int read_enum(const char *s, const char *const *names)
{
    for (int i = 0; names[i]; i++)
        if (!strcasecmp(s, names[i])) return i;
    return -1;
}

static int read_bool(const char *s)
{
    static const char *const yes[] = {"true", "yes", "1", NULL}, *const no[] = {"false", "no", "0", NULL};
    if (read_enum(s, yes) >= 0) return 1;
    if (read_enum(s, no) >= 0) return 0;
    return -1;
}

/* Shortest text that reads back as exactly x, so a rendering parses to the same struct. */
static void format_real(char *buf, size_t n, double x)
{
    snprintf(buf, n, "%.15g", x);
    if (strtod(buf, NULL) != x) snprintf(buf, n, "%.17g", x);
}

/* ---- one parser and one printer per key ---------------------------------------------------- */

/* Parsers store a value in r and return NULL, or return what is allowed. */
typedef const char *(*parse_fn)(hx_recipe *r, const char *value);
/* Printers write the current value as recipe text and return 1, or return 0 when not given. */
typedef int (*show_fn)(const hx_recipe *r, char *buf, size_t n);

static const char *parse_cells(hx_recipe *r, const char *v)
{
    int64_t c[3];
    if (!read_ints3(v, c)) return CELLS_RULE;
    for (int i = 0; i < 3; i++)
        if (c[i] < 4 || c[i] > CELLS_MAX || c[i] % 2) return CELLS_RULE;
    memcpy(r->cells, c, sizeof c);
    return NULL;
}

static const char *parse_box(hx_recipe *r, const char *v)
{
    double b[3];
    if (!read_reals3(v, b) || !(b[0] > 0 && b[1] > 0 && b[2] > 0)) return BOX_RULE;
    memcpy(r->box, b, sizeof b);
    return NULL;
}

static const char *parse_shape(hx_recipe *r, const char *v)
{
    int i = read_enum(v, shape_names);
    if (i < 0) return "must be one of power, band, table";
    r->shape = (hx_shape)i;
    return NULL;
}

static const char *parse_slope(hx_recipe *r, const char *v)
{
    return read_real(v, &r->slope) ? NULL : "must be a finite number";
}

static const char *parse_kmin(hx_recipe *r, const char *v)
{
    double k;
    if (!read_real(v, &k) || !(k > 0)) return UNIT_RULE ", at most kmax";
    r->kmin = k;
    return NULL;
}

static const char *parse_kmax(hx_recipe *r, const char *v)
{
    double k;
    if (!read_real(v, &k) || !(k > 0))
        return UNIT_RULE ", at least kmin and at most min over axes of (N_i/2 - 1) * max(L)/L_i";
    r->kmax = k;
    return NULL;
}

static const char *parse_table(hx_recipe *r, const char *v)
{
    if (!*v) return "must name a file of (k, E) rows";
    if (strlen(v) >= sizeof r->table) return "path must be shorter than 4096 characters";
    strcpy(r->table, v);
    return NULL;
}

static const char *parse_share(double *dst, const double *other, const char *v, const char *both)
{
    double x;
    if (!read_real(v, &x) || x < 0 || x > 1) return SHARE_RULE;
    if (!isnan(*other)) return both;
    *dst = x;
    return NULL;
}

static const char *parse_zeta(hx_recipe *r, const char *v)
{
    const char *why = parse_share(&r->zeta, &r->compressive_fraction, v,
                                  BOTH_RULE " (compressive_fraction is already given)");
    if (!why) r->mix_mode = HX_MIX_ZETA;
    return why;
}

static const char *parse_fraction(hx_recipe *r, const char *v)
{
    const char *why = parse_share(&r->compressive_fraction, &r->zeta, v, BOTH_RULE " (zeta is already given)");
    if (!why) r->mix_mode = HX_MIX_FRACTION;
    return why;
}

static const char *parse_exact(hx_recipe *r, const char *v)
{
    int i = read_enum(v, exact_names);
    if (i < 0) return "must be one of none, total, shell";
    r->exact = (hx_exact)i;
    return NULL;
}

static const char *parse_vrms(hx_recipe *r, const char *v)
{
    double x;
    if (!read_real(v, &x) || !(x > 0)) return "must be a number > 0";
    r->vrms = x;
    return NULL;
}

/* Decimal digits only: strtoull would quietly wrap "-1" to 2^64 - 1. */
static const char *parse_seed(hx_recipe *r, const char *v)
{
    static const char *rule = "must be a whole number in [0, 18446744073709551615]";
    if (!*v || strspn(v, "0123456789") != strlen(v)) return rule;
    errno = 0;
    unsigned long long s = strtoull(v, NULL, 10);
    if (errno == ERANGE) return rule;
    r->seed = (uint64_t)s;
    return NULL;
}

static const char *parse_amplitudes(hx_recipe *r, const char *v)
{
    int i = read_enum(v, amp_names);
    if (i < 0) return "must be one of gaussian, fixed";
    r->amplitudes = (hx_amplitudes)i;
    return NULL;
}

static const char *parse_flip(hx_recipe *r, const char *v)
{
    int b = read_bool(v);
    if (b < 0) return "must be true or false (also yes/no, 1/0)";
    r->flip = b;
    return NULL;
}

/* The output file is relative to the current directory: results land where helmix runs. */
static const char *parse_file(hx_recipe *r, const char *v)
{
    if (!*v) return "must name the output file";
    if (strlen(v) >= sizeof r->file) return "path must be shorter than 4096 characters";
    strcpy(r->file, v);
    return NULL;
}

static const char *parse_precision(hx_recipe *r, const char *v)
{
    int i = read_enum(v, prec_names);
    if (i < 0) return "must be one of single, double";
    r->precision = (hx_precision)i;
    return NULL;
}

static int show_cells(const hx_recipe *r, char *buf, size_t n)
{
    const int64_t *c = r->cells;
    if (c[0] <= 0 || c[1] <= 0 || c[2] <= 0) return 0;
    if (c[0] == c[1] && c[1] == c[2]) snprintf(buf, n, "%" PRId64, c[0]);
    else snprintf(buf, n, "%" PRId64 " %" PRId64 " %" PRId64, c[0], c[1], c[2]);
    return 1;
}

static int show_box(const hx_recipe *r, char *buf, size_t n)
{
    char b[3][32];
    for (int i = 0; i < 3; i++) format_real(b[i], sizeof b[i], r->box[i]);
    if (r->box[0] == r->box[1] && r->box[1] == r->box[2]) snprintf(buf, n, "%s", b[0]);
    else snprintf(buf, n, "%s %s %s", b[0], b[1], b[2]);
    return 1;
}

static int show_name(const char *const *names, int count, int i, char *buf, size_t n)
{
    snprintf(buf, n, "%s", i >= 0 && i < count ? names[i] : "unknown");
    return 1;
}

static int show_shape(const hx_recipe *r, char *buf, size_t n)
{
    return show_name(shape_names, 3, (int)r->shape, buf, n);
}

static int show_slope(const hx_recipe *r, char *buf, size_t n)
{
    format_real(buf, n, r->slope);
    return 1;
}

static int show_kmin(const hx_recipe *r, char *buf, size_t n)
{
    format_real(buf, n, r->kmin);
    return 1;
}

static int show_kmax(const hx_recipe *r, char *buf, size_t n)
{
    if (r->kmax < 0) return 0;
    format_real(buf, n, r->kmax);
    return 1;
}

static int show_table(const hx_recipe *r, char *buf, size_t n)
{
    if (!r->table[0]) return 0;
    snprintf(buf, n, "%s", r->table);
    return 1;
}

static int show_zeta(const hx_recipe *r, char *buf, size_t n)
{
    if (isnan(r->zeta)) return 0;
    format_real(buf, n, r->zeta);
    return 1;
}

static int show_fraction(const hx_recipe *r, char *buf, size_t n)
{
    if (isnan(r->compressive_fraction)) return 0;
    format_real(buf, n, r->compressive_fraction);
    return 1;
}

static int show_exact(const hx_recipe *r, char *buf, size_t n)
{
    if (r->exact == EXACT_UNSET) return 0;
    return show_name(exact_names, 3, (int)r->exact, buf, n);
}

static int show_vrms(const hx_recipe *r, char *buf, size_t n)
{
    format_real(buf, n, r->vrms);
    return 1;
}

static int show_seed(const hx_recipe *r, char *buf, size_t n)
{
    snprintf(buf, n, "%" PRIu64, r->seed);
    return 1;
}

static int show_amplitudes(const hx_recipe *r, char *buf, size_t n)
{
    return show_name(amp_names, 2, (int)r->amplitudes, buf, n);
}

static int show_flip(const hx_recipe *r, char *buf, size_t n)
{
    snprintf(buf, n, "%s", r->flip ? "true" : "false");
    return 1;
}

static int show_file(const hx_recipe *r, char *buf, size_t n)
{
    snprintf(buf, n, "%s", r->file);
    return 1;
}

static int show_precision(const hx_recipe *r, char *buf, size_t n)
{
    return show_name(prec_names, 2, (int)r->precision, buf, n);
}

/* ---- the table of keys --------------------------------------------------------------------- */

typedef struct key {
    const char *section, *name;
    const char *type;    /* allowed values, as a user writes them */
    const char *def;     /* default as recipe text (hx_recipe_defaults parses it); NULL: derived */
    const char *note;    /* the default in words when def is NULL */
    const char *example; /* value on the template line when def is NULL */
    const char *unit;    /* NULL: dimensionless or not a quantity */
    const char *help;    /* first line: summary for --help; further lines: details */
    parse_fn parse;
    show_fn show;
    int required; /* no default: the template gives a sample value instead of a comment */
    int relative; /* a relative path is taken from the recipe's directory */
} key;

#define FEDERRATH "(Federrath et al. 2010, A&A 512, A81)"
#define KUNIT "2 pi / max(L)"

static const key keys[] = {
    {"grid", "cells", "integer N or \"Nx Ny Nz\", each even, in [4, 1048576]", NULL,
     "none: must be given", "64", "cells",
     "grid cells per axis; one integer N means N N N\n"
     "Even N because the real-to-complex FFT layout wants it.",
     parse_cells, show_cells, 1, 0},
    {"grid", "box", "number L or \"Lx Ly Lz\", each > 0", "1", NULL, NULL, "code length",
     "box edge lengths; one number L means a cube L L L\n"
     "Wavenumbers k are counted in units of 2 pi / max(Lx, Ly, Lz).",
     parse_box, show_box, 0, 0},
    {"spectrum", "shape", "power | band | table", "power", NULL, NULL, NULL,
     "form of the shell-integrated kinetic energy spectrum E(k), zero outside [kmin, kmax]\n"
     "power: E ~ k^-slope; band: E ~ (k - kmin)(kmax - k), a smooth hump vanishing at both ends;\n"
     "table: E from the (k, E) rows of [spectrum] table, interpolated linearly in log k - log E.",
     parse_shape, show_shape, 0, 0},
    {"spectrum", "slope", "finite number", "2", NULL, NULL, NULL,
     "power-law index for shape = power: E(k) ~ k^-slope, E shell-integrated\n"
     "5/3 is the Kolmogorov spectrum, 2 the Burgers (shock-dominated) one.",
     parse_slope, show_slope, 0, 0},
    {"spectrum", "kmin", "number > 0, at most kmax", "1", NULL, NULL, KUNIT,
     "smallest wavenumber that carries energy", parse_kmin, show_kmin, 0, 0},
    {"spectrum", "kmax", "number > 0, in [kmin, the limit]", NULL,
     "the limit min over axes of (N_i/2 - 1) * max(L)/L_i", "31", KUNIT,
     "largest wavenumber that carries energy\n"
     "Its default and upper limit, min over axes of (N_i/2 - 1) * max(L)/L_i, is the largest\n"
     "wavenumber below Nyquist on every axis (31 for cells = 64 in a cube).",
     parse_kmax, show_kmax, 0, 0},
    {"spectrum", "table", "file name", NULL, "none", "spectrum.dat", NULL,
     "file of (k, E) rows for shape = table\n"
     "Two numbers per line separated by blanks, '#' starts a comment; at least two rows,\n"
     "k > 0 strictly increasing (units of 2 pi / max(L)), E >= 0. A relative path is taken\n"
     "from the directory of the recipe file (from the current directory for --set).",
     parse_table, show_table, 0, 1},
    {"mix", "zeta", "number in [0, 1]", NULL, "0.5 unless compressive_fraction is given", "0.5", NULL,
     "Helmholtz projection weight: each mode keeps zeta of its solenoidal part, 1 - zeta of its compressive part\n"
     "1 is purely solenoidal, 0 purely compressive, 0.5 the natural 2:1 mixture. The expected compressive\n"
     "share of the energy is (1-zeta)^2/(1-2 zeta+3 zeta^2) " FEDERRATH ".\n"
     "Give zeta or compressive_fraction, not both.",
     parse_zeta, show_zeta, 0, 0},
    {"mix", "compressive_fraction", "number in [0, 1]", NULL, "none (zeta is used)", "0.3", NULL,
     "compressive (curl-free) share of the kinetic energy, asked for directly instead of zeta\n"
     "Give compressive_fraction or zeta, not both. With it, exact defaults to total; exact = none draws freely with that expected share.",
     parse_fraction, show_fraction, 0, 0},
    {"mix", "exact", "none | total | shell", NULL, "none with zeta, total with compressive_fraction", "none",
     NULL,
     "how strictly the realized compressive share is held\n"
     "none: the draw alone decides, the share scatters around its expectation (with\n"
     "compressive_fraction, the parts are weighted so that the expected share is the fraction);\n"
     "total: the whole field holds the share exactly; shell: every wavenumber shell holds it.\n"
     "With zeta: none (default) draws freely; total/shell pin the realized compressive share to the\n"
     "expected (1-zeta)^2/(1-2 zeta+3 zeta^2) " FEDERRATH ".",
     parse_exact, show_exact, 0, 0},
    {"amplitude", "vrms", "number > 0", "1", NULL, NULL, "code velocity",
     "rms of the 3D velocity, sqrt(<vx^2 + vy^2 + vz^2>), that the field is scaled to",
     parse_vrms, show_vrms, 0, 0},
    {"random", "seed", "whole number in [0, 18446744073709551615]", "1", NULL, NULL, NULL,
     "seed of the random draws\n"
     "The same recipe and seed give the same field, whatever the number of ranks.",
     parse_seed, show_seed, 0, 0},
    {"random", "amplitudes", "gaussian | fixed", "gaussian", NULL, NULL, NULL,
     "how mode amplitudes are drawn\n"
     "gaussian: each mode's complex amplitude is a Gaussian draw (a Gaussian random field);\n"
     "fixed: every mode has exactly the spectrum's amplitude and only its phase is random.",
     parse_amplitudes, show_amplitudes, 0, 0},
    {"random", "flip", "true | false (also yes/no, 1/0)", "false", NULL, NULL, NULL,
     "negate every draw: the field becomes -v of the unflipped field with the same seed",
     parse_flip, show_flip, 0, 0},
    {"output", "file", "path", "helmix.h5", NULL, NULL, NULL,
     "output HDF5 file; a relative path is taken from the current directory", parse_file, show_file, 0, 0},
    {"output", "precision", "single | double", "single", NULL, NULL, NULL,
     "floating-point precision of the velocity written to the file (the field is computed in double)",
     parse_precision, show_precision, 0, 0},
};
#define NKEYS ((int)(sizeof keys / sizeof keys[0]))
_Static_assert(sizeof keys / sizeof keys[0] <= HX_RECIPE_MAX_KEYS, "hx_recipe.line has room for every key");

static const key *find_key(const char *section, const char *name)
{
    for (int i = 0; i < NKEYS; i++)
        if (!strcasecmp(keys[i].section, section) && !strcasecmp(keys[i].name, name)) return &keys[i];
    return NULL;
}

static const char *find_section(const char *section)
{
    for (int i = 0; i < NKEYS; i++)
        if (!strcasecmp(keys[i].section, section)) return keys[i].section;
    return NULL;
}

static const char *default_words(const key *k) { return k->def ? k->def : k->note; }

/* Parse one value into r, first taking a relative path from the recipe's directory (a table
 * sits next to its recipe, wherever helmix runs). NULL or what is allowed. */
static const char *apply(const key *k, hx_recipe *r, const char *v, const char *basedir)
{
    char path[VALUE_MAX];
    if (k->relative && *v && v[0] != '/' && basedir && *basedir) {
        size_t b = strlen(basedir);
        int n = snprintf(path, sizeof path, "%s%s%s", basedir, basedir[b - 1] == '/' ? "" : "/", v);
        if (n < 0 || (size_t)n >= sizeof path) return "path must be shorter than 4096 characters";
        v = path;
    }
    return k->parse(r, v);
}

/* ---- suggestions for misspelt names -------------------------------------------------------- */

/* Levenshtein distance, ignoring case; b is a name from the table (shorter than 32). */
static int distance(const char *a, const char *b)
{
    int row[32];
    size_t nb = strlen(b);
    for (size_t j = 0; j <= nb; j++) row[j] = (int)j;
    for (size_t i = 1; a[i - 1]; i++) {
        int diag = row[0];
        row[0] = (int)i;
        for (size_t j = 1; j <= nb; j++) {
            int up = row[j];
            int cost = tolower((unsigned char)a[i - 1]) != tolower((unsigned char)b[j - 1]);
            int best = diag + cost;
            if (row[j] + 1 < best) best = row[j] + 1;
            if (row[j - 1] + 1 < best) best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    return row[nb];
}

/* Close enough to suggest: about one edit per three letters of the candidate, so a slip
 * ("slpe") gets a suggestion and an unrelated word ("foo" against "box") does not. */
static int close_to(int d, const char *candidate) { return 3 * d <= (int)strlen(candidate) + 1; }

static void list_keys(char *buf, size_t n, const char *section)
{
    size_t used = (size_t)snprintf(buf, n, "; keys in [%s]:", section);
    const char *sep = " ";
    for (int i = 0; i < NKEYS && used < n; i++) {
        if (strcmp(keys[i].section, section)) continue;
        used += (size_t)snprintf(buf + used, n - used, "%s%s", sep, keys[i].name);
        sep = ", ";
    }
}

/* The nearest key in the same section, or in another section when that one is nearer. */
static void key_hint(char *buf, size_t n, const char *section, const char *name)
{
    const key *in = NULL, *any = NULL;
    int din = INT_MAX, dany = INT_MAX;
    for (int i = 0; i < NKEYS; i++) {
        int d = distance(name, keys[i].name);
        if (!strcasecmp(keys[i].section, section) && d < din) din = d, in = &keys[i];
        if (d < dany) dany = d, any = &keys[i];
    }
    if (any && dany < din && close_to(dany, any->name))
        snprintf(buf, n, "; did you mean [%s] %s?", any->section, any->name);
    else if (in && close_to(din, in->name))
        snprintf(buf, n, "; did you mean '%s'?", in->name);
    else if (find_section(section))
        list_keys(buf, n, find_section(section));
    else
        snprintf(buf, n, "; every key belongs in a section such as [grid]");
}

static void section_hint(char *buf, size_t n, const char *section)
{
    const char *best = NULL;
    int dbest = INT_MAX;
    for (int i = 0; i < NKEYS; i++) {
        int d = distance(section, keys[i].section);
        if (d < dbest) dbest = d, best = keys[i].section;
    }
    if (best && close_to(dbest, best)) {
        snprintf(buf, n, "; did you mean [%s]?", best);
        return;
    }
    size_t used = (size_t)snprintf(buf, n, "; sections are");
    for (int i = 0; i < NKEYS && used < n; i++)
        if (i == 0 || strcmp(keys[i].section, keys[i - 1].section))
            used += (size_t)snprintf(buf + used, n - used, "%s[%s]", i ? ", " : " ", keys[i].section);
}

/* ---- defaults, parsing, --set ---------------------------------------------------------------- */

void hx_recipe_defaults(hx_recipe *r)
{
    memset(r, 0, sizeof *r);
    for (int i = 0; i < NKEYS; i++)
        if (keys[i].def) keys[i].parse(r, keys[i].def);
    r->kmax = -1.0;
    r->mix_mode = HX_MIX_ZETA;
    r->zeta = NAN;
    r->compressive_fraction = NAN;
    r->exact = EXACT_UNSET;
}

/* inih hands us one line per reader call, so the count of reader calls is the line number
 * of every handler call: this works whether or not the installed inih reports line numbers. */
typedef struct parse_state {
    hx_recipe *r;
    const char *origin, *basedir, *text, *pos;
    int line;         /* lines handed to inih so far */
    int section_line; /* line of the latest [section] header */
    int err_line;     /* line of the first error found here, 0 if none */
    hx_status err;
    int long_line;    /* line whose value is in long_value (see long_line) */
    char long_value[HX_PATH_MAX + 1];
} parse_state;

static int parse_fail(parse_state *ps, int line, hx_status st, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static int parse_fail(parse_state *ps, int line, hx_status st, const char *fmt, ...)
{
    char what[900];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(what, sizeof what, fmt, ap);
    va_end(ap);
    hx_error_set(st, "%s:%d: %s", ps->origin, line, what);
    ps->err_line = line;
    ps->err = st;
    return 0;
}

/* inih reads at most `size - 1` characters of a line. A longer "key = value" (a long path)
 * reaches inih as "key = \x01" and the handler takes the value kept here, cut like inih cuts:
 * at " ;" (inline comment), without surrounding blanks. */
static char *long_line(parse_state *ps, char *buf, int size, const char *s, size_t len)
{
    buf[0] = '\0';
    if (*s == '#' || *s == ';') return buf; /* a long comment is still a comment */
    size_t eq = 0;
    while (eq < len && s[eq] != '=' && s[eq] != ':') eq++;
    if (eq == len || *s == '[' || eq + 4 > (size_t)size) {
        if (!ps->err_line)
            parse_fail(ps, ps->line, HX_ERR_ARG, "line is longer than %d characters and not a 'key = value' line",
                       size - 2);
        return buf;
    }
    memcpy(buf, s, eq + 1);
    strcpy(buf + eq + 1, " \x01");
    const char *v = s + eq + 1, *end = s + len;
    for (const char *p = v + 1; p < end; p++)
        if (*p == ';' && isspace((unsigned char)p[-1])) end = p;
    while (v < end && isspace((unsigned char)*v)) v++;
    while (end > v && isspace((unsigned char)end[-1])) end--;
    size_t vlen = (size_t)(end - v) < HX_PATH_MAX ? (size_t)(end - v) : HX_PATH_MAX;
    memcpy(ps->long_value, v, vlen);
    ps->long_value[vlen] = '\0';
    ps->long_line = ps->line;
    return buf;
}

/* Reader for ini_parse_stream: the next line of the text. Leading blanks are dropped so inih
 * never takes an indented line for the continuation of the previous value. */
static char *next_line(char *buf, int size, void *user)
{
    parse_state *ps = user;
    if (!ps->pos || !*ps->pos) return NULL;
    const char *s = ps->pos, *eol = strchr(s, '\n');
    size_t len = eol ? (size_t)(eol - s) : strlen(s);
    ps->pos = s + len + (eol ? 1 : 0);
    ps->line++;
    if (ps->line == 1 && len >= 3 && !memcmp(s, "\xEF\xBB\xBF", 3)) s += 3, len -= 3; /* UTF-8 BOM */
    while (len && (*s == ' ' || *s == '\t')) s++, len--;
    if (len && *s == '[') ps->section_line = ps->line;
    if (len + 1 >= (size_t)size) return long_line(ps, buf, size, s, len);
    memcpy(buf, s, len);
    buf[len] = '\0';
    return buf;
}

static int on_key(void *user, const char *section, const char *name, const char *value)
{
    parse_state *ps = user;
    char hint[HINT_MAX];
    if (ps->err_line) return 1; /* only the first error is reported */
    if (ps->line == ps->long_line) value = ps->long_value;
    if (!*section) {
        key_hint(hint, sizeof hint, section, name);
        return parse_fail(ps, ps->line, HX_ERR_ARG, "key '%s' comes before any [section]%s", name, hint);
    }
    if (!find_section(section)) {
        section_hint(hint, sizeof hint, section);
        return parse_fail(ps, ps->section_line, HX_ERR_ARG, "unknown section [%s]%s", section, hint);
    }
    const key *k = find_key(section, name);
    if (!k) {
        key_hint(hint, sizeof hint, section, name);
        return parse_fail(ps, ps->line, HX_ERR_ARG, "unknown key '%s' in [%s]%s", name, find_section(section),
                          hint);
    }
    const char *why = apply(k, ps->r, value, ps->basedir);
    if (why)
        return parse_fail(ps, ps->line, HX_ERR_ARG, "[%s] %s = %.*s: %s", k->section, k->name, SHOW_MAX, value,
                          why);
    ps->r->line[k - keys] = ps->line;
    return 1;
}

/* inih found a line that is neither a comment, a [section] nor key = value. */
static void syntax_error(parse_state *ps, int line)
{
    const char *s = ps->text;
    for (int i = 1; i < line && s; i++) {
        s = strchr(s, '\n');
        if (s) s++;
    }
    if (!s) s = "";
    while (*s == ' ' || *s == '\t') s++;
    int len = (int)strcspn(s, "\r\n");
    parse_fail(ps, line, HX_ERR_ARG, "'%.*s': expected [section], key = value or a comment",
               len < SHOW_MAX ? len : SHOW_MAX, s);
}

hx_status hx_recipe_parse(hx_recipe *r, const char *text, const char *origin, const char *basedir)
{
    hx_recipe work = *r; /* r changes only on success */
    parse_state ps = {.r = &work, .origin = origin ? origin : "recipe", .basedir = basedir,
                      .text = text ? text : "", .pos = text ? text : ""};
    int rc = ini_parse_stream(next_line, &ps, on_key, &ps);
    if (rc < 0) return hx_error_set(HX_ERR_MEM, "%s: out of memory while reading the recipe", ps.origin);
    if (rc > 0 && (!ps.err_line || rc < ps.err_line)) syntax_error(&ps, rc);
    if (ps.err_line) return ps.err;
    *r = work;
    return HX_OK;
}

/* Copy s[0..len) without surrounding blanks into buf, cut to fit; 0 if nothing is left. */
static int trim_copy(char *buf, size_t n, const char *s, size_t len)
{
    while (len && isspace((unsigned char)*s)) s++, len--;
    while (len && isspace((unsigned char)s[len - 1])) len--;
    if (len >= n) len = n - 1;
    memcpy(buf, s, len);
    buf[len] = '\0';
    return len > 0;
}

hx_status hx_recipe_set(hx_recipe *r, const char *assignment)
{
    const char *a = assignment ? assignment : "";
    const char *eq = strchr(a, '=');
    const char *dot = eq ? memchr(a, '.', (size_t)(eq - a)) : NULL;
    char sec[WORD_MAX], name[WORD_MAX], value[VALUE_MAX], hint[HINT_MAX];
    if (!dot || !trim_copy(sec, sizeof sec, a, (size_t)(dot - a)) ||
        !trim_copy(name, sizeof name, dot + 1, (size_t)(eq - dot - 1)))
        return hx_error_set(HX_ERR_ARG, "--set %.*s: expected section.key=value, e.g. --set mix.zeta=0.3",
                            SHOW_MAX, a);
    trim_copy(value, sizeof value, eq + 1, strlen(eq + 1));
    if (!find_section(sec)) {
        section_hint(hint, sizeof hint, sec);
        return hx_error_set(HX_ERR_ARG, "--set %.*s: unknown section [%s]%s", SHOW_MAX, a, sec, hint);
    }
    const key *k = find_key(sec, name);
    if (!k) {
        key_hint(hint, sizeof hint, sec, name);
        return hx_error_set(HX_ERR_ARG, "--set %.*s: unknown key '%s' in [%s]%s", SHOW_MAX, a, name,
                            find_section(sec), hint);
    }
    hx_recipe work = *r;
    const char *why = apply(k, &work, value, NULL);
    if (why) return hx_error_set(HX_ERR_ARG, "--set %.*s: %s", SHOW_MAX, a, why);
    work.line[k - keys] = 0;
    *r = work;
    return HX_OK;
}

/* ---- validation ---------------------------------------------------------------------------- */

static hx_status invalid(const hx_recipe *r, const char *name, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

/* "line N: [section] key = current value: why", the line where the recipe text set the key
 * (left out when the value is a default or came from --set). */
static hx_status invalid(const hx_recipe *r, const char *name, const char *fmt, ...)
{
    const key *k = NULL;
    for (int i = 0; i < NKEYS && !k; i++)
        if (!strcmp(keys[i].name, name)) k = &keys[i];
    char value[VALUE_MAX] = "(not given)", why[700];
    if (k && !k->show(r, value, sizeof value)) strcpy(value, "(not given)");
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, sizeof why, fmt, ap);
    va_end(ap);
    char where[32] = "";
    if (k && r->line[k - keys] > 0) snprintf(where, sizeof where, "line %d: ", r->line[k - keys]);
    return hx_error_set(HX_ERR_ARG, "%s[%s] %s = %.*s: %s", where, k ? k->section : "?", name, SHOW_MAX, value, why);
}

double hx_recipe_kmax_limit(const hx_recipe *r)
{
    double lmax = fmax(r->box[0], fmax(r->box[1], r->box[2])), limit = INFINITY;
    for (int i = 0; i < 3; i++) limit = fmin(limit, (double)(r->cells[i] / 2 - 1) * lmax / r->box[i]);
    return limit;
}

static hx_status check_grid(const hx_recipe *r)
{
    const int64_t *c = r->cells;
    if (c[0] == 0 && c[1] == 0 && c[2] == 0)
        return hx_error_set(HX_ERR_ARG, "[grid] cells is not given: it has no default; set it, e.g. cells = 256");
    for (int i = 0; i < 3; i++)
        if (c[i] < 4 || c[i] > CELLS_MAX || c[i] % 2) return invalid(r, "cells", CELLS_RULE);
    for (int i = 0; i < 3; i++)
        if (!(r->box[i] > 0) || !isfinite(r->box[i])) return invalid(r, "box", BOX_RULE);
    return HX_OK;
}

/* The whole file as a string; NULL with errno set when it cannot be read. */
static char *read_file(const char *path)
{
    FILE *fp = fopen(path, "rb");
    if (!fp) return NULL;
    char *text = NULL, chunk[4096];
    size_t len = 0, got;
    FILE *mem = open_memstream(&text, &len);
    while (mem && (got = fread(chunk, 1, sizeof chunk, fp)) > 0) fwrite(chunk, 1, got, mem);
    int failed = !mem || ferror(fp), saved = ferror(fp) ? errno : ENOMEM;
    if (mem && fclose(mem) != 0) failed = 1;
    fclose(fp);
    if (failed) {
        free(text);
        errno = saved;
        return NULL;
    }
    return text;
}

/* A table is valid when the spectrum module can read it: one definition of a valid table. */
static hx_status check_table(const hx_recipe *r)
{
    if (!r->table[0]) return invalid(r, "table", "shape = table needs a file of (k, E) rows");
    char *text = read_file(r->table);
    if (!text) return invalid(r, "table", "cannot read the file: %s", strerror(errno));
    double *k = NULL, *e = NULL;
    int n = 0;
    hx_status st = hx_spectrum_parse_table(text, r->table, &k, &e, &n);
    free(text);
    free(k);
    free(e);
    if (st != HX_OK) {
        char inner[800];
        snprintf(inner, sizeof inner, "%s", hx_error_message());
        return hx_error_set(st, "[spectrum] table: %s", inner);
    }
    return HX_OK;
}

static hx_status check_spectrum(hx_recipe *r)
{
    char lim[32];
    double limit = hx_recipe_kmax_limit(r);
    int defaulted = r->kmax < 0;
    format_real(lim, sizeof lim, limit);
    if (r->shape != HX_SHAPE_POWER && r->shape != HX_SHAPE_BAND && r->shape != HX_SHAPE_TABLE)
        return invalid(r, "shape", "must be one of power, band, table");
    if (!isfinite(r->slope)) return invalid(r, "slope", "must be a finite number");
    if (!(r->kmin > 0) || !isfinite(r->kmin)) return invalid(r, "kmin", UNIT_RULE ", at most kmax");
    if (defaulted) r->kmax = limit;
    if (!(r->kmax <= limit * (1 + 1e-12)))
        return invalid(r, "kmax",
                       "must be at most %s, the largest wavenumber below Nyquist on every axis, "
                       "min over axes of (N_i/2 - 1) * max(L)/L_i for cells %" PRId64 " %" PRId64 " %" PRId64
                       " and box %g %g %g",
                       lim, r->cells[0], r->cells[1], r->cells[2], r->box[0], r->box[1], r->box[2]);
    if (r->kmin > r->kmax) {
        char km[32];
        format_real(km, sizeof km, r->kmax);
        return invalid(r, "kmin", "must be at most kmax = %s%s", km,
                       defaulted ? " (the default: the largest wavenumber below Nyquist)" : "");
    }
    return r->shape == HX_SHAPE_TABLE ? check_table(r) : HX_OK;
}

static hx_status check_mix(hx_recipe *r)
{
    int has_zeta = !isnan(r->zeta), has_fraction = !isnan(r->compressive_fraction);
    if (has_zeta && has_fraction)
        return hx_error_set(HX_ERR_ARG, "[mix] zeta and compressive_fraction are both given: " BOTH_RULE);
    if (!has_zeta && !has_fraction) r->zeta = ZETA_DEFAULT;
    r->mix_mode = has_fraction ? HX_MIX_FRACTION : HX_MIX_ZETA;
    if (!has_fraction && !(r->zeta >= 0 && r->zeta <= 1)) return invalid(r, "zeta", SHARE_RULE);
    if (has_fraction && !(r->compressive_fraction >= 0 && r->compressive_fraction <= 1))
        return invalid(r, "compressive_fraction", SHARE_RULE);
    if (r->exact == EXACT_UNSET) r->exact = has_fraction ? HX_EXACT_TOTAL : HX_EXACT_NONE;
    if (r->exact != HX_EXACT_NONE && r->exact != HX_EXACT_TOTAL && r->exact != HX_EXACT_SHELL)
        return invalid(r, "exact", "must be one of none, total, shell");
    return HX_OK;
}

static hx_status check_rest(const hx_recipe *r)
{
    if (!(r->vrms > 0) || !isfinite(r->vrms)) return invalid(r, "vrms", "must be a number > 0");
    if (r->amplitudes != HX_AMP_GAUSSIAN && r->amplitudes != HX_AMP_FIXED)
        return invalid(r, "amplitudes", "must be one of gaussian, fixed");
    if (r->flip != 0 && r->flip != 1) return invalid(r, "flip", "must be true or false");
    if (!memchr(r->file, '\0', sizeof r->file) || !r->file[0]) return invalid(r, "file", "must name the output file");
    if (r->precision != HX_PREC_SINGLE && r->precision != HX_PREC_DOUBLE)
        return invalid(r, "precision", "must be one of single, double");
    return HX_OK;
}

hx_status hx_recipe_validate(hx_recipe *r)
{
    hx_recipe work = *r; /* r changes only on success */
    hx_status st = check_grid(&work);
    if (st == HX_OK) st = check_spectrum(&work);
    if (st == HX_OK) st = check_mix(&work);
    if (st == HX_OK) st = check_rest(&work);
    if (st == HX_OK) *r = work;
    return st;
}

/* ---- rendering, template, key list ---------------------------------------------------------- */

/* Print "[section]" before the first key of each section. */
static void section_break(FILE *out, int i)
{
    if (i == 0 || strcmp(keys[i].section, keys[i - 1].section))
        fprintf(out, "%s[%s]\n", i ? "\n" : "", keys[i].section);
}

char *hx_recipe_render(const hx_recipe *r)
{
    char *text = NULL;
    size_t len = 0;
    FILE *out = open_memstream(&text, &len);
    if (!out) return NULL;
    fputs("# helmix recipe: every key with its value\n\n", out);
    for (int i = 0; i < NKEYS; i++) {
        char value[VALUE_MAX];
        section_break(out, i);
        if (keys[i].show(r, value, sizeof value)) fprintf(out, "%s = %s\n", keys[i].name, value);
        else fprintf(out, "# %s: not given (default: %s)\n", keys[i].name, default_words(&keys[i]));
    }
    int bad = ferror(out);
    if (fclose(out) != 0 || bad) {
        free(text);
        return NULL;
    }
    return text;
}

/* Every line of the help text as a comment; the first line follows the key name. */
static void template_key(FILE *out, const key *k)
{
    const char *h = k->help;
    fprintf(out, "\n# %s: ", k->name);
    for (;;) {
        size_t len = strcspn(h, "\n");
        fprintf(out, "%.*s\n", (int)len, h);
        if (!h[len]) break;
        h += len + 1;
        fputs("#   ", out);
    }
    fprintf(out, "#   allowed: %s; ", k->type);
    if (k->unit) fprintf(out, "unit: %s; ", k->unit);
    fprintf(out, "default: %s\n", default_words(k));
    fprintf(out, "%s%s = %s\n", k->required ? "" : "# ", k->name, k->def ? k->def : k->example);
}

void hx_recipe_template(FILE *out)
{
    fputs("# helmix recipe template: every key with its meaning, allowed values, unit and default.\n"
          "# \"key = value\" sets a key; lines starting with '#' or ';' are comments, and \" ;\" ends a value.\n"
          "# A key left commented takes its default. Wavenumbers are in units of 2 pi / max(Lx, Ly, Lz).\n"
          "# [grid] cells has no default: it carries the sample value 64 so this file runs as it stands.\n\n",
          out);
    for (int i = 0; i < NKEYS; i++) {
        section_break(out, i);
        template_key(out, &keys[i]);
    }
}

void hx_recipe_print_keys(FILE *out)
{
    for (int i = 0; i < NKEYS; i++) {
        const key *k = &keys[i];
        char full[WORD_MAX];
        snprintf(full, sizeof full, "%s.%s", k->section, k->name);
        fprintf(out, "  %-27s %s (default: %s%s%s) - %.*s\n", full, k->type, default_words(k),
                k->unit ? "; unit: " : "", k->unit ? k->unit : "", (int)strcspn(k->help, "\n"), k->help);
    }
}

const char *hx_shape_name(hx_shape s)
{
    return (int)s >= 0 && (int)s < 3 ? shape_names[s] : "unknown";
}

const char *hx_exact_name(hx_exact e)
{
    return (int)e >= 0 && (int)e < 3 ? exact_names[e] : "unknown";
}
