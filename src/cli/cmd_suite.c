/* cmd_suite.c — `helmix suite DIR`: options, then the known-answer suite (cubes whose Helmholtz
 * decomposition is known exactly and DIR/manifest.json), made collectively by the library. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/log.h"
#include "helmix/suite.h"

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
            "options:\n"
            "  --cells N          grid size: a multiple of 8, at least 16 (default 64; 32 with --quick)\n"
            "  --ranks-hint P     rank count the tools under test will use (default 4): the non-cubic cube\n"
            "                     gets a z size P does not divide (P >= 3), so their slabs are uneven\n"
            "  --quick            small cubes for tests (N = 32): the whole suite in a few seconds\n"
            "  --force            replace an existing manifest and cubes in DIR\n"
            "  --quiet            no progress lines\n"
            "  --verbose          also the progress lines of the make runs inside\n"
            "  -h, --help         this text\n");
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

static hx_status parse_suite_args(int argc, char **argv, hx_suite_opts *o, int *help, int *verbosity)
{
    for (int i = 0; i < argc; i++) {
        const char *s = argv[i];
        if (!strcmp(s, "-h") || !strcmp(s, "--help")) *help = 1;
        else if (!strcmp(s, "--quick")) o->quick = 1;
        else if (!strcmp(s, "--force")) o->force = 1;
        else if (!strcmp(s, "--quiet") || !strcmp(s, "-q")) *verbosity = HX_LOG_QUIET;
        else if (!strcmp(s, "--verbose") || !strcmp(s, "-v")) *verbosity = HX_LOG_DEBUG;
        else if (!strncmp(s, "--cells", 7) || !strncmp(s, "--ranks-hint", 12)) {
            int cells = s[2] == 'c';
            size_t n = cells ? 7 : 12;
            const char *val = NULL;
            if (s[n] == '=') val = s + n + 1;
            else if (s[n]) return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix suite --help)", s);
            else if (i + 1 < argc) val = argv[++i];
            else return hx_error_set(HX_ERR_ARG, "option %s needs a value", s);
            hx_status st = cells ? int_value("--cells", val, 16, 4096, &o->cells) : int_value("--ranks-hint", val, 1, 1 << 20, &o->ranks_hint);
            if (st != HX_OK) return st;
        } else if (s[0] == '-' && s[1]) return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix suite --help)", s);
        else if (o->dir) return hx_error_set(HX_ERR_ARG, "more than one directory given ('%s' and '%s')", o->dir, s);
        else o->dir = s;
    }
    if (!*help && !o->dir) return hx_error_set(HX_ERR_ARG, "no directory given (helmix suite DIR; see helmix suite --help)");
    return HX_OK;
}

int hx_cmd_suite(int argc, char **argv, MPI_Comm comm, int rank)
{
    hx_suite_opts o;
    int help = 0, verbosity = HX_LOG_INFO;
    memset(&o, 0, sizeof o);
    o.ranks_hint = 4;
    hx_status st = parse_suite_args(argc, argv, &o, &help, &verbosity);
    if (st == HX_OK && help) {
        if (rank == 0) suite_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st != HX_OK) return hx_cli_fail(st, rank); /* the same arguments on every rank: the same verdict */
    hx_log log;
    hx_log_init(&log, comm, verbosity, stderr);
    return hx_cli_fail(hx_error_agree(comm, hx_suite_run(&o, &log, comm, NULL)), rank);
}
