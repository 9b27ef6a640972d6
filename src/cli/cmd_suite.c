/* cmd_suite.c — `helmix suite DIR`: options, then the known-answer suite (cubes whose Helmholtz
 * decomposition is known exactly and DIR/manifest.json), made collectively by the library. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "cli.h"
#include "options.h"
#include "helmix/log.h"
#include "helmix/suite.h"

enum { O_CELLS, O_RANKS_HINT, O_QUICK, O_FORCE, O_QUIET, O_VERBOSE, O_HELP };

static const hx_opt suite_options[] = {
    {"cells", 0, "N", O_CELLS, 0, "grid size: a multiple of 8, at least 16 (default 64; 32 with --quick)"},
    {"ranks-hint", 0, "P", O_RANKS_HINT, 0,
     "rank count the tools under test will use (default 4): the non-cubic cube\ngets a z size P does not divide "
     "(P >= 3), so their slabs are uneven"},
    {"quick", 0, NULL, O_QUICK, 0, "small cubes for tests (N = 32): the whole suite in a few seconds"},
    {"force", 0, NULL, O_FORCE, 0, "replace an existing manifest and cubes in DIR"},
    {"quiet", 'q', NULL, O_QUIET, 0, "no progress lines"},
    {"verbose", 'v', NULL, O_VERBOSE, 0, "also the progress lines of the make runs inside"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static void suite_usage(FILE *out)
{
    fprintf(out,
            "usage: mpiexec -n P helmix suite DIR [options]\n\n"
            "Write a set of cubes whose Helmholtz decomposition is known exactly, for testing decomposition\n"
            "tools, and DIR/manifest.json stating for each its layout, the answer (compressive share,\n"
            "energies, rms divergence and vorticity, per-shell energies: inspect's analysis of the stored\n"
            "values), variants, the paths of its exact solenoidal and compressive parts and suggested\n"
            "tolerances (schema: docs/manifest.schema.json). Cases: pure solenoidal and compressive; exact\n"
            "shares 0.1, 0.5, 0.9 and a share rising with k; Arnold-Beltrami-Childress, Taylor-Green and\n"
            "a gradient flow; bulk rotation and uniform flow; a non-cubic grid, xyz order, 4-D datasets\n"
            "and single precision; white noise; a resolution ladder N/4, N/2, N; a lognormal density with\n"
            "a mass-weighted share. Any number of ranks gives the same suite, bit for bit (sums over\n"
            "ranks are double-double); answers are taken on rank 0 alone.\n\n"
            "options:\n");
    hx_opt_help(out, suite_options);
}

/* A whole decimal number in [lo, hi]. */
static hx_status int_value(const char *opt, const char *text, int lo, int hi, int *v)
{
    char *end = NULL;
    long x = strtol(text, &end, 10);
    if (!text[0] || *end || x < lo || x > hi)
        return hx_error_set(HX_ERR_ARG, "%s %s: need a whole number between %d and %d", opt, text, lo, hi);
    *v = (int)x;
    return HX_OK;
}

typedef struct suite_args {
    hx_suite_opts o;
    int help, verbosity;
} suite_args;

static hx_status suite_option(void *ctx, const hx_opt *opt, const char *v)
{
    suite_args *a = ctx;
    if (!opt) {
        if (a->o.dir) return hx_error_set(HX_ERR_ARG, "more than one directory given ('%s' and '%s')", a->o.dir, v);
        a->o.dir = v;
        return HX_OK;
    }
    switch (opt->id) {
    case O_CELLS: return int_value("--cells", v, 16, 4096, &a->o.cells);
    case O_RANKS_HINT: return int_value("--ranks-hint", v, 1, 1 << 20, &a->o.ranks_hint);
    case O_QUICK: a->o.quick = 1; break;
    case O_FORCE: a->o.force = 1; break;
    case O_QUIET: a->verbosity = HX_LOG_QUIET; break;
    case O_VERBOSE: a->verbosity = HX_LOG_DEBUG; break;
    default: a->help = 1; break;
    }
    return HX_OK;
}

static hx_status parse_suite_args(int argc, char **argv, suite_args *a)
{
    hx_status st = hx_opt_parse("suite", suite_options, argc, argv, suite_option, a);
    if (st == HX_OK && !a->help && !a->o.dir)
        return hx_error_set(HX_ERR_ARG, "no directory given (helmix suite DIR; see helmix suite --help)");
    if (st == HX_OK && !a->help) {
        struct stat sb; /* the same file system on every rank: the same verdict */
        if (stat(a->o.dir, &sb) == 0 && !S_ISDIR(sb.st_mode))
            return hx_error_set(HX_ERR_ARG, "DIR %s: exists and is not a directory", a->o.dir);
    }
    return st;
}

int hx_cmd_suite(int argc, char **argv, MPI_Comm comm, int rank)
{
    suite_args a;
    memset(&a, 0, sizeof a);
    a.o.ranks_hint = 4;
    a.verbosity = HX_LOG_INFO;
    hx_status st = hx_error_agree(comm, parse_suite_args(argc, argv, &a));
    if (st == HX_OK && a.help) {
        if (rank == 0) suite_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    return hx_cli_fail(hx_error_agree(comm, hx_suite_run(&a.o, &log, comm, NULL)), rank);
}
