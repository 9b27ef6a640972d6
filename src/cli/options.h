/* options.h — one option table per command. The rows drive parsing, the "did you mean" of an
 * unknown option and the options part of --help, so help and parsing cannot drift, and a flag
 * can never be taken as a value. Also the checks of the files a command reads and writes,
 * made before any work. Not collective unless said. */
#ifndef HX_CLI_OPTIONS_H
#define HX_CLI_OPTIONS_H

#include <mpi.h>
#include <stdio.h>

#include "helmix/error.h"

enum {
    HX_OPT_REPEAT = 1 /* may be given more than once (each value reaches the setter) */
};

/* One row. A table ends with a row whose name is NULL; a row whose name is "" is a heading
 * of the help (its help text printed as it is). */
typedef struct hx_opt {
    const char *name;  /* long name without the dashes: "output" is --output                */
    char letter;       /* short form -o, or 0                                              */
    const char *value; /* what the value is called in the help ("FILE"); NULL: a flag       */
    int id;            /* what the command's setter switches on                            */
    unsigned flags;    /* HX_OPT_*                                                         */
    const char *help;  /* help text; each '\n' continues on a new line under the first      */
} hx_opt;

/* The command's setter: called in order for every option (value NULL for a flag) and, with
 * opt NULL, for every operand. An error it returns stops the parse. */
typedef hx_status (*hx_opt_setter)(void *ctx, const hx_opt *opt, const char *value);

/* Parse argv[0..argc) against table for command `cmd` (for messages). Accepted: --name VALUE,
 * --name=VALUE, -x VALUE, -xVALUE, flags --name and -x, and "--" ending the options. Refused
 * with HX_ERR_ARG and one line naming the option: an unknown option (with the nearest name
 * when one is close), a missing or empty value, a separate value that starts with "--" or is
 * one of the table's short options (an option, not a value: write --name=VALUE to mean it), a
 * value given to a flag, an option without HX_OPT_REPEAT given twice. */
hx_status hx_opt_parse(const char *cmd, const hx_opt *table, int argc, char **argv, hx_opt_setter set, void *ctx);

/* The options part of a command's help, generated from its table. */
void hx_opt_help(FILE *out, const hx_opt *table);

/* The value of --threads: a whole number from 1 to 4096, else HX_ERR_ARG naming it. */
hx_status hx_opt_threads(const char *value, int *threads);

/* Edit distance (insertions, deletions, substitutions) of two short strings. */
int hx_opt_distance(const char *a, const char *b);

/* A file a command reads or writes, and the option (or the operand's role) that named it. */
typedef struct hx_cli_file {
    const char *what; /* "--json", "-o", "FILE", "[output] file" */
    const char *path; /* NULL: not given, skipped               */
} hx_cli_file;

/* The inputs must exist and be regular files. The outputs: a non-empty name, a directory that
 * exists and can be written, not an existing directory or other non-regular file, not one of
 * the inputs and not another of the outputs (the same file by device and inode, whatever the
 * spelling, symbolic or hard link; for a file not yet there, its directory's identity and its
 * name). HX_ERR_ARG and one line naming the option on the first fault; nothing is created. */
hx_status hx_cli_check_files(const hx_cli_file *in, int nin, const hx_cli_file *out, int nout);

/* Collective: hx_cli_check_files on rank 0 (file systems the outputs go to are shared, and
 * rank 0 says it once), agreed on every rank. */
hx_status hx_cli_check_files_agreed(const hx_cli_file *in, int nin, const hx_cli_file *out, int nout, MPI_Comm comm);

#endif
