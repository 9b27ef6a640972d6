/* recipe_load.c — a recipe as every command reads it: rank 0 reads the file once, every rank
 * parses it, applies --set and -o, and validates, so all ranks reach the same verdict. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli.h"
#include "helmix/io.h"

hx_status hx_cli_load_recipe(const char *path, const char *output, const char *const *sets, int nsets, hx_recipe *r,
                             MPI_Comm comm)
{
    char *text = NULL, dir[HX_PATH_MAX] = ".";
    size_t size = 0;
    hx_status st = hx_cli_read_text(path, &text, &size, comm);
    if (st != HX_OK) return st;
    const char *slash = strrchr(path, '/');
    if (slash) snprintf(dir, sizeof dir, "%.*s", (int)(slash - path), path);
    hx_recipe_defaults(r);
    st = hx_recipe_parse_n(r, text, size, path, dir);
    free(text);
    for (int i = 0; st == HX_OK && i < nsets; i++) st = hx_recipe_set(r, sets[i]);
    if (st == HX_OK && output) {
        if (strlen(output) >= sizeof r->file) return hx_error_set(HX_ERR_ARG, "-o: path too long");
        snprintf(r->file, sizeof r->file, "%s", output);
    }
    if (st == HX_OK) st = hx_recipe_validate(r); /* its messages name the file and line, or the --set */
    /* the I/O tuning is checked by io (which the recipe module does not know); its message is
     * given the key's origin like every other recipe message */
    const char *names[2] = {"alignment", "io_hints"};
    for (int i = 0; st == HX_OK && i < 2; i++) {
        hx_io_tuning t = {i ? 0.0 : r->alignment, i ? r->io_hints : "none"};
        if ((st = hx_io_tuning_check(&t)) != HX_OK) {
            char where[HX_PATH_MAX + 32], msg[1024];
            hx_recipe_origin(r, "output", names[i], where, sizeof where);
            snprintf(msg, sizeof msg, "%s", hx_error_message());
            st = hx_error_set(st, "%s: %s", where, msg);
        }
    }
    return st;
}
