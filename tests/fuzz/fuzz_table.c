/* fuzz_table.c — libFuzzer harness of the spectrum table reader (hx_spectrum_parse_table_n):
 * any bytes are read; accepted rows have k > 0 strictly increasing and finite E >= 0, at least
 * two of them; a refusal is one line and returns no arrays. */
#include <math.h>

#include "fuzz_common.h"
#include "helmix/spectrum.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    double *k = NULL, *e = NULL;
    int n = -1;
    if (hx_spectrum_parse_table_n((const char *)data, size, "fuzz.dat", &k, &e, &n) != HX_OK) {
        fuzz_one_line();
        FUZZ_ASSERT(!k && !e, "arrays returned with an error");
        return 0;
    }
    FUZZ_ASSERT(n >= 2, "%d rows", n);
    for (int i = 0; i < n; i++) {
        FUZZ_ASSERT(isfinite(k[i]) && k[i] > 0 && isfinite(e[i]) && e[i] >= 0, "row %d: %g %g", i, k[i], e[i]);
        FUZZ_ASSERT(i == 0 || k[i] > k[i - 1], "row %d: k %g after %g", i, k[i], k[i - 1]);
    }
    free(k);
    free(e);
    return 0;
}
