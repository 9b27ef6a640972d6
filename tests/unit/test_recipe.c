/* test_recipe.c — the recipe module against its specification (include/helmix/recipe.h and
 * the recipe format of the project brief): defaults, scalar and triple keys, one message per
 * error naming origin, line, key and what is allowed, suggestions, --set, the round trip
 * render -> parse, the template, and the kmax limit. No MPI_Init: nothing here is collective. */
#include "helmix/recipe.h"

#include <stddef.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <unistd.h>

#include "hx_test.h"

static hx_recipe fresh(void)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    return r;
}

/* Parse text as "run.ini" into a fresh recipe; returns the status. */
static hx_status parse(hx_recipe *r, const char *text)
{
    *r = fresh();
    return hx_recipe_parse(r, text, "run.ini", NULL);
}

/* Parse and validate; the message is left in hx_error_message(). */
static hx_status load(hx_recipe *r, const char *text)
{
    hx_status st = parse(r, text);
    return st == HX_OK ? hx_recipe_validate(r) : st;
}

/* The text fails to parse (or validate) with a message containing every needle. */
static void expect_error(const char *text, int validate, const char *n1, const char *n2, const char *n3)
{
    hx_recipe r;
    hx_status st = validate ? load(&r, text) : parse(&r, text);
    CHECK(st == HX_ERR_ARG);
    const char *m = hx_error_message();
    CHECK(strchr(m, '\n') == NULL); /* one line */
    if (n1) CHECK_STR_CONTAINS(m, n1);
    if (n2) CHECK_STR_CONTAINS(m, n2);
    if (n3) CHECK_STR_CONTAINS(m, n3);
}

/* Every value up to the line numbers, byte for byte: hx_recipe_defaults zeroes the struct
 * (padding and the tails of strings included) and "not given" is one NaN pattern, so equal
 * recipes are equal bytes. The line numbers say where a key was set, not what it is. */
static int same_recipe(const hx_recipe *a, const hx_recipe *b)
{
    return !memcmp(a, b, offsetof(hx_recipe, line));
}

static void write_text(const char *path, const char *text)
{
    FILE *fp = fopen(path, "w");
    CHECK(fp != NULL);
    if (!fp) return;
    fputs(text, fp);
    fclose(fp);
}

/* Spec: every key has a default except cells; kmax defaults to the limit, exact to none with zeta. */
static void test_defaults(void)
{
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 32\n") == HX_OK);
    CHECK(r.cells[0] == 32 && r.cells[1] == 32 && r.cells[2] == 32);
    CHECK(r.box[0] == 1 && r.box[1] == 1 && r.box[2] == 1);
    CHECK(r.spectrum.shape == HX_SHAPE_POWER);
    CHECK_CLOSE(r.spectrum.slope, 2.0, 0);
    CHECK_CLOSE(r.spectrum.kmin, 1.0, 0);
    CHECK_CLOSE(r.spectrum.kmax, 15.0, 0); /* N/2 - 1 for N = 32 */
    CHECK(r.mix.mode == HX_MIX_ZETA);
    CHECK_CLOSE(r.mix.zeta, 0.5, 0);
    CHECK(isnan(r.mix.compressive_fraction));
    CHECK(r.mix.exact == HX_EXACT_NONE);
    CHECK_CLOSE(r.vrms, 1.0, 0);
    CHECK(r.seed == 1);
    CHECK(r.amplitudes == HX_AMP_GAUSSIAN);
    CHECK(r.flip == 0);
    CHECK(!strcmp(r.file, "helmix.h5"));
    CHECK(r.precision == HX_PREC_SINGLE);
    /* Spec: cells has no default. */
    expect_error("[spectrum]\nslope = 1\n", 1, "[grid] cells", "not given", NULL);
    expect_error("", 1, "cells", NULL, NULL);
}

/* Spec: "cells = 256" means 256 256 256, "box = 2" means 2 2 2; triples give each axis. */
static void test_scalar_and_triple(void)
{
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 16\nbox = 2\n") == HX_OK);
    CHECK(r.cells[0] == 16 && r.cells[1] == 16 && r.cells[2] == 16);
    CHECK(r.box[0] == 2 && r.box[1] == 2 && r.box[2] == 2);
    CHECK(load(&r, "[grid]\ncells = 64 32 16\nbox = 4 2 1\n") == HX_OK);
    CHECK(r.cells[0] == 64 && r.cells[1] == 32 && r.cells[2] == 16);
    CHECK(r.box[0] == 4 && r.box[1] == 2 && r.box[2] == 1);
    /* Case of names, indentation, ';' comments and blank lines do not matter. */
    CHECK(load(&r, "; a recipe\n[Grid]\n   Cells = 8 ; small\n\n  [mix]\n\tzeta = 0.25\n") == HX_OK);
    CHECK(r.cells[0] == 8);
    CHECK_CLOSE(r.mix.zeta, 0.25, 0);
    /* Later keys override earlier ones. */
    CHECK(load(&r, "[grid]\ncells = 8\ncells = 12\n") == HX_OK);
    CHECK(r.cells[2] == 12);
    /* A fraction instead of zeta makes exact default to total. */
    CHECK(load(&r, "[grid]\ncells = 8\n[mix]\ncompressive_fraction = 0.4\n") == HX_OK);
    CHECK(r.mix.mode == HX_MIX_FRACTION && r.mix.exact == HX_EXACT_TOTAL);
    CHECK_CLOSE(r.mix.compressive_fraction, 0.4, 0);
    CHECK(isnan(r.mix.zeta));
    /* Spec: exact = shell or total with zeta is allowed. */
    CHECK(load(&r, "[grid]\ncells = 8\n[mix]\nzeta = 0.2\nexact = shell\n") == HX_OK);
    CHECK(r.mix.exact == HX_EXACT_SHELL && r.mix.mode == HX_MIX_ZETA);
    CHECK(load(&r, "[grid]\ncells = 8\n[random]\nseed = 18446744073709551615\nflip = yes\n"
                   "amplitudes = fixed\n[output]\nprecision = double\nfile = out/x.h5\n") == HX_OK);
    CHECK(r.seed == UINT64_MAX && r.flip == 1 && r.amplitudes == HX_AMP_FIXED);
    CHECK(r.precision == HX_PREC_DOUBLE && !strcmp(r.file, "out/x.h5"));
}

/* Spec: every error is one line "origin:LINE: [section] key = value: what is allowed". */
static void test_value_errors(void)
{
    expect_error("[grid]\ncells = 8\n\n[mix]\n# zeta below\n\nzeta = 1.5\n", 0, "run.ini:7: [mix] zeta = 1.5",
                 "must be a number in [0, 1]", NULL);
    CHECK(!strcmp(hx_error_message(), "run.ini:7: [mix] zeta = 1.5: must be a number in [0, 1]"));
    expect_error("[spectrum]\nslope = abc\n", 0, "run.ini:2:", "[spectrum] slope = abc", "finite number");
    expect_error("[spectrum]\nslope = 1.0x\n", 0, "run.ini:2:", "slope = 1.0x", "finite number");
    expect_error("[spectrum]\nslope =\n", 0, "run.ini:2:", "[spectrum] slope = :", "finite number");
    expect_error("[spectrum]\nslope = inf\n", 0, "run.ini:2:", "slope = inf", "finite number");
    expect_error("[spectrum]\nslope = nan\n", 0, "run.ini:2:", "slope = nan", "finite number");
    expect_error("[random]\n\nseed = -1\n", 0, "run.ini:3:", "[random] seed = -1", "[0, 18446744073709551615]");
    expect_error("[random]\nseed = 18446744073709551616\n", 0, "run.ini:2:", "seed", "18446744073709551615]");
    expect_error("[random]\nseed = 1.5\n", 0, "run.ini:2:", "seed = 1.5", "whole number");
    expect_error("[grid]\ncells = 2\n", 0, "run.ini:2: [grid] cells = 2", "[4, 1048576]", NULL);
    expect_error("[grid]\ncells = 63\n", 0, "run.ini:2: [grid] cells = 63", "even", "FFT");
    expect_error("[grid]\ncells = 64 64 33\n", 0, "run.ini:2:", "cells = 64 64 33", "even");
    expect_error("[grid]\ncells = 64 64\n", 0, "run.ini:2:", "cells = 64 64", "three integers");
    expect_error("[grid]\ncells = 64.0\n", 0, "run.ini:2:", "cells = 64.0", "integer");
    expect_error("[grid]\nbox = 0\n", 0, "run.ini:2: [grid] box = 0", "> 0", NULL);
    expect_error("[grid]\nbox = 1 -1 1\n", 0, "run.ini:2:", "box = 1 -1 1", "> 0");
    expect_error("[spectrum]\nkmin = 0\n", 0, "run.ini:2: [spectrum] kmin = 0", "> 0", NULL);
    expect_error("[spectrum]\nkmax = -3\n", 0, "run.ini:2: [spectrum] kmax = -3", "> 0", NULL);
    expect_error("[spectrum]\nshape = spiky\n", 0, "run.ini:2:", "shape = spiky", "power, band, table");
    expect_error("[mix]\ncompressive_fraction = 1.2\n", 0, "run.ini:2:", "compressive_fraction = 1.2", "[0, 1]");
    expect_error("[mix]\nzeta = -0.1\n", 0, "run.ini:2:", "zeta = -0.1", "[0, 1]");
    expect_error("[mix]\nexact = strict\n", 0, "run.ini:2:", "exact = strict", "none, total, shell");
    expect_error("[amplitude]\nvrms = 0\n", 0, "run.ini:2: [amplitude] vrms = 0", "> 0", NULL);
    expect_error("[random]\nflip = maybe\n", 0, "run.ini:2:", "flip = maybe", "true or false");
    expect_error("[output]\nprecision = half\n", 0, "run.ini:2:", "precision = half", "single, double");
    /* The first error wins; a line inih cannot read is reported with its number. */
    expect_error("[grid]\ncells = 8\nnot a key\nbox = 0\n", 0, "run.ini:3:", "'not a key'", "key = value");
    expect_error("[grid]\nbox = 0\nnot a key\n", 0, "run.ini:2:", "box = 0", NULL);
    /* Line numbers stay right after CRLF endings and a comment longer than inih's line buffer. */
    char text[600] = "# ";
    for (int i = 2; i < 400; i++) text[i] = 'c';
    strcpy(text + 400, "\r\n[grid]\r\ncells = 3\r\n");
    expect_error(text, 0, "run.ini:3: [grid] cells = 3:", "even", NULL);
    /* An indented line is a key of its own, never the continuation of the previous value. */
    expect_error("[grid]\ncells = 8\n    16\n", 0, "run.ini:3:", "'16'", "key = value");
    /* A failed parse leaves the recipe as it was. */
    hx_recipe r = fresh();
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 8\nbox = 0\n", "run.ini", NULL) == HX_ERR_ARG);
    CHECK(r.cells[0] == 0);
}

/* Spec: unknown keys and sections name the nearest valid name, across sections when nearer. */
static void test_suggestions(void)
{
    expect_error("[grid]\ncells = 8\n\n[spectrum]\nslpe = 2\n", 0, NULL, NULL, NULL);
    CHECK(!strcmp(hx_error_message(), "run.ini:5: unknown key 'slpe' in [spectrum]; did you mean 'slope'?"));
    expect_error("[grid]\nzeta = 0.3\n", 0, "run.ini:2:", "unknown key 'zeta' in [grid]", "did you mean [mix] zeta?");
    expect_error("[grid]\ncells = 8\n[spectrm]\nslope = 2\n", 0, "run.ini:3:", "unknown section [spectrm]",
                 "did you mean [spectrum]?");
    expect_error("[grid]\nfoo = 1\n", 0, "run.ini:2:", "unknown key 'foo'", "keys in [grid]: cells, box");
    expect_error("[weather]\nrain = 1\n", 0, "run.ini:1:", "unknown section [weather]", "sections are [grid]");
    expect_error("cells = 8\n", 0, "run.ini:1:", "before any [section]", "did you mean [grid] cells?");
}

/* Spec: cross-key rules (kmin <= kmax <= limit, the table file) are checked by validate. */
static void test_cross_key(void)
{
    expect_error("[grid]\ncells = 32\n[spectrum]\nkmin = 10\nkmax = 5\n", 1, "[spectrum] kmin = 10",
                 "at most kmax = 5", NULL);
    expect_error("[grid]\ncells = 32\n[spectrum]\nkmin = 20\n", 1, "kmin = 20", "at most kmax = 15", "default");
    expect_error("[grid]\ncells = 32\n[spectrum]\nkmax = 16\n", 1, "[spectrum] kmax = 16", "at most 15",
                 "(N_i/2 - 1) * max(L)/L_i");
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 32\n[spectrum]\nkmax = 15\nkmin = 15\n") == HX_OK);
    /* Both zeta and fraction: in one file (the second line is named), and file + --set. */
    expect_error("[mix]\nzeta = 0.3\n\ncompressive_fraction = 0.2\n", 0, "run.ini:4:",
                 "compressive_fraction = 0.2", "not both");
    /* --set of one share replaces the other given in the file: the command line wins. */
    CHECK(parse(&r, "[grid]\ncells = 8\n[mix]\nzeta = 0.3\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "mix.compressive_fraction=0.2") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK && r.mix.mode == HX_MIX_FRACTION && r.mix.compressive_fraction == 0.2);
    CHECK(parse(&r, "[grid]\ncells = 8\n[mix]\ncompressive_fraction = 0.3\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "mix.zeta=0.2") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK && r.mix.mode == HX_MIX_ZETA && r.mix.zeta == 0.2);
    /* A fraction may also be drawn freely: exact = none keeps its expected share only. */
    CHECK(parse(&r, "[grid]\ncells = 8\n[mix]\ncompressive_fraction = 0.3\nexact = none\n") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK && r.mix.exact == HX_EXACT_NONE && r.mix.mode == HX_MIX_FRACTION);
}

/* Cross-key rules name the line that set the offending key; a --set value has no line. */
static void test_validate_lines(void)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 32\n\n[spectrum]\nkmin = 4\nkmax = 40\n", "k.ini", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "line 6: [spectrum] kmax = 40");
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 32\n[spectrum]\nkmax = 10\n", "k.ini", NULL) == HX_OK);
    CHECK(hx_recipe_set(&r, "spectrum.kmin=12") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "[spectrum] kmin = 12");
    CHECK(strstr(hx_error_message(), "line ") == NULL);
}

/* Spec: limit = min over axes of (N_i/2 - 1) * max(L)/L_i, in units of 2 pi / max(L). */
static void test_kmax_limit(void)
{
    hx_recipe r;
    /* (64/2-1)*2/2 = 31, 31, (32/2-1)*2/1 = 30: the thin axis, finer in k, still limits. */
    CHECK(load(&r, "[grid]\ncells = 64 64 32\nbox = 2 2 1\n") == HX_OK);
    CHECK_CLOSE(hx_recipe_kmax_limit(&r), 30.0, 1e-12);
    CHECK_CLOSE(r.spectrum.kmax, 30.0, 1e-12);
    /* min(31, 31, 15) = 15 in a cube. */
    CHECK(load(&r, "[grid]\ncells = 64 64 32\n") == HX_OK);
    CHECK_CLOSE(hx_recipe_kmax_limit(&r), 15.0, 1e-12);
    CHECK_CLOSE(r.spectrum.kmax, 15.0, 1e-12);
    /* Elongated box: (64/2-1)*4/4 = 31 along the long axis, 31*4 elsewhere. */
    CHECK(load(&r, "[grid]\ncells = 64\nbox = 4 1 1\n") == HX_OK);
    CHECK_CLOSE(r.spectrum.kmax, 31.0, 1e-12);
    expect_error("[grid]\ncells = 64 64 32\nbox = 2 2 1\n[spectrum]\nkmax = 31\n", 1, "kmax = 31", "at most 30",
                 "cells 64 64 32 and box 2 2 1");
}

/* Spec: table file read in validate; >= 2 rows, k > 0 strictly increasing, E >= 0; a relative
 * path is taken from basedir. */
static void test_table(void)
{
    char dir[] = "/tmp/helmix_recipe_XXXXXX";
    CHECK(mkdtemp(dir) != NULL);
    char good[128], bad[128], text[512];
    snprintf(good, sizeof good, "%s/good.dat", dir);
    snprintf(bad, sizeof bad, "%s/bad.dat", dir);
    write_text(good, "# k E\n1 1.0\n2 0.5   # comment\n4 0\n");
    hx_recipe r = fresh();
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 16\n[spectrum]\nshape = table\ntable = good.dat\n", "run.ini", dir) ==
          HX_OK);
    CHECK(!strcmp(r.spectrum.table, good));
    CHECK(hx_recipe_validate(&r) == HX_OK);
    CHECK(r.spectrum.shape == HX_SHAPE_TABLE);
    /* An absolute path is kept as it is. */
    snprintf(text, sizeof text, "[grid]\ncells = 16\n[spectrum]\nshape = table\ntable = %s\n", good);
    CHECK(load(&r, text) == HX_OK);
    CHECK(!strcmp(r.spectrum.table, good));
    static const char *const cases[][2] = {
        {"", "found 0"},                     /* empty */
        {"1 1\n", "found 1"},                /* one row */
        {"1 1\n1 2\n", "increase strictly"}, /* k repeated */
        {"0 1\n1 2\n", "k > 0"},             /* k = 0 */
        {"1 1\n2 -1\n", "E >= 0"},           /* negative E */
        {"1 1\n2 x\n", "two numbers"},       /* malformed */
    };
    snprintf(text, sizeof text, "[grid]\ncells = 16\n[spectrum]\nshape = table\ntable = %s\n", bad);
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        write_text(bad, cases[i][0]);
        expect_error(text, 1, "[spectrum] table", cases[i][1], "bad.dat");
    }
    write_text(bad, "1 1\n3 2\n2 1\n");
    expect_error(text, 1, "bad.dat:3:", "increase strictly", NULL);
    unlink(bad);
    expect_error(text, 1, "[spectrum] table = ", "bad.dat", "cannot read");
    expect_error("[grid]\ncells = 16\n[spectrum]\nshape = table\n", 1, "[spectrum] table", "shape = table needs",
                 NULL);
    unlink(good);
    rmdir(dir);
}

/* Spec: --set section.key=value overrides; its messages name "--set". */
static void test_set(void)
{
    hx_recipe r;
    CHECK(parse(&r, "[grid]\ncells = 8\n[mix]\nzeta = 0.3\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "mix.zeta=0.7") == HX_OK);
    CHECK(hx_recipe_set(&r, "grid.cells = 16 16 8") == HX_OK);
    CHECK(hx_recipe_set(&r, "spectrum.table=rel/t.dat") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK);
    CHECK_CLOSE(r.mix.zeta, 0.7, 0);
    CHECK(r.cells[0] == 16 && r.cells[2] == 8);
    CHECK(!strcmp(r.spectrum.table, "rel/t.dat")); /* --set paths stay relative to the current directory */
    CHECK(hx_recipe_set(&r, "mix.zeta=2") == HX_ERR_ARG);
    CHECK(!strcmp(hx_error_message(), "--set mix.zeta=2: must be a number in [0, 1]"));
    CHECK_CLOSE(r.mix.zeta, 0.7, 0); /* unchanged by the failed override */
    CHECK(hx_recipe_set(&r, "foo") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "--set foo: expected section.key=value");
    CHECK(hx_recipe_set(&r, "zeta=0.1") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "--set zeta=0.1: expected section.key=value");
    CHECK(hx_recipe_set(&r, ".zeta=0.1") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "expected section.key=value");
    CHECK(hx_recipe_set(&r, "spectrum.slpe=1") == HX_ERR_ARG);
    CHECK(!strcmp(hx_error_message(), "--set spectrum.slpe=1: unknown key 'slpe' in [spectrum]; did you mean 'slope'?"));
    CHECK(hx_recipe_set(&r, "grd.cells=8") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "unknown section [grd]; did you mean [grid]?");
    CHECK(hx_recipe_set(&r, "random.seed=-5") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "--set random.seed=-5: must be a whole number");
}

/* Spec: the rendering holds every key and parses back to an identical struct. */
static void check_round_trip(const hx_recipe *r, int validated)
{
    char *text = hx_recipe_render(r);
    CHECK(text != NULL);
    if (!text) return;
    hx_recipe back = fresh();
    CHECK(hx_recipe_parse(&back, text, "rendered", NULL) == HX_OK);
    /* a validated recipe also holds what validation derives (code units, quantities in them):
     * the rendering, validated again, must give it back */
    if (validated) CHECK(hx_recipe_validate(&back) == HX_OK);
    CHECK(same_recipe(r, &back));
    static const char *const names[] = {"cells", "box", "shape", "slope", "kmin", "kmax", "table", "zeta",
                                        "compressive_fraction", "exact", "vrms", "seed", "amplitudes", "flip",
                                        "file", "precision"};
    for (size_t i = 0; i < sizeof names / sizeof names[0]; i++) CHECK_STR_CONTAINS(text, names[i]);
    free(text);
}

static void test_round_trip(void)
{
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 32\n") == HX_OK);
    check_round_trip(&r, 1);
    CHECK(load(&r, "[grid]\ncells = 64 32 16\nbox = 1 0.1 3.3333333333333335\n[spectrum]\nshape = band\n"
                   "slope = 1.6666666666666667\nkmin = 0.7\nkmax = 2.25\ntable = /tmp/none.dat\n"
                   "[mix]\ncompressive_fraction = 0.123456789\nexact = shell\n[amplitude]\nvrms = 3e-5\n"
                   "[random]\nseed = 18446744073709551615\namplitudes = fixed\nflip = true\n"
                   "[output]\nfile = /scratch/a b/c.h5\nprecision = double\n") == HX_OK);
    check_round_trip(&r, 1);
    hx_recipe again = r; /* validating a valid recipe changes nothing */
    CHECK(hx_recipe_validate(&again) == HX_OK);
    CHECK(same_recipe(&r, &again));
    hx_recipe partial = fresh(); /* before validation: "not given" survives the trip */
    check_round_trip(&partial, 0);
    /* A path longer than inih's line buffer still parses. */
    char path[400] = "/tmp/", text[600];
    for (int i = 5; i < 390; i++) path[i] = 'a' + i % 26;
    path[390] = '\0';
    snprintf(text, sizeof text, "[output]\nfile = %s ; long\nprecision = double\n", path);
    CHECK(parse(&r, text) == HX_OK);
    CHECK(!strcmp(r.file, path));
    CHECK(r.precision == HX_PREC_DOUBLE);
    CHECK(load(&r, "[grid]\ncells = 8\n") == HX_OK);
    snprintf(r.file, sizeof r.file, "%s", path);
    check_round_trip(&r, 1);
}

/* Spec: the template documents every key and, as printed, parses to a valid recipe (its
 * cells carries the sample value 64). */
static void test_template(void)
{
    char *text = NULL;
    size_t len = 0;
    FILE *out = open_memstream(&text, &len);
    hx_recipe_template(out);
    fclose(out);
    hx_recipe r = fresh();
    CHECK(hx_recipe_parse(&r, text, "template", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK);
    CHECK(r.cells[0] == 64 && r.cells[1] == 64 && r.cells[2] == 64);
    CHECK_CLOSE(r.spectrum.kmax, 31.0, 0);
    CHECK_STR_CONTAINS(text, "# compressive_fraction = ");
    CHECK_STR_CONTAINS(text, "(1-zeta)^2/(1-2 zeta+3 zeta^2) (Federrath et al. 2010, A&A 512, A81)");
    CHECK_STR_CONTAINS(text, "unit: code velocity");
    /* Every sample value is valid: uncommenting all "# key = value" lines (but the second of
     * each exclusive set: compressive_fraction beside zeta, mach and virial beside vrms, the
     * masses beside the densities) still gives a valid recipe. */
    static const char *const exclusive[] = {"compressive_fraction =", "mach =", "virial =", "mass =", "beta =",
                                            "alfven_mach =", "random_rms ="};
    for (char *p = text; (p = strstr(p, "\n# ")) != NULL; p++) {
        size_t name = strspn(p + 3, "abcdefghijklmnopqrstuvwxyz_");
        int skip = 0;
        for (size_t i = 0; i < sizeof exclusive / sizeof exclusive[0]; i++)
            skip |= !strncmp(p + 3, exclusive[i], strlen(exclusive[i]));
        if (name && !strncmp(p + 3 + name, " = ", 3) && !skip) p[1] = p[2] = ' ';
    }
    CHECK(strstr(text, "\n  box = 1\n") != NULL);
    r = fresh();
    CHECK(hx_recipe_parse(&r, text, "template", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK);
    CHECK(!strcmp(r.spectrum.table, "spectrum.dat"));
    free(text);
    out = open_memstream(&text, &len);
    hx_recipe_print_keys(out);
    fclose(out);
    int lines = 0;
    for (const char *p = text; *p; p++) lines += *p == '\n';
    CHECK(lines == 65); /* one line per key */
    CHECK_STR_CONTAINS(text, "mix.exact");
    CHECK_STR_CONTAINS(text, "spectrum.kmax");
    free(text);
}

static void test_names(void)
{
    CHECK(!strcmp(hx_shape_name(HX_SHAPE_POWER), "power"));
    CHECK(!strcmp(hx_shape_name(HX_SHAPE_BAND), "band"));
    CHECK(!strcmp(hx_shape_name(HX_SHAPE_TABLE), "table"));
    CHECK(!strcmp(hx_exact_name(HX_EXACT_NONE), "none"));
    CHECK(!strcmp(hx_exact_name(HX_EXACT_TOTAL), "total"));
    CHECK(!strcmp(hx_exact_name(HX_EXACT_SHELL), "shell"));
}

int main(void)
{
    test_defaults();
    test_scalar_and_triple();
    test_value_errors();
    test_suggestions();
    test_cross_key();
    test_kmax_limit();
    test_validate_lines();
    test_table();
    test_set();
    test_round_trip();
    test_template();
    test_names();
    return hx_test_finish();
}
