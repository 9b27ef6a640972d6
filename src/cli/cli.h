/* cli.h — what the command files of the front end share: exit codes, status mapping and
 * reading a small text file once on rank 0. */
#ifndef HX_CLI_H
#define HX_CLI_H

#include <mpi.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

enum { HX_EXIT_OK = 0, HX_EXIT_CHECK = 1, HX_EXIT_INPUT = 2, HX_EXIT_RUNTIME = 3 };

/* 0 for HX_OK, 2 for bad input (HX_ERR_ARG, HX_ERR_EXISTS), 3 otherwise. */
int hx_cli_exit_code(hx_status st);

/* Collective: rank 0 reads path, every rank gets the text (caller frees) and, when size is
 * not NULL, its length (the text may hold a NUL before its end). */
hx_status hx_cli_read_text(const char *path, char **text, size_t *size, MPI_Comm comm);

/* The commands. Each returns an exit code and has printed its error line (rank 0). */
int hx_cmd_make(int argc, char **argv, MPI_Comm comm, int rank);
int hx_cmd_inspect(int argc, char **argv, MPI_Comm comm, int rank);
int hx_cmd_suite(int argc, char **argv, MPI_Comm comm, int rank);
int hx_cmd_score(int argc, char **argv, MPI_Comm comm, int rank);
int hx_cmd_scaling(int argc, char **argv, MPI_Comm comm, int rank);
int hx_cmd_plan(int argc, char **argv, MPI_Comm comm, int rank);

/* Collective: read recipe `path` (rank 0 reads, every rank parses), apply the --set assignments and
 * -o (output, may be NULL), validate. One message naming the file on failure (recipe_load.c). */
hx_status hx_cli_load_recipe(const char *path, const char *output, const char *const *sets, int nsets, hx_recipe *r,
                             MPI_Comm comm);

/* Print "helmix: error: <message>" on rank 0 and return the exit code of st. */
int hx_cli_fail(hx_status st, int rank);

#endif
