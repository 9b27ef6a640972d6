/* fuzz_set.c — libFuzzer harness of --set: the input's lines are "section.key=value"
 * assignments applied in turn (hx_recipe_set) to a recipe that gives one key of every set of
 * alternatives. After each accepted one the recipe renders to text that parses back to it
 * (a --set value that a recipe line could not hold must have been refused), and at most one
 * alternative of each set is given, so a --set never leaves "given twice" behind. */
#include "fuzz_common.h"

static const char base_text[] =
    "[grid]\ncells = 8\n[units]\nlength = 1 pc\ndensity = 1e-22\n[mix]\nzeta = 0.3\n[amplitude]\nmach = 2\n"
    "[density]\nmodel = sphere\nradius = 0.2\nmass = 1 Msun\n[magnetic]\nbeta = 0.5\nrandom_ratio = 0.1\n"
    "[magnetic_spectrum]\nshape = power\n[output]\nfile = fuzz.h5\n";

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    FUZZ_ASSERT(hx_recipe_parse(&r, base_text, "base.ini", NULL) == HX_OK, "%s", hx_error_message());
    char *copy = malloc(size + 1);
    if (!copy) return 0;
    memcpy(copy, data, size);
    copy[size] = '\0';
    int n = 0;
    for (char *line = copy, *next; line && n < 16; line = next, n++) {
        next = memchr(line, '\n', (size_t)(copy + size - line));
        if (next) *next++ = '\0';
        if (hx_recipe_set(&r, line) != HX_OK) {
            fuzz_one_line();
            continue;
        }
        fuzz_round_trip(&r, 0);
    }
    free(copy);
    hx_recipe v = r;
    if (fuzz_reads_files(&r)) return 0;
    if (hx_recipe_validate(&v) == HX_OK) fuzz_round_trip(&v, 1);
    else {
        fuzz_one_line();
        FUZZ_ASSERT(!strstr(hx_error_message(), "only one of"), "a --set left two alternatives: %s",
                    hx_error_message());
    }
    return 0;
}
