/* cmd_plan.c — `helmix plan`: the memory, file and work of a make run on P ranks, before it is
 * submitted. One process does the arithmetic for any rank count; exit 2 when the run cannot fit
 * the memory given per rank. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/plan.h"
#include "helmix/recipe.h"

static void plan_usage(FILE *out)
{
    fprintf(out,
            "usage: helmix plan RECIPE --ranks P [options]\n\n"
            "Say what `mpiexec -n P helmix make RECIPE` will need, without running it: the slab\n"
            "decomposition, the peak memory of a rank (with kept and with regenerated draws, and which\n"
            "[output] draws = auto takes), the file size, the bytes each rank writes and the transforms.\n"
            "Runs on one process whatever P is.\n\n"
            "options:\n"
            "  --ranks P                  MPI ranks of the planned run (required)\n"
            "  --threads T                threads per rank (default 1)\n"
            "  --mem-per-rank SIZE        memory a rank may use, e.g. 3.5G, 1800MiB (K, M, G = powers of\n"
            "                             1000; Ki, Mi, Gi = powers of 1024); exit 2 if the run cannot fit\n"
            "  --set section.key=value    override one recipe key, as for make; may be repeated\n"
            "  -o, --output FILE          the output file, as for make\n"
            "  --json                     print the plan as JSON instead of the table\n"
            "  -h, --help                 this text\n\n"
            "exit status: 0 the run fits (or no budget was given), 2 bad input or it does not fit\n");
}

typedef struct {
    const char *recipe, *output, *ranks, *threads, *mem;
    const char **sets;
    int nsets, json, help;
} plan_args;

static hx_status parse_plan_args(int argc, char **argv, plan_args *a)
{
    for (int i = 0; i < argc; i++) {
        const char *s = argv[i], **slot = NULL;
        if (!strcmp(s, "-h") || !strcmp(s, "--help")) a->help = 1;
        else if (!strcmp(s, "--json")) a->json = 1;
        else if (!strcmp(s, "--ranks") || !strcmp(s, "-n")) slot = &a->ranks;
        else if (!strcmp(s, "--threads")) slot = &a->threads;
        else if (!strcmp(s, "--mem-per-rank")) slot = &a->mem;
        else if (!strcmp(s, "-o") || !strcmp(s, "--output")) slot = &a->output;
        else if (!strcmp(s, "--set")) slot = &a->sets[a->nsets++];
        else if (!strncmp(s, "--ranks=", 8)) a->ranks = s + 8;
        else if (!strncmp(s, "--threads=", 10)) a->threads = s + 10;
        else if (!strncmp(s, "--mem-per-rank=", 15)) a->mem = s + 15;
        else if (!strncmp(s, "--output=", 9)) a->output = s + 9;
        else if (!strncmp(s, "--set=", 6)) a->sets[a->nsets++] = s + 6;
        else if (s[0] == '-' && s[1]) return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix plan --help)", s);
        else if (a->recipe) return hx_error_set(HX_ERR_ARG, "more than one recipe given ('%s' and '%s')", a->recipe, s);
        else a->recipe = s;
        if (slot) {
            if (i + 1 >= argc) return hx_error_set(HX_ERR_ARG, "option %s needs a value", s);
            *slot = argv[++i];
        }
    }
    if (a->help) return HX_OK;
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
    int size = 1, ranks = 0, threads = 1;
    double budget = 0;
    hx_recipe r;
    hx_plan p;
    hx_status st = argc > 256 ? hx_error_set(HX_ERR_ARG, "too many arguments") : parse_plan_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) plan_usage(stdout);
        return HX_EXIT_OK;
    }
    if (st == HX_OK && MPI_Comm_size(comm, &size) == MPI_SUCCESS && size > 1)
        st = hx_error_set(HX_ERR_ARG, "helmix plan runs on one process (launched on %d): --ranks says how many to plan for",
                          size);
    if (st == HX_OK) st = count_of(a.ranks, "--ranks", &ranks);
    if (st == HX_OK && a.threads) st = count_of(a.threads, "--threads", &threads);
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
