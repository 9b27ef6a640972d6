/* helmix/report.h — the summary of a cube in words and files: a readable table on a stream,
 * a JSON document holding every number, and a per-shell CSV table. Not collective: rank 0
 * calls these after the analysis. */
#ifndef HELMIX_REPORT_H
#define HELMIX_REPORT_H

#include <stdio.h>

#include "helmix/diag.h"
#include "helmix/verdict.h"

/* Print the summary of d for the cube `source`. */
void hx_report_print(FILE *out, const hx_diag *d, const char *source);

/* Write every number of d (and of v, if not NULL) as JSON. Every number is the shortest text
 * that reads back as exactly the double it came from (as in the CSV); an undefined one (NaN,
 * infinite) is null. HX_ERR_IO if the file cannot be written, HX_ERR_MEM if the document cannot
 * be built. */
hx_status hx_report_json(const char *path, const hx_diag *d, const hx_verdict *v, const char *source);

/* Write the per-shell table: k, modes, energy, compressive, solenoidal, compressive_fraction,
 * one row per shell of the JSON's "shells" (from k = 0, the mean flow: no modes, no energy) with
 * the same numbers; the share of a shell without energy is undefined: an empty field (null in
 * the JSON). */
hx_status hx_report_csv(const char *path, const hx_diag *d);

#endif
