/* test_units.c — physical constants against their published values, derived numbers worked by
 * hand (sound speed, virial parameter, parsec, solar mass), the unit parser on every recipe
 * example and on malformed input, and formatting that reads back.
 * With --dump it only prints "name value" lines for tests/py/test_units_constants.py. */
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "helmix/units.h"
#include "hx_test.h"

/* |a - b| <= rel |b| */
#define CHECK_REL(a, b, rel) CHECK_CLOSE((a), (b), (rel) * fabs((double)(b)))

/* Parse text as kind; NAN if the parser refused it or found no unit. */
static double parse(const char *text, hx_qty kind)
{
    double v = NAN;
    int has = -1;
    const char *err = hx_units_quantity(text, kind, &v, &has);
    if (err || has != 1) {
        fprintf(stderr, "  '%s' as %s: %s\n", text, hx_units_kind_name(kind), err ? err : "no unit");
        return NAN;
    }
    return v;
}

static int dump(void)
{
    double pc = NAN, msun = NAN;
    int has = 0;
    hx_units_quantity("1 pc", HX_QTY_LENGTH, &pc, &has);
    hx_units_quantity("1 Msun", HX_QTY_MASS, &msun, &has);
#define D(name, value) printf("%s %.17g\n", name, (double)(value))
    D("G", HX_CGS_G);
    D("k_B", HX_CGS_KB);
    D("c", HX_CGS_C);
    D("u", HX_CGS_U);
    D("m_p", HX_CGS_MP);
    D("m_H", HX_CGS_MH);
    D("au", HX_CGS_AU);
    D("pc", HX_CGS_PC);
    D("GM_sun", HX_CGS_GM_SUN);
    D("R_sun", HX_CGS_RSUN);
    D("L_sun", HX_CGS_LSUN);
    D("M_sun", HX_CGS_MSUN);
    D("yr", HX_CGS_YR);
    D("Myr", HX_CGS_MYR);
    D("parsed_1_pc", pc);
    D("parsed_1_Msun", msun);
    D("sound_speed_10K_mu2.33", hx_units_sound_speed(10.0, 2.33, 1.0));
#undef D
    return 0;
}

static void test_constants(void)
{
    /* CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010) */
    CHECK(HX_CGS_G == 6.67430e-8);
    CHECK(HX_CGS_KB == 1.380649e-16);
    CHECK(HX_CGS_C == 2.99792458e10);
    CHECK(HX_CGS_U == 1.66053906660e-24);
    CHECK(HX_CGS_MP == 1.67262192369e-24);
    /* m_H = 1.00782503223 u (Wang et al. 2021, Chinese Phys. C 45, 030003) = 1.6735328e-24 g */
    CHECK_REL(HX_CGS_MH, 1.6735328e-24, 5e-8);
    /* IAU 2012 Resolution B2: au = 149 597 870 700 m exactly */
    CHECK(HX_CGS_AU == 1.495978707e13);
    /* IAU 2015 Resolution B2: pc = (648000/pi) au = 3.085677581491367279e18 cm, whose nearest
     * double is 3.0856775814913674e18 (worked with 40-digit arithmetic) */
    CHECK(HX_CGS_PC == 3.0856775814913674e18);
    /* IAU 2015 Resolution B3 nominal solar values; M_sun = (GM)_sun / G = 1.98841e33 g */
    CHECK(HX_CGS_GM_SUN == 1.3271244e26);
    CHECK(HX_CGS_RSUN == 6.957e10);
    CHECK(HX_CGS_LSUN == 3.828e33);
    CHECK_REL(HX_CGS_MSUN, 1.98841e33, 5e-6);
    /* Julian year, 365.25 d x 86400 s = 31 557 600 s (IAU common practice) */
    CHECK(HX_CGS_YR == 31557600.0);
    CHECK(HX_CGS_MYR == 3.15576e13);
}

static void test_physics(void)
{
    /* c_s = sqrt(k_B T / (mu m_H)) with CODATA 2018 k_B and m_H above (from the definition; the
     * textbook round value for molecular cloud gas at 10 K is 0.19 km/s):
     * 1.380649e-16 x 10 / (2.33 x 1.6735328e-24) = 3.54075e8 cm^2/s^2 -> 0.18817 km/s;
     * with mu = 2.37: 3.48099e8 -> 0.18657 km/s. */
    CHECK_REL(hx_units_sound_speed(10.0, 2.33, 1.0), 0.18817e5, 5e-5);
    CHECK_REL(hx_units_sound_speed(10.0, 2.37, 1.0), 0.18657e5, 5e-5);
    /* adiabatic: sqrt(gamma) times the isothermal value (definition) */
    CHECK_REL(hx_units_sound_speed(10.0, 2.33, 5.0 / 3.0), 0.18817e5 * sqrt(5.0 / 3.0), 5e-5);
    CHECK(isnan(hx_units_sound_speed(10.0, 0.0, 1.0)) && isnan(hx_units_sound_speed(-1.0, 2.33, 1.0)));
    /* alpha = 5 sigma^2 R / (G M) (Bertoldi & McKee 1992, ApJ 395, 140) with sigma = 1e5 cm/s,
     * R = 3.0856776e18 cm, M = 1.98841e36 g: 1.5428388e29 / 1.3271244e29 = 1.16254 */
    CHECK_REL(hx_units_virial(1e5, HX_CGS_PC, 1000 * HX_CGS_MSUN), 1.16254, 5e-6);
    CHECK(isnan(hx_units_virial(1e5, HX_CGS_PC, 0.0)));
}

static void test_examples(void)
{
    /* every recipe example of the units specification, converted by hand */
    CHECK_REL(parse("2.5 pc", HX_QTY_LENGTH), 7.7141939537284185e18, 1e-15); /* 2.5 x pc */
    CHECK_REL(parse("1e-20 g/cm^3", HX_QTY_DENSITY), 1e-20, 1e-15);
    CHECK_REL(parse("1e-20 g cm^-3", HX_QTY_DENSITY), 1e-20, 1e-15);
    CHECK_REL(parse("1e-20 g*cm**-3", HX_QTY_DENSITY), 1e-20, 1e-15);
    CHECK_REL(parse("1e-20 g / cm**3", HX_QTY_DENSITY), 1e-20, 1e-15);
    CHECK_REL(parse("1.1 km/s", HX_QTY_VELOCITY), 1.1e5, 1e-15);         /* 1 km = 1e5 cm */
    CHECK_REL(parse("1.1 km s^-1", HX_QTY_VELOCITY), 1.1e5, 1e-15);
    CHECK_REL(parse("1000 Msun", HX_QTY_MASS), 1.98841e36, 5e-6);         /* 1000 x 1.98841e33 */
    CHECK_REL(parse("10 K", HX_QTY_TEMPERATURE), 10.0, 1e-15);
    CHECK_REL(parse("10 uG", HX_QTY_MAGNETIC), 1e-5, 1e-15);              /* 10 x 1e-6 G */
    CHECK_REL(parse("10 muG", HX_QTY_MAGNETIC), 1e-5, 1e-15);
    CHECK_REL(parse("3 microgauss", HX_QTY_MAGNETIC), 3e-6, 1e-15);
    CHECK_REL(parse("2 mG", HX_QTY_MAGNETIC), 2e-3, 1e-15);
    CHECK_REL(parse("5 nG", HX_QTY_MAGNETIC), 5e-9, 1e-15);
    CHECK_REL(parse("1 G", HX_QTY_MAGNETIC), 1.0, 1e-15);
    /* 5 x 1e6 x 365.25 x 86400 s = 1.57788e14 s */
    CHECK_REL(parse("5 Myr", HX_QTY_TIME), 1.57788e14, 1e-15);
    CHECK_REL(parse("3 kyr", HX_QTY_TIME), 9.46728e10, 1e-15);            /* 3e3 x 31557600 */
    CHECK_REL(parse("2e4 au", HX_QTY_LENGTH), 2.991957414e17, 1e-15);     /* 2e4 x 1.495978707e13 */
    /* 1.98841e33 g / (3.0856776e18 cm)^3 = 1.98841e33 / 2.9379990e55 = 6.76790e-23 g/cm^3 */
    CHECK_REL(parse("1 Msun/pc^3", HX_QTY_DENSITY), 6.76790e-23, 5e-6);
    CHECK_REL(parse("1 cm/s", HX_QTY_VELOCITY), 1.0, 1e-15);
    CHECK_REL(parse("3 kpc", HX_QTY_LENGTH), 3e3 * 3.0856775814913674e18, 1e-15);
    CHECK_REL(parse("2 Mpc", HX_QTY_LENGTH), 2e6 * 3.0856775814913674e18, 1e-15);
    CHECK_REL(parse("2 Rsun", HX_QTY_LENGTH), 1.3914e11, 1e-15);          /* 2 x 6.957e10 */
    CHECK_REL(parse("3 m", HX_QTY_LENGTH), 300.0, 1e-15);
    CHECK_REL(parse("2 kg/m^3", HX_QTY_DENSITY), 2e-3, 1e-15);            /* 2e3 g / 1e6 cm^3 */
    /* 1 pc/Myr = 3.0856776e18 cm / 3.15576e13 s = 97779.2 cm/s (0.978 km/s, common practice) */
    CHECK_REL(parse("1 pc/Myr", HX_QTY_VELOCITY), 97779.22, 1e-6);
    CHECK_REL(parse("  2.5pc \t", HX_QTY_LENGTH), 7.7141939537284185e18, 1e-15); /* blanks optional */
    CHECK_REL(parse("-4 K", HX_QTY_TEMPERATURE), -4.0, 1e-15); /* the range is the caller's rule */

    /* a bare number: no unit, the number itself, whatever the kind */
    double v = 0;
    int has = -1;
    CHECK(hx_units_quantity(" 3.5 ", HX_QTY_LENGTH, &v, &has) == NULL && has == 0 && v == 3.5);
    CHECK(hx_units_quantity("1e-3", HX_QTY_NONE, &v, &has) == NULL && has == 0 && v == 1e-3);
    /* a unit whose dimensions cancel is a plain number: 1 km / 1 m = 1000 */
    CHECK(hx_units_quantity("1 km/m", HX_QTY_NONE, &v, &has) == NULL && has == 1 && v == 1000.0);
}

static void test_errors(void)
{
    static const struct {
        const char *text;
        hx_qty kind;
        const char *says; /* a piece the message must contain */
    } bad[] = {
        {"", HX_QTY_LENGTH, "empty"},
        {"   ", HX_QTY_LENGTH, "pc, au, km, m, cm, kpc, Mpc, Rsun"},
        {"pc", HX_QTY_LENGTH, "does not start with a number"},
        {"1 parsek", HX_QTY_LENGTH, "unknown unit 'parsek'"},
        {"1 msun", HX_QTY_MASS, "did you mean Msun"},
        {"1 km/s", HX_QTY_LENGTH, "km/s is a velocity, this key wants a length"},
        {"1 pc pc", HX_QTY_LENGTH, "has dimensions length^2"},
        {"1 g", HX_QTY_MAGNETIC, "g is a mass, this key wants a magnetic field"},
        {"1 G", HX_QTY_MASS, "G is a magnetic field"},
        {"1 K", HX_QTY_NONE, "plain number"},
        {"1 g/cm", HX_QTY_DENSITY, "has dimensions length^-1 mass"},
        {"1e400 pc", HX_QTY_LENGTH, "out of the range"},
        {"1e-400 pc", HX_QTY_LENGTH, "out of the range"},
        {"1e300 Msun/cm^3", HX_QTY_DENSITY, "once converted"}, /* 2e333 g/cm^3 */
        {"1e300 Mpc", HX_QTY_LENGTH, "once converted"},
        {"nan pc", HX_QTY_LENGTH, "not a finite number"},
        {"inf", HX_QTY_LENGTH, "not a finite number"},
        {"0x10 pc", HX_QTY_LENGTH, "not a number"},
        {"1..2 pc", HX_QTY_LENGTH, "not a number"},
        {"1 2 pc", HX_QTY_LENGTH, "not a number"},
        {"1 km/", HX_QTY_VELOCITY, "'/' must be followed by a unit"},
        {"1 km s^-", HX_QTY_VELOCITY, "power of s must be a nonzero integer"},
        {"2 pc^x", HX_QTY_LENGTH, "power of pc"},
        {"2 pc^0", HX_QTY_LENGTH, "nonzero"},
        {"2 pc^100", HX_QTY_LENGTH, "at most two digits"},
        {"1e-20 g cm-3", HX_QTY_DENSITY, "write powers as cm^-3"},
        {"1 pc,", HX_QTY_LENGTH, "unexpected ','"},
        {"1 pc # radius", HX_QTY_LENGTH, "unexpected '#"},
        {"1 km//s", HX_QTY_VELOCITY, "unexpected '/s'"},
        {"1 /s", HX_QTY_VELOCITY, "unexpected '/s'"},
        {"--1 pc", HX_QTY_LENGTH, "does not start with a number"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        double v = 12345.0;
        int has = 7;
        const char *err = hx_units_quantity(bad[i].text, bad[i].kind, &v, &has);
        CHECK_STR_CONTAINS(err, bad[i].says);
        CHECK(v == 12345.0 && has == 7); /* outputs untouched on error */
        CHECK(!err || !strchr(err, '\n')); /* messages are one line */
    }
    /* every error ends by saying what is allowed, where the kind has units to offer */
    CHECK_STR_CONTAINS(hx_units_quantity("1 parsek", HX_QTY_LENGTH, &(double){0}, &(int){0}),
                       "must be a number with an optional length unit (pc, au");
    CHECK(hx_units_quantity("1 pc", (hx_qty)99, &(double){0}, &(int){0}) != NULL);
}

/* hx_units_examples promises spellings the parser accepts: each one, as "1 <example>", must
 * parse as its own kind (common practice: help text and parser must not drift apart). */
static void test_kinds(void)
{
    const hx_qty kinds[] = {HX_QTY_LENGTH, HX_QTY_MASS, HX_QTY_TIME, HX_QTY_VELOCITY,
                            HX_QTY_DENSITY, HX_QTY_TEMPERATURE, HX_QTY_MAGNETIC};
    int n = 0;
    for (size_t k = 0; k < sizeof kinds / sizeof kinds[0]; k++) {
        char list[256], text[64];
        snprintf(list, sizeof list, "%s", hx_units_examples(kinds[k]));
        CHECK(list[0] != '\0');
        for (char *tok = strtok(list, ","); tok; tok = strtok(NULL, ",")) {
            snprintf(text, sizeof text, "1 %s", tok + (*tok == ' '));
            CHECK(parse(text, kinds[k]) > 0);
            n++;
        }
    }
    CHECK(n >= 30);
    CHECK(strcmp(hx_units_kind_name(HX_QTY_MAGNETIC), "magnetic field") == 0);
    CHECK(strcmp(hx_units_kind_name(HX_QTY_DENSITY), "density") == 0);
}

/* The readable rendering: the unit an astronomer would pick, and text that parses back. */
static void test_format(void)
{
    static const struct {
        double cgs;
        hx_qty kind;
        const char *want;
    } cases[] = {
        {2.5 * HX_CGS_PC, HX_QTY_LENGTH, "2.5 pc"},
        {200 * HX_CGS_AU, HX_QTY_LENGTH, "200 au"},
        {2e4 * HX_CGS_AU, HX_QTY_LENGTH, "0.09696 pc"}, /* 2e4 x 1.495978707e13 / 3.0856776e18 */
        {3e3 * HX_CGS_PC, HX_QTY_LENGTH, "3 kpc"},
        {1.5e5, HX_QTY_LENGTH, "1.5 km"},
        {18817.0, HX_QTY_VELOCITY, "0.1882 km/s"},
        {1000 * HX_CGS_MSUN, HX_QTY_MASS, "1000 Msun"},
        {5 * HX_CGS_MYR, HX_QTY_TIME, "5 Myr"},
        {3 * HX_CGS_KYR, HX_QTY_TIME, "3 kyr"},
        {1e-20, HX_QTY_DENSITY, "1e-20 g/cm^3"},
        {10.0, HX_QTY_TEMPERATURE, "10 K"},
        {1e-5, HX_QTY_MAGNETIC, "10 uG"},
        {2e-3, HX_QTY_MAGNETIC, "2 mG"},
        {5e-9, HX_QTY_MAGNETIC, "5 nG"},
        {0.5, HX_QTY_NONE, "0.5"},
    };
    char buf[64];
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        hx_units_format(buf, sizeof buf, cases[i].cgs, cases[i].kind);
        if (strcmp(buf, cases[i].want) != 0) fprintf(stderr, "  format gave '%s'\n", buf);
        CHECK(strcmp(buf, cases[i].want) == 0);
        if (cases[i].kind != HX_QTY_NONE) /* 4 significant digits read back */
            CHECK_REL(parse(buf, cases[i].kind), cases[i].cgs, 5e-4);
    }
    hx_units_format(buf, 4, 2.5 * HX_CGS_PC, HX_QTY_LENGTH); /* truncated, still terminated */
    CHECK(strcmp(buf, "2.5") == 0);
}

int main(int argc, char **argv)
{
    if (argc > 1 && strcmp(argv[1], "--dump") == 0) return dump();
    test_constants();
    test_physics();
    test_examples();
    test_errors();
    test_kinds();
    test_format();
    return hx_test_finish();
}
