/* fuzz_common.h — what the helmix fuzz harnesses share: a failed property is a crash that
 * libFuzzer records with its input; equal recipes are equal bytes up to the line numbers
 * (hx_recipe_defaults zeroes the struct, "not given" is one NaN pattern), as in test_recipe.c. */
#ifndef HX_FUZZ_COMMON_H
#define HX_FUZZ_COMMON_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "helmix/error.h"
#include "helmix/recipe.h"

#define FUZZ_ASSERT(cond, ...)                                                         \
    do {                                                                               \
        if (!(cond)) {                                                                 \
            fprintf(stderr, "helmix fuzz: property failed: %s: ", #cond);              \
            fprintf(stderr, __VA_ARGS__);                                              \
            fprintf(stderr, "\n");                                                     \
            abort();                                                                   \
        }                                                                              \
    } while (0)

static inline int fuzz_same_recipe(const hx_recipe *a, const hx_recipe *b)
{
    return !memcmp(a, b, offsetof(hx_recipe, line));
}

/* A validation that reads no file: a table spectrum names a path the input chose. */
static inline int fuzz_reads_files(const hx_recipe *r)
{
    return r->spectrum.shape == HX_SHAPE_TABLE || r->density_spectrum.shape == HX_SHAPE_TABLE ||
           r->magnetic_spectrum.shape == HX_SHAPE_TABLE;
}

/* The rendering of r parses back to r; validated, the rendering validates back to r too. */
static inline void fuzz_round_trip(const hx_recipe *r, int validated)
{
    char *text = hx_recipe_render(r);
    FUZZ_ASSERT(text != NULL, "render failed");
    hx_recipe back;
    hx_recipe_defaults(&back);
    hx_status st = hx_recipe_parse(&back, text, "rendered", NULL);
    FUZZ_ASSERT(st == HX_OK, "the rendering does not parse: %s\n%s", hx_error_message(), text);
    if (validated) {
        st = hx_recipe_validate(&back);
        FUZZ_ASSERT(st == HX_OK, "the rendering does not validate: %s\n%s", hx_error_message(), text);
    }
    FUZZ_ASSERT(fuzz_same_recipe(r, &back), "the rendering reads back as another recipe\n%s", text);
    free(text);
}

/* Every message is one line (the CLI prints it as one). */
static inline void fuzz_one_line(void)
{
    FUZZ_ASSERT(!strchr(hx_error_message(), '\n'), "a message of more than one line: %s", hx_error_message());
}

#endif
