/* options.c — the one option parser of the command line, the help it generates from the same
 * table, and the checks of a command's input and output files made before any work.
 *
 * A value is taken from the next argument only when that argument cannot be an option of the
 * command ("--x", or one of its short options): `--json --quiet` must never write a file
 * named --quiet. `--name=VALUE` says explicitly that VALUE is a value, whatever it looks like. */
#include "options.h"

#include <errno.h>
#include <limits.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* ---------------------------------------------------------------- parsing */

hx_status hx_opt_threads(const char *value, int *threads)
{
    char *end = NULL;
    long t = strtol(value, &end, 10);
    if (end == value || *end || t < 1 || t > 4096)
        return hx_error_set(HX_ERR_ARG, "--threads %s: give a whole number from 1 to 4096", value);
    *threads = (int)t;
    return HX_OK;
}

int hx_opt_distance(const char *a, const char *b)
{
    size_t la = strlen(a), lb = strlen(b);
    if (la > 63 || lb > 63) return (int)(la > lb ? la : lb); /* option names are short */
    int row[64];
    for (size_t j = 0; j <= lb; j++) row[j] = (int)j;
    for (size_t i = 1; i <= la; i++) {
        int diag = row[0];
        row[0] = (int)i;
        for (size_t j = 1; j <= lb; j++) {
            int up = row[j], best = diag + (a[i - 1] != b[j - 1]);
            if (up + 1 < best) best = up + 1;
            if (row[j - 1] + 1 < best) best = row[j - 1] + 1;
            diag = up;
            row[j] = best;
        }
    }
    return row[lb];
}

static int is_heading(const hx_opt *o) { return o->name && !o->name[0]; }

static const hx_opt *by_name(const hx_opt *table, const char *name, size_t len)
{
    for (const hx_opt *o = table; o->name; o++)
        if (!is_heading(o) && strlen(o->name) == len && !strncmp(o->name, name, len)) return o;
    return NULL;
}

static const hx_opt *by_letter(const hx_opt *table, char c)
{
    for (const hx_opt *o = table; o->name; o++)
        if (o->letter && o->letter == c) return o;
    return NULL;
}

/* The long name closest to `given` (without dashes): a unique name it begins, else one within
 * an edit distance of 1 (names up to 4 letters) or 2. NULL when none is close. */
static const hx_opt *nearest(const hx_opt *table, const char *given)
{
    const hx_opt *best = NULL, *prefix = NULL;
    int nprefix = 0, dbest = 1 << 20;
    size_t len = strlen(given);
    for (const hx_opt *o = table; o->name; o++) {
        if (is_heading(o)) continue;
        if (len >= 2 && !strncmp(o->name, given, len)) prefix = o, nprefix++;
        int d = hx_opt_distance(given, o->name);
        if (d < dbest) dbest = d, best = o;
    }
    if (nprefix == 1) return prefix;
    return best && dbest <= (len <= 4 ? 1 : 2) ? best : NULL;
}

static hx_status unknown(const char *cmd, const hx_opt *table, const char *arg)
{
    char given[64];
    const char *name = arg + (arg[1] == '-' ? 2 : 1), *eq = strchr(name, '=');
    snprintf(given, sizeof given, "%.*s", (int)(eq ? eq - name : (ptrdiff_t)strlen(name)), name);
    const hx_opt *near = given[0] ? nearest(table, given) : NULL;
    if (near)
        return hx_error_set(HX_ERR_ARG, "unknown option '%.*s' (did you mean --%s?)", (int)(eq ? eq - arg : (ptrdiff_t)strlen(arg)),
                            arg, near->name);
    return hx_error_set(HX_ERR_ARG, "unknown option '%.*s' (see helmix %s --help)", (int)(eq ? eq - arg : (ptrdiff_t)strlen(arg)),
                        arg, cmd);
}

/* An argument that is an option of this command, not a value: "--anything", or "-x" for one
 * of the table's letters (negative numbers such as -0.5 stay values). */
static int looks_like_option(const hx_opt *table, const char *s)
{
    if (!strncmp(s, "--", 2)) return 1;
    return s[0] == '-' && s[1] && !s[2] && by_letter(table, s[1]);
}

static void label(char *buf, size_t size, const hx_opt *o, int as_letter)
{
    if (as_letter) snprintf(buf, size, "-%c", o->letter);
    else snprintf(buf, size, "--%s", o->name);
}

hx_status hx_opt_parse(const char *cmd, const hx_opt *table, int argc, char **argv, hx_opt_setter set, void *ctx)
{
    int nrows = 0;
    while (table[nrows].name) nrows++;
    const char **given = calloc((size_t)(nrows ? nrows : 1), sizeof *given); /* the value first given per row */
    if (!given) return hx_error_set(HX_ERR_MEM, "out of memory reading the options");
    hx_status st = HX_OK;
    int operands_only = 0;
    for (int i = 0; i < argc && st == HX_OK; i++) {
        const char *s = argv[i], *value = NULL;
        if (operands_only || s[0] != '-' || !s[1]) {
            st = set(ctx, NULL, s);
            continue;
        }
        if (!strcmp(s, "--")) { /* POSIX utility convention: what follows is operands */
            operands_only = 1;
            continue;
        }
        const hx_opt *o;
        int as_letter = s[1] != '-', inline_value = 0;
        if (!as_letter) {
            const char *name = s + 2, *eq = strchr(name, '=');
            o = by_name(table, name, eq ? (size_t)(eq - name) : strlen(name));
            if (o && eq) value = eq + 1, inline_value = 1;
        } else {
            o = by_letter(table, s[1]);
            if (o && s[2]) {
                if (o->value) value = s + 2, inline_value = 1;
                else o = NULL; /* short flags do not bundle: -qv is not -q -v */
            }
        }
        if (!o) {
            st = unknown(cmd, table, s);
            break;
        }
        char name[72];
        label(name, sizeof name, o, as_letter);
        if (!o->value && inline_value) {
            st = hx_error_set(HX_ERR_ARG, "option %s takes no value", name);
            break;
        }
        if (o->value && !inline_value) {
            if (i + 1 >= argc) {
                st = hx_error_set(HX_ERR_ARG, "option %s needs a value (%s)", name, o->value);
                break;
            }
            if (looks_like_option(table, argv[i + 1])) {
                st = hx_error_set(HX_ERR_ARG, "option %s needs a value (%s), not the option '%s' (write %s=VALUE for a value "
                                              "that starts with '-')", name, o->value, argv[i + 1], name);
                break;
            }
            value = argv[++i];
        }
        if (o->value && !value[0]) {
            st = hx_error_set(HX_ERR_ARG, "option %s needs a value (%s), got an empty one", name, o->value);
            break;
        }
        int row = (int)(o - table);
        if (o->value && given[row] && !(o->flags & HX_OPT_REPEAT)) {
            st = hx_error_set(HX_ERR_ARG, "option %s given twice ('%s' and '%s'); give it once", name, given[row], value);
            break;
        }
        if (o->value && !given[row]) given[row] = value;
        st = set(ctx, o, value);
    }
    free(given);
    return st;
}

/* ---------------------------------------------------------------- help */

enum { HELP_COLUMN = 28 }; /* where the help text starts; a longer left part puts it on the next line */

void hx_opt_help(FILE *out, const hx_opt *table)
{
    for (const hx_opt *o = table; o->name; o++) {
        if (is_heading(o)) {
            fprintf(out, "%s\n", o->help);
            continue;
        }
        char left[128];
        int n;
        if (o->letter) n = snprintf(left, sizeof left, "  -%c, --%s%s%s", o->letter, o->name, o->value ? " " : "", o->value ? o->value : "");
        else n = snprintf(left, sizeof left, "  --%s%s%s", o->name, o->value ? " " : "", o->value ? o->value : "");
        fputs(left, out);
        if (n + 1 > HELP_COLUMN) fprintf(out, "\n%*s", HELP_COLUMN, "");
        else fprintf(out, "%*s", HELP_COLUMN - n, "");
        for (const char *h = o->help; *h; h++) {
            fputc(*h, out);
            if (*h == '\n') fprintf(out, "%*s", HELP_COLUMN, "");
        }
        fputc('\n', out);
    }
}

/* ---------------------------------------------------------------- files */

/* Who a path is: its device and inode when it exists, else its directory's and its name. */
typedef struct identity {
    int exists;
    dev_t dev;
    ino_t ino;
    const char *name; /* the last component, for a path not yet there */
} identity;

static int same(const identity *a, const identity *b)
{
    if (a->exists != b->exists || a->dev != b->dev || a->ino != b->ino) return 0;
    return a->exists || !strcmp(a->name, b->name);
}

static const char *sep(const char *what) { return what && what[0] == '-' ? " " : ""; }

static hx_status check_input(const hx_cli_file *f, identity *id)
{
    struct stat sb;
    const char *w = f->what[0] == '-' ? f->what : "";
    if (stat(f->path, &sb) != 0)
        return hx_error_set(HX_ERR_ARG, "%s%s%s: cannot read (%s)", w, sep(w), f->path,
                            errno == ENOENT ? "no such file" : strerror(errno));
    if (S_ISDIR(sb.st_mode)) return hx_error_set(HX_ERR_ARG, "%s%s%s: cannot read (a directory, not a file)", w, sep(w), f->path);
    if (!S_ISREG(sb.st_mode)) return hx_error_set(HX_ERR_ARG, "%s%s%s: cannot read (not a regular file)", w, sep(w), f->path);
    if (access(f->path, R_OK) != 0) return hx_error_set(HX_ERR_ARG, "%s%s%s: cannot read (%s)", w, sep(w), f->path, strerror(errno));
    *id = (identity){1, sb.st_dev, sb.st_ino, NULL};
    return HX_OK;
}

static hx_status check_output(const hx_cli_file *f, identity *id)
{
    char dir[PATH_MAX];
    struct stat sb;
    const char *p = f->path, *slash = strrchr(p, '/');
    if (!p[0]) return hx_error_set(HX_ERR_ARG, "%s: the file name is empty", f->what);
    if (slash && !slash[1]) return hx_error_set(HX_ERR_ARG, "%s %s: names a directory; name a file", f->what, p);
    if (slash) {
        if ((size_t)(slash - p) >= sizeof dir) return hx_error_set(HX_ERR_ARG, "%s %s: the path is too long", f->what, p);
        snprintf(dir, sizeof dir, "%.*s", (int)(slash == p ? 1 : slash - p), p);
    } else
        snprintf(dir, sizeof dir, ".");
    if (stat(dir, &sb) != 0 || !S_ISDIR(sb.st_mode))
        return hx_error_set(HX_ERR_ARG, "%s %s: the directory %s does not exist", f->what, p, dir);
    if (access(dir, W_OK | X_OK) != 0) return hx_error_set(HX_ERR_ARG, "%s %s: the directory %s cannot be written", f->what, p, dir);
    *id = (identity){0, sb.st_dev, sb.st_ino, slash ? slash + 1 : p};
    if (stat(p, &sb) == 0) {
        if (S_ISDIR(sb.st_mode)) return hx_error_set(HX_ERR_ARG, "%s %s: is a directory; name a file", f->what, p);
        /* the writers replace the file by a rename: a device or pipe would be replaced, not written */
        if (!S_ISREG(sb.st_mode)) return hx_error_set(HX_ERR_ARG, "%s %s: exists and is not a regular file", f->what, p);
        *id = (identity){1, sb.st_dev, sb.st_ino, NULL};
    }
    return HX_OK;
}

hx_status hx_cli_check_files(const hx_cli_file *in, int nin, const hx_cli_file *out, int nout)
{
    identity *ids = calloc((size_t)(nin + nout) + 1, sizeof *ids);
    if (!ids) return hx_error_set(HX_ERR_MEM, "out of memory checking the files");
    hx_status st = HX_OK;
    for (int i = 0; i < nin && st == HX_OK; i++)
        if (in[i].path) st = check_input(&in[i], &ids[i]);
    for (int j = 0; j < nout && st == HX_OK; j++) {
        if (!out[j].path) continue;
        identity *me = &ids[nin + j];
        if ((st = check_output(&out[j], me)) != HX_OK) break;
        for (int i = 0; i < nin && st == HX_OK; i++)
            if (in[i].path && same(me, &ids[i]))
                st = hx_error_set(HX_ERR_ARG, "%s %s: is the input %s; an output may not replace an input", out[j].what,
                                  out[j].path, in[i].path);
        for (int k = 0; k < j && st == HX_OK; k++)
            if (out[k].path && same(me, &ids[nin + k]))
                st = hx_error_set(HX_ERR_ARG, "%s %s: is the same file as %s %s; name two files", out[j].what, out[j].path,
                                  out[k].what, out[k].path);
    }
    free(ids);
    return st;
}

hx_status hx_cli_check_files_agreed(const hx_cli_file *in, int nin, const hx_cli_file *out, int nout, MPI_Comm comm)
{
    int rank = 0;
    hx_status st = HX_OK;
    if (MPI_Comm_rank(comm, &rank) != MPI_SUCCESS) st = hx_error_set(HX_ERR_MPI, "MPI_Comm_rank failed");
    else if (rank == 0) st = hx_cli_check_files(in, nin, out, nout);
    return hx_error_agree(comm, st);
}
