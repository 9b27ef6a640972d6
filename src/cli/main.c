/* main.c — the helmix command line: a thin front end over libhelmix.
 *
 * Reads arguments, reads the recipe once on rank 0 and broadcasts its text, lets every rank
 * parse and validate the same text (so all reach the same verdict), runs the library, and
 * maps the agreed status to an exit code: 0 success, 2 bad input, 3 run-time failure. */
#include <hdf5.h>
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "helmix/error.h"
#include "helmix/log.h"
#include "helmix/make.h"
#include "helmix/recipe.h"
#include "helmix/version.h"

enum { EXIT_INPUT = 2, EXIT_RUNTIME = 3 };

static int exit_code(hx_status st)
{
    if (st == HX_OK) return 0;
    return st == HX_ERR_ARG || st == HX_ERR_EXISTS ? EXIT_INPUT : EXIT_RUNTIME;
}

static void usage(FILE *out)
{
    fprintf(out,
            "helmix %s — turbulent velocity cubes with a chosen compressive/solenoidal mix\n\n"
            "usage:\n"
            "  mpiexec -n P helmix make RECIPE [-o FILE] [--set section.key=value]... [--force] [--quiet]\n"
            "  helmix template            print an annotated recipe with every key\n"
            "  helmix make --help         options of make and the recipe keys\n"
            "  helmix --version\n\n"
            "exit status: 0 success, 2 bad input (recipe, options, existing output), 3 run-time failure\n",
            HX_VERSION);
}

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

/* Rank 0 reads the file; every rank gets the text. Collective. */
static hx_status read_broadcast(const char *path, char **text, MPI_Comm comm)
{
    int rank = 0;
    long len = -1;
    char *buf = NULL;
    if (MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) return hx_error_set(HX_ERR_MPI, "MPI_Comm_rank failed");
    if (rank == 0) {
        FILE *fp = fopen(path, "rb");
        if (fp && fseek(fp, 0, SEEK_END) == 0 && (len = ftell(fp)) >= 0 && fseek(fp, 0, SEEK_SET) == 0 &&
            (buf = malloc((size_t)len + 1)) && fread(buf, 1, (size_t)len, fp) == (size_t)len)
            buf[len] = '\0';
        else {
            free(buf);
            buf = NULL;
            len = -1;
        }
        if (fp) fclose(fp);
    }
    if (MPI_Bcast(&len, 1, MPI_LONG, 0, comm) != MPI_SUCCESS) return hx_error_set(HX_ERR_MPI, "MPI_Bcast failed");
    if (len < 0) return hx_error_set(HX_ERR_ARG, "%s: cannot read the recipe file", path);
    if (rank != 0 && !(buf = malloc((size_t)len + 1))) return hx_error_set(HX_ERR_MEM, "out of memory for the recipe");
    if (MPI_Bcast(buf, (int)len + 1, MPI_CHAR, 0, comm) != MPI_SUCCESS) {
        free(buf);
        return hx_error_set(HX_ERR_MPI, "MPI_Bcast of the recipe failed");
    }
    *text = buf;
    return HX_OK;
}

static hx_status load_recipe(const make_args *a, hx_recipe *r, MPI_Comm comm)
{
    char *text = NULL, dir[HX_PATH_MAX] = ".";
    hx_status st = read_broadcast(a->recipe, &text, comm);
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

static hx_status cmd_make(int argc, char **argv, MPI_Comm comm, int rank)
{
    make_args a = {0};
    const char *sets[256];
    a.sets = sets;
    hx_status st = argc > 256 ? hx_error_set(HX_ERR_ARG, "too many arguments") : parse_make_args(argc, argv, &a);
    if (st == HX_OK && a.help) {
        if (rank == 0) make_usage(stdout);
        return HX_OK;
    }
    hx_recipe r;
    if (st == HX_OK) st = load_recipe(&a, &r, comm);
    st = hx_error_agree(comm, st);
    if (st != HX_OK) return st;
    hx_log log;
    hx_log_init(&log, comm, a.verbosity, stderr);
    hx_log_say(&log, HX_LOG_INFO, "helmix %s make %s -> %s", HX_VERSION, a.recipe, r.file);
    return hx_error_agree(comm, hx_make_run(&r, a.force, &log, comm, NULL));
}

int main(int argc, char **argv)
{
    if (MPI_Init(&argc, &argv) != MPI_SUCCESS) {
        fprintf(stderr, "helmix: MPI_Init failed\n");
        return EXIT_RUNTIME;
    }
    MPI_Comm comm;
    int rank = 0;
    hx_status st = HX_OK;
    if (MPI_Comm_dup(MPI_COMM_WORLD, &comm) != MPI_SUCCESS || MPI_Comm_set_errhandler(comm, MPI_ERRORS_RETURN) != MPI_SUCCESS ||
        MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) {
        fprintf(stderr, "helmix: cannot set up the MPI communicator\n");
        MPI_Abort(MPI_COMM_WORLD, EXIT_RUNTIME);
    }
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* helmix reports HDF5 failures in its own words */

    const char *cmd = argc > 1 ? argv[1] : NULL;
    if (!cmd || !strcmp(cmd, "-h") || !strcmp(cmd, "--help") || !strcmp(cmd, "help")) {
        if (rank == 0) usage(cmd ? stdout : stderr);
        if (!cmd) st = HX_ERR_ARG;
        hx_error_clear();
    } else if (!strcmp(cmd, "--version") || !strcmp(cmd, "version")) {
        if (rank == 0) printf("helmix %s\n", HX_VERSION);
    } else if (!strcmp(cmd, "template")) {
        if (rank == 0) hx_recipe_template(stdout);
    } else if (!strcmp(cmd, "make")) {
        st = cmd_make(argc - 2, argv + 2, comm, rank);
    } else {
        st = hx_error_set(HX_ERR_ARG, "unknown command '%s' (commands: make, template; see helmix --help)", cmd);
    }
    if (st != HX_OK && rank == 0 && hx_error_message()[0]) fprintf(stderr, "helmix: error: %s\n", hx_error_message());
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return exit_code(st);
}
