/* test_recipe.c — the recipe module against its specification (include/helmix/recipe.h and
 * the recipe format of the project brief): defaults, scalar and triple keys, one message per
 * error naming origin, line, key and what is allowed, suggestions, --set, the round trip
 * render -> parse, the template, and the kmax limit. No MPI_Init: nothing here is collective. */
#include "helmix/recipe.h"

#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <sys/stat.h>
#include <unistd.h>

#include "helmix/spectrum.h"
#include "hx_test.h"

#define VALUE_LONG 4200 /* longer than any value a --set may hold */

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
    expect_error("[grid]\ncells = 64 3 64\n", 0, "run.ini:2: [grid] cells = 64 3 64", "[4, 1048576]", NULL);
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
    expect_error(text, 0, "run.ini:3: [grid] cells = 3:", "[4, 1048576]", NULL);
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
                 "(ceil(N_i/2) - 1) * max(L)/L_i");
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 32\n[spectrum]\nkmax = 15\nkmin = 15\n") == HX_OK);
    /* Both zeta and fraction in one file: the second line is named, and the first. */
    expect_error("[mix]\nzeta = 0.3\n\ncompressive_fraction = 0.2\n", 0, "run.ini:4:",
                 "compressive_fraction = 0.2: zeta is given on line 2", "only one of zeta, compressive_fraction");
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

/* Cross-key rules name where the offending key was set, as the parser does ("origin:line:"),
 * and a --set value as the --set it came from, never as a line of the file (issue 9). */
static void test_validate_lines(void)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 32\n\n[spectrum]\nkmin = 4\nkmax = 40\n", "k.ini", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "k.ini:6: [spectrum] kmax = 40: must be at most 15");
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 32\n[spectrum]\nkmax = 10\n", "k.ini", NULL) == HX_OK);
    CHECK(hx_recipe_set(&r, "spectrum.kmin=12") == HX_OK);
    CHECK(r.line[0] == 2); /* [grid] cells, the first key of the table: its line in the text */
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    /* kmin is blamed on --set, and the kmax it is compared with on its line */
    CHECK(!strcmp(hx_error_message(), "--set spectrum.kmin=12: must be at most kmax = 10 (k.ini:4)"));
    /* the same value from the file is blamed on the file */
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 32\n[spectrum]\nkmax = 10\nkmin = 12\n", "k.ini", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK(!strcmp(hx_error_message(), "k.ini:5: [spectrum] kmin = 12: must be at most kmax = 10 (k.ini:4)"));
    /* a rule between keys: --set virial without a density is the --set's fault, not the file's */
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 8\n[amplitude]\nvrms = 2\n", "v.ini", NULL) == HX_OK);
    CHECK(hx_recipe_set(&r, "amplitude.virial=1") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "--set amplitude.virial=1: the virial parameter needs a mass");
    CHECK(strstr(hx_error_message(), "v.ini") == NULL);
    /* and the same key from the file names the file and line */
    hx_recipe_defaults(&r);
    CHECK(hx_recipe_parse(&r, "[grid]\ncells = 8\n[amplitude]\nvirial = 1\n", "v.ini", NULL) == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "v.ini:4: [amplitude] virial = 1: the virial parameter needs a mass");
    /* a default is called one, after the recipe's name */
    expect_error("[grid]\ncells = 32\n[spectrum]\nkmax = 0.5\n", 1, "run.ini: [spectrum] kmin = 1 (default): ",
                 "at most kmax = 0.5 (run.ini:4)", NULL);
}

/* Spec: limit = min over axes of (ceil(N_i/2) - 1) * max(L)/L_i, in units of 2 pi / max(L): the
 * highest frequency below N_i/2, N/2 - 1 for even N and (N-1)/2 for odd N (no Nyquist index). */
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
    /* Odd sizes: 63 and 45 have no Nyquist index, their highest frequencies 31 and 22 carry power. */
    CHECK(load(&r, "[grid]\ncells = 63\n") == HX_OK);
    CHECK_CLOSE(r.spectrum.kmax, 31.0, 1e-12);
    CHECK(load(&r, "[grid]\ncells = 45 64 33\n") == HX_OK);
    CHECK(r.cells[0] == 45 && r.cells[2] == 33);
    CHECK_CLOSE(r.spectrum.kmax, 16.0, 1e-12);
    /* A box too elongated for its grid (more than 2^24 shells, grid.c's limit) is refused at validation. */
    expect_error("[grid]\ncells = 16\nbox = 1 1 1e12\n", 1, "run.ini:3: [grid] box", "too elongated", "2^24");
    CHECK(load(&r, "[grid]\ncells = 16\nbox = 1 1 1e6\n") == HX_OK); /* 1.13e7 shells */
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
    /* Only a regular file is read: a directory, a device or a pipe could be endless. */
    snprintf(text, sizeof text, "[grid]\ncells = 16\n[spectrum]\nshape = table\ntable = %s\n", dir);
    expect_error(text, 1, "run.ini:5: [spectrum] table = ", "not a regular file", NULL);
    expect_error("[grid]\ncells = 16\n[spectrum]\nshape = table\ntable = /dev/zero\n", 1, "not a regular file", NULL,
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

/* Issue 9, item 5: a recipe is text. A NUL byte is an error at its line, never the silent end
 * of the recipe (the length travels with the text); so are other control characters, a lone
 * carriage return and bytes that are not UTF-8 (the recipe is stored as UTF-8 text). */
static void test_text(void)
{
    hx_recipe r = fresh();
    static const char nul[] = "[grid]\ncells = 8\n\0[output]\nfile = other.h5\n";
    CHECK(hx_recipe_parse_n(&r, nul, sizeof nul - 1, "run.ini", NULL) == HX_ERR_ARG);
    CHECK(!strcmp(hx_error_message(), "run.ini:3: column 1 holds a NUL byte: a recipe is text (is this a binary file?)"));
    CHECK(r.cells[0] == 0); /* nothing taken from the text */
    static const char mid[] = "[grid]\ncells = 8\0 16\n";
    CHECK(hx_recipe_parse_n(&r, mid, sizeof mid - 1, "run.ini", NULL) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "run.ini:2: column 10 holds a NUL byte");
    static const char *const bad[][2] = {
        {"[grid]\ncells = 8\n[random]\nseed = 1\x01\n", "run.ini:4: column 9 holds the control character 0x01"},
        {"[grid]\ncells = 8\x1b[0m\n", "run.ini:2: column 10 holds the control character 0x1b"},
        {"[grid]\rcells = 8\r", "run.ini:1: column 7 holds a carriage return that does not end a line"},
        {"# caf\xe9\n[grid]\ncells = 8\n", "run.ini:1: column 6 holds the byte 0xe9, which is not UTF-8"},
        {"[grid]\ncells = 8 # \xed\xa0\x80\n", "run.ini:2: column 13 holds the byte 0xed"}, /* a surrogate */
        {"[grid]\ncells = 8 # \xc0\xaf\n", "run.ini:2: column 13 holds the byte 0xc0"},     /* overlong '/' */
        {"\x7f" "ELF\x02\x01\x01", "run.ini:1: column 1 holds the control character 0x7f"},
    };
    for (size_t i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        CHECK(hx_recipe_parse(&r, bad[i][0], "run.ini", NULL) == HX_ERR_ARG);
        CHECK_STR_CONTAINS(hx_error_message(), bad[i][1]);
    }
    /* UTF-8 text (a BOM, comments in any script), tabs and CRLF line ends are fine. */
    CHECK(load(&r, "\xEF\xBB\xBF# Ångström, 渦 ✓\r\n[grid]\r\n\tcells = 8\t# 8³\r\n") == HX_OK);
    CHECK(r.cells[0] == 8);
    /* The table of a spectrum is text too: a NUL in it names the table and its line. */
    double *k = NULL, *e = NULL;
    int n = 0;
    static const char table[] = "1 1\n2 0.5\n\0" "4 9\n";
    CHECK(hx_spectrum_parse_table_n(table, sizeof table - 1, "t.dat", &k, &e, &n) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "t.dat:3: column 1 holds a NUL byte");
    CHECK(k == NULL && e == NULL);
    /* A recipe is small: a megabyte of text is refused before it is read. */
    char *big = malloc(HX_RECIPE_TEXT_MAX + 2);
    CHECK(big != NULL);
    if (big) {
        memset(big, '#', HX_RECIPE_TEXT_MAX + 1);
        big[HX_RECIPE_TEXT_MAX + 1] = '\0';
        CHECK(hx_recipe_parse(&r, big, "run.ini", NULL) == HX_ERR_ARG);
        CHECK_STR_CONTAINS(hx_error_message(), "a recipe is a text of at most");
        free(big);
    }
}

/* Issue 9, item 6: a key or a section given twice is refused, naming both lines (the last one
 * silently won before); so is a second alternative (vrms and mach, ...). */
static void test_duplicates(void)
{
    expect_error("[grid]\ncells = 8\nbox = 2\ncells = 12\n", 0,
                 "run.ini:4: [grid] cells is given a second time (first on line 2)", "give each key once", NULL);
    expect_error("[grid]\nCells = 8\n[mix]\nzeta = 0.2\n[random]\nseed = 1\nSEED = 2\n", 0,
                 "run.ini:7: [random] seed is given a second time (first on line 6)", NULL, NULL);
    expect_error("[grid]\ncells = 8\n\n[mix]\nzeta = 0.2\n[Grid]\nbox = 2\n", 0,
                 "run.ini:6: [grid] is opened a second time (first on line 1)", NULL, NULL);
    expect_error("[grid]\n[grid]\ncells = 8\n", 0, "run.ini:2: [grid] is opened a second time (first on line 1)",
                 NULL, NULL);
    /* An empty unknown section is still unknown; a [section] line holds nothing else. */
    expect_error("[grid]\ncells = 8\n[wether]\n", 0, "run.ini:3: unknown section [wether]", NULL, NULL);
    expect_error("[grid] cells = 8\n", 0, "run.ini:1: '[grid] cells = 8': text after the [section] header", NULL,
                 NULL);
    /* One line per alternative: the second names the first. */
    static const char *const pairs[][3] = {
        {"[units]\ndensity = 1e-22\nmass = 1 Msun\n", "run.ini:3: [units] mass = 1 Msun: density is given on line 2",
         "only one of density, mass"},
        {"[amplitude]\nmach = 3\n\nvrms = 1\n", "run.ini:4: [amplitude] vrms = 1: mach is given on line 2",
         "only one of vrms, mach, virial, linewidth"},
        {"[amplitude]\nlinewidth = true\nvirial = 2\n", "run.ini:3: [amplitude] virial = 2: linewidth is given on line 2",
         NULL},
        {"[density]\nmean = 1\ncentral_density = 2\n", "run.ini:3: [density] central_density = 2: mean is given on line 2",
         "only one of mean, mass, central_density"},
        {"[magnetic]\nbeta = 0.1\nalfven_mach = 2\n", "run.ini:3: [magnetic] alfven_mach = 2: beta is given on line 2",
         "only one of strength, beta, alfven_mach"},
        {"[magnetic]\nrandom_rms = 3 uG\nrandom_ratio = 0\n",
         "run.ini:3: [magnetic] random_ratio = 0: random_rms is given on line 2", "only one of random_ratio, random_rms"},
    };
    for (size_t i = 0; i < sizeof pairs / sizeof pairs[0]; i++) expect_error(pairs[i][0], 0, pairs[i][1], pairs[i][2], NULL);
    /* linewidth = false gives nothing: vrms beside it is fine. */
    hx_recipe r;
    CHECK(load(&r, "[grid]\ncells = 8\n[amplitude]\nlinewidth = false\nvrms = 2\n") == HX_OK);
    CHECK(r.amplitude_by == HX_AMPLITUDE_VRMS && r.vrms == 2);
}

/* Issue 9, usability: '#' and ';' both start a comment, at the start of a line or after a blank
 * (common practice in INI files; Python's configparser takes both as comment prefixes). */
static void test_comments(void)
{
    hx_recipe r;
    CHECK(load(&r, "[grid]  # the grid\ncells = 32  # test\nbox = 2 ; a box\n[output]\nfile = run#3.h5\t# a '#' "
                   "inside a word stays\nio_hints = cb_nodes=2;x=1\n") == HX_OK);
    CHECK(r.cells[0] == 32 && r.box[0] == 2);
    CHECK(!strcmp(r.file, "run#3.h5"));
    CHECK(!strcmp(r.io_hints, "cb_nodes=2;x=1"));
    CHECK(load(&r, "# comment\n; comment\n  # indented comment\n[grid]\ncells = 8#9\n") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "run.ini:5: [grid] cells = 8#9:");
    /* Found by fuzz_recipe: "file =#x" holds no comment, but its rendering "file = #x" would:
     * a value starting with '#' or ';' is refused, as --set refuses it */
    expect_error("[output]\nfile =#x.h5\n", 0, "run.ini:2: [output] file = #x.h5: a value starting with '#'", NULL,
                 NULL);
    expect_error("[output]\nfile =;x.h5\n", 0, "run.ini:2: [output] file = ;x.h5:", NULL, NULL);
    /* a value cut to nothing by a comment is a missing value, said as such */
    expect_error("[grid]\ncells = # 8\n", 0, "run.ini:2: [grid] cells = :", NULL, NULL);
    /* a path with " #" cannot be written in a recipe, so --set refuses it rather than lose its tail later */
    CHECK(parse(&r, "[grid]\ncells = 8\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "output.file=my run #3.h5") == HX_ERR_ARG);
    CHECK(!strcmp(hx_error_message(),
                  "--set output.file=my run #3.h5: a '#' or ';' at the start or after a blank would start a comment "
                  "in a recipe"));
    CHECK(hx_recipe_set(&r, "output.file=;x.h5") == HX_ERR_ARG);
    CHECK(hx_recipe_set(&r, "output.file=a\nb.h5") == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "control character 0x0a");
    CHECK(hx_recipe_set(&r, "output.file=my_run#3.h5") == HX_OK && !strcmp(r.file, "my_run#3.h5"));
    char set[VALUE_LONG + 32];
    memset(set, 'a', sizeof set);
    memcpy(set, "output.file=", 12);
    set[sizeof set - 1] = '\0';
    CHECK(hx_recipe_set(&r, set) == HX_ERR_ARG);
    CHECK_STR_CONTAINS(hx_error_message(), "characters");
}

/* Issue 9, item 6: --set overrides the file, and a --set of one alternative replaces the other
 * alternative the file gave (it does not fail with "already given"). */
static void test_set_alternatives(void)
{
    static const struct {
        const char *file, *set;
        size_t dropped; /* offset of the double (or hx_quantity.value / int) the --set replaces */
        int is_int;
    } cases[] = {
        {"[mix]\nzeta = 0.3\n", "mix.compressive_fraction=0.2", offsetof(hx_recipe, mix.zeta), 0},
        {"[mix]\ncompressive_fraction = 0.3\n", "mix.zeta=0.2", offsetof(hx_recipe, mix.compressive_fraction), 0},
        {"[units]\ndensity = 1e-22\n", "units.mass=1 Msun", offsetof(hx_recipe, unit_density.value), 0},
        {"[units]\nmass = 1 Msun\n", "units.density=1e-21", offsetof(hx_recipe, unit_mass.value), 0},
        {"[amplitude]\nvrms = 2\n", "amplitude.mach=3", offsetof(hx_recipe, vrms), 0},
        {"[amplitude]\nmach = 2\n", "amplitude.virial=1", offsetof(hx_recipe, mach), 0},
        {"[amplitude]\nvirial = 2\n", "amplitude.linewidth=yes", offsetof(hx_recipe, virial), 0},
        {"[amplitude]\nlinewidth = true\n", "amplitude.vrms=1", offsetof(hx_recipe, linewidth), 1},
        {"[density]\nmean = 2\n", "density.mass=10", offsetof(hx_recipe, density_mean.value), 0},
        {"[density]\nmass = 2\n", "density.central_density=1e-19 g/cm^3", offsetof(hx_recipe, cloud_mass.value), 0},
        {"[density]\ncentral_density = 2\n", "density.mean=1", offsetof(hx_recipe, central_density.value), 0},
        {"[magnetic]\nstrength = 10 uG\n", "magnetic.beta=0.5", offsetof(hx_recipe, b_strength.value), 0},
        {"[magnetic]\nbeta = 0.5\n", "magnetic.alfven_mach=2", offsetof(hx_recipe, beta), 0},
        {"[magnetic]\nalfven_mach = 2\n", "magnetic.strength=3", offsetof(hx_recipe, alfven_mach), 0},
        {"[magnetic]\nrandom_ratio = 0.5\n", "magnetic.random_rms=3 uG", offsetof(hx_recipe, random_ratio), 0},
        {"[magnetic]\nrandom_rms = 3 uG\n", "magnetic.random_ratio=0.5", offsetof(hx_recipe, random_rms.value), 0},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        hx_recipe r;
        char text[200];
        snprintf(text, sizeof text, "[grid]\ncells = 8\n%s", cases[i].file);
        CHECK(parse(&r, text) == HX_OK);
        CHECK(hx_recipe_set(&r, cases[i].set) == HX_OK);
        const char *at = (const char *)&r + cases[i].dropped;
        if (cases[i].is_int) CHECK(*(const int *)at == 0);
        else CHECK(isnan(*(const double *)at));
        /* the rendering of the result holds the --set key only, and reads back */
        char *out = hx_recipe_render(&r);
        hx_recipe back = fresh();
        CHECK(out && hx_recipe_parse(&back, out, "rendered", NULL) == HX_OK);
        free(out);
    }
    /* One that validates end to end: the file's zeta is gone, the mix is the --set fraction. */
    hx_recipe r;
    CHECK(parse(&r, "[grid]\ncells = 8\n[amplitude]\nmach = 2\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "amplitude.vrms=0.5") == HX_OK);
    CHECK(hx_recipe_validate(&r) == HX_OK && r.amplitude_by == HX_AMPLITUDE_VRMS && r.vrms == 0.5);
    /* Giving nothing replaces nothing: linewidth = false leaves the file's vrms alone. */
    CHECK(parse(&r, "[grid]\ncells = 8\n[amplitude]\nvrms = 2\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "amplitude.linewidth=false") == HX_OK);
    CHECK(r.vrms == 2);
    /* A later --set replaces an earlier one, alternative or not. */
    CHECK(hx_recipe_set(&r, "amplitude.mach=3") == HX_OK && hx_recipe_set(&r, "amplitude.vrms=4") == HX_OK);
    CHECK(isnan(r.mach) && r.vrms == 4);
    CHECK(hx_recipe_validate(&r) == HX_OK && r.amplitude_by == HX_AMPLITUDE_VRMS);
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
    /* Found by fuzz_recipe: a direction normalised by validation is normalised again to the
     * same bits (a unit vector to round-off is kept), so the validated rendering reads back. */
    CHECK(load(&r, "[grid]\ncells = 8\n[magnetic]\nbeta = 1\ndirection = 1 0 2\n") == HX_OK);
    CHECK_CLOSE(r.direction[2], 2 / sqrt(5.0), 1e-15);
    check_round_trip(&r, 1);
    again = r;
    CHECK(hx_recipe_validate(&again) == HX_OK && same_recipe(&r, &again));
    /* Found by fuzz_recipe: the mean density validation fills in for a lognormal model is
     * rendered as "mean = 1" and must read back as the same quantity, text included. */
    CHECK(load(&r, "[grid]\ncells = 16\n[units]\nlength = 1 pc\nvelocity = 1 km/s\nmass = 1 Msun\n[gas]\n"
                   "temperature = 15 K\n[density]\nmodel = lognormal\n") == HX_OK);
    CHECK(r.density_mean.value == 1.0);
    check_round_trip(&r, 1);
    /* Found by fuzz_set: a --set path shorter than the one it replaces leaves no tail behind. */
    CHECK(parse(&r, "[grid]\ncells = 8\n[output]\nfile = a_long_name.h5\n") == HX_OK);
    CHECK(hx_recipe_set(&r, "output.file=b.h5") == HX_OK);
    check_round_trip(&r, 0);
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
                                            "alfven_mach =", "random_rms =", "central_density ="};
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
    test_text();
    test_duplicates();
    test_comments();
    test_set_alternatives();
    test_round_trip();
    test_template();
    test_names();
    return hx_test_finish();
}
