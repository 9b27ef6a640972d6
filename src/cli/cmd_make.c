/* cmd_make.c — `helmix make`: arguments, the recipe read once and parsed on every rank,
 * overrides, validation, then the generator. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "options.h"
#include "helmix/fft.h"
#include "helmix/log.h"
#include "helmix/timer.h"
#include "helmix/make.h"
#include "helmix/plan.h"
#include "helmix/recipe.h"
#include "helmix/version.h"

enum { O_OUTPUT, O_SET, O_FORCE, O_TIMINGS, O_THREADS, O_EFFORT, O_WISDOM, O_MEM, O_QUIET, O_VERBOSE, O_HELP };

static const hx_opt make_options[] = {
    {"output", 'o', "FILE", O_OUTPUT, 0, "output file (overrides [output] file)"},
    {"set", 0, "section.key=value", O_SET, HX_OPT_REPEAT, "override one recipe key; may be repeated"},
    {"force", 0, NULL, O_FORCE, 0, "replace an existing output file"},
    {"timings", 0, "FILE.json", O_TIMINGS, 0,
     "write each phase's time (min/mean/max over ranks), bytes,\ntransforms and peak memory per rank as JSON"},
    {"threads", 0, "T", O_THREADS, 0, "threads per rank for FFTW (default: OMP_NUM_THREADS, else 1)"},
    {"fftw-effort", 0, "E", O_EFFORT, 0, "FFTW planning: estimate (default), measure or patient"},
    {"wisdom", 0, "FILE", O_WISDOM, 0, "FFTW wisdom: read before planning (if it exists), written after"},
    {"mem-per-rank", 0, "SIZE", O_MEM, 0,
     "memory a rank may use, e.g. 3.5G or 1800MiB: a run that cannot\nfit is refused before it starts (default: the "
     "node's available\nmemory shared by its ranks); decides [output] draws = auto"},
    {"quiet", 'q', NULL, O_QUIET, 0, "no progress lines"},
    {"verbose", 'v', NULL, O_VERBOSE, 0, "also the run options and the whole recipe as it will be made\n(after --set and -o)"},
    {"help", 'h', NULL, O_HELP, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static void make_usage(FILE *out)
{
    fprintf(out,
            "usage: mpiexec -n P helmix make RECIPE [options]\n\n"
            "Generate a Gaussian random velocity cube as the recipe asks and write it as HDF5\n"
            "(Grid Data Format, opened by yt.load) plus an XDMF sidecar FILE.xmf.\n\n"
            "options:\n");
    hx_opt_help(out, make_options);
    fprintf(out, "\nrecipe keys (helmix template prints an annotated recipe):\n");
    hx_recipe_print_keys(out);
}

typedef struct {
    const char *recipe;
    const char *output;
    const char *timings;
    const char **sets;
    int nsets, maxsets, force, verbosity, help;
    hx_run_opts run;
} make_args;

static hx_status make_option(void *ctx, const hx_opt *o, const char *v)
{
    make_args *a = ctx;
    if (!o) {
        if (a->recipe) return hx_error_set(HX_ERR_ARG, "more than one recipe given ('%s' and '%s')", a->recipe, v);
        a->recipe = v;
        return HX_OK;
    }
    switch (o->id) {
    case O_OUTPUT: a->output = v; break;
    case O_SET:
        if (a->nsets >= a->maxsets) return hx_error_set(HX_ERR_ARG, "--set: more than %d given", a->maxsets);
        a->sets[a->nsets++] = v;
        break;
    case O_FORCE: a->force = 1; break;
    case O_TIMINGS: a->timings = v; break;
    case O_WISDOM: a->run.wisdom = v; break;
    case O_MEM: return hx_plan_parse_size(v, "--mem-per-rank", &a->run.mem_per_rank);
    case O_EFFORT: {
        int e = hx_fft_effort_parse(v);
        if (e < 0) return hx_error_set(HX_ERR_ARG, "--fftw-effort %s: give estimate, measure or patient", v);
        a->run.effort = (hx_effort)e;
        break;
    }
    case O_THREADS: return hx_opt_threads(v, &a->run.threads);
    case O_QUIET: a->verbosity = HX_LOG_QUIET; break;
    case O_VERBOSE: a->verbosity = HX_LOG_DEBUG; break;
    default: a->help = 1; break;
    }
    return HX_OK;
}

static hx_status parse_make_args(int argc, char **argv, make_args *a)
{
    a->verbosity = HX_LOG_INFO;
    a->run = hx_run_defaults();
    hx_status st = hx_opt_parse("make", make_options, argc, argv, make_option, a);
    if (st == HX_OK && !a->help && !a->recipe) return hx_error_set(HX_ERR_ARG, "no recipe given (helmix template > run.ini writes one)");
    return st;
}

/* Rank 0: the files of the run before any work. The output may not be the recipe, a directory
 * (even with --force), or share its name with --timings; the sidecar FILE.xmf is an output too. */
static hx_status check_make_files(const make_args *a, const hx_recipe *r, MPI_Comm comm)
{
    char xmf[HX_PATH_MAX + 8];
    snprintf(xmf, sizeof xmf, "%s.xmf", r->file);
    const hx_cli_file in[] = {{"RECIPE", a->recipe}};
    const hx_cli_file out[] = {{a->output ? "-o" : "[output] file", r->file},
                               {"the sidecar", xmf},
                               {"--timings", a->timings},
                               {"--wisdom", a->run.wisdom}};
    return hx_cli_check_files_agreed(in, 1, out, 4, comm);
}

/* --verbose: what the run will do, as the command line and the recipe decided it. */
static void say_run(const hx_log *log, const make_args *a, const hx_recipe *r)
{
    if (log->verbosity < HX_LOG_DEBUG) return;
    char mem[32] = "the node's available", threads[40] = "from OMP_NUM_THREADS, else 1";
    if (a->run.mem_per_rank > 0) snprintf(mem, sizeof mem, "%.4g MiB", a->run.mem_per_rank / 1048576.0);
    if (a->run.threads > 0) snprintf(threads, sizeof threads, "%d", a->run.threads);
    hx_log_say(log, HX_LOG_DEBUG, "options: threads %s, FFTW effort %s, wisdom %s, memory per rank %s, timings %s, %s",
               threads, hx_fft_effort_name(a->run.effort),
               a->run.wisdom ? a->run.wisdom : "none", mem, a->timings ? a->timings : "none",
               a->force ? "--force: an existing output is replaced" : "an existing output is refused");
    for (int i = 0; i < a->nsets; i++) hx_log_say(log, HX_LOG_DEBUG, "--set %s", a->sets[i]);
    char *text = hx_recipe_render(r);
    if (!text) return;
    hx_log_say(log, HX_LOG_DEBUG, "the recipe as it will be made:");
    for (char *line = text, *next; line && *line; line = next) {
        next = strchr(line, '\n');
        if (next) *next++ = '\0';
        if (*line) hx_log_say(log, HX_LOG_DEBUG, "  %s", line);
    }
    free(text);
}

int hx_cmd_make(int argc, char **argv, MPI_Comm comm, int rank)
{
    make_args a = {0};
    const char *sets[256];
    a.sets = sets;
    a.maxsets = 256;
    hx_status st = parse_make_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) make_usage(stdout);
        return HX_EXIT_OK;
    }
    hx_recipe r;
    if (st == HX_OK) st = hx_cli_load_recipe(a.recipe, a.output, a.sets, a.nsets, &r, comm);
    st = hx_error_agree(comm, st);
    if (st == HX_OK) st = check_make_files(&a, &r, comm);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    hx_log_say(&log, HX_LOG_INFO, "helmix %s make %s -> %s", HX_VERSION, a.recipe, r.file);
    say_run(&log, &a, &r);
    hx_timer *timer = NULL;
    if (a.timings) {
        st = hx_error_agree(comm, hx_timer_create(&timer, "make"));
        if (st != HX_OK) return hx_cli_fail(st, rank);
        hx_timer_note_text(timer, "recipe", a.recipe);
        hx_timer_note_text(timer, "file", r.file);
        a.run.timer = timer;
    }
    st = hx_error_agree(comm, hx_make_run(&r, a.force, &a.run, &log, comm, NULL));
    if (st == HX_OK && timer) st = hx_timer_write(timer, a.timings, comm);
    hx_timer_destroy(&timer);
    return hx_cli_fail(st, rank);
}

