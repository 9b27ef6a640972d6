/* cmd_plan.c — `helmix plan`: the memory, file and work of a make run on P ranks, before it is
 * submitted. One process does the arithmetic for any rank count; exit 2 when the run cannot fit
 * the memory given per rank. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "options.h"
#include "helmix/plan.h"
#include "helmix/recipe.h"

enum { O_RANKS, O_THREADS, O_MEM, O_SET, O_OUTPUT, O_JSON, O_HELP };

static const hx_opt plan_options[] = {
    {"ranks", 'n', "P", O_RANKS, 0, "MPI ranks of the planned run (required)"},
    {"threads", 0, "T", O_THREADS, 0, "threads per rank (default 1)"},
    {"mem-per-rank", 0, "SIZE", O_MEM, 0,
     "memory a rank may use, e.g. 3.5G, 1800MiB (K, M, G = powers of\n1000; Ki, Mi, Gi = powers of 1024); exit 2 if "
     "the run cannot fit"},
    {"set", 0, "section.key=value", O_SET, HX_OPT_REPEAT, "override one recipe key, as for make; may be repeated"},
    {"output", 'o', "FILE", O_OUTPUT, 0, "the output file, as for make (only named in the plan: nothing is written)"},
    {"json", 0, NULL, O_JSON, 0, "print the plan as JSON instead of the table"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static void plan_usage(FILE *out)
{
    fprintf(out,
            "usage: helmix plan RECIPE --ranks P [options]\n\n"
            "Say what `mpiexec -n P helmix make RECIPE` will need, without running it: the slab\n"
            "decomposition, the peak memory of a rank (with kept and with regenerated draws, and which\n"
            "[output] draws = auto takes), the file size, the bytes each rank writes and the transforms.\n"
            "Runs on one process whatever P is.\n\n"
            "options:\n");
    hx_opt_help(out, plan_options);
    fprintf(out, "\nexit status: 0 the run fits (or no budget was given), 2 bad input or it does not fit\n");
}

typedef struct {
    const char *recipe, *output, *ranks, *threads, *mem;
    const char **sets;
    int nsets, maxsets, json, help;
} plan_args;

static hx_status plan_option(void *ctx, const hx_opt *o, const char *v)
{
    plan_args *a = ctx;
    if (!o) {
        if (a->recipe) return hx_error_set(HX_ERR_ARG, "more than one recipe given ('%s' and '%s')", a->recipe, v);
        a->recipe = v;
        return HX_OK;
    }
    switch (o->id) {
    case O_RANKS: a->ranks = v; break;
    case O_THREADS: a->threads = v; break;
    case O_MEM: a->mem = v; break;
    case O_OUTPUT: a->output = v; break;
    case O_SET:
        if (a->nsets >= a->maxsets) return hx_error_set(HX_ERR_ARG, "--set: more than %d given", a->maxsets);
        a->sets[a->nsets++] = v;
        break;
    case O_JSON: a->json = 1; break;
    default: a->help = 1; break;
    }
    return HX_OK;
}

static hx_status parse_plan_args(int argc, char **argv, plan_args *a)
{
    hx_status st = hx_opt_parse("plan", plan_options, argc, argv, plan_option, a);
    if (st != HX_OK || a->help) return st;
    if (!a->recipe) return hx_error_set(HX_ERR_ARG, "no recipe given (helmix plan RECIPE --ranks P)");
    if (!a->ranks) return hx_error_set(HX_ERR_ARG, "--ranks P is required: the number of MPI ranks make will run on");
    return HX_OK;
}

/* A positive int option, or HX_ERR_ARG naming it. */
static hx_status count_of(const char *text, const char *what, int *v)
{
    char *end = NULL;
    long n = strtol(text, &end, 10);
    if (end == text || *end || n < 1 || n > 1L << 30)
        return hx_error_set(HX_ERR_ARG, "%s '%s': give a whole number from 1 to %ld", what, text, 1L << 30);
    *v = (int)n;
    return HX_OK;
}

int hx_cmd_plan(int argc, char **argv, MPI_Comm comm, int rank)
{
    plan_args a = {0};
    const char *sets[256];
    a.sets = sets;
    a.maxsets = 256;
    int size = 1, ranks = 0, threads = 1;
    double budget = 0;
    hx_recipe r;
    hx_plan p;
    hx_status st = parse_plan_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) plan_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st == HX_OK && MPI_Comm_size(comm, &size) == MPI_SUCCESS && size > 1)
        st = hx_error_set(HX_ERR_ARG, "helmix plan runs on one process (launched on %d): --ranks says how many to plan for",
                          size);
    if (st == HX_OK) st = count_of(a.ranks, "--ranks", &ranks);
    if (st == HX_OK && a.threads) st = hx_opt_threads(a.threads, &threads);
    if (st == HX_OK && a.mem) st = hx_plan_parse_size(a.mem, "--mem-per-rank", &budget);
    if (st == HX_OK) st = hx_cli_load_recipe(a.recipe, a.output, sets, a.nsets, &r, comm);
    /* the process as it stands: MPI and HDF5 are up (main.c), the rest is arithmetic */
    if (st == HX_OK) st = hx_plan_compute(&r, ranks, threads, budget, hx_plan_baseline(hx_plan_rss_bytes(), 1, ranks), &p);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    if (a.json) {
        char *text = hx_plan_json(&p);
        if (!text) return hx_cli_fail(hx_error_set(HX_ERR_MEM, "out of memory printing the plan"), rank);
        printf("%s\n", text);
        free(text);
    } else {
        printf("recipe %s -> %s\n", a.recipe, r.file);
        hx_plan_print(&p, stdout);
    }
    fflush(stdout);
    return hx_cli_fail(hx_plan_verdict(&p), rank);
}
