/* cmd_make.c — `helmix make`: arguments, the recipe read once and parsed on every rank,
 * overrides, validation, then the generator. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/log.h"
#include "helmix/make.h"
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
            "  --quiet                    no progress lines\n"
            "  --verbose                  more progress lines\n"
            "  -h, --help                 this text\n\n"
            "recipe keys (helmix template prints an annotated recipe):\n");
    hx_recipe_print_keys(out);
}

typedef struct {
    const char *recipe;
    const char *output;
    const char **sets;
    int nsets, force, verbosity, help;
} make_args;

static hx_status parse_make_args(int argc, char **argv, make_args *a)
{
    a->verbosity = HX_LOG_INFO;
    for (int i = 0; i < argc; i++) {
        const char *s = argv[i];
        if (!strcmp(s, "-h") || !strcmp(s, "--help")) a->help = 1;
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

static hx_status load_recipe(const make_args *a, hx_recipe *r, MPI_Comm comm)
{
    char *text = NULL, dir[HX_PATH_MAX] = ".";
    hx_status st = hx_cli_read_text(a->recipe, &text, comm);
    if (st != HX_OK) return st;
    const char *slash = strrchr(a->recipe, '/');
    if (slash) snprintf(dir, sizeof dir, "%.*s", (int)(slash - a->recipe), a->recipe);
    hx_recipe_defaults(r);
    st = hx_recipe_parse(r, text, a->recipe, dir);
    free(text);
    for (int i = 0; st == HX_OK && i < a->nsets; i++) st = hx_recipe_set(r, a->sets[i]);
    if (st == HX_OK && a->output) {
        if (strlen(a->output) >= sizeof r->file) return hx_error_set(HX_ERR_ARG, "-o: path too long");
        snprintf(r->file, sizeof r->file, "%s", a->output);
    }
    if (st == HX_OK && (st = hx_recipe_validate(r)) != HX_OK) {
        char msg[1024]; /* cross-key rules know the key, not the line: name the file at least */
        snprintf(msg, sizeof msg, "%s", hx_error_message());
        hx_error_set(st, "%s: %s", a->recipe, msg);
    }
    return st;
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
    if (st == HX_OK) st = load_recipe(&a, &r, comm);
    st = hx_error_agree(comm, st);
    if (st != HX_OK) return hx_cli_fail(st, rank);
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    hx_log_say(&log, HX_LOG_INFO, "helmix %s make %s -> %s", HX_VERSION, a.recipe, r.file);
    return hx_cli_fail(hx_error_agree(comm, hx_make_run(&r, a.force, NULL, &log, comm, NULL)), rank);
}

