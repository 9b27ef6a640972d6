/* fuzz_recipe.c — libFuzzer harness of the recipe parser: any bytes are parsed
 * (hx_recipe_parse_n, the length given, so a NUL is inside the text); an accepted recipe renders
 * to text that parses back to the same struct, and when it validates, its rendering validates
 * back to the same validated struct. A refusal is one line. */
#include "fuzz_common.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    hx_recipe r;
    hx_recipe_defaults(&r);
    if (hx_recipe_parse_n(&r, (const char *)data, size, "fuzz.ini", NULL) != HX_OK) {
        fuzz_one_line();
        return 0;
    }
    fuzz_round_trip(&r, 0);
    if (fuzz_reads_files(&r)) return 0;
    if (hx_recipe_validate(&r) != HX_OK) {
        fuzz_one_line();
        return 0;
    }
    fuzz_round_trip(&r, 1);
    hx_recipe again = r; /* validating a valid recipe changes nothing */
    FUZZ_ASSERT(hx_recipe_validate(&again) == HX_OK && fuzz_same_recipe(&r, &again), "validation is not idempotent");
    return 0;
}
