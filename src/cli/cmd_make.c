/* cmd_make.c — `helmix make`: arguments, the recipe read once and parsed on every rank,
 * overrides, validation, then the generator. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/fft.h"
#include "helmix/log.h"
#include "helmix/timer.h"
#include "helmix/make.h"
#include "helmix/plan.h"
#include "helmix/recipe.h"
#include "helmix/version.h"

static void make_usage(FILE *out)
{
    fprintf(out,
            "usage: mpiexec -n P helmix make RECIPE [options]\n\n"
            "Generate a Gaussian random velocity cube as the recipe asks and write it as HDF5\n"
            "(Grid Data Format, opened by yt.load) plus an XDMF sidecar FILE.xmf.\n\n"
            "options:\n"
            "  -o, --output FILE          output file (overrides [output] file)\n"
            "  --set section.key=value    override one recipe key; may be repeated\n"
            "  --force                    replace an existing output file\n"
            "  --timings FILE.json        write each phase's time (min/mean/max over ranks), bytes,\n"
            "                             transforms and peak memory per rank as JSON\n"
            "  --threads T                threads per rank for FFTW (default: OMP_NUM_THREADS, else 1)\n"
            "  --fftw-effort E            FFTW planning: estimate (default), measure or patient\n"
            "  --wisdom FILE              FFTW wisdom: read before planning (if it exists), written after\n"
            "  --mem-per-rank SIZE        memory a rank may use, e.g. 3.5G or 1800MiB: a run that cannot\n"
            "                             fit is refused before it starts (default: the node's available\n"
            "                             memory shared by its ranks); decides [output] draws = auto\n"
            "  --quiet                    no progress lines\n"
            "  --verbose                  more progress lines\n"
            "  -h, --help                 this text\n\n"
            "recipe keys (helmix template prints an annotated recipe):\n");
    hx_recipe_print_keys(out);
}

typedef struct {
    const char *recipe;
    const char *output;
    const char *timings;
    const char **sets;
    int nsets, force, verbosity, help;
    hx_run_opts run;
} make_args;

static hx_status parse_make_args(int argc, char **argv, make_args *a)
{
    a->verbosity = HX_LOG_INFO;
    a->run = hx_run_defaults();
    for (int i = 0; i < argc; i++) {
        const char *s = argv[i];
        if (!strcmp(s, "-h") || !strcmp(s, "--help")) a->help = 1;
        else if (!strcmp(s, "--timings") || !strcmp(s, "--threads") || !strcmp(s, "--fftw-effort") || !strcmp(s, "--wisdom") ||
                 !strcmp(s, "--mem-per-rank")) {
            if (i + 1 >= argc || !strncmp(argv[i + 1], "--", 2)) return hx_error_set(HX_ERR_ARG, "option %s needs a value", s);
            const char *v = argv[++i];
            char *end = NULL;
            if (!strcmp(s, "--timings")) a->timings = v;
            else if (!strcmp(s, "--wisdom")) a->run.wisdom = v;
            else if (!strcmp(s, "--mem-per-rank")) {
                hx_status st = hx_plan_parse_size(v, "--mem-per-rank", &a->run.mem_per_rank);
                if (st != HX_OK) return st;
            }
            else if (!strcmp(s, "--fftw-effort")) {
                int e = hx_fft_effort_parse(v);
                if (e < 0) return hx_error_set(HX_ERR_ARG, "--fftw-effort %s: give estimate, measure or patient", v);
                a->run.effort = (hx_effort)e;
            } else {
                long t = strtol(v, &end, 10);
                if (!end || *end || t < 1 || t > 4096) return hx_error_set(HX_ERR_ARG, "--threads %s: give a whole number from 1 to 4096", v);
                a->run.threads = (int)t;
            }
        }
        else if (!strcmp(s, "--force")) a->force = 1;
        else if (!strcmp(s, "--quiet") || !strcmp(s, "-q")) a->verbosity = HX_LOG_QUIET;
        else if (!strcmp(s, "--verbose") || !strcmp(s, "-v")) a->verbosity = HX_LOG_DEBUG;
        else if (!strcmp(s, "-o") || !strcmp(s, "--output") || !strcmp(s, "--set")) {
            if (i + 1 >= argc) return hx_error_set(HX_ERR_ARG, "option %s needs a value", s);
            if (s[1] == 'o' || s[2] == 'o') a->output = argv[++i];
            else a->sets[a->nsets++] = argv[++i];
        } else if (!strncmp(s, "--set=", 6)) a->sets[a->nsets++] = s + 6;
        else if (!strncmp(s, "--output=", 9)) a->output = s + 9;
        else if (s[0] == '-' && s[1]) return hx_error_set(HX_ERR_ARG, "unknown option '%s' (see helmix make --help)", s);
        else if (a->recipe) return hx_error_set(HX_ERR_ARG, "more than one recipe given ('%s' and '%s')", a->recipe, s);
        else a->recipe = s;
    }
    if (!a->help && !a->recipe) return hx_error_set(HX_ERR_ARG, "no recipe given (helmix template > run.ini writes one)");
    return HX_OK;
}

int hx_cmd_make(int argc, char **argv, MPI_Comm comm, int rank)
{
    make_args a = {0};
    const char *sets[256];
    a.sets = sets;
    hx_status st = argc > 256 ? hx_error_set(HX_ERR_ARG, "too many arguments") : parse_make_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) make_usage(stdout);
        return HX_EXIT_OK;
    }
    hx_recipe r;
    if (st == HX_OK) st = hx_cli_load_recipe(a.recipe, a.output, a.sets, a.nsets, &r, comm);
    st = hx_error_agree(comm, st);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    hx_log_say(&log, HX_LOG_INFO, "helmix %s make %s -> %s", HX_VERSION, a.recipe, r.file);
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

