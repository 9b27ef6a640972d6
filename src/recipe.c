/* recipe.c — the recipe: one table of keys drives parsing, --set overrides, validation, the
 * annotated template, the --help key list and a rendering that parses back to the same struct.
 * Every key is typed (where it lives in hx_recipe, what kind of value it holds), so one parser
 * and one printer serve all keys of a kind, and two sections can share a block of keys (the
 * spectra of velocity and density). Until hx_recipe_validate, "not given" lives in the struct
 * itself: cells 0, NaN reals and quantities, exact EXACT_UNSET, remove_bulk -1, table "".
 * No state outlives a call. */
#include "helmix/recipe.h"

#include <ctype.h>
#include <errno.h>
#include <float.h>
#include <inttypes.h>
#include <ini.h>
#include <limits.h>
#include <math.h>
#include <stdarg.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include "helmix/grid.h"
#include "helmix/spectrum.h"
#include "helmix/units.h"

#define CELLS_MAX 1048576         /* 2^20 per axis keeps Nx Ny Nz inside int64 */
#define EXACT_UNSET ((hx_exact)3) /* exact not given: validate picks it by mix mode */
#define ZETA_DEFAULT 0.5
#define SHOW_MAX 200   /* longest user text echoed in a message */
#define WORD_MAX 64    /* longest section, key or single number */
#define HINT_MAX 256
#define VALUE_MAX (HX_PATH_MAX + 64)

#define UNIT_RULE "must be a number > 0 in units of 2 pi / max(L)"
#define SHARE_RULE "must be a number in [0, 1]"

/* ---- reading values ---------------------------------------------------------------------- */

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

/* ---- typed keys: one parser and one printer per kind of value ------------------------------ */

/* What a key holds, and so how it is read and printed. A key's value lives at `off` in
 * hx_recipe; reals, quantities and shares use NAN for "not given". */
typedef enum {
    K_CELLS,  /* int64_t[3], each in [4, CELLS_MAX]                                   */
    K_BOX,    /* double[3] > 0                                                         */
    K_ENUM,   /* int, one of `names`                                                   */
    K_REAL,   /* double within `range`                                                  */
    K_QTY,    /* hx_quantity of kind `qty` within `range`                              */
    K_BOOL,   /* int 0 / 1                                                             */
    K_TRI,    /* int -1 (auto) / 0 / 1                                                 */
    K_SEED,   /* uint64_t                                                             */
    K_PATH,   /* char[HX_PATH_MAX]                                                    */
    K_AXIS    /* double[3]: x, y, z or three finite numbers                             */
} kind_t;

/* Alternatives: at most one key of a group is given (a real or quantity that is not NaN, a
 * true bool); a --set of one replaces the others. */
enum { G_NONE = 0, G_UNITS_DENSITY, G_MIX, G_AMPLITUDE, G_CLOUD_DENSITY, G_B0, G_B_RANDOM };

typedef enum { R_ANY = 0, R_POS, R_NONNEG, R_SHARE, R_GT1, R_GE1 } range_t;

typedef struct key {
    const char *section, *name;
    kind_t kind;
    size_t off;
    const char *const *names; /* K_ENUM spellings, NULL-terminated                      */
    int qty;                  /* K_QTY: an hx_qty                                       */
    range_t range;            /* K_REAL, K_QTY                                          */
    const char *type;    /* allowed values, as a user writes them ("must be " + type) */
    const char *def;     /* default as recipe text (hx_recipe_defaults parses it); NULL: derived */
    const char *note;    /* the default in words when def is NULL */
    const char *example; /* value on the template line when def is NULL */
    const char *unit;    /* NULL: dimensionless or not a quantity */
    const char *help;    /* first line: summary for --help; further lines: details */
    int required;        /* no default: the template gives a sample value instead of a comment */
    int relative;        /* a relative path is taken from the recipe's directory */
    int group;           /* G_*: the alternatives this key belongs to, G_NONE for none */
} key;

static const char *const shape_names[] = {"power", "band", "table", NULL};
static const char *const exact_names[] = {"none", "total", "shell", NULL};
static const char *const amp_names[] = {"gaussian", "fixed", NULL};
static const char *const prec_names[] = {"single", "double", NULL};
static const char *const compute_names[] = {"single", "double", "auto", NULL};
static const char *const draws_names[] = {"auto", "keep", "regenerate", NULL};
static const char *const model_names[] = {"none", "uniform", "sphere", "bonnor-ebert", "lognormal", NULL};
static const char *const weight_names[] = {"volume", "mass", NULL};
static const char *const by_names[] = {"vrms", "mach", "virial", "linewidth", NULL};
static const char *const axis_names[] = {"x", "y", "z", NULL};

static int in_range(double x, range_t r)
{
    switch (r) {
    case R_ANY: return isfinite(x);
    case R_POS: return isfinite(x) && x > 0;
    case R_NONNEG: return isfinite(x) && x >= 0;
    case R_SHARE: return x >= 0 && x <= 1;
    case R_GT1: return isfinite(x) && x > 1;
    case R_GE1: return isfinite(x) && x >= 1;
    }
    return 0;
}

static int count_names(const char *const *names)
{
    int n = 0;
    while (names[n]) n++;
    return n;
}

/* Why a value is refused: "must be " followed by the key's allowed values. */
static const char *rule_of(const key *k)
{
    static _Thread_local char buf[400];
    snprintf(buf, sizeof buf, "must be %s", k->type);
    return buf;
}

/* Store value v of key k in r; NULL or what is allowed. */
static const char *parse_value(const key *k, hx_recipe *r, const char *v)
{
    void *dst = (char *)r + k->off;
    switch (k->kind) {
    case K_CELLS: {
        int64_t c[3];
        if (!read_ints3(v, c)) return rule_of(k);
        for (int i = 0; i < 3; i++)
            if (c[i] < 4 || c[i] > CELLS_MAX) return rule_of(k);
        memcpy(dst, c, sizeof c);
        return NULL;
    }
    case K_BOX: {
        double b[3];
        if (!read_reals3(v, b) || !(b[0] > 0 && b[1] > 0 && b[2] > 0)) return rule_of(k);
        memcpy(dst, b, sizeof b);
        return NULL;
    }
    case K_ENUM: {
        int i = read_enum(v, k->names);
        if (i < 0) return rule_of(k);
        *(int *)dst = i;
        return NULL;
    }
    case K_REAL: {
        double x;
        if (!read_real(v, &x) || !in_range(x, k->range)) return rule_of(k);
        *(double *)dst = x;
        return NULL;
    }
    case K_QTY: {
        hx_quantity q = {NAN, 0, ""};
        if (strlen(v) >= sizeof q.text) return "must be a number with an optional unit, at most 47 characters";
        const char *why = hx_units_quantity(v, (hx_qty)k->qty, &q.value, &q.unit);
        if (why) return why;
        if (!in_range(q.value, k->range)) return rule_of(k);
        hx_quantity *out = dst; /* member by member: the struct's padding stays as defaults zeroed it */
        out->value = q.value;
        out->unit = q.unit;
        memset(out->text, 0, sizeof out->text);
        snprintf(out->text, sizeof out->text, "%s", v);
        return NULL;
    }
    case K_BOOL:
    case K_TRI: {
        int b = read_bool(v);
        if (b < 0 && k->kind == K_TRI && !strcasecmp(v, "auto")) b = -1;
        else if (b < 0) return rule_of(k);
        *(int *)dst = b;
        return NULL;
    }
    case K_SEED: { /* decimal digits only: strtoull would quietly wrap "-1" to 2^64 - 1 */
        if (!*v || strspn(v, "0123456789") != strlen(v)) return rule_of(k);
        errno = 0;
        unsigned long long s = strtoull(v, NULL, 10);
        if (errno == ERANGE) return rule_of(k);
        *(uint64_t *)dst = (uint64_t)s;
        return NULL;
    }
    case K_PATH:
        if (!*v) return rule_of(k);
        if (strlen(v) >= HX_PATH_MAX) return "path must be shorter than 4096 characters";
        memset(dst, 0, HX_PATH_MAX); /* no tail of a longer earlier value: equal recipes are equal bytes */
        memcpy(dst, v, strlen(v));
        return NULL;
    case K_AXIS: {
        double d[3] = {0, 0, 0};
        int a = read_enum(v, axis_names);
        if (a >= 0) d[a] = 1.0;
        else if (!read_reals3(v, d)) return rule_of(k);
        if (!(d[0] != 0 || d[1] != 0 || d[2] != 0)) return rule_of(k);
        memcpy(dst, d, sizeof d);
        return NULL;
    }
    }
    return "unknown kind of key";
}

/* Write the value of key k as recipe text; 0 when not given. */
static int show_value(const key *k, const hx_recipe *r, char *buf, size_t n)
{
    const void *src = (const char *)r + k->off;
    switch (k->kind) {
    case K_CELLS: {
        const int64_t *c = src;
        if (c[0] <= 0 || c[1] <= 0 || c[2] <= 0) return 0;
        if (c[0] == c[1] && c[1] == c[2]) snprintf(buf, n, "%" PRId64, c[0]);
        else snprintf(buf, n, "%" PRId64 " %" PRId64 " %" PRId64, c[0], c[1], c[2]);
        return 1;
    }
    case K_BOX:
    case K_AXIS: {
        const double *x = src;
        char b[3][32];
        for (int i = 0; i < 3; i++) format_real(b[i], sizeof b[i], x[i]);
        if (x[0] == x[1] && x[1] == x[2]) snprintf(buf, n, "%s", b[0]);
        else snprintf(buf, n, "%s %s %s", b[0], b[1], b[2]);
        return 1;
    }
    case K_ENUM: {
        int i = *(const int *)src;
        if (i < 0 || i >= count_names(k->names)) return 0; /* unset */
        snprintf(buf, n, "%s", k->names[i]);
        return 1;
    }
    case K_REAL:
        if (isnan(*(const double *)src)) return 0;
        format_real(buf, n, *(const double *)src);
        return 1;
    case K_QTY: {
        const hx_quantity *q = src;
        if (isnan(q->value)) return 0;
        if (q->text[0]) snprintf(buf, n, "%s", q->text);
        else format_real(buf, n, q->value);
        return 1;
    }
    case K_BOOL:
    case K_TRI: {
        int b = *(const int *)src;
        snprintf(buf, n, "%s", b < 0 ? "auto" : b ? "true" : "false");
        return 1;
    }
    case K_SEED:
        snprintf(buf, n, "%" PRIu64, *(const uint64_t *)src);
        return 1;
    case K_PATH:
        if (!*(const char *)src) return 0;
        snprintf(buf, n, "%s", (const char *)src);
        return 1;
    }
    return 0;
}

/* ---- the table of keys --------------------------------------------------------------------- */

#define FEDERRATH "(Federrath et al. 2010, A&A 512, A81)"
#define KUNIT "2 pi / max(L)"
#define AT(field) offsetof(hx_recipe, field)
#define REAL(sec, nm, field, rg, type) sec, nm, K_REAL, AT(field), NULL, 0, rg, type
#define QTY(sec, nm, field, q, rg, type) sec, nm, K_QTY, AT(field), NULL, q, rg, type
#define ENUM(sec, nm, field, names, type) sec, nm, K_ENUM, AT(field), names, 0, R_ANY, type
#define OTHER(sec, nm, kind, field, type) sec, nm, kind, AT(field), NULL, 0, R_ANY, type

/* The spectrum keys, the same for every section that describes a spectrum. */
#define SPECTRUM_KEYS(sec, spec, what, kmin_def, shape_def, shape_note)                                     \
    {ENUM(sec, "shape", spec.shape, shape_names, "one of power, band, table"), shape_def, shape_note, "power", NULL, \
     "form of the shell-integrated spectrum E(k) of " what ", zero outside [kmin, kmax]\n"                   \
     "power: E ~ k^-slope; band: E ~ (k - kmin)(kmax - k), a smooth hump vanishing at both ends;\n"          \
     "table: E from the (k, E) rows of the table key, interpolated linearly in log k - log E.",             \
     0, 0, 0},                                                                                                \
    {REAL(sec, "slope", spec.slope, R_ANY, "a finite number"), "2", NULL, NULL, NULL,                        \
     "power-law index for shape = power: E(k) ~ k^-slope, E shell-integrated\n"                              \
     "5/3 is the Kolmogorov spectrum, 2 the Burgers (shock-dominated) one.",                                \
     0, 0, 0},                                                                                                \
    {REAL(sec, "kmin", spec.kmin, R_POS, "a number > 0 in units of 2 pi / max(L), at most kmax"), kmin_def,   \
     NULL, NULL, KUNIT, "smallest wavenumber that carries power", 0, 0, 0},                                   \
    {REAL(sec, "kmax", spec.kmax, R_POS,                                                                     \
          "a number > 0 in units of 2 pi / max(L), at least kmin and at most min over axes of "                \
          "(ceil(N_i/2) - 1) * max(L)/L_i"),                                                                   \
     NULL, "the limit min over axes of (ceil(N_i/2) - 1) * max(L)/L_i", "31", KUNIT,                           \
     "largest wavenumber that carries power\n"                                                               \
     "Its default and upper limit, min over axes of (ceil(N_i/2) - 1) * max(L)/L_i, is the largest\n"       \
     "wavenumber below Nyquist on every axis (31 for cells = 64 in a cube); the default follows the grid.", \
     0, 0, 0},                                                                                                \
    {OTHER(sec, "table", K_PATH, spec.table, "a file of (k, E) rows"), NULL, "none", "spectrum.dat", NULL,   \
     "file of (k, E) rows for shape = table\n"                                                               \
     "Two numbers per line separated by blanks, '#' starts a comment; at least two rows,\n"                 \
     "k > 0 strictly increasing (units of 2 pi / max(L)), E >= 0. A relative path is taken\n"               \
     "from the directory of the recipe file (from the current directory for --set).",                      \
     0, 1, 0}

static const key keys[] = {
    {OTHER("grid", "cells", K_CELLS, cells, "one integer N or three integers \"Nx Ny Nz\", each in [4, 1048576]"),
     NULL, "none: must be given", "64", "cells",
     "grid cells per axis; one integer N means N N N\n"
     "Odd and even N alike: an odd N has no Nyquist plane, every frequency keeps its partner.",
     1, 0, 0},
    {OTHER("grid", "box", K_BOX, box, "one number L or three numbers \"Lx Ly Lz\", each > 0"), "1", NULL, NULL,
     "code length",
     "box edge lengths in code length units ([units] length); one number L means a cube L L L\n"
     "Wavenumbers k are counted in units of 2 pi / max(Lx, Ly, Lz).",
     0, 0, 0},

    {QTY("units", "length", unit_length, HX_QTY_LENGTH, R_POS, "a length > 0, e.g. 1 pc (a bare number is in cm)"),
     "1 cm", NULL, NULL, "cm when bare",
     "the code length unit: box, radii and edges without a unit are in it\n"
     "Units: pc, kpc, au, Rsun, km, m, cm. yt reads it from the file and converts.",
     0, 0, 0},
    {QTY("units", "velocity", unit_velocity, HX_QTY_VELOCITY, R_POS,
         "a velocity > 0, e.g. 1 km/s (a bare number is in cm/s)"),
     "1 cm/s", NULL, NULL, "cm/s when bare",
     "the code velocity unit: the velocity datasets and vrms are in it; code time = length / velocity", 0, 0, 0},
    {QTY("units", "density", unit_density, HX_QTY_DENSITY, R_POS,
         "a density > 0, e.g. 1e-22 g/cm^3 or 1 Msun/pc^3 (a bare number is in g/cm^3)"),
     NULL, "1 g/cm^3 unless mass is given", "1e-22 g/cm^3", "g/cm^3 when bare",
     "the code density unit: the density dataset is in it; give density or mass, not both", 0, 0, G_UNITS_DENSITY},
    {QTY("units", "mass", unit_mass, HX_QTY_MASS, R_POS, "a mass > 0, e.g. 1 Msun (a bare number is in g)"),
     NULL, "none (density is used)", "1 Msun", "g when bare",
     "the code mass unit instead of density: code density = mass / length^3", 0, 0, G_UNITS_DENSITY},

    SPECTRUM_KEYS("spectrum", spectrum, "the kinetic energy", "1", "power", NULL),

    {REAL("mix", "zeta", mix.zeta, R_SHARE, "a number in [0, 1]"), NULL, "0.5 unless compressive_fraction is given",
     "0.5", NULL,
     "Helmholtz projection weight: each mode keeps zeta of its solenoidal part, 1 - zeta of its compressive part\n"
     "1 is purely solenoidal, 0 purely compressive, 0.5 the natural 2:1 mixture. The expected compressive\n"
     "share of the energy is (1-zeta)^2/(1-2 zeta+3 zeta^2) " FEDERRATH ".\n"
     "Give zeta or compressive_fraction, not both.",
     0, 0, G_MIX},
    {REAL("mix", "compressive_fraction", mix.compressive_fraction, R_SHARE, "a number in [0, 1]"), NULL,
     "none (zeta is used)", "0.3", NULL,
     "compressive (curl-free) share of the kinetic energy, asked for directly instead of zeta\n"
     "Give compressive_fraction or zeta, not both. With it, exact defaults to total; exact = none draws freely "
     "with that expected share.",
     0, 0, G_MIX},
    {ENUM("mix", "exact", mix.exact, exact_names, "one of none, total, shell"), NULL,
     "none with zeta, total with compressive_fraction", "none", NULL,
     "how strictly the realized compressive share is held\n"
     "none: the draw alone decides, the share scatters around its expectation (with\n"
     "compressive_fraction, the parts are weighted so that the expected share is the fraction);\n"
     "total: the whole field holds the share exactly; shell: every wavenumber shell holds it.\n"
     "With zeta: none (default) draws freely; total/shell pin the realized compressive share to the\n"
     "expected (1-zeta)^2/(1-2 zeta+3 zeta^2) " FEDERRATH ".",
     0, 0, 0},
    {ENUM("mix", "weight", weight, weight_names, "one of volume, mass"), "volume", NULL, NULL, NULL,
     "which field holds the share: volume = v itself; mass = sqrt(rho) v (needs [density])\n"
     "With mass the velocity is the synthesized field divided by sqrt(rho / <rho>), so sqrt(rho) v holds\n"
     "the share exactly (mass-weighted decomposition, common practice for compressible turbulence).",
     0, 0, 0},

    {REAL("amplitude", "vrms", vrms, R_POS, "a number > 0"), NULL, "1 unless mach, virial or linewidth is given",
     "1.0", "code velocity",
     "3D rms velocity, sqrt(<vx^2 + vy^2 + vz^2>), volume-weighted over the box\n"
     "Give exactly one of vrms, mach, virial, linewidth.",
     0, 0, G_AMPLITUDE},
    {REAL("amplitude", "mach", mach, R_POS, "a number > 0"), NULL, "none", "5", NULL,
     "3D rms Mach number sigma_3D / c_s, c_s from [gas]\n"
     "sigma_3D is the mass-weighted 3D velocity dispersion over the cloud (the whole box without a\n"
     "cloud), after the bulk velocity is removed.",
     0, 0, G_AMPLITUDE},
    {REAL("amplitude", "virial", virial, R_POS, "a number > 0"), NULL, "none", "1", NULL,
     "virial parameter alpha_vir = 5 sigma_1D^2 R / (G M) (Bertoldi & McKee 1992, ApJ 395, 140)\n"
     "sigma_1D = sigma_3D / sqrt(3), mass-weighted over the cloud; R and M are the cloud's radius and\n"
     "mass. Without a cloud: R = max(L)/2 and M the mass in the box (common practice for periodic boxes).",
     0, 0, G_AMPLITUDE},
    {OTHER("amplitude", "linewidth", K_BOOL, linewidth, "true or false (also yes/no, 1/0)"), "false", NULL, NULL,
     NULL,
     "set sigma_3D by a linewidth-size relation sigma_3D = linewidth_sigma (L / 1 pc)^linewidth_index\n"
     "L is the largest size: the cloud's diameter, else the largest box side. The defaults are\n"
     "Larson's relation for the 3D dispersion, 1.10 km/s (L/pc)^0.38 (Larson 1981, MNRAS 194, 809).",
     0, 0, G_AMPLITUDE},
    {QTY("amplitude", "linewidth_sigma", linewidth_sigma, HX_QTY_VELOCITY, R_POS, "a velocity > 0"), "1.10 km/s",
     NULL, NULL, "code velocity when bare", "3D velocity dispersion at L = 1 pc of the linewidth-size relation", 0,
     0, 0},
    {REAL("amplitude", "linewidth_index", linewidth_index, R_ANY, "a finite number"), "0.38", NULL, NULL, NULL,
     "exponent of the linewidth-size relation", 0, 0, 0},

    {OTHER("velocity", "window", K_BOOL, window, "true or false (also yes/no, 1/0)"), "false", NULL, NULL, NULL,
     "confine the turbulence to the cloud: v is multiplied by the cloud's smooth window\n"
     "The window is 1 inside the cloud radius and falls to 0 over [density] edge; it mixes modes, so the\n"
     "compressive share recorded and checked is that of the field as written, measured after windowing.",
     0, 0, 0},
    {OTHER("velocity", "remove_bulk", K_TRI, remove_bulk, "auto, true or false"), "auto", NULL, NULL, NULL,
     "subtract the mass-weighted mean velocity so the net momentum is zero\n"
     "auto: on when the density is not uniform (a uniform density has zero net momentum already).",
     0, 0, 0},
    {OTHER("velocity", "remove_rotation", K_BOOL, remove_rotation, "true or false (also yes/no, 1/0)"), "false",
     NULL, NULL, NULL,
     "subtract the rigid rotation that carries the net angular momentum about the centre of mass", 0, 0, 0},

    {QTY("gas", "temperature", temperature, HX_QTY_TEMPERATURE, R_POS, "a temperature > 0 (K)"), "10 K", NULL,
     NULL, "K", "gas temperature of the cloud (the ambient medium of a cloud is hotter, in pressure equilibrium)",
     0, 0, 0},
    {REAL("gas", "mu", mu, R_POS, "a number > 0"), "2.37", NULL, NULL, "m_H",
     "mean molecular weight per free particle, in units of the hydrogen atom mass\n"
     "2.37 for molecular gas with cosmic abundances (Kauffmann et al. 2008, A&A 487, 993, appendix A).",
     0, 0, 0},
    {REAL("gas", "gamma", gamma, R_GE1, "a number >= 1"), "1", NULL, NULL, NULL,
     "adiabatic index of c_s = sqrt(gamma k_B T / (mu m_H)); 1 is isothermal", 0, 0, 0},

    {ENUM("density", "model", density_model, model_names, "one of none, uniform, sphere, bonnor-ebert, lognormal"),
     "none", NULL, NULL, NULL,
     "the density written beside the velocity\n"
     "none: no density dataset; uniform: mean everywhere; sphere: a uniform cloud of radius R in a\n"
     "thinner ambient medium in pressure equilibrium; bonnor-ebert: an isothermal sphere from the\n"
     "Lane-Emden equation (Ebert 1955; Bonnor 1956); lognormal: rho = mean exp(s) / <exp(s)> with s a\n"
     "Gaussian random field of its own spectrum ([density_spectrum]) and random stream.",
     0, 0, 0},
    {QTY("density", "mean", density_mean, HX_QTY_DENSITY, R_POS, "a density > 0"), NULL,
     "1 code density (uniform, lognormal); for sphere, the cloud density unless mass is given", "1e-21 g/cm^3",
     "code density when bare", "volume-mean density (uniform, lognormal), or the cloud's density (sphere)\n"
     "Give one of mean, mass, central_density.", 0, 0, G_CLOUD_DENSITY},
    {QTY("density", "radius", cloud_radius, HX_QTY_LENGTH, R_POS, "a length > 0"), NULL,
     "none: a sphere needs it; a Bonnor-Ebert sphere gets it from xi_max", "2 pc", "code length when bare",
     "cloud radius of a sphere (centred in the box)", 0, 0, 0},
    {QTY("density", "mass", cloud_mass, HX_QTY_MASS, R_POS, "a mass > 0"), NULL, "none", "1000 Msun",
     "code mass when bare",
     "cloud mass: sets the sphere's density or the Bonnor-Ebert central density instead of giving them", 0, 0,
     G_CLOUD_DENSITY},
    {QTY("density", "central_density", central_density, HX_QTY_DENSITY, R_POS, "a density > 0"), NULL,
     "none: a Bonnor-Ebert sphere needs it or mass", "1e-19 g/cm^3", "code density when bare",
     "central density of a Bonnor-Ebert sphere", 0, 0, G_CLOUD_DENSITY},
    {REAL("density", "xi_max", xi_max, R_POS, "a number > 0"), NULL, "the critical value 6.451", "6.451", NULL,
     "dimensionless outer radius of a Bonnor-Ebert sphere, r = xi c_s / sqrt(4 pi G rho_c)\n"
     "Above the critical 6.451 (Ebert 1955, Z. Astrophys. 37, 217; Bonnor 1956, MNRAS 116, 351) the\n"
     "pressure-bounded sphere is unstable.",
     0, 0, 0},
    {REAL("density", "contrast", contrast, R_GT1, "a number > 1"), "100", NULL, NULL, NULL,
     "cloud (edge) density over ambient density; the ambient gas is that much hotter, in pressure equilibrium",
     0, 0, 0},
    {QTY("density", "edge", edge, HX_QTY_LENGTH, R_NONNEG, "a length >= 0"), "0", NULL, NULL,
     "code length when bare",
     "width of the smooth cloud edge: the cloud fades as (1 - tanh((r - R)/edge)) / 2; 0 is a sharp edge", 0, 0,
     0},
    {REAL("density", "sigma_s", sigma_s, R_NONNEG, "a number >= 0"), NULL, "from b and the Mach number", "1.5",
     NULL,
     "width of s = ln(rho/rho_0) of the lognormal (and of the clumps)\n"
     "Default: sigma_s^2 = ln(1 + b^2 M^2) (Federrath, Klessen & Schmidt 2008, ApJ 688, L79) with M the\n"
     "3D rms Mach number asked for in [amplitude] (mach, or vrms / c_s).",
     0, 0, 0},
    {REAL("density", "b", b, R_POS, "a number > 0"), NULL, "from the mix: b = 1 - (2/3) zeta", "0.4", NULL,
     "forcing parameter of sigma_s^2 = ln(1 + b^2 M^2)\n"
     "Default b = 1 + (1/D - 1) zeta with D = 3 " FEDERRATH ", quoted from memory and not yet checked\n"
     "against the paper: 1/3 for purely solenoidal and 1 for purely compressive motions (Federrath, Klessen\n"
     "& Schmidt 2008) in between; with compressive_fraction, zeta is the one whose expected share it is.",
     0, 0, 0},
    {OTHER("density", "clumps", K_BOOL, clumps, "true or false (also yes/no, 1/0)"), "false", NULL, NULL, NULL,
     "modulate a sphere or Bonnor-Ebert cloud by a lognormal field of width sigma_s (a clumpy cloud)\n"
     "The cloud keeps its mass exactly; the ambient medium is not modulated.",
     0, 0, 0},

    SPECTRUM_KEYS("density_spectrum", density_spectrum, "s = ln(rho / rho_0)", "1", "power", NULL),

    {QTY("magnetic", "strength", b_strength, HX_QTY_MAGNETIC, R_NONNEG, "a magnetic field >= 0, e.g. 10 uG"), NULL,
     "none", "10 uG", "code magnetic when bare",
     "strength |B0| of the uniform field; give one of strength, beta, alfven_mach (or none: random part only)\n"
     "Gaussian units (NRL Plasma Formulary); the code magnetic unit is sqrt(4 pi [units] density) [units]\n"
     "velocity, so that v_A = B / sqrt(rho) and beta = 2 P / B^2 in code units.",
     0, 0, G_B0},
    {REAL("magnetic", "beta", beta, R_POS, "a number > 0"), NULL, "none", "0.1", NULL,
     "plasma beta of the uniform field, 8 pi P / B0^2 with P = <rho> k_B T / (mu m_H) from [gas]\n"
     "<rho> is the volume mean of the [density] model (1 code density without one).",
     0, 0, G_B0},
    {REAL("magnetic", "alfven_mach", alfven_mach, R_POS, "a number > 0"), NULL, "none", "1", NULL,
     "Alfven Mach number of the uniform field, sigma_3D / v_A with v_A = B0 / sqrt(4 pi <rho>)\n"
     "sigma_3D is the 3D velocity dispersion as written (the one [amplitude] sets), so this Mach number is 3D.",
     0, 0, G_B0},
    {OTHER("magnetic", "direction", K_AXIS, direction, "x, y, z or three numbers \"ax ay az\" (not all 0)"), "0 0 1",
     NULL, NULL, NULL, "direction of the uniform field (normalised); x, y, z name the axes", 0, 0, 0},
    {REAL("magnetic", "random_ratio", random_ratio, R_NONNEG, "a number >= 0"), NULL, "0 (no random part)", "0.5",
     NULL,
     "rms of the random solenoidal part over |B0|; give random_ratio or random_rms\n"
     "The random part has its own spectrum ([magnetic_spectrum], whose shape must be given) and random stream.",
     0, 0, G_B_RANDOM},
    {QTY("magnetic", "random_rms", random_rms, HX_QTY_MAGNETIC, R_NONNEG, "a magnetic field >= 0"), NULL,
     "none", "3 uG", "code magnetic when bare", "rms of the random part itself (instead of random_ratio)", 0, 0,
     G_B_RANDOM},
    {OTHER("magnetic", "faces", K_BOOL, faces, "true or false (also yes/no, 1/0)"), "true", NULL, NULL, NULL,
     "also write magnetic_face_x|y|z: the face-centred field of a staggered (constrained-transport) grid\n"
     "It is the discrete curl of a vector potential on cell edges, so its discrete divergence vanishes to\n"
     "round-off; magnetic_face_x[k][j][i] sits on the low-x face of cell (i, j, k), at x = i dx.",
     0, 0, 0},

    SPECTRUM_KEYS("magnetic_spectrum", magnetic_spectrum, "the random magnetic field", "1", NULL,
                  "none: a random part needs it"),

    {OTHER("random", "seed", K_SEED, seed, "a whole number in [0, 18446744073709551615]"), "1", NULL, NULL, NULL,
     "seed of the random draws\n"
     "The same recipe and seed give the same field, whatever the number of ranks. Each field (velocity,\n"
     "density) has its own random stream, so changing one never changes the other.",
     0, 0, 0},
    {ENUM("random", "amplitudes", amplitudes, amp_names, "one of gaussian, fixed"), "gaussian", NULL, NULL, NULL,
     "how mode amplitudes are drawn\n"
     "gaussian: each mode's complex amplitude is a Gaussian draw (a Gaussian random field);\n"
     "fixed: every mode has exactly the spectrum's amplitude and only its phase is random.",
     0, 0, 0},
    {OTHER("random", "flip", K_BOOL, flip, "true or false (also yes/no, 1/0)"), "false", NULL, NULL, NULL,
     "negate every draw: the field becomes -v of the unflipped field with the same seed", 0, 0, 0},

    {OTHER("output", "file", K_PATH, file, "the name of the output file"), "helmix.h5", NULL, NULL, NULL,
     "output HDF5 file; a relative path is taken from the current directory", 0, 0, 0},
    {ENUM("output", "precision", precision, prec_names, "one of single, double"), "single", NULL, NULL, NULL,
     "floating-point precision of the datasets written to the file (the fields are computed in double)", 0, 0, 0},
    {OTHER("output", "parts", K_BOOL, parts, "true or false (also yes/no, 1/0)"), "false", NULL, NULL, NULL,
     "also write the velocity's solenoidal and compressive parts, velocity_solenoidal_x|y|z and\n"
     "velocity_compressive_x|y|z, which add up to the velocity mode by mode (for testing decomposition tools)\n"
     "Only for a velocity the cloud does not shape (no window, removal or mass weighting).",
     0, 0, 0},
    {ENUM("output", "compute", compute, compute_names, "one of auto, single, double"), "auto", NULL, NULL, NULL,
     "precision of the synthesis (draws are always made in double, then the spectrum is filled and\n"
     "transformed in this precision); auto: that of the file. single halves the memory and the transform\n"
     "time of a single-precision file; double reproduces files written before helmix 0.2 bit for bit",
     0, 0, 0},
    {ENUM("output", "draws", draws, draws_names, "one of auto, keep, regenerate"), "auto", NULL, NULL, NULL,
     "keep every mode's random draws in memory between the passes over k space, or regenerate them\n"
     "for each component (the output is bit-identical either way); auto keeps them when the plan says\n"
     "they fit (helmix plan shows the memory of both)",
     0, 0, 0},
    {REAL("output", "alignment", alignment, R_NONNEG, "a number of bytes >= 0"), "0", NULL, NULL, NULL,
     "align every dataset of at least this size to a multiple of it in the file (set it to the file\n"
     "system's block or stripe size, e.g. 1048576 on Lustre); 0 keeps HDF5's packing", 0, 0, 0},
    {OTHER("output", "io_hints", K_PATH, io_hints, "none, or MPI-IO hints key=value,key=value"), "none", NULL, NULL, NULL,
     "MPI-IO hints passed to the file open, e.g. striping_factor=16,cb_nodes=8 (names are those of\n"
     "the MPI library; unknown hints are ignored by MPI); none for no hints", 0, 0, 0},
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
    return parse_value(k, r, v);
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
    /* "not given" first, then the defaults the table spells out */
    for (int i = 0; i < NKEYS; i++) {
        void *dst = (char *)r + keys[i].off;
        if (keys[i].kind == K_REAL) *(double *)dst = NAN;
        if (keys[i].kind == K_QTY) ((hx_quantity *)dst)->value = NAN;
    }
    for (int i = 0; i < NKEYS; i++)
        if (keys[i].def) parse_value(&keys[i], r, keys[i].def);
    r->mix.mode = HX_MIX_ZETA;
    r->mix.exact = EXACT_UNSET;
    r->remove_bulk = -1;
    r->magnetic_spectrum.shape = (hx_shape)-1; /* a random field must say what its spectrum is */
}

/* ---- the text: what a recipe may hold -------------------------------------------------------- */

/* Length of the UTF-8 sequence at s (RFC 3629: shortest form, no surrogates, at most
 * U+10FFFF), 0 when it is not one. */
static size_t utf8_length(const unsigned char *s, size_t avail)
{
    unsigned char c = s[0];
    size_t n;
    unsigned char lo = 0x80, hi = 0xBF; /* allowed range of the second byte */
    if (c < 0x80) return 1;
    if (c >= 0xC2 && c <= 0xDF) n = 2;
    else if (c >= 0xE0 && c <= 0xEF) n = 3, lo = c == 0xE0 ? 0xA0 : 0x80, hi = c == 0xED ? 0x9F : 0xBF;
    else if (c >= 0xF0 && c <= 0xF4) n = 4, lo = c == 0xF0 ? 0x90 : 0x80, hi = c == 0xF4 ? 0x8F : 0xBF;
    else return 0;
    if (avail < n || s[1] < lo || s[1] > hi) return 0;
    for (size_t i = 2; i < n; i++)
        if (s[i] < 0x80 || s[i] > 0xBF) return 0;
    return n;
}

/* What makes byte i of s[0..len) unfit for a recipe (its sequence is *step bytes long), or
 * NULL. A line feed is fine in a text; `one_line` refuses it in a single value. */
static const char *byte_fault(const char *s, size_t len, size_t i, int one_line, size_t *step, char *why, size_t n)
{
    unsigned char c = (unsigned char)s[i];
    *step = 1;
    if (c == '\0') return "a NUL byte: a recipe is text (is this a binary file?)";
    if (c == '\n' && !one_line) return NULL;
    if (c == '\r' && !one_line && i + 1 < len && s[i + 1] == '\n') return NULL; /* CRLF line ends */
    if (c == '\r') return "a carriage return that does not end a line";
    if ((c < 0x20 && c != '\t') || c == 0x7f) {
        snprintf(why, n, "the control character 0x%02x: a recipe is text (is this a binary file?)", c);
        return why;
    }
    if (c >= 0x80 && !(*step = utf8_length((const unsigned char *)s + i, len - i))) {
        *step = 1;
        snprintf(why, n, "the byte 0x%02x, which is not UTF-8: save the recipe as UTF-8 text", c);
        return why;
    }
    return NULL;
}

hx_status hx_recipe_check_text(const char *text, size_t len, const char *origin)
{
    char why[160];
    int line = 1;
    size_t start = 0, step;
    origin = origin ? origin : "recipe";
    for (size_t i = 0; i < len; i += step) {
        const char *bad = byte_fault(text, len, i, 0, &step, why, sizeof why);
        if (bad) return hx_error_set(HX_ERR_ARG, "%s:%d: column %zu holds %s", origin, line, i - start + 1, bad);
        if (text[i] == '\n') line++, start = i + 1;
    }
    return HX_OK;
}

/* The end of a line's content: an inline comment starts at a '#' or ';' after a blank
 * (common practice in INI files; a value never holds " #" or " ;"). */
static size_t cut_comment(const char *s, size_t len)
{
    for (size_t p = 1; p < len; p++)
        if ((s[p] == '#' || s[p] == ';') && (s[p - 1] == ' ' || s[p - 1] == '\t')) return p;
    return len;
}

/* ---- alternatives: keys of which at most one is given ----------------------------------------- */

static int given(const key *k, const hx_recipe *r)
{
    const void *src = (const char *)r + k->off;
    switch (k->kind) {
    case K_REAL: return !isnan(*(const double *)src);
    case K_QTY: return !isnan(((const hx_quantity *)src)->value);
    case K_BOOL: return *(const int *)src != 0;
    default: return 1;
    }
}

/* Back to "not given" (then the key's default, if it has one). */
static void reset_key(const key *k, hx_recipe *r)
{
    void *dst = (char *)r + k->off;
    if (k->kind == K_REAL) *(double *)dst = NAN;
    if (k->kind == K_QTY) {
        hx_quantity *q = dst;
        q->value = NAN;
        q->unit = 0;
        memset(q->text, 0, sizeof q->text);
    }
    if (k->kind == K_BOOL) *(int *)dst = 0;
    if (k->def) parse_value(k, r, k->def);
}

/* "zeta, compressive_fraction": the keys of a group. */
static const char *group_list(int group)
{
    static _Thread_local char buf[HINT_MAX];
    size_t used = 0;
    buf[0] = '\0';
    for (int i = 0; i < NKEYS && used < sizeof buf; i++)
        if (keys[i].group == group)
            used += (size_t)snprintf(buf + used, sizeof buf - used, "%s%s", used ? ", " : "", keys[i].name);
    return buf;
}

/* ---- parsing ---------------------------------------------------------------------------------- */

/* inih hands us one line per reader call, so the count of reader calls is the line number
 * of every handler call: this works whether or not the installed inih reports line numbers.
 * The reader also does what inih cannot: '#' inline comments, sections given twice, text
 * after a [section], a NUL inside the text (the length is known). */
typedef struct parse_state {
    hx_recipe *r;
    const char *origin, *basedir, *text, *pos, *end;
    int line;         /* lines handed to inih so far */
    int section_line; /* line of the latest [section] header */
    int err_line;     /* line of the first error found here, 0 if none */
    hx_status err;
    int seen[HX_RECIPE_MAX_KEYS];    /* line of each key in this text (0: not yet) */
    int opened[HX_RECIPE_MAX_KEYS];  /* line of each [section], at its first key's index */
    int long_line;    /* line whose value is in long_value (see long_line) */
    char long_value[HX_PATH_MAX + 1];
} parse_state;

static int parse_fail(parse_state *ps, int line, hx_status st, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static int parse_fail(parse_state *ps, int line, hx_status st, const char *fmt, ...)
{
    char what[900];
    if (ps->err_line) return 0; /* only the first error is reported */
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
 * reaches inih as "key = \x01" and the handler takes the value kept here (the line comes
 * without comment and surrounding blanks). */
static char *long_line(parse_state *ps, char *buf, int size, const char *s, size_t len)
{
    buf[0] = '\0';
    size_t eq = 0;
    while (eq < len && s[eq] != '=' && s[eq] != ':') eq++;
    if (eq == len || *s == '[' || eq + 4 > (size_t)size) {
        parse_fail(ps, ps->line, HX_ERR_ARG, "line is longer than %d characters and not a 'key = value' line",
                   size - 2);
        return buf;
    }
    memcpy(buf, s, eq + 1);
    strcpy(buf + eq + 1, " \x01");
    const char *v = s + eq + 1, *end = s + len;
    while (v < end && isspace((unsigned char)*v)) v++;
    size_t vlen = (size_t)(end - v) < HX_PATH_MAX ? (size_t)(end - v) : HX_PATH_MAX;
    memcpy(ps->long_value, v, vlen);
    ps->long_value[vlen] = '\0';
    ps->long_line = ps->line;
    return buf;
}

/* A "[section]" line (without comment and trailing blanks): known, opened once, alone. A
 * line without ']' is left to inih, which reports it. */
static void section_header(parse_state *ps, const char *s, size_t len)
{
    char hint[HINT_MAX], name[WORD_MAX];
    const char *close = memchr(s, ']', len);
    ps->section_line = ps->line;
    if (!close) return;
    size_t n = (size_t)(close - s - 1);
    if (close + 1 < s + len) {
        parse_fail(ps, ps->line, HX_ERR_ARG, "'%.*s': text after the [section] header: give each key = value "
                   "on a line of its own", (int)(len < SHOW_MAX ? len : SHOW_MAX), s);
        return;
    }
    snprintf(name, sizeof name, "%.*s", (int)(n < WORD_MAX - 1 ? n : WORD_MAX - 1), s + 1);
    const char *known = n < WORD_MAX - 1 ? find_section(name) : NULL;
    if (!known) {
        section_hint(hint, sizeof hint, name);
        parse_fail(ps, ps->line, HX_ERR_ARG, "unknown section [%.*s]%s", (int)(n < SHOW_MAX ? n : SHOW_MAX), s + 1,
                   hint);
        return;
    }
    int at = 0;
    while (at < NKEYS && strcmp(keys[at].section, known)) at++;
    if (ps->opened[at])
        parse_fail(ps, ps->line, HX_ERR_ARG, "[%s] is opened a second time (first on line %d): give each section "
                   "once, with all its keys", known, ps->opened[at]);
    else
        ps->opened[at] = ps->line;
}

/* Reader for ini_parse_stream: the next line of the text, without leading blanks (so inih
 * never takes an indented line for the continuation of the previous value), comments and
 * trailing blanks. */
static char *next_line(char *buf, int size, void *user)
{
    parse_state *ps = user;
    if (ps->pos >= ps->end) return NULL;
    const char *s = ps->pos, *eol = memchr(s, '\n', (size_t)(ps->end - s));
    size_t len = eol ? (size_t)(eol - s) : (size_t)(ps->end - s);
    ps->pos = eol ? eol + 1 : ps->end;
    ps->line++;
    if (ps->line == 1 && len >= 3 && !memcmp(s, "\xEF\xBB\xBF", 3)) s += 3, len -= 3; /* UTF-8 BOM */
    while (len && (*s == ' ' || *s == '\t')) s++, len--;
    if (len && (*s == '#' || *s == ';')) len = 0; /* a comment line */
    len = cut_comment(s, len);
    while (len && isspace((unsigned char)s[len - 1])) len--;
    if (len && *s == '[') section_header(ps, s, len);
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
    if (!find_section(section)) { /* section_header reports it first; this is for inih's own cuts */
        section_hint(hint, sizeof hint, section);
        return parse_fail(ps, ps->section_line, HX_ERR_ARG, "unknown section [%s]%s", section, hint);
    }
    const key *k = find_key(section, name);
    if (!k) {
        key_hint(hint, sizeof hint, section, name);
        return parse_fail(ps, ps->line, HX_ERR_ARG, "unknown key '%s' in [%s]%s", name, find_section(section),
                          hint);
    }
    int i = (int)(k - keys);
    if (ps->seen[i])
        return parse_fail(ps, ps->line, HX_ERR_ARG, "[%s] %s is given a second time (first on line %d): give each "
                          "key once (--set overrides the recipe)", k->section, k->name, ps->seen[i]);
    const char *why = *value == '#' || *value == ';' /* "key =#x": written back as "key = #x", a comment */
                          ? "a value starting with '#' or ';' would read as a comment once written back"
                          : apply(k, ps->r, value, ps->basedir);
    if (why)
        return parse_fail(ps, ps->line, HX_ERR_ARG, "[%s] %s = %.*s: %s", k->section, k->name, SHOW_MAX, value,
                          why);
    for (int j = 0; k->group && j < NKEYS; j++)
        if (j != i && keys[j].group == k->group && ps->seen[j] && given(k, ps->r) && given(&keys[j], ps->r))
            return parse_fail(ps, ps->line, HX_ERR_ARG, "[%s] %s = %.*s: %s is given on line %d, and only one of %s "
                              "may be given", k->section, k->name, SHOW_MAX, value, keys[j].name, ps->seen[j],
                              group_list(k->group));
    ps->seen[i] = ps->line;
    ps->r->line[i] = ps->line;
    return 1;
}

/* inih found a line that is neither a comment, a [section] nor key = value. */
static void syntax_error(parse_state *ps, int line)
{
    const char *s = ps->text, *end = ps->end;
    for (int i = 1; i < line && s < end; i++) {
        const char *eol = memchr(s, '\n', (size_t)(end - s));
        s = eol ? eol + 1 : end;
    }
    while (s < end && (*s == ' ' || *s == '\t')) s++;
    size_t len = 0;
    while (s + len < end && s[len] != '\r' && s[len] != '\n') len++;
    parse_fail(ps, line, HX_ERR_ARG, "'%.*s': expected [section], key = value or a comment",
               (int)(len < SHOW_MAX ? len : SHOW_MAX), s);
}

hx_status hx_recipe_parse_n(hx_recipe *r, const char *text, size_t len, const char *origin, const char *basedir)
{
    origin = origin ? origin : "recipe";
    if (!text) text = "", len = 0;
    if (len > HX_RECIPE_TEXT_MAX)
        return hx_error_set(HX_ERR_ARG, "%s: %zu bytes: a recipe is a text of at most %d bytes", origin, len,
                            HX_RECIPE_TEXT_MAX);
    hx_status st = hx_recipe_check_text(text, len, origin);
    if (st != HX_OK) return st;
    hx_recipe work = *r; /* r changes only on success */
    parse_state *ps = calloc(1, sizeof *ps); /* the long-value buffer is too big for some stacks */
    if (!ps) return hx_error_set(HX_ERR_MEM, "%s: out of memory while reading the recipe", origin);
    *ps = (parse_state){.r = &work, .origin = origin, .basedir = basedir, .text = text, .pos = text,
                        .end = text + len};
    int rc = ini_parse_stream(next_line, ps, on_key, ps);
    if (rc < 0) st = hx_error_set(HX_ERR_MEM, "%s: out of memory while reading the recipe", origin);
    else {
        if (rc > 0 && (!ps->err_line || rc < ps->err_line)) {
            ps->err_line = 0; /* inih's error comes first */
            syntax_error(ps, rc);
        }
        st = ps->err_line ? ps->err : HX_OK;
    }
    free(ps);
    if (st != HX_OK) return st;
    snprintf(work.origin, sizeof work.origin, "%s", origin);
    *r = work;
    return HX_OK;
}

hx_status hx_recipe_parse(hx_recipe *r, const char *text, const char *origin, const char *basedir)
{
    return hx_recipe_parse_n(r, text, text ? strlen(text) : 0, origin, basedir);
}

/* Copy s[0..len) without surrounding blanks into buf; -1 if it does not fit, else its length. */
static int trim_copy(char *buf, size_t n, const char *s, size_t len)
{
    while (len && isspace((unsigned char)*s)) s++, len--;
    while (len && isspace((unsigned char)s[len - 1])) len--;
    buf[0] = '\0';
    if (len >= n) return -1;
    memcpy(buf, s, len);
    buf[len] = '\0';
    return (int)len;
}

/* Why a --set value could not stand in a recipe line (so the rendering would not read back
 * as the same recipe), or NULL; control characters and bad UTF-8 are refused before. */
static const char *unwritable(const char *v)
{
    size_t len = strlen(v);
    if (cut_comment(v, len) < len || *v == '#' || *v == ';')
        return "a '#' or ';' at the start or after a blank would start a comment in a recipe";
    return NULL;
}

hx_status hx_recipe_set(hx_recipe *r, const char *assignment)
{
    const char *a = assignment ? assignment : "";
    char why_buf[160];
    size_t alen = strlen(a), step;
    for (size_t i = 0; i < alen; i += step) { /* refused before it is echoed: a message is one line */
        const char *bad = byte_fault(a, alen, i, 1, &step, why_buf, sizeof why_buf);
        if (bad) return hx_error_set(HX_ERR_ARG, "--set: byte %zu of the assignment is %s", i + 1, bad);
    }
    const char *eq = strchr(a, '=');
    const char *dot = eq ? memchr(a, '.', (size_t)(eq - a)) : NULL;
    char sec[WORD_MAX], name[WORD_MAX], value[VALUE_MAX], hint[HINT_MAX];
    if (!dot || trim_copy(sec, sizeof sec, a, (size_t)(dot - a)) <= 0 ||
        trim_copy(name, sizeof name, dot + 1, (size_t)(eq - dot - 1)) <= 0)
        return hx_error_set(HX_ERR_ARG, "--set %.*s: expected section.key=value, e.g. --set mix.zeta=0.3",
                            SHOW_MAX, a);
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
    if (trim_copy(value, sizeof value, eq + 1, strlen(eq + 1)) < 0)
        return hx_error_set(HX_ERR_ARG, "--set %.*s...: the value is longer than %d characters", SHOW_MAX, a,
                            VALUE_MAX - 1);
    hx_recipe work = *r;
    const char *why = unwritable(value);
    if (!why) why = apply(k, &work, value, NULL);
    if (why) return hx_error_set(HX_ERR_ARG, "--set %.*s: %s", SHOW_MAX, a, why);
    int i = (int)(k - keys);
    for (int j = 0; k->group && j < NKEYS; j++) /* the command line replaces the alternative of the text */
        if (j != i && keys[j].group == k->group && given(k, &work)) {
            reset_key(&keys[j], &work);
            work.line[j] = 0;
        }
    work.line[i] = HX_RECIPE_LINE_SET;
    *r = work;
    return HX_OK;
}

/* ---- validation ---------------------------------------------------------------------------- */

/* Where the value of k came from, as a message names it: "run.ini:7: [amplitude] mach = 5",
 * "--set amplitude.mach=5", or "run.ini: [spectrum] kmin = 1 (default)". */
static void describe(const hx_recipe *r, const key *k, char *buf, size_t n)
{
    char value[VALUE_MAX];
    int has = show_value(k, r, value, sizeof value), line = r->line[k - keys];
    if (line == HX_RECIPE_LINE_SET)
        snprintf(buf, n, "--set %s.%s=%.*s", k->section, k->name, SHOW_MAX, has ? value : "");
    else if (line > 0)
        snprintf(buf, n, "%s:%d: [%s] %s = %.*s", r->origin, line, k->section, k->name, SHOW_MAX, has ? value : "");
    else
        snprintf(buf, n, "%s%s[%s] %s%s%.*s%s", r->origin, r->origin[0] ? ": " : "", k->section, k->name,
                 has ? " = " : " ", SHOW_MAX, has ? value : "(not given)", has ? " (default)" : "");
}

/* Where k was set, short: "run.ini:7", "--set" or "default". */
static void origin_of(const hx_recipe *r, const key *k, char *buf, size_t n)
{
    int line = r->line[k - keys];
    if (line == HX_RECIPE_LINE_SET) snprintf(buf, n, "--set");
    else if (line > 0) snprintf(buf, n, "%s:%d", r->origin, line);
    else snprintf(buf, n, "default");
}

void hx_recipe_origin(const hx_recipe *r, const char *section, const char *name, char *buf, size_t n)
{
    const key *k = find_key(section, name);
    if (k) origin_of(r, k, buf, n);
    else snprintf(buf, n, "%s", r->origin);
}

static hx_status invalid(const hx_recipe *r, const char *section, const char *name, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

/* "<where the key came from>: why" (see describe). */
static hx_status invalid(const hx_recipe *r, const char *section, const char *name, const char *fmt, ...)
{
    const key *k = find_key(section, name);
    char where[HX_PATH_MAX / 8 + SHOW_MAX + 64] = "", why[700];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, sizeof why, fmt, ap);
    va_end(ap);
    if (k) describe(r, k, where, sizeof where);
    else snprintf(where, sizeof where, "%s%s[%s] %s", r->origin, r->origin[0] ? ": " : "", section, name);
    return hx_error_set(HX_ERR_ARG, "%s: %s", where, why);
}

/* At most one key of each group is given; both are named, each with its origin. */
static hx_status check_groups(const hx_recipe *r)
{
    for (int i = 0; i < NKEYS; i++) {
        if (!keys[i].group || !given(&keys[i], r)) continue;
        for (int j = i + 1; j < NKEYS; j++)
            if (keys[j].group == keys[i].group && given(&keys[j], r)) {
                char a[HX_PATH_MAX / 8 + SHOW_MAX + 64], b[sizeof a];
                describe(r, &keys[i], a, sizeof a);
                describe(r, &keys[j], b, sizeof b);
                return hx_error_set(HX_ERR_ARG, "%s and %s: only one of %s may be given", a, b,
                                    group_list(keys[i].group));
            }
    }
    return HX_OK;
}

double hx_recipe_kmax_limit(const hx_recipe *r)
{
    double lmax = fmax(r->box[0], fmax(r->box[1], r->box[2])), limit = INFINITY;
    for (int i = 0; i < 3; i++) /* the highest frequency below N/2: N/2 - 1 for even N, (N-1)/2 for odd */
        limit = fmin(limit, (double)((r->cells[i] - 1) / 2) * lmax / r->box[i]);
    return limit;
}

static hx_status check_grid(const hx_recipe *r)
{
    const int64_t *c = r->cells;
    if (c[0] == 0 && c[1] == 0 && c[2] == 0)
        return hx_error_set(HX_ERR_ARG, "%s%s[grid] cells is not given: it has no default; set it, e.g. cells = 256",
                            r->origin, r->origin[0] ? ": " : "");
    for (int i = 0; i < 3; i++)
        if (c[i] < 4 || c[i] > CELLS_MAX) return invalid(r, "grid", "cells", "%s", rule_of(find_key("grid", "cells")));
    for (int i = 0; i < 3; i++)
        if (!(r->box[i] > 0) || !isfinite(r->box[i])) return invalid(r, "grid", "box", "%s", rule_of(find_key("grid", "box")));
    if (hx_grid_check(c, r->box) != HX_OK) { /* a box too elongated for the grid: grid.c's limit, before the run */
        char why[512];
        snprintf(why, sizeof why, "%s", hx_error_message());
        return invalid(r, "grid", "box", "%s", why);
    }
    return HX_OK;
}

/* The whole of a regular file of at most HX_SPECTRUM_TABLE_MAX bytes (a device or a pipe
 * could be endless); NULL with errno set (EINVAL: not a regular file, EFBIG: too big). */
static char *read_file(const char *path, size_t *size)
{
    int fd = open(path, O_RDONLY | O_NONBLOCK); /* a FIFO must not block the open */
    if (fd < 0) return NULL;
    struct stat sb;
    FILE *fp = NULL;
    char *text = NULL;
    int saved = 0;
    if (fstat(fd, &sb) != 0) saved = errno;
    else if (!S_ISREG(sb.st_mode)) saved = EINVAL;
    else if (sb.st_size > HX_SPECTRUM_TABLE_MAX) saved = EFBIG;
    else if (!(fp = fdopen(fd, "rb")) || !(text = malloc((size_t)sb.st_size + 1))) saved = errno ? errno : ENOMEM;
    else if ((*size = fread(text, 1, (size_t)sb.st_size, fp)) != (size_t)sb.st_size || ferror(fp)) saved = EIO;
    if (fp) fclose(fp);
    else close(fd);
    if (saved) {
        free(text);
        errno = saved;
        return NULL;
    }
    text[*size] = '\0';
    return text;
}

/* A table is valid when the spectrum module can read it: one definition of a valid table. */
static hx_status check_table(const hx_recipe *r, const char *section, const hx_spectrum_spec *sp)
{
    if (!sp->table[0]) return invalid(r, section, "table", "shape = table needs a file of (k, E) rows");
    size_t len = 0;
    char *text = read_file(sp->table, &len);
    if (!text && errno == EFBIG)
        return invalid(r, section, "table", "the file is larger than a spectrum table may be (%d bytes)",
                       HX_SPECTRUM_TABLE_MAX);
    if (!text)
        return invalid(r, section, "table", "cannot read the file: %s",
                       errno == EINVAL ? "not a regular file" : strerror(errno));
    double *k = NULL, *e = NULL;
    int n = 0;
    hx_status st = hx_spectrum_parse_table_n(text, len, sp->table, &k, &e, &n);
    free(text);
    free(k);
    free(e);
    if (st != HX_OK) {
        char inner[800];
        snprintf(inner, sizeof inner, "%s", hx_error_message());
        if (st != HX_ERR_ARG) return hx_error_set(st, "%s", inner);
        return invalid(r, section, "table", "%s", inner);
    }
    return HX_OK;
}

static hx_status check_spectrum(hx_recipe *r, const char *section, hx_spectrum_spec *sp)
{
    char lim[32];
    double limit = hx_recipe_kmax_limit(r);
    int defaulted = isnan(sp->kmax);
    format_real(lim, sizeof lim, limit);
    if (sp->shape != HX_SHAPE_POWER && sp->shape != HX_SHAPE_BAND && sp->shape != HX_SHAPE_TABLE)
        return invalid(r, section, "shape", "must be one of power, band, table");
    if (!isfinite(sp->slope)) return invalid(r, section, "slope", "must be a finite number");
    if (!(sp->kmin > 0) || !isfinite(sp->kmin)) return invalid(r, section, "kmin", UNIT_RULE ", at most kmax");
    if (defaulted) sp->kmax = limit;
    if (!(sp->kmax <= limit * (1 + 1e-12)))
        return invalid(r, section, "kmax",
                       "must be at most %s, the largest wavenumber below Nyquist on every axis, "
                       "min over axes of (ceil(N_i/2) - 1) * max(L)/L_i for cells %" PRId64 " %" PRId64 " %" PRId64
                       " and box %g %g %g (leave kmax out to follow the grid)",
                       lim, r->cells[0], r->cells[1], r->cells[2], r->box[0], r->box[1], r->box[2]);
    if (sp->kmin > sp->kmax) {
        char km[32];
        format_real(km, sizeof km, sp->kmax);
        char from[HX_PATH_MAX / 8 + 32];
        origin_of(r, find_key(section, "kmax"), from, sizeof from);
        return invalid(r, section, "kmin", "must be at most kmax = %s (%s)", km,
                       defaulted ? "the default: the largest wavenumber below Nyquist" : from);
    }
    return sp->shape == HX_SHAPE_TABLE ? check_table(r, section, sp) : HX_OK;
}

static hx_status check_mix(hx_recipe *r)
{
    hx_mix_spec *m = &r->mix;
    int has_zeta = !isnan(m->zeta), has_fraction = !isnan(m->compressive_fraction); /* not both: check_groups */
    if (!has_zeta && !has_fraction) m->zeta = ZETA_DEFAULT;
    m->mode = has_fraction ? HX_MIX_FRACTION : HX_MIX_ZETA;
    if (!has_fraction && !(m->zeta >= 0 && m->zeta <= 1)) return invalid(r, "mix", "zeta", SHARE_RULE);
    if (has_fraction && !(m->compressive_fraction >= 0 && m->compressive_fraction <= 1))
        return invalid(r, "mix", "compressive_fraction", SHARE_RULE);
    if (m->exact == EXACT_UNSET) m->exact = has_fraction ? HX_EXACT_TOTAL : HX_EXACT_NONE;
    if (m->exact != HX_EXACT_NONE && m->exact != HX_EXACT_TOTAL && m->exact != HX_EXACT_SHELL)
        return invalid(r, "mix", "exact", "must be one of none, total, shell");
    return HX_OK;
}

/* Code units from [units], then every quantity given with a unit converted to code units. */
static hx_status check_units(hx_recipe *r)
{
    hx_code_units *u = &r->code;
    u->length = r->unit_length.value;
    u->velocity = r->unit_velocity.value;
    u->density = !isnan(r->unit_mass.value)      ? r->unit_mass.value / (u->length * u->length * u->length)
                 : !isnan(r->unit_density.value) ? r->unit_density.value
                                                 : 1.0;
    u->mass = u->density * u->length * u->length * u->length;
    u->time = u->length / u->velocity;
    u->G = HX_CGS_G * u->density * u->length * u->length / (u->velocity * u->velocity);
    u->magnetic = sqrt(4.0 * M_PI * u->density) * u->velocity;
    if (!(isfinite(u->density) && u->density > 0 && isfinite(u->mass) && u->mass > 0 && isfinite(u->G) && u->G > 0))
        return invalid(r, "units", "length", "the code units overflow double precision: choose units nearer the problem");
    for (int i = 0; i < NKEYS; i++) {
        const key *k = &keys[i];
        if (k->kind != K_QTY || !strcmp(k->section, "units")) continue;
        hx_quantity *q = (hx_quantity *)((char *)r + k->off);
        if (isnan(q->value) || !q->unit) continue;
        double per = k->qty == HX_QTY_LENGTH     ? u->length
                     : k->qty == HX_QTY_VELOCITY ? u->velocity
                     : k->qty == HX_QTY_DENSITY  ? u->density
                     : k->qty == HX_QTY_MASS     ? u->mass
                     : k->qty == HX_QTY_TIME     ? u->time
                     : k->qty == HX_QTY_MAGNETIC ? u->magnetic
                                                 : 1.0; /* temperature stays in K */
        q->value /= per;
        q->unit = 0;
        if (!isfinite(q->value)) return invalid(r, k->section, k->name, "out of range in code units");
    }
    u->sound_speed = hx_units_sound_speed(r->temperature.value, r->mu, r->gamma) / u->velocity;
    return HX_OK;
}

static const char *const amplitude_keys[] = {"vrms", "mach", "virial", "linewidth"};

static hx_status check_amplitude(hx_recipe *r)
{
    int given[4] = {!isnan(r->vrms), !isnan(r->mach), !isnan(r->virial), r->linewidth != 0}, n = 0, first = -1;
    for (int i = 0; i < 4; i++)
        if (given[i]) {
            if (n == 1)
                return invalid(r, "amplitude", amplitude_keys[i],
                               "give exactly one of vrms, mach, virial, linewidth (%s is given as well)",
                               amplitude_keys[first]);
            first = i, n++;
        }
    r->amplitude_by = n ? (hx_amplitude_by)first : HX_AMPLITUDE_VRMS;
    if (!n) r->vrms = 1.0;
    if (r->amplitude_by == HX_AMPLITUDE_VIRIAL && r->density_model == HX_DENSITY_NONE)
        return invalid(r, "amplitude", "virial", "the virial parameter needs a mass: set [density] model");
    return HX_OK;
}

/* zeta whose expected compressive share is f: (1-zeta)/zeta = sqrt(2 f / (1 - f)), the inverse
 * of f = (1-zeta)^2 / ((1-zeta)^2 + 2 zeta^2) (Federrath et al. 2010, A&A 512, A81). */
static double zeta_of_share(double f) { return sqrt(1.0 - f) / (sqrt(1.0 - f) + sqrt(2.0 * f)); }

static hx_status check_density(hx_recipe *r)
{
    hx_density_model m = r->density_model;
    int cloud = hx_recipe_has_cloud(r);
    if ((int)m < 0 || (int)m > HX_DENSITY_LOGNORMAL) return invalid(r, "density", "model", "unknown model");
    if ((m == HX_DENSITY_UNIFORM || m == HX_DENSITY_LOGNORMAL) && isnan(r->density_mean.value)) {
        r->density_mean.value = 1.0; /* with its text, as if written: the rendering reads back the same */
        snprintf(r->density_mean.text, sizeof r->density_mean.text, "1");
    }
    if (m == HX_DENSITY_SPHERE) {
        if (isnan(r->cloud_radius.value)) return invalid(r, "density", "radius", "a sphere needs its radius");
        if (isnan(r->density_mean.value) == isnan(r->cloud_mass.value))
            return invalid(r, "density", "mass", "a sphere needs exactly one of mean (its density) and mass");
    }
    if (m == HX_DENSITY_BONNOR_EBERT) {
        if (isnan(r->central_density.value) == isnan(r->cloud_mass.value))
            return invalid(r, "density", "central_density",
                           "a Bonnor-Ebert sphere needs exactly one of central_density and mass");
        if (!isnan(r->cloud_radius.value))
            return invalid(r, "density", "radius", "a Bonnor-Ebert sphere's radius follows from xi_max, "
                                                   "c_s and the central density: leave radius out");
        if (!isnan(r->xi_max) && r->xi_max > 1e4) return invalid(r, "density", "xi_max", "must be at most 1e4");
    }
    if (r->clumps && !cloud) return invalid(r, "density", "clumps", "clumps modulate a sphere or a Bonnor-Ebert cloud");
    if (m == HX_DENSITY_LOGNORMAL || r->clumps) {
        if (isnan(r->b)) r->b = 1.0 - (2.0 / 3.0) * (r->mix.mode == HX_MIX_ZETA ? r->mix.zeta
                                                                             : zeta_of_share(r->mix.compressive_fraction));
        if (isnan(r->sigma_s)) {
            double mach = r->amplitude_by == HX_AMPLITUDE_MACH ? r->mach
                          : r->amplitude_by == HX_AMPLITUDE_VRMS ? r->vrms / r->code.sound_speed
                                                                  : NAN;
            if (isnan(mach))
                return invalid(r, "density", "sigma_s",
                               "give sigma_s: it follows from the Mach number only when [amplitude] gives mach or vrms");
            r->sigma_s = sqrt(log(1.0 + r->b * r->b * mach * mach));
        }
    }
    if (r->window && !cloud) return invalid(r, "velocity", "window", "the window confines the turbulence to a cloud: "
                                                                     "set [density] model = sphere or bonnor-ebert");
    if (r->weight == HX_WEIGHT_MASS) {
        if (m == HX_DENSITY_NONE) return invalid(r, "mix", "weight", "mass weighting needs a density: set [density] model");
        if (r->window || r->remove_bulk == 1 || r->remove_rotation)
            return invalid(r, "mix", "weight", "weight = mass keeps the share of sqrt(rho) v exact; the window and the "
                                               "removal of bulk flow or rotation would change it: turn them off");
        r->remove_bulk = 0;
    }
    if (r->remove_bulk < 0) r->remove_bulk = m != HX_DENSITY_NONE && m != HX_DENSITY_UNIFORM;
    if (r->parts && (r->window || r->remove_bulk || r->remove_rotation || r->weight == HX_WEIGHT_MASS))
        return invalid(r, "output", "parts", "the parts are written only for a velocity the cloud does not shape: turn "
                                             "off window, remove_bulk, remove_rotation and weight = mass");
    return HX_OK;
}

static hx_status check_magnetic(hx_recipe *r)
{
    int given[3] = {!isnan(r->b_strength.value), !isnan(r->beta), !isnan(r->alfven_mach)}, n = 0;
    static const char *const names[3] = {"strength", "beta", "alfven_mach"};
    for (int i = 0; i < 3; i++)
        if (given[i] && n++)
            return invalid(r, "magnetic", names[i], "give one of strength, beta, alfven_mach for the uniform field");
    int random = (!isnan(r->random_ratio) && r->random_ratio > 0) || (!isnan(r->random_rms.value) && r->random_rms.value > 0);
    double d = sqrt(r->direction[0] * r->direction[0] + r->direction[1] * r->direction[1] + r->direction[2] * r->direction[2]);
    if (!(d > 0) || !isfinite(d)) return invalid(r, "magnetic", "direction", "must not be zero or NaN");
    if (fabs(d - 1.0) > 4 * DBL_EPSILON) /* a unit vector to round-off stays as it is: validation is idempotent */
        for (int a = 0; a < 3; a++) r->direction[a] /= d;
    r->magnetic_by = given[0] ? HX_MAGNETIC_STRENGTH : given[1] ? HX_MAGNETIC_BETA : given[2] ? HX_MAGNETIC_ALFVEN
                     : random ? HX_MAGNETIC_RANDOM_ONLY : HX_MAGNETIC_NONE;
    if (!isnan(r->random_ratio) && r->random_ratio > 0 && (r->magnetic_by == HX_MAGNETIC_RANDOM_ONLY))
        return invalid(r, "magnetic", "random_ratio", "a ratio to |B0| needs a uniform field: give strength, beta or "
                                                      "alfven_mach, or the random part's own random_rms");
    if (random) {
        if ((int)r->magnetic_spectrum.shape < 0)
            return invalid(r, "magnetic_spectrum", "shape",
                           "a random magnetic part needs its spectrum: set [magnetic_spectrum] shape (and slope, kmin, kmax)");
        hx_status st = check_spectrum(r, "magnetic_spectrum", &r->magnetic_spectrum);
        if (st != HX_OK) return st;
    }
    return HX_OK;
}

int hx_recipe_has_magnetic(const hx_recipe *r) { return r->magnetic_by != HX_MAGNETIC_NONE; }

static hx_status check_rest(hx_recipe *r)
{
    if (r->amplitudes != HX_AMP_GAUSSIAN && r->amplitudes != HX_AMP_FIXED)
        return invalid(r, "random", "amplitudes", "must be one of gaussian, fixed");
    if (r->flip != 0 && r->flip != 1) return invalid(r, "random", "flip", "must be true or false");
    if (!memchr(r->file, '\0', sizeof r->file) || !r->file[0])
        return invalid(r, "output", "file", "must name the output file");
    if (r->precision != HX_PREC_SINGLE && r->precision != HX_PREC_DOUBLE)
        return invalid(r, "output", "precision", "must be one of single, double");
    if (r->compute == HX_COMPUTE_AUTO) r->compute = (int)r->precision;
    if (r->compute == HX_PREC_SINGLE && r->precision == HX_PREC_DOUBLE)
        return invalid(r, "output", "compute", "single cannot fill a double-precision file with more than single-precision "
                                               "values: set compute = double (or auto), or precision = single");
    return HX_OK;
}

hx_status hx_recipe_validate(hx_recipe *r)
{
    hx_recipe work = *r; /* r changes only on success */
    hx_status st = check_grid(&work);
    if (st == HX_OK) st = check_groups(&work);
    if (st == HX_OK) st = check_units(&work);
    if (st == HX_OK) st = check_spectrum(&work, "spectrum", &work.spectrum);
    if (st == HX_OK && (work.density_model == HX_DENSITY_LOGNORMAL || work.clumps))
        st = check_spectrum(&work, "density_spectrum", &work.density_spectrum);
    if (st == HX_OK) st = check_mix(&work);
    if (st == HX_OK) st = check_amplitude(&work);
    if (st == HX_OK) st = check_density(&work);
    if (st == HX_OK) st = check_magnetic(&work);
    if (st == HX_OK) st = check_rest(&work);
    if (st == HX_OK) *r = work;
    return st;
}

int hx_recipe_has_cloud(const hx_recipe *r)
{
    return r->density_model == HX_DENSITY_SPHERE || r->density_model == HX_DENSITY_BONNOR_EBERT;
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
        if (show_value(&keys[i], r, value, sizeof value)) fprintf(out, "%s = %s\n", keys[i].name, value);
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
          "# \"key = value\" sets a key, once per recipe; each [section] appears once. Lines starting with\n"
          "# '#' or ';' are comments, and a '#' or ';' after a blank starts one, so a value (a path) may hold\n"
          "# '#' or ';' only inside a word: \"file = run#3.h5\" keeps its '#', \"file = run #3.h5\" is \"run\".\n"
          "# Give one key of each set of alternatives (zeta or compressive_fraction, ...); --set section.key=value\n"
          "# on the command line replaces the file's value, and the alternative the file gave.\n"
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

static const char *name_of(const char *const *names, int i)
{
    return i >= 0 && i < count_names(names) ? names[i] : "unknown";
}

const char *hx_shape_name(hx_shape s) { return name_of(shape_names, (int)s); }
const char *hx_exact_name(hx_exact e) { return name_of(exact_names, (int)e); }
const char *hx_density_model_name(hx_density_model m) { return name_of(model_names, (int)m); }
const char *hx_amplitude_by_name(hx_amplitude_by a) { return name_of(by_names, (int)a); }
