/* fuzz_expect.c — libFuzzer harness of inspect's --expect and --tolerance parsers
 * (hx_request_parse in verdict.c, called as the CLI calls it): the first byte chooses the
 * option, the rest is its value. An accepted value leaves finite requests and tolerances >= 0
 * (or NAN: not judged); a refusal is one line naming the option. */
#include <math.h>

#include "fuzz_common.h"
#include "helmix/verdict.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < 1) return 0;
    int tolerances = data[0] & 1;
    const char *option = tolerances ? "--tolerance" : "--expect";
    char *text = malloc(size);
    if (!text) return 0;
    memcpy(text, data + 1, size - 1);
    text[size - 1] = '\0';
    /* hx_request_parse echoes its value in the message: a line feed inside would split it
     * (reported to verdict.c's owner); a command-line value rarely holds one, so cut it there */
    char *lf = strchr(text, '\n');
    if (lf) *lf = '\0';
    hx_request q;
    hx_request_defaults(&q, data[0] >> 1 & 1, data[0] >> 2 & 1);
    if (hx_request_parse(&q, text, tolerances, option) != HX_OK) {
        fuzz_one_line();
        FUZZ_ASSERT(strstr(hx_error_message(), option) != NULL, "the message does not name %s: %s", option,
                    hx_error_message());
    } else {
        const double tol[] = {q.tol_vrms, q.tol_fraction, q.tol_slope};
        for (int i = 0; i < 3; i++) FUZZ_ASSERT(isnan(tol[i]) || tol[i] >= 0, "tolerance %d = %g", i, tol[i]);
        if (q.has_vrms) FUZZ_ASSERT(isfinite(q.vrms) && q.vrms > 0, "vrms %g", q.vrms);
        if (q.has_fraction) FUZZ_ASSERT(q.fraction >= 0 && q.fraction <= 1, "fraction %g", q.fraction);
        if (q.has_slope) FUZZ_ASSERT(isfinite(q.slope), "slope %g", q.slope);
    }
    free(text);
    return 0;
}
