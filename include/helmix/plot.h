/* helmix/plot.h — one-page picture of a cube's summary (hx_diag): shell spectra, compressive
 * share per shell, mid-plane slices of speed, divergence and |vorticity|, one-point PDFs and
 * the key numbers, written as PNG or PDF with cairo. Not collective: rank 0 calls it. */
#ifndef HELMIX_PLOT_H
#define HELMIX_PLOT_H

#include "helmix/diag.h"
#include "helmix/error.h"

typedef struct hx_plot_request {
    double slope;      /* requested spectral index (E ~ k^-slope) drawn as a guide; NAN: none */
    double fraction;   /* requested compressive share drawn as a target line; NAN: none      */
    const char *title; /* one line on top of the page, e.g. file name and grid; NULL: none   */
} hx_plot_request;

/* Draw the report page of d to path. The format follows the extension (case-insensitive):
 * ".png" gives an 1800x1300 pixel image, ".pdf" one landscape page (842x608 pt, vector
 * graphics with the slices embedded as images). req may be NULL (no guides, no title).
 * Shell arrays and slices may be NULL; their panels then say "not computed".
 * Not collective.
 * Errors: HX_ERR_ARG for NULL d or path, or an extension other than .png/.pdf;
 *         HX_ERR_MEM when a slice image cannot be allocated;
 *         HX_ERR_IO when cairo cannot create, draw or write the file (message names path). */
hx_status hx_plot_report(const hx_diag *d, const hx_plot_request *req, const char *path);

#endif
