/* units.c — the table of unit symbols and the parser of "NUMBER [UNIT]" recipe values.
 * Dimensions are exponents of (length, mass, time, temperature) stored doubled, so that the
 * gauss (g^1/2 cm^-1/2 s^-1) is integral; a value is accepted only if its dimensions equal the
 * kind the caller asked for. The only state is the per-thread buffer of the last message. */
#include "helmix/units.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

enum { NDIM = 4 }; /* length, mass, time, temperature */
typedef struct { int d[NDIM]; } dims; /* doubled exponents */

typedef struct {
    const char *sym;
    double cgs; /* value of one unit in cgs */
    dims dim;
} unit;

#define LEN {{2, 0, 0, 0}}
#define MAS {{0, 2, 0, 0}}
#define TIM {{0, 0, 2, 0}}
#define TMP {{0, 0, 0, 2}}
#define MAG {{-1, 1, -2, 0}} /* gauss^2 = erg/cm^3 = g cm^-1 s^-2 */

static const unit units[] = {
    {"cm", 1.0, LEN},          {"m", 1e2, LEN},
    {"km", 1e5, LEN},          {"au", HX_CGS_AU, LEN},
    {"pc", HX_CGS_PC, LEN},    {"kpc", 1e3 * HX_CGS_PC, LEN},
    {"Mpc", 1e6 * HX_CGS_PC, LEN}, {"Rsun", HX_CGS_RSUN, LEN},
    {"g", 1.0, MAS},           {"kg", 1e3, MAS},
    {"Msun", HX_CGS_MSUN, MAS},
    {"s", 1.0, TIM},           {"yr", HX_CGS_YR, TIM},
    {"kyr", HX_CGS_KYR, TIM},  {"Myr", HX_CGS_MYR, TIM},
    {"K", 1.0, TMP},
    {"G", 1.0, MAG},           {"gauss", 1.0, MAG},
    {"mG", 1e-3, MAG},
    {"uG", 1e-6, MAG},         {"muG", 1e-6, MAG},
    {"microgauss", 1e-6, MAG}, {"nG", 1e-9, MAG},
};
#define NUNITS ((int)(sizeof units / sizeof units[0]))

/* Dimensions of each kind, indexed by hx_qty. */
static const dims kind_dims[] = {
    [HX_QTY_NONE] = {{0, 0, 0, 0}},    [HX_QTY_LENGTH] = LEN,
    [HX_QTY_MASS] = MAS,               [HX_QTY_TIME] = TIM,
    [HX_QTY_VELOCITY] = {{2, 0, -2, 0}}, [HX_QTY_DENSITY] = {{-6, 2, 0, 0}},
    [HX_QTY_TEMPERATURE] = TMP,        [HX_QTY_MAGNETIC] = MAG,
};
#define NKINDS ((int)(sizeof kind_dims / sizeof kind_dims[0]))

static _Thread_local char msg[320];

/* printf into the per-thread message buffer and return it. */
static const char *say(const char *fmt, ...) __attribute__((format(printf, 1, 2)));
static const char *say(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    return msg;
}

static int valid_kind(hx_qty kind) { return (int)kind >= 0 && (int)kind < NKINDS; }

const char *hx_units_kind_name(hx_qty kind)
{
    switch (kind) {
    case HX_QTY_NONE: return "number";
    case HX_QTY_LENGTH: return "length";
    case HX_QTY_MASS: return "mass";
    case HX_QTY_TIME: return "time";
    case HX_QTY_VELOCITY: return "velocity";
    case HX_QTY_DENSITY: return "density";
    case HX_QTY_TEMPERATURE: return "temperature";
    case HX_QTY_MAGNETIC: return "magnetic field";
    }
    return "unknown kind";
}

const char *hx_units_examples(hx_qty kind)
{
    switch (kind) {
    case HX_QTY_NONE: return "";
    case HX_QTY_LENGTH: return "pc, au, km, m, cm, kpc, Mpc, Rsun";
    case HX_QTY_MASS: return "Msun, g, kg";
    case HX_QTY_TIME: return "Myr, kyr, yr, s";
    case HX_QTY_VELOCITY: return "km/s, m/s, cm/s, pc/Myr";
    case HX_QTY_DENSITY: return "g/cm^3, g cm^-3, kg/m^3, Msun/pc^3";
    case HX_QTY_TEMPERATURE: return "K";
    case HX_QTY_MAGNETIC: return "uG, muG, microgauss, mG, nG, G, gauss";
    }
    return "";
}

/* "must be ..." — what a value of this kind may look like; ends every parse error. */
static const char *allowed(hx_qty kind, char *buf, size_t n)
{
    if (kind == HX_QTY_NONE) snprintf(buf, n, "must be a plain number");
    else snprintf(buf, n, "must be a number with an optional %s unit (%s)",
                  hx_units_kind_name(kind), hx_units_examples(kind));
    return buf;
}

static int same_dims(dims a, dims b) { return memcmp(a.d, b.d, sizeof a.d) == 0; }

/* "is a velocity" or "is dimensionless" for a known kind, else "has dimensions length^2
 * mass^-1/2" spelled out from the doubled exponents. */
static const char *describe(dims x, char *buf, size_t n)
{
    for (int k = 0; k < NKINDS; k++)
        if (same_dims(x, kind_dims[k])) {
            if (k == HX_QTY_NONE) snprintf(buf, n, "is dimensionless");
            else snprintf(buf, n, "is a %s", hx_units_kind_name((hx_qty)k));
            return buf;
        }
    static const char *names[NDIM] = {"length", "mass", "time", "temperature"};
    int used = snprintf(buf, n, "has dimensions");
    for (int i = 0; i < NDIM && used >= 0 && (size_t)used < n; i++) {
        int e = x.d[i], w = 0;
        if (e == 0) continue;
        if (e == 2) w = snprintf(buf + used, n - (size_t)used, " %s", names[i]);
        else if (e % 2 == 0) w = snprintf(buf + used, n - (size_t)used, " %s^%d", names[i], e / 2);
        else w = snprintf(buf + used, n - (size_t)used, " %s^%d/2", names[i], e);
        used = w < 0 ? -1 : used + w;
    }
    return buf;
}

/* Length of the decimal number at p: [+-] digits [. digits] [(e|E) [+-] digits], with at least
 * one mantissa digit; 0 if there is none. Scanned by hand because strtod also takes "nan",
 * "inf" and hex, which a recipe must not. An 'e' not followed by digits is not consumed. */
static size_t scan_number(const char *p)
{
    size_t i = 0, digits = 0;
    if (p[i] == '+' || p[i] == '-') i++;
    while (isdigit((unsigned char)p[i])) i++, digits++;
    if (p[i] == '.') {
        i++;
        while (isdigit((unsigned char)p[i])) i++, digits++;
    }
    if (!digits) return 0;
    if (p[i] == 'e' || p[i] == 'E') {
        size_t j = i + 1;
        if (p[j] == '+' || p[j] == '-') j++;
        if (isdigit((unsigned char)p[j])) {
            while (isdigit((unsigned char)p[j])) j++;
            i = j;
        }
    }
    return i;
}

static const unit *lookup(const char *sym, size_t len)
{
    for (int u = 0; u < NUNITS; u++)
        if (strlen(units[u].sym) == len && strncmp(units[u].sym, sym, len) == 0) return &units[u];
    return NULL;
}

/* The error for an unknown symbol, with a hint when only the letter case is wrong. */
static const char *unknown(const char *sym, size_t len, hx_qty kind)
{
    char rule[160];
    for (int u = 0; u < NUNITS; u++)
        if (strlen(units[u].sym) == len && strncasecmp(units[u].sym, sym, len) == 0)
            return say("unknown unit '%.*s' (units are case-sensitive: did you mean %s?); %s",
                       (int)len, sym, units[u].sym, allowed(kind, rule, sizeof rule));
    return say("unknown unit '%.*s'; %s", (int)(len > 40 ? 40 : len), sym,
               allowed(kind, rule, sizeof rule));
}

static const char *skip_blanks(const char *p)
{
    while (*p == ' ' || *p == '\t' || *p == '\r' || *p == '\n') p++;
    return p;
}

/* Parse the unit at p (after the number, blanks skipped, not empty): multiply *scale by its
 * cgs value and add its dimensions to *dim. Returns NULL or the error text. */
static const char *parse_unit(const char *p, hx_qty kind, double *scale, dims *dim)
{
    char rule[160];
    int sign = +1; /* -1 after '/', for the next symbol only */
    for (;;) {
        const char *sym = p;
        while (isalpha((unsigned char)*p)) p++;
        size_t len = (size_t)(p - sym);
        if (len == 0) /* a leading '/' or '*', or two operators in a row */
            return say("unexpected '%.20s' where a unit symbol should be; %s", sym,
                       allowed(kind, rule, sizeof rule));
        const unit *u = lookup(sym, len);
        if (!u) return unknown(sym, len, kind);
        int power = 1;
        if (*p == '^' || (p[0] == '*' && p[1] == '*')) {
            p += *p == '^' ? 1 : 2;
            int neg = *p == '-';
            if (*p == '-' || *p == '+') p++;
            /* one or two digits: larger powers are no physical unit and could overflow */
            int ndig = 0;
            while (isdigit((unsigned char)p[ndig])) ndig++;
            if (ndig == 0 || ndig > 2 || (power = atoi(p)) == 0)
                return say("the power of %.*s must be a nonzero integer of at most two digits, "
                           "as in %.*s^3 or %.*s**-3", (int)len, sym, (int)len, sym, (int)len, sym);
            p += ndig;
            if (neg) power = -power;
        } else if (*p == '-' || isdigit((unsigned char)*p)) {
            /* "cm-3" is common in papers but ambiguous in a parser; ask for the explicit form */
            int k = *p == '-';
            while (isdigit((unsigned char)p[k])) k++;
            return say("write powers as %.*s^%.*s or %.*s**%.*s", (int)len, sym, k, p, (int)len, sym, k, p);
        }
        power *= sign;
        *scale *= pow(u->cgs, power);
        for (int i = 0; i < NDIM; i++) dim->d[i] += power * u->dim.d[i];

        /* Separator: blanks, '*', or '/', each followed by the next symbol; or the end. */
        const char *q = skip_blanks(p);
        if (*q == '\0') return NULL;
        sign = +1;
        if (*q == '/') sign = -1, q++;
        else if (*q == '*' && q[1] != '*') q++;
        else if (q == p) /* no blank either: "pc," or "pc^3g" */
            return say("unexpected '%.20s' after the unit %.*s; %s", p, (int)len, sym,
                       allowed(kind, rule, sizeof rule));
        p = skip_blanks(q);
        if (*p == '\0') return say("'%c' must be followed by a unit; %s", sign < 0 ? '/' : '*',
                                   allowed(kind, rule, sizeof rule));
    }
}

const char *hx_units_quantity(const char *text, hx_qty kind, double *value, int *has_unit)
{
    char rule[160];
    if (!valid_kind(kind)) return "internal error: unknown quantity kind";
    const char *p = skip_blanks(text ? text : "");
    if (*p == '\0') return say("is empty; %s", allowed(kind, rule, sizeof rule));

    size_t len = scan_number(p);
    if (len == 0) {
        char *end;
        double x = strtod(p, &end);
        if (end != p && !isfinite(x)) /* "nan", "inf": strtod reads them, a recipe may not */
            return say("'%.*s' is not a finite number; %s", (int)(end - p), p,
                       allowed(kind, rule, sizeof rule));
        return say("'%.40s' does not start with a number; %s", p, allowed(kind, rule, sizeof rule));
    }
    char num[64];
    if (len >= sizeof num) return say("the number '%.40s...' is too long", p);
    memcpy(num, p, len);
    num[len] = '\0';
    errno = 0;
    double x = strtod(num, NULL);
    if (errno == ERANGE || !isfinite(x))
        return say("%s is out of the range of a double (about 1e-308 to 1e308)", num);

    const char *u = skip_blanks(p + len);
    if (*u == '\0') {
        *value = x;
        *has_unit = 0;
        return NULL;
    }
    if (p[len] == 'x' || p[len] == 'X' || p[len] == '.' || isdigit((unsigned char)*u))
        return say("'%.40s' is not a number; %s", p, allowed(kind, rule, sizeof rule));

    double scale = 1.0;
    dims d = {{0, 0, 0, 0}};
    const char *err = parse_unit(u, kind, &scale, &d);
    if (err) return err;

    /* Trailing blanks are not part of the unit's name in messages. */
    int ulen = (int)strlen(u);
    while (ulen > 0 && isspace((unsigned char)u[ulen - 1])) ulen--;
    if (!same_dims(d, kind_dims[kind])) {
        char what[96];
        describe(d, what, sizeof what);
        if (kind == HX_QTY_NONE) return say("%.*s %s, this key wants a plain number", ulen, u, what);
        return say("%.*s %s, this key wants a %s (%s)", ulen, u, what, hx_units_kind_name(kind),
                   hx_units_examples(kind));
    }
    double v = x * scale;
    if (!isfinite(v) || (v == 0 && x != 0))
        return say("%s %.*s is out of the range of a double once converted to cgs", num, ulen, u);
    *value = v;
    *has_unit = 1;
    return NULL;
}

void hx_units_format(char *buf, size_t n, double cgs, hx_qty kind)
{
    if (!buf || n == 0) return;
    double a = fabs(cgs);
    const char *sym = "";
    double per = 1.0; /* cgs value of one sym */
    /* The unit a star-formation paper would use at that size; "a >= x" is false for NaN, which
     * then falls through to the last (smallest) unit. */
    switch (kind) {
    case HX_QTY_LENGTH:
        if (a >= 1e6 * HX_CGS_PC) sym = "Mpc", per = 1e6 * HX_CGS_PC;
        else if (a >= 1e3 * HX_CGS_PC) sym = "kpc", per = 1e3 * HX_CGS_PC;
        else if (a >= 1e-2 * HX_CGS_PC || a == 0) sym = "pc", per = HX_CGS_PC;
        else if (a >= 0.1 * HX_CGS_AU) sym = "au", per = HX_CGS_AU;
        else if (a >= 1e5) sym = "km", per = 1e5;
        else sym = "cm";
        break;
    case HX_QTY_MASS:
        if (a >= 1e-3 * HX_CGS_MSUN || a == 0) sym = "Msun", per = HX_CGS_MSUN;
        else sym = "g";
        break;
    case HX_QTY_TIME:
        if (a >= HX_CGS_MYR || a == 0) sym = "Myr", per = HX_CGS_MYR;
        else if (a >= HX_CGS_KYR) sym = "kyr", per = HX_CGS_KYR;
        else if (a >= HX_CGS_YR) sym = "yr", per = HX_CGS_YR;
        else sym = "s";
        break;
    case HX_QTY_VELOCITY:
        if (a >= 1e3 || a == 0) sym = "km/s", per = 1e5;
        else sym = "cm/s";
        break;
    case HX_QTY_DENSITY: sym = "g/cm^3"; break;
    case HX_QTY_TEMPERATURE: sym = "K"; break;
    case HX_QTY_MAGNETIC:
        if (a >= 1.0) sym = "G";
        else if (a >= 1e-3) sym = "mG", per = 1e-3;
        else if (a >= 1e-8 || a == 0) sym = "uG", per = 1e-6;
        else sym = "nG", per = 1e-9;
        break;
    case HX_QTY_NONE: break;
    }
    snprintf(buf, n, "%.4g%s%s", cgs / per, *sym ? " " : "", sym);
}

double hx_units_sound_speed(double temperature_K, double mu, double gamma)
{
    if (!(temperature_K >= 0 && mu > 0 && gamma > 0)) return NAN;
    return sqrt(gamma * HX_CGS_KB * temperature_K / (mu * HX_CGS_MH));
}

double hx_units_virial(double sigma_1d, double radius, double mass)
{
    if (!(mass > 0)) return NAN;
    return 5.0 * sigma_1d * sigma_1d * radius / (HX_CGS_G * mass);
}
