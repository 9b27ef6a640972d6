/* cmd_score.c — `helmix score MANIFEST RESULTS`: grade another tool's answers against a
 * helmix suite manifest. Rank 0 reads and grades; the other ranks only learn the outcome, so
 * every rank exits with the same status (0 all pass, 1 a case fails, 2 bad input). */
#include <stdio.h>
#include <string.h>
#include <strings.h>

#include "cli.h"
#include "options.h"
#include "helmix/log.h"
#include "helmix/score.h"

enum { O_JSON, O_PLOT, O_QUIET, O_HELP };

static const hx_opt score_options[] = {
    {"json", 0, "FILE", O_JSON, 0, "every number of the scorecard as JSON"},
    {"plot", 0, "FILE.png|.pdf", O_PLOT, 0, "the scorecard page: errors per case, the worst shells, the ladder"},
    {"quiet", 'q', NULL, O_QUIET, 0, "no progress lines"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static void score_usage(FILE *out)
{
    fprintf(out,
            "usage: helmix score MANIFEST RESULTS.json [--plot FILE.png|.pdf] [--json FILE] [--quiet]\n\n"
            "Grade another decomposition tool's answers against a helmix suite manifest (version %d).\n"
            "Serial: under mpiexec rank 0 does the work and every rank exits with the same status.\n\n"
            "RESULTS.json is an object with one value per cube of the manifest, either\n"
            "  {\"compressive_share\": x,                             required\n"
            "   \"shells\": [{\"k\": s, \"e_comp\": E, \"e_sol\": E}, ...],  optional\n"
            "   \"parts\": {\"solenoidal\": [\"f.h5:/x\", \"f.h5:/y\", \"f.h5:/z\"] or \"zero\",\n"
            "             \"compressive\": [...] or \"zero\"},             optional; files relative to RESULTS\n"
            "   \"variant\": \"name\"}                                     optional: grade against that variant\n"
            "or the document `helmix inspect --json` writes (energy.compressive_fraction, shells; its\n"
            "remove_scale > 0 selects the variant with that remove_scale).\n\n"
            "Grading per cube:\n"
            "  share   |measured - answer| <= tolerance.compressive_share\n"
            "  shells  |got - answer| / E_s <= tolerance.shells_relative for e_comp and e_sol in every\n"
            "          shell whose answer energy E_s = e_comp + e_sol is above 1e-12 of the largest\n"
            "  parts   rms(got - answer) / rms(field) <= tolerance.parts_rms_relative for each part, the\n"
            "          field being the sum of the answer's parts (the cube's field less its mean)\n\n"
            "options:\n",
            HX_SCORE_SUITE_VERSION);
    hx_opt_help(out, score_options);
    fprintf(out, "\nexit status: 0 every case passes, 1 a case fails, 2 bad input (an unreadable or malformed\n"
                 "manifest or RESULTS, a missing or unknown cube, an unknown variant, a non-number, an output\n"
                 "that cannot be written or is one of the inputs)\n");
}

typedef struct score_args {
    const char *manifest, *results, *json, *plot;
    int help, verbosity;
} score_args;

static hx_status score_option(void *ctx, const hx_opt *o, const char *v)
{
    score_args *a = ctx;
    if (!o) {
        if (!a->manifest) a->manifest = v;
        else if (!a->results) a->results = v;
        else return hx_error_set(HX_ERR_ARG, "more than two files given ('%s'); need MANIFEST RESULTS.json", v);
        return HX_OK;
    }
    switch (o->id) {
    case O_JSON: a->json = v; break;
    case O_PLOT: a->plot = v; break;
    case O_QUIET: a->verbosity = HX_LOG_QUIET; break;
    default: a->help = 1; break;
    }
    return HX_OK;
}

static hx_status parse_args(int argc, char **argv, score_args *a)
{
    a->verbosity = HX_LOG_INFO;
    hx_status st = hx_opt_parse("score", score_options, argc, argv, score_option, a);
    if (st != HX_OK || a->help) return st;
    if (!a->results) return hx_error_set(HX_ERR_ARG, "need MANIFEST and RESULTS.json (helmix score --help)");
    if (a->plot) {
        const char *dot = strrchr(a->plot, '.');
        if (!dot || (strcasecmp(dot, ".png") && strcasecmp(dot, ".pdf")))
            return hx_error_set(HX_ERR_ARG, "--plot %s: the file name must end in .png or .pdf", a->plot);
    }
    return HX_OK;
}

/* Rank 0: grade, print, write the files asked for; *code is 0 or 1 when st is HX_OK. */
static hx_status score(const score_args *a, const hx_log *log, int *code)
{
    hx_scorecard sc;
    const hx_cli_file in[] = {{"MANIFEST", a->manifest}, {"RESULTS", a->results}};
    const hx_cli_file out[] = {{"--json", a->json}, {"--plot", a->plot}};
    hx_status st = hx_cli_check_files(in, 2, out, 2); /* before any reading: nothing written on a mistake */
    if (st == HX_OK) st = hx_score_files(a->manifest, a->results, log, &sc);
    if (st != HX_OK) return st;
    hx_score_print(stdout, &sc);
    fflush(stdout);
    if (a->json) st = hx_score_json(a->json, &sc);
    if (st == HX_OK && a->plot) st = hx_score_plot(&sc, a->plot);
    *code = sc.passed ? HX_EXIT_OK : HX_EXIT_CHECK;
    hx_score_clear(&sc);
    return st;
}

int hx_cmd_score(int argc, char **argv, MPI_Comm comm, int rank)
{
    score_args a;
    memset(&a, 0, sizeof a);
    hx_status st = parse_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) score_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    int code = HX_EXIT_OK;
    if (rank == 0) st = score(&a, &log, &code);
    st = hx_error_agree(comm, st);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    if (MPI_Bcast(&code, 1, MPI_INT, 0, comm) != MPI_SUCCESS)
        return hx_cli_fail(hx_error_set(HX_ERR_MPI, "MPI_Bcast of the score's verdict failed"), rank);
    return code;
}
