/* cmd_scaling.c — `helmix scaling FILE.json...`: merge the timing files of make or inspect runs
 * (--timings) into a Markdown table of speed-up and parallel efficiency and a one-page plot.
 * Serial like score: rank 0 reads and writes; every rank exits with the same status. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "cli.h"
#include "options.h"
#include "helmix/scaling.h"

enum { O_TABLE, O_PLOT, O_KIND, O_QUIET, O_HELP };

static const hx_opt scaling_options[] = {
    {"table", 0, "OUT.md", O_TABLE, 0, "write the table to a file too"},
    {"plot", 0, "OUT.png|.pdf", O_PLOT, 0,
     "one page: efficiency against cores for every group, time per\nphase against cores for the group with the most runs"},
    {"kind", 0, "strong|weak|auto", O_KIND, 0, "how to group the runs and define efficiency"},
    {"quiet", 'q', NULL, O_QUIET, 0, "do not print the table"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static void scaling_usage(FILE *out)
{
    fprintf(out,
            "usage: helmix scaling FILE.json... [--table OUT.md] [--plot OUT.png|.pdf] [--kind strong|weak|auto]\n\n"
            "Merge the timing files of helmix runs (make or inspect with --timings FILE.json, schema\n"
            "docs/timings.schema.json) at various cells, ranks and threads into a scaling study. The\n"
            "Markdown table (printed, and written with --table) has per run: cells, ranks, threads,\n"
            "cores = ranks x threads, total time, time per phase, peak memory, speed-up and parallel\n"
            "efficiency. Every time is the slowest rank's wall time.\n\n"
            "  strong  runs of one command and cells; against the run with the fewest cores P1 (time\n"
            "          T1): speed-up T1/T, efficiency T1 P1 / (T P)\n"
            "  weak    runs of one command with about the same cells per core (within a factor 1.5);\n"
            "          against the run with the fewest cores: efficiency (T1 P1 / C1) / (T P / C), which\n"
            "          is T1/T at exactly equal cells per core\n"
            "  auto    (default) strong when a command and cells were run on two or more core counts,\n"
            "          else weak\n\n"
            "options:\n");
    hx_opt_help(out, scaling_options);
    fprintf(out, "\nexit status: 0 success, 2 bad input (no files, a file that is missing, unreadable, not JSON\n"
                 "or not a helmix timings file, an output directory that does not exist, an output that is one\n"
                 "of the inputs), 3 run-time failure\n");
}

typedef struct scaling_args {
    const char **files;
    int nfiles;
    const char *table, *plot;
    hx_scaling_kind kind;
    int help, quiet;
} scaling_args;

static hx_status scaling_option(void *ctx, const hx_opt *o, const char *val)
{
    scaling_args *a = ctx;
    if (!o) {
        a->files[a->nfiles++] = val;
        return HX_OK;
    }
    switch (o->id) {
    case O_TABLE: a->table = val; break;
    case O_PLOT: {
        const char *dot = strrchr(val, '.');
        if (!dot || (strcasecmp(dot, ".png") && strcasecmp(dot, ".pdf")))
            return hx_error_set(HX_ERR_ARG, "--plot %s: the file name must end in .png or .pdf", val);
        a->plot = val;
        break;
    }
    case O_KIND:
        if (!strcmp(val, "strong")) a->kind = HX_SCALING_STRONG;
        else if (!strcmp(val, "weak")) a->kind = HX_SCALING_WEAK;
        else if (!strcmp(val, "auto")) a->kind = HX_SCALING_AUTO;
        else return hx_error_set(HX_ERR_ARG, "--kind %s: must be strong, weak or auto", val);
        break;
    case O_QUIET: a->quiet = 1; break;
    default: a->help = 1; break;
    }
    return HX_OK;
}

static hx_status parse_args(int argc, char **argv, scaling_args *a)
{
    if (!(a->files = calloc((size_t)(argc > 0 ? argc : 1), sizeof *a->files)))
        return hx_error_set(HX_ERR_MEM, "out of memory reading the options");
    hx_status st = hx_opt_parse("scaling", scaling_options, argc, argv, scaling_option, a);
    if (st == HX_OK && !a->help && a->nfiles == 0)
        return hx_error_set(HX_ERR_ARG, "no timing files given (helmix scaling FILE.json...; see --help)");
    return st;
}

/* Rank 0: check the inputs and the outputs, read, print, write. */
static hx_status scaling(const scaling_args *a)
{
    hx_scaling s;
    hx_cli_file *in = calloc((size_t)a->nfiles, sizeof *in);
    if (!in) return hx_error_set(HX_ERR_MEM, "out of memory checking the files");
    for (int i = 0; i < a->nfiles; i++) in[i] = (hx_cli_file){"FILE", a->files[i]};
    const hx_cli_file out[] = {{"--table", a->table}, {"--plot", a->plot}};
    hx_status st = hx_cli_check_files(in, a->nfiles, out, 2);
    free(in);
    if (st == HX_OK) st = hx_scaling_load(&s, a->files, a->nfiles, a->kind);
    if (st != HX_OK) return st;
    if (!a->quiet) {
        hx_scaling_table(stdout, &s);
        fflush(stdout);
    }
    if (a->table) st = hx_scaling_table_write(a->table, &s);
    if (st == HX_OK && a->plot) st = hx_scaling_plot(&s, a->plot);
    hx_scaling_clear(&s);
    return st;
}

int hx_cmd_scaling(int argc, char **argv, MPI_Comm comm, int rank)
{
    scaling_args a;
    memset(&a, 0, sizeof a);
    hx_status st = parse_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) scaling_usage(stdout);
        free(a.files);
        return HX_EXIT_OK;
    }
    if (st == HX_OK && rank == 0) st = scaling(&a);
    free(a.files);
    st = hx_error_agree(comm, st);
    return st != HX_OK ? hx_cli_fail(st, rank) : HX_EXIT_OK;
}
