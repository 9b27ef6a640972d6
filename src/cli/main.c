/* main.c — the helmix command line: a thin front end over libhelmix.
 *
 * Prolog (MPI, a private communicator that returns errors), dispatch to one command file
 * (cmd_make.c, cmd_inspect.c), epilog. Exit codes: 0 success, 1 a --check found a
 * difference, 2 bad input, 3 run-time failure. */
#include <hdf5.h>
#include <mpi.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "options.h"
#include "helmix/error.h"
#include "helmix/fault.h"
#include "helmix/recipe.h"
#include "helmix/version.h"

int hx_cli_exit_code(hx_status st)
{
    if (st == HX_OK) return HX_EXIT_OK;
    return st == HX_ERR_ARG || st == HX_ERR_EXISTS ? HX_EXIT_INPUT : HX_EXIT_RUNTIME;
}

int hx_cli_fail(hx_status st, int rank)
{
    if (st != HX_OK && rank == 0 && hx_error_message()[0]) fprintf(stderr, "helmix: error: %s\n", hx_error_message());
    return hx_cli_exit_code(st);
}

hx_status hx_cli_read_text(const char *path, char **text, size_t *size, MPI_Comm comm)
{
    int rank = 0;
    long len = -1;
    char *buf = NULL;
    if (MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) return hx_error_set(HX_ERR_MPI, "MPI_Comm_rank failed");
    hx_status checked = HX_OK;
    const hx_cli_file in[] = {{"FILE", path}};
    if (rank == 0 && (checked = hx_cli_check_files(in, 1, NULL, 0)) != HX_OK) len = -2; /* a directory reads as nothing */
    else if (rank == 0) {
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
    if (len == -2 && rank == 0) return checked; /* the message says why; rank 0's wins when agreed */
    if (len < 0) return hx_error_set(HX_ERR_ARG, "%s: cannot read the file", path);
    if (rank != 0 && !(buf = malloc((size_t)len + 1))) return hx_error_set(HX_ERR_MEM, "out of memory reading %s", path);
    if (MPI_Bcast(buf, (int)len + 1, MPI_CHAR, 0, comm) != MPI_SUCCESS) {
        free(buf);
        return hx_error_set(HX_ERR_MPI, "MPI_Bcast of %s failed", path);
    }
    *text = buf;
    if (size) *size = (size_t)len; /* a NUL inside is the reader's to refuse, not the end of the text */
    return HX_OK;
}

static void usage(FILE *out)
{
    fprintf(out,
            "helmix %s — turbulent velocity cubes with a chosen compressive/solenoidal mix\n\n"
            "usage:\n"
            "  mpiexec -n P helmix make RECIPE [-o FILE] [--set section.key=value]... [--force] [--quiet]\n"
            "  mpiexec -n P helmix inspect FILE [--check] [--json F] [--csv F] [--plot F.png|F.pdf] [...]\n"
            "  helmix score MANIFEST RESULTS.json [--json F] [--plot F.png|F.pdf]   grade a tool's answers\n"
            "  mpiexec -n P helmix suite DIR [--cells N] [--ranks-hint P] [--quick] [--force]   known-answer cubes\n"
            "  helmix scaling FILE.json... [--table F.md] [--plot F.png|F.pdf] [--kind strong|weak|auto]   scaling study\n"
            "  helmix plan RECIPE --ranks P [--mem-per-rank SIZE] [--json]   memory, file and work of a make run\n"
            "  helmix template            print an annotated recipe with every key\n"
            "  helmix make --help         options of make and the recipe keys\n"
            "  helmix COMMAND --help      options of any other command\n"
            "  helmix --version\n\n"
            "options: --name VALUE or --name=VALUE; a value is never taken from an argument that starts\n"
            "with --, and \"--\" ends the options\n\n"
            "exit status: 0 success, 1 inspect --check found a difference, 2 bad input (recipe,\n"
            "options, files, existing output), 3 run-time failure\n",
            HX_VERSION);
}

/* template and version take no options but --help; an operand is refused by the parser's setter */
static const hx_opt bare_options[] = {
    {"help", 'h', NULL, 0, 0, "this text"},
    {NULL, 0, NULL, 0, 0, NULL},
};

static hx_status bare_option(void *ctx, const hx_opt *o, const char *value)
{
    if (!o) return hx_error_set(HX_ERR_ARG, "unexpected argument '%s' (this command takes none)", value);
    *(int *)ctx = 1;
    return HX_OK;
}

int main(int argc, char **argv)
{
    /* threads (--threads) run inside FFTW and the k-space loops; only the main thread calls MPI */
    int provided = MPI_THREAD_SINGLE;
    if (MPI_Init_thread(&argc, &argv, MPI_THREAD_FUNNELED, &provided) != MPI_SUCCESS) {
        fprintf(stderr, "helmix: MPI_Init_thread failed\n");
        return HX_EXIT_RUNTIME;
    }
    MPI_Comm comm;
    int rank = 0;
    hx_status st = HX_OK;
    int code = HX_EXIT_OK;
    if (MPI_Comm_dup(MPI_COMM_WORLD, &comm) != MPI_SUCCESS || MPI_Comm_set_errhandler(comm, MPI_ERRORS_RETURN) != MPI_SUCCESS ||
        MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) {
        fprintf(stderr, "helmix: cannot set up the MPI communicator\n");
        MPI_Abort(MPI_COMM_WORLD, HX_EXIT_RUNTIME);
    }
    H5Eset_auto2(H5E_DEFAULT, NULL, NULL); /* helmix reports HDF5 failures in its own words */
    hx_fault_install_handlers(); /* SIGINT, SIGTERM: remove the partial file being written */

    const char *cmd = argc > 1 ? argv[1] : NULL;
    if (!cmd || !strcmp(cmd, "-h") || !strcmp(cmd, "--help") || !strcmp(cmd, "help")) {
        if (rank == 0) usage(cmd ? stdout : stderr);
        if (!cmd) st = HX_ERR_ARG;
        hx_error_clear();
    } else if (!strcmp(cmd, "--version") || !strcmp(cmd, "version") || !strcmp(cmd, "template")) {
        int help = 0;
        st = hx_opt_parse(cmd[0] == '-' ? "version" : cmd, bare_options, argc - 2, argv + 2, bare_option, &help);
        if (st == HX_OK && rank == 0) {
            if (help) printf("usage: helmix %s\n\n%s\n\noptions:\n", cmd[0] == '-' ? "--version" : cmd,
                             cmd[0] == 't' ? "Print an annotated recipe with every key, its default, unit and meaning."
                                           : "Print the version of helmix.");
            if (help) hx_opt_help(stdout, bare_options);
            else if (cmd[0] == 't') hx_recipe_template(stdout);
            else printf("helmix %s\n", HX_VERSION);
        }
    } else if (!strcmp(cmd, "make")) {
        code = hx_cmd_make(argc - 2, argv + 2, comm, rank);
    } else if (!strcmp(cmd, "inspect")) {
        code = hx_cmd_inspect(argc - 2, argv + 2, comm, rank);
    } else if (!strcmp(cmd, "suite")) {
        code = hx_cmd_suite(argc - 2, argv + 2, comm, rank);
    } else if (!strcmp(cmd, "score")) {
        code = hx_cmd_score(argc - 2, argv + 2, comm, rank);
    } else if (!strcmp(cmd, "plan")) {
        code = hx_cmd_plan(argc - 2, argv + 2, comm, rank);
    } else if (!strcmp(cmd, "scaling")) {
        code = hx_cmd_scaling(argc - 2, argv + 2, comm, rank);
    } else {
        st = hx_error_set(HX_ERR_ARG, "unknown command '%s' (commands: make, plan, inspect, suite, score, scaling, template; see helmix --help)", cmd);
    }
    if (st != HX_OK) code = hx_cli_fail(st, rank);
    MPI_Comm_free(&comm);
    MPI_Finalize();
    return code;
}
